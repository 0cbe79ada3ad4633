"""The shadow log: its columns and row parsing (on :mod:`firstrung.tabular`), and each row's gnomon,
edge and errors filled in from the campaign.

Columns (the design's contract): ``site``, ``time_utc`` or ``time_local``, exactly one of
``shadow_m``/``shadow_cm``/``shadow_mm`` (returned in metres), optional ``gnomon_m|cm|mm``,
``edge``, ``temperature_c``, ``pressure_hpa``, ``observer``, ``note``.
"""

from __future__ import annotations

import math
import os
import re
from collections.abc import Iterable
from dataclasses import dataclass

import numpy as np

from firstrung.campaign_model import EDGES, Campaign
from firstrung.constants import EPHEMERIS_FIRST_UTC, EPHEMERIS_LAST_UTC
from firstrung.errors import RowProblem
from firstrung.tabular import (
    COMMON_DTYPES,
    TIME_COLUMNS,
    LogRows,
    Row,
    Slot,
    Table,
    cell_text,
    column_arrays,
    read_rows,
)
from firstrung.times import quoted

#: Largest accepted shadow length [m]; longer readings are typing errors.
SHADOW_LIMIT_M = 1000.0


#: Gnomon heights in a log must be below this [m].
GNOMON_LIMIT_M = 100.0


#: Accepted air temperatures for refraction [deg C].
TEMPERATURE_RANGE_C = (-80.0, 60.0)


#: Accepted air pressures for refraction [hPa].
PRESSURE_RANGE_HPA = (300.0, 1100.0)


_UNIT_FACTORS_M = {"m": 1.0, "cm": 0.01, "mm": 0.001}


_UNIT_WORDS = {"m": "metres", "cm": "centimetres", "mm": "millimetres"}


@dataclass(frozen=True)
class ShadowLog(LogRows):
    """The good rows of shadow logs, as equal-length arrays, and the problems found.

    Attributes
    ----------
    file : numpy.ndarray of str
        Log file of each row, relative to the campaign's folder when possible.
    row : numpy.ndarray of int
        1-based data row in that file.
    site : numpy.ndarray of str
        Site id.
    time_utc : numpy.ndarray of datetime64[ms]
        Time of the reading, UTC.
    time_column : numpy.ndarray of str
        ``"time_utc"`` or ``"time_local"``: how the time was given.
    shadow_m : numpy.ndarray of float
        Shadow length [m], converted from the column's unit.
    shadow_column : numpy.ndarray of str
        The length column it came from (``shadow_m``, ``shadow_cm`` or ``shadow_mm``).
    gnomon_m : numpy.ndarray of float
        Gnomon height from the log [m]; NaN when absent (use the campaign's).
    edge : numpy.ndarray of object
        Marked edge (``"umbra"``, ``"middle"``, ``"outer"``) or ``None`` when absent.
    temperature_c : numpy.ndarray of float
        Air temperature [deg C]; NaN when absent.
    pressure_hpa : numpy.ndarray of float
        Air pressure [hPa]; NaN when absent.
    observer, note : numpy.ndarray of object
        Free text; ``''`` when absent.
    problems : tuple of RowProblem
        Every rejected row or file.
    rows_read : int
        Data rows read, good and bad.
    ignored_columns : tuple of str
        Columns the reader does not know, in order of first appearance.
    notes : tuple of str
        One line per file read in a form other than the plain one (``;``
        separators, decimal commas, UTF-16 ...), e.g.
        ``"logs/a.csv: read as ';'-separated with decimal commas"``; not
        problems: every reading in such a file is kept.
    """

    file: np.ndarray
    row: np.ndarray
    site: np.ndarray
    time_utc: np.ndarray
    time_column: np.ndarray
    shadow_m: np.ndarray
    shadow_column: np.ndarray
    gnomon_m: np.ndarray
    edge: np.ndarray
    temperature_c: np.ndarray
    pressure_hpa: np.ndarray
    observer: np.ndarray
    note: np.ndarray
    problems: tuple[RowProblem, ...] = ()
    rows_read: int = 0
    ignored_columns: tuple[str, ...] = ()
    notes: tuple[str, ...] = ()


