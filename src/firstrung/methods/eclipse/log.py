"""The eclipse log: its columns and row parsing (on :mod:`firstrung.tabular`).

Columns: ``site``, ``time_utc`` or ``time_local``, ``event`` (``U1``-``U4``, ``immersion``,
``emersion``), optional ``feature`` (a crater of the tool's table), ``time_sigma_s``, ``observer``.
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
from firstrung.times import quoted

#: Eclipse events in their canonical spelling: umbral contacts, then feature timings.
ECLIPSE_EVENTS = ("U1", "U2", "U3", "U4", "immersion", "emersion")


@dataclass(frozen=True)
class EclipseLog(TimedRows):
    """The good rows of eclipse logs and the problems found.

    Attributes
    ----------
    file, row, site, time_utc, time_column
        As in :class:`~firstrung.log_record.TimedRows`.
    event : numpy.ndarray of str
        ``U1``-``U4`` (umbral contacts) or ``immersion``/``emersion``.
    feature : numpy.ndarray of object
        Lunar feature of an immersion or emersion; ``''`` for contacts.
    time_sigma_s : numpy.ndarray of float
        The observer's timing uncertainty [s]; NaN when absent.
    observer : numpy.ndarray of object
        Free text; ``''`` when absent.
    problems, rows_read, ignored_columns, notes
        As in :class:`~firstrung.log_record.TimedRows`.
    """

    event: np.ndarray
    feature: np.ndarray
    time_sigma_s: np.ndarray
    observer: np.ndarray


LOG_SLOTS = (
    Slot(("site",), required=True),
    Slot(TIME_COLUMNS, required=True),
    Slot(("event",), required=True),
    Slot(("feature",)),
    Slot(("time_sigma_s",), numeric=True),
    Slot(("observer",)),
)


_EVENT_SPELLINGS = {event.lower(): event for event in ECLIPSE_EVENTS}


def _parse_eclipse_row(row: Row, campaign: Campaign) -> dict:
    site_id, t = row.site_and_time(campaign)
    event_text = row.cell("event")
    event = _EVENT_SPELLINGS.get(event_text.lower())
    feature = row.cell("feature")
    if event is None:
        row.problem(
            "event",
            f"expected an event U1, U2, U3, U4, immersion or emersion, got {got(event_text)}",
        )
    elif event in ("immersion", "emersion") and not feature:
        row.problem(
            "feature",
            f"expected the lunar feature of the {event} (e.g. Kepler), got an empty cell",
        )
    elif event.startswith("U") and feature:
        row.problem(
            "feature",
            f"expected an empty cell for the umbral contact {event}, got {quoted(feature)}",
        )
    sigma_s = time_sigma_s(row)
    return {
        "site": site_id,
        "time_utc": t,
        "time_column": row.column("time_utc"),
        "event": event,
        "feature": feature,
        "time_sigma_s": sigma_s,
        "observer": cell_text(row, "observer"),
    }


def read_eclipse_logs(
    campaign: Campaign, paths: Iterable[str | os.PathLike[str]] | None = None
) -> EclipseLog:
    """Read lunar-eclipse timing logs: the good rows and a problem for each bad one.

    Parameters
    ----------
    campaign : Campaign
        Gives the known sites, their time zones and the default files.
    paths : path-like or iterable of path-like, optional
        Files to read instead of the campaign's ``[logs] eclipse``.

    Returns
    -------
    EclipseLog
        Never raises on bad content: problems are in ``problems``.

    Notes
    -----
    Columns: ``site``, ``time_utc`` or ``time_local``, ``event`` (``U1``-``U4``
    in any case, ``immersion``, ``emersion``); optional ``feature`` (required
    for immersion and emersion, empty for umbral contacts), ``time_sigma_s``,
    ``observer``.
    """
    return read_log(
        EclipseLog, campaign, "eclipse", paths, LOG_SLOTS, _parse_eclipse_row,
        dict(event=str, feature=object, time_sigma_s=float, observer=object),
    )
