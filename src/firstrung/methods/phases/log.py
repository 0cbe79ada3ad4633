"""The half-moon log: its columns and row parsing (on :mod:`firstrung.tabular`).

Columns: ``site``, ``time_utc`` or ``time_local``, ``quarter`` (``first``/``last``), optional
``elongation_deg``, ``illuminated_fraction``, ``time_sigma_s``, ``observer``.
"""

from __future__ import annotations

import os
from collections.abc import Iterable
from dataclasses import dataclass

import numpy as np

from firstrung.campaign_model import Campaign
from firstrung.csv_cells import cell_text, got, time_sigma_s
from firstrung.log_record import TimedRows
from firstrung.tabular import TIME_COLUMNS, Row, Slot, read_log

#: Quarters of a half-moon timing.
QUARTERS = ("first", "last")


@dataclass(frozen=True)
class PhaseLog(TimedRows):
    """The good rows of half-moon logs and the problems found.

    Attributes
    ----------
    file, row, site, time_utc, time_column
        As in :class:`~firstrung.log_record.TimedRows`.
    quarter : numpy.ndarray of str
        ``first`` or ``last``.
    elongation_deg : numpy.ndarray of float
        Measured Sun-Moon angle at the judged half moon [deg]; NaN when absent.
    illuminated_fraction : numpy.ndarray of float
        Measured illuminated fraction [1]; NaN when absent.
    time_sigma_s : numpy.ndarray of float
        Timing uncertainty [s]; NaN when absent.
    observer : numpy.ndarray of object
        Free text; ``''`` when absent.
    problems, rows_read, ignored_columns, notes
        As in :class:`~firstrung.log_record.TimedRows`.
    """

    quarter: np.ndarray
    elongation_deg: np.ndarray
    illuminated_fraction: np.ndarray
    time_sigma_s: np.ndarray
    observer: np.ndarray


LOG_SLOTS = (
    Slot(("site",), required=True),
    Slot(TIME_COLUMNS, required=True),
    Slot(("quarter",), required=True),
    Slot(("elongation_deg",), numeric=True),
    Slot(("illuminated_fraction",), numeric=True),
    Slot(("time_sigma_s",), numeric=True),
    Slot(("observer",)),
)


def _parse_phase_row(row: Row, campaign: Campaign) -> dict:
    site_id, t = row.site_and_time(campaign)
    quarter_text = row.cell("quarter")
    quarter = quarter_text.lower()
    if quarter not in QUARTERS:
        row.problem("quarter", f"expected quarter first or last, got {got(quarter_text)}")
    elongation_deg = row.number(
        "elongation_deg",
        "an elongation between 0 and 180 degrees (exclusive)",
        lambda x: 0.0 < x < 180.0,
    )
    illuminated_fraction = row.number(
        "illuminated_fraction", "an illuminated fraction between 0 and 1", lambda x: 0 <= x <= 1
    )
    if row.cell("elongation_deg") and row.cell("illuminated_fraction"):
        row.problem(None, "give elongation_deg or illuminated_fraction in a row, not both")
    sigma_s = time_sigma_s(row)
    return {
        "site": site_id,
        "time_utc": t,
        "time_column": row.column("time_utc"),
        "quarter": quarter,
        "elongation_deg": elongation_deg,
        "illuminated_fraction": illuminated_fraction,
        "time_sigma_s": sigma_s,
        "observer": cell_text(row, "observer"),
    }


def read_phase_logs(
    campaign: Campaign, paths: Iterable[str | os.PathLike[str]] | None = None
) -> PhaseLog:
    """Read half-moon timing logs: the good rows and a problem for each bad one.

    Parameters
    ----------
    campaign : Campaign
        Gives the known sites, their time zones and the default files.
    paths : path-like or iterable of path-like, optional
        Files to read instead of the campaign's ``[logs] phases``.

    Returns
    -------
    PhaseLog
        Never raises on bad content: problems are in ``problems``.

    Notes
    -----
    Columns: ``site``, ``time_utc`` or ``time_local``, ``quarter`` (``first``
    or ``last``); optional ``elongation_deg`` (0-180 deg, exclusive) or
    ``illuminated_fraction`` (0-1), not both in one row; ``time_sigma_s``,
    ``observer``.
    """
    return read_log(
        PhaseLog, campaign, "phases", paths, LOG_SLOTS, _parse_phase_row,
        dict(quarter=str, elongation_deg=float, illuminated_fraction=float, time_sigma_s=float, observer=object),
    )