_SHADOW_SLOTS = (
    Slot(("site",), required=True),
    Slot(TIME_COLUMNS, required=True),
    Slot(("shadow_m", "shadow_cm", "shadow_mm"), required=True, numeric=True),
    Slot(("gnomon_m", "gnomon_cm", "gnomon_mm"), numeric=True),
    Slot(("edge",)),
    Slot(("temperature_c",), numeric=True),
    Slot(("pressure_hpa",), numeric=True),
    Slot(("observer",)),
    Slot(("note",)),
)


def _unit_of(column: str) -> str:
    return column.rsplit("_", 1)[1]


def _parse_shadow_row(row: Row, campaign: Campaign) -> dict:
    site_id, t = row.site_and_time(campaign)
    shadow_column = row.column("shadow_m")
    unit = _unit_of(shadow_column)
    shadow_m = row.number(
        "shadow_m",
        f"a positive number of {_UNIT_WORDS[unit]}",
        lambda x: x > 0.0,
        factor=_UNIT_FACTORS_M[unit],
        required=True,
    )
    if shadow_m > SHADOW_LIMIT_M:
        row.problem(
            shadow_column,
            f"expected a shadow length of at most {SHADOW_LIMIT_M:g} m, "
            f"got {quoted(row.cell('shadow_m'))} ({shadow_m:g} m)",
        )
    gnomon_m = math.nan
    gnomon_column = row.column("gnomon_m")
    if gnomon_column is not None:
        gnomon_unit = _unit_of(gnomon_column)
        gnomon_m = row.number(
            "gnomon_m",
            f"a positive number of {_UNIT_WORDS[gnomon_unit]}",
            lambda x: x > 0.0,
            factor=_UNIT_FACTORS_M[gnomon_unit],
        )
        if gnomon_m >= GNOMON_LIMIT_M:
            row.problem(
                gnomon_column,
                f"expected a gnomon height below {GNOMON_LIMIT_M:g} m, "
                f"got {quoted(row.cell('gnomon_m'))} ({gnomon_m:g} m)",
            )
    edge_text = row.cell("edge")
    edge = None
    if edge_text:
        edge = edge_text.lower()
        if edge not in EDGES:
            row.problem("edge", f"expected edge umbra, middle or outer, got {quoted(edge_text)}")
    low_c, high_c = TEMPERATURE_RANGE_C
    temperature_c = row.number(
        "temperature_c",
        f"a temperature between {low_c:g} and {high_c:g} degrees Celsius",
        lambda x: low_c <= x <= high_c,
    )
    low_hpa, high_hpa = PRESSURE_RANGE_HPA
    pressure_hpa = row.number(
        "pressure_hpa",
        f"a pressure between {low_hpa:g} and {high_hpa:g} hPa",
        lambda x: low_hpa <= x <= high_hpa,
    )
    return {
        "site": site_id,
        "time_utc": t,
        "time_column": row.column("time_utc"),
        "shadow_m": shadow_m,
        "shadow_column": shadow_column,
        "gnomon_m": gnomon_m,
        "edge": edge,
        "temperature_c": temperature_c,
        "pressure_hpa": pressure_hpa,
        "observer": cell_text(row, "observer"),
        "note": cell_text(row, "note"),
    }


@dataclass(frozen=True)
class ShadowInstruments:
    """Each shadow row's gnomon and errors, the log's own values first, else the campaign's.

    ``ok`` marks the rows that have a gnomon height at all (a row of a site
    without ``[site.gnomon]`` must give ``gnomon_m``); ``problems`` says why
    the others are refused.
    """

    ok: np.ndarray
    site_index: np.ndarray
    gnomon_m: np.ndarray
    gnomon_sigma_m: np.ndarray
    shadow_sigma_m: np.ndarray
    edge: np.ndarray
    problems: tuple[RowProblem, ...]


