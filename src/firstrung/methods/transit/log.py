"""The transit log: its columns and row parsing (on :mod:`firstrung.tabular`).

Columns: ``site``, ``time_utc`` or ``time_local``, ``event`` (``C1``-``C4``: external
ingress, internal ingress, internal egress, external egress), optional ``time_sigma_s``,
``observer``, ``note``.
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

#: The contacts in their canonical spelling.
TRANSIT_EVENTS = ("C1", "C2", "C3", "C4")


@dataclass(frozen=True)
class TransitLog(TimedRows):
    """The good rows of transit logs and the problems found.

    Attributes
    ----------
    file, row, site, time_utc, time_column
        Where each row came from, its site id and its instant [UTC].
    event : numpy.ndarray of str
        ``C1``-``C4``.
    time_sigma_s : numpy.ndarray of float
        The observer's timing uncertainty [s]; NaN when absent.
    observer, note : numpy.ndarray of object
        Free text; ``''`` when absent.
    problems, rows_read, ignored_columns, notes
        As for every log.
    """

    event: np.ndarray
    time_sigma_s: np.ndarray
    observer: np.ndarray
    note: np.ndarray


LOG_SLOTS = (
    Slot(("site",), required=True),
    Slot(TIME_COLUMNS, required=True),
    Slot(("event",), required=True),
    Slot(("time_sigma_s",), numeric=True),
    Slot(("observer",)),
    Slot(("note",)),
)

_SPELLINGS = {e.lower(): e for e in TRANSIT_EVENTS}


def _parse_transit_row(row: Row, campaign: Campaign) -> dict:
    site_id, t = row.site_and_time(campaign)
    text = row.cell("event")
    event = _SPELLINGS.get(text.strip().lower())
    if event is None:
        row.problem("event", f"expected a contact C1, C2, C3 or C4, got {got(text)}")
    return {
        "site": site_id,
        "time_utc": t,
        "time_column": row.column("time_utc"),
        "event": event,
        "time_sigma_s": time_sigma_s(row),
        "observer": cell_text(row, "observer"),
        "note": cell_text(row, "note"),
    }


def read_transit_logs(campaign: Campaign, paths: Iterable[str | os.PathLike[str]] | None = None) -> TransitLog:
    """Read transit contact logs: the good rows and a problem for each bad one.

    Parameters
    ----------
    campaign : Campaign
        Gives the known sites, their time zones and the default files (``[logs] transits``).
    paths : iterable of path-like, optional
        Files to read instead of the campaign's.

    Returns
    -------
    TransitLog
        Never raises on bad content: problems are in ``problems``.
    """
    return read_log(
        TransitLog, campaign, "transits", paths, LOG_SLOTS, _parse_transit_row,
        dict(event=str, time_sigma_s=float, observer=object, note=object),
    )