def shadow_instruments(campaign: Campaign, log: ShadowLog) -> ShadowInstruments:
    """The gnomon, edge and stated errors of every row, with the campaign's defaults filled in.

    Per-site values are gathered once and indexed by each row's site, so the
    cost does not grow with a loop over rows.
    """
    from firstrung.campaign_model import DEFAULT_HEIGHT_SIGMA_M, DEFAULT_SHADOW_SIGMA_M

    index = {s.id: i for i, s in enumerate(campaign.sites)}
    ids, inverse = np.unique(np.asarray(log.site, dtype=str), return_inverse=True)
    site_index = np.array([index[s] for s in ids], dtype=int)[inverse] if len(log) else np.zeros(0, int)
    gnomons = [s.gnomon for s in campaign.sites]
    has = np.array([g is not None for g in gnomons], bool)
    height = np.array([g.height_m if g is not None else np.nan for g in gnomons], float)
    height_sigma = np.array([g.height_sigma_m if g is not None else DEFAULT_HEIGHT_SIGMA_M for g in gnomons], float)
    shadow_sigma = np.array([g.shadow_sigma_m if g is not None else DEFAULT_SHADOW_SIGMA_M for g in gnomons], float)
    site_edge = np.array([g.edge if g is not None else "umbra" for g in gnomons], dtype=object)
    row_height = np.asarray(log.gnomon_m, float)
    ok = has[site_index] | np.isfinite(row_height)
    problems = tuple(
        RowProblem(
            str(log.file[k]), int(log.row[k]), "gnomon_m",
            f"site '{log.site[k]}' has no [site.gnomon] in the campaign file; give gnomon_m in the log or add it",
        )
        for k in np.flatnonzero(~ok)
    )
    row_edge = np.asarray(log.edge, dtype=object)
    given = np.array([e is not None and e != "" for e in row_edge], bool) if len(log) else np.zeros(0, bool)
    return ShadowInstruments(
        ok=ok,
        site_index=site_index,
        gnomon_m=np.where(np.isfinite(row_height), row_height, height[site_index]),
        gnomon_sigma_m=height_sigma[site_index],
        shadow_sigma_m=shadow_sigma[site_index],
        edge=np.where(given, row_edge, site_edge[site_index]) if len(log) else np.zeros(0, dtype=object),
        problems=problems,
    )


#: Whether plain rows take the fast path (a test compares both paths on every corpus file).



_PLAIN_UTC_RE = re.compile(r"^(\d{4}-\d{2}-\d{2})[T ](\d{2}:\d{2}(?::\d{2}(?:\.\d{1,3})?)?)(?:Z|\+00:00)?$")


_PLAIN_NUMBER_RE = re.compile(r"^\d+(?:\.\d+)?$")


_SPAN_MS = (np.datetime64(EPHEMERIS_FIRST_UTC, "ms"), np.datetime64(EPHEMERIS_LAST_UTC, "ms"))


def _plain(cell: str, low: float, high: float, factor: float = 1.0) -> float | None:
    """A plain positive decimal within [low, high] after ``factor``, else None (the slow path decides)."""
    if not _PLAIN_NUMBER_RE.match(cell):
        return None
    value = float(cell) * factor
    return value if low <= value <= high else None


def _fast_shadow_row(table: Table, cells: dict[str, str], campaign: Campaign) -> dict | None:
    """A plain shadow row (known site, ISO UTC time, plain numbers) read without the checks' detours."""
    chosen = table.chosen
    site_id = cells.get(chosen["site"], "")
    if site_id not in campaign._site_by_id or chosen["time_utc"] != "time_utc":
        return None
    m = _PLAIN_UTC_RE.match(cells.get("time_utc", ""))
    if m is None:
        return None
    try:
        t = np.datetime64(f"{m.group(1)}T{m.group(2)}", "ms")
    except ValueError:
        return None
    if not (_SPAN_MS[0] <= t <= _SPAN_MS[1]):
        return None
    shadow_column = chosen["shadow_m"]
    shadow_m = _plain(cells.get(shadow_column, ""), 1e-300, SHADOW_LIMIT_M, _UNIT_FACTORS_M[_unit_of(shadow_column)])
    if shadow_m is None or shadow_m <= 0.0:
        return None
    gnomon_m = math.nan
    gnomon_column = chosen.get("gnomon_m")
    if gnomon_column is not None and cells.get(gnomon_column, ""):
        gnomon_m = _plain(cells[gnomon_column], 1e-300, GNOMON_LIMIT_M * (1 - 1e-12), _UNIT_FACTORS_M[_unit_of(gnomon_column)])
        if gnomon_m is None or gnomon_m <= 0.0:
            return None
    edge = None
    edge_column = chosen.get("edge")
    if edge_column is not None and cells.get(edge_column, ""):
        edge = cells[edge_column].lower()
        if edge not in EDGES:
            return None
    weather = []
    for slot, (low, high) in (("temperature_c", TEMPERATURE_RANGE_C), ("pressure_hpa", PRESSURE_RANGE_HPA)):
        column = chosen.get(slot)
        cell = cells.get(column, "") if column is not None else ""
        if cell == "":
            weather.append(math.nan)
            continue
        value = _plain(cell.lstrip("-") if slot == "temperature_c" else cell, 0.0, max(abs(low), high))
        if value is None:
            return None
        value = -value if cell.startswith("-") else value
        if not low <= value <= high:
            return None
        weather.append(value)
    observer_column, note_column = chosen.get("observer"), chosen.get("note")
    return {
        "site": site_id,
        "time_utc": t,
        "time_column": "time_utc",
        "shadow_m": shadow_m,
        "shadow_column": shadow_column,
        "gnomon_m": gnomon_m,
        "edge": edge,
        "temperature_c": weather[0],
        "pressure_hpa": weather[1],
        "observer": cells.get(observer_column, "") if observer_column is not None else "",
        "note": cells.get(note_column, "") if note_column is not None else "",
    }


def read_shadow_logs(
    campaign: Campaign, paths: Iterable[str | os.PathLike[str]] | None = None
) -> ShadowLog:
    """Read shadow logs: the good rows and a problem for each bad one.

    Parameters
    ----------
    campaign : Campaign
        Gives the known sites, their time zones and the default files.
    paths : path-like or iterable of path-like, optional
        Files to read instead of the campaign's ``[logs] shadows``.

    Returns
    -------
    ShadowLog
        Never raises on bad content: problems are in ``problems``.

    Notes
    -----
    Columns: ``site``, ``time_utc`` or ``time_local``, exactly one of
    ``shadow_m``/``shadow_cm``/``shadow_mm``; optional
    ``gnomon_m``/``gnomon_cm``/``gnomon_mm``, ``edge``, ``temperature_c``,
    ``pressure_hpa``, ``observer``, ``note``.
    """
    good, problems, rows_read, ignored, notes = read_rows(
        campaign, "shadows", paths, _SHADOW_SLOTS, _parse_shadow_row, _fast_shadow_row
    )
    dtypes = dict(COMMON_DTYPES)
    dtypes.update(
        shadow_m=float,
        shadow_column=str,
        gnomon_m=float,
        edge=object,
        temperature_c=float,
        pressure_hpa=float,
        observer=object,
        note=object,
    )
    return ShadowLog(
        **column_arrays(good, dtypes),
        problems=tuple(problems),
        rows_read=rows_read,
        ignored_columns=ignored,
        notes=notes,
    )
