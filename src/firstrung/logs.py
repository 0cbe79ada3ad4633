"""Reading the observers' CSV logs: shadows, eclipse timings and half-moon timings.

The readers never raise on a bad row. Each bad cell becomes a
:class:`~firstrung.errors.RowProblem` (``file:row:column: message``), the row
is left out, and every good row is kept. A problem with a whole file (missing,
not UTF-8, a required column absent) is a problem with no row, and that file
yields no rows.

File format (the design's "Files" contract): UTF-8 (a BOM is accepted), one
header line, column names matched without regard to case or surrounding
spaces. Blank lines, lines whose cells are all empty and lines starting with
``#`` are skipped, before or after the header. **Row numbers count data rows
only**: the first data row after the header is row 1, and skipped lines are
not counted. Unknown columns are ignored and listed in ``ignored_columns``.

Numbers use a decimal point (``103.8``). Units are in the column names:
``shadow_m``/``shadow_cm``/``shadow_mm`` (exactly one of them), lengths are
returned in metres.
"""

from __future__ import annotations

import csv
import io
import math
import os
import re
from collections.abc import Callable, Iterable, Sequence
from dataclasses import dataclass, fields, replace
from pathlib import Path

import numpy as np

from .campaign import EDGES, Campaign
from .constants import EPHEMERIS_FIRST_UTC, EPHEMERIS_LAST_UTC
from .errors import RowProblem
from .times import TimeFormatError, in_ephemeris_span, parse_local, parse_utc

__all__ = [
    "ECLIPSE_EVENTS",
    "QUARTERS",
    "EclipseLog",
    "PhaseLog",
    "ShadowLog",
    "read_eclipse_logs",
    "read_phase_logs",
    "read_shadow_logs",
]

#: Eclipse events in their canonical spelling: umbral contacts, then feature timings.
ECLIPSE_EVENTS = ("U1", "U2", "U3", "U4", "immersion", "emersion")
#: Quarters of a half-moon timing.
QUARTERS = ("first", "last")

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
_NUMBER_RE = re.compile(r"^[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?$")

_TIME_COLUMNS = ("time_utc", "time_local")
_TIME_EXAMPLES = {"time_utc": "2027-03-20T11:38:00Z", "time_local": "2027-03-20T12:38:00"}
_SPAN_TEXT = f"{EPHEMERIS_FIRST_UTC[:10]} and {EPHEMERIS_LAST_UTC[:10]}"


# --- results -------------------------------------------------------------------


class _Log:
    """Shared behaviour of the log results: length and row selection."""

    def __len__(self) -> int:
        return len(self.row)

    def select(self, mask):
        """A copy holding only the rows picked by ``mask``.

        Parameters
        ----------
        mask : array of bool or of int
            A boolean mask as long as the log, or row indices into it.

        Returns
        -------
        Same type
            Problems, ``rows_read`` and ``ignored_columns`` are kept as they are.
        """
        picked = np.asarray(mask)
        changes = {
            f.name: getattr(self, f.name)[picked]
            for f in fields(self)
            if isinstance(getattr(self, f.name), np.ndarray)
        }
        return replace(self, **changes)


@dataclass(frozen=True)
class ShadowLog(_Log):
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


@dataclass(frozen=True)
class EclipseLog(_Log):
    """The good rows of eclipse logs and the problems found.

    Attributes
    ----------
    file, row, site, time_utc, time_column
        As in :class:`ShadowLog`.
    event : numpy.ndarray of str
        ``U1``-``U4`` (umbral contacts) or ``immersion``/``emersion``.
    feature : numpy.ndarray of object
        Lunar feature of an immersion or emersion; ``''`` for contacts.
    time_sigma_s : numpy.ndarray of float
        The observer's timing uncertainty [s]; NaN when absent.
    observer : numpy.ndarray of object
        Free text; ``''`` when absent.
    problems, rows_read, ignored_columns
        As in :class:`ShadowLog`.
    """

    file: np.ndarray
    row: np.ndarray
    site: np.ndarray
    time_utc: np.ndarray
    time_column: np.ndarray
    event: np.ndarray
    feature: np.ndarray
    time_sigma_s: np.ndarray
    observer: np.ndarray
    problems: tuple[RowProblem, ...] = ()
    rows_read: int = 0
    ignored_columns: tuple[str, ...] = ()


@dataclass(frozen=True)
class PhaseLog(_Log):
    """The good rows of half-moon logs and the problems found.

    Attributes
    ----------
    file, row, site, time_utc, time_column
        As in :class:`ShadowLog`.
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
    problems, rows_read, ignored_columns
        As in :class:`ShadowLog`.
    """

    file: np.ndarray
    row: np.ndarray
    site: np.ndarray
    time_utc: np.ndarray
    time_column: np.ndarray
    quarter: np.ndarray
    elongation_deg: np.ndarray
    illuminated_fraction: np.ndarray
    time_sigma_s: np.ndarray
    observer: np.ndarray
    problems: tuple[RowProblem, ...] = ()
    rows_read: int = 0
    ignored_columns: tuple[str, ...] = ()


# --- the shared core -----------------------------------------------------------


@dataclass(frozen=True)
class _Slot:
    """One logical column: a single name or a family of alternatives (units, time kinds)."""

    names: tuple[str, ...]
    required: bool = False

    @property
    def shown(self) -> str:
        return "|".join(self.names)


@dataclass
class _Table:
    """The cells of one file, keyed by the chosen name of each slot."""

    label: str
    chosen: dict[str, str | None]
    rows: list[tuple[int, dict[str, str]]]
    problems: list[RowProblem]
    ignored: list[str]


def _display_name(path: Path, campaign: Campaign) -> str:
    """A log path as given relative to the campaign's folder when that is possible."""
    if campaign.path is None:
        return Path(path).as_posix()
    try:
        return Path(os.path.relpath(path, campaign.folder)).as_posix()
    except ValueError:  # another drive on Windows
        return Path(path).as_posix()


def _decode(data: bytes, label: str) -> tuple[str | None, RowProblem | None]:
    """UTF-8 text of a file, without its BOM, or the problem that stops reading it."""
    if data.startswith((b"\xff\xfe", b"\xfe\xff")):
        return None, RowProblem(label, None, None, "UTF-16 text; save the file as CSV UTF-8")
    if data.startswith(b"\xef\xbb\xbf"):
        data = data[3:]
    try:
        return data.decode("utf-8"), None
    except UnicodeDecodeError as error:
        return None, RowProblem(
            label,
            None,
            None,
            f"not UTF-8 text (byte 0x{data[error.start]:02x} at offset {error.start}); "
            "save the file as CSV UTF-8",
        )


def _is_skipped(cells: Sequence[str]) -> bool:
    """Blank lines, lines of empty cells and comment lines (starting with ``#``)."""
    if not cells or all(not cell.strip() for cell in cells):
        return True
    return cells[0].lstrip().startswith("#")


def _printable(name: str) -> str:
    """A header name for a one-line message: as it is, or escaped when it holds control characters."""
    return name if name.isprintable() else repr(name)


def _choose_columns(
    header: list[str], slots: Sequence[_Slot], label: str
) -> tuple[dict[str, str | None], list[RowProblem]]:
    """Which header name fills each slot, and the file-level problems of the header."""
    problems: list[RowProblem] = []
    chosen: dict[str, str | None] = {}
    seen: set[str] = set()
    for name in header:
        if name and name in seen:
            problems.append(RowProblem(label, None, None, f"column {name!r} appears twice"))
        seen.add(name)
    required = ", ".join(slot.shown for slot in slots if slot.required)
    found = ", ".join(_printable(name) for name in header if name) or "no column names"
    for slot in slots:
        present = [name for name in slot.names if name in seen]
        chosen[slot.names[0]] = present[0] if len(present) == 1 else None
        if len(present) > 1:
            if slot.names == _TIME_COLUMNS:
                message = "both time_utc and time_local present; give one time column per file"
            else:
                message = (
                    f"more than one of the columns {', '.join(present)}; give exactly one "
                    f"of {', '.join(slot.names)}"
                )
            problems.append(RowProblem(label, None, None, message))
        elif not present and slot.required:
            wanted = " or ".join(repr(name) for name in slot.names)
            problems.append(
                RowProblem(
                    label,
                    None,
                    None,
                    f"missing column {wanted} (expected {required}; found {found})",
                )
            )
    return chosen, problems


def _read_table(path: Path, label: str, slots: Sequence[_Slot]) -> _Table:
    """Read one CSV file into its data rows; file-level problems leave it without rows."""
    table = _Table(label=label, chosen={}, rows=[], problems=[], ignored=[])
    try:
        data = Path(path).read_bytes()
    except FileNotFoundError:
        table.problems.append(RowProblem(label, None, None, "no such file"))
        return table
    except IsADirectoryError:
        table.problems.append(RowProblem(label, None, None, "is a folder, expected a CSV file"))
        return table
    except OSError as error:
        message = f"cannot read the file: {error.strerror or error}"
        table.problems.append(RowProblem(label, None, None, message))
        return table
    text, problem = _decode(data, label)
    if problem is not None:
        table.problems.append(problem)
        return table

    reader = csv.reader(io.StringIO(text, newline=""))
    header: list[str] | None = None
    row_number = 0
    known = {name for slot in slots for name in slot.names}
    try:
        for cells in reader:
            if _is_skipped(cells):
                continue
            if header is None:
                header = [cell.strip().lower() for cell in cells]
                table.chosen, problems = _choose_columns(header, slots, label)
                table.problems.extend(problems)
                if problems:
                    return table
                table.ignored = [name for name in header if name and name not in known]
                continue
            row_number += 1
            if len(cells) > len(header) and any(cell.strip() for cell in cells[len(header) :]):
                table.problems.append(
                    RowProblem(
                        label,
                        row_number,
                        None,
                        f"expected {len(header)} cells as in the header, got {len(cells)}",
                    )
                )
                table.rows.append((row_number, {}))  # counted as read, not kept
                continue
            values = {}
            for index, name in enumerate(header):
                if name in known and name not in values:
                    values[name] = cells[index].strip() if index < len(cells) else ""
            table.rows.append((row_number, values))
    except csv.Error as error:
        table.problems.append(
            RowProblem(label, None, None, f"CSV error at line {reader.line_num}: {error}")
        )
    if header is None:
        required = ", ".join(slot.shown for slot in slots if slot.required)
        table.problems.append(
            RowProblem(label, None, None, f"empty file (expected a header line: {required})")
        )
    return table


def _got(cell: str) -> str:
    return "an empty cell" if cell == "" else repr(cell)


def _number(cell: str) -> float | None:
    """A plain decimal number (decimal point, optional exponent), else ``None``."""
    if not _NUMBER_RE.match(cell):
        return None
    value = float(cell)
    return value if math.isfinite(value) else None


class _Row:
    """The cells of one data row and the problems found in them."""

    def __init__(self, table: _Table, row: int, cells: dict[str, str]) -> None:
        self.table = table
        self.row = row
        self.cells = cells
        self.problems: list[RowProblem] = []

    def column(self, slot_name: str) -> str | None:
        """The header name used for a slot, or ``None`` when the file lacks it."""
        return self.table.chosen.get(slot_name)

    def cell(self, slot_name: str) -> str:
        column = self.column(slot_name)
        return "" if column is None else self.cells.get(column, "")

    def problem(self, column: str | None, message: str) -> None:
        self.problems.append(RowProblem(self.table.label, self.row, column, message))

    def number(
        self,
        slot_name: str,
        expected: str,
        ok: Callable[[float], bool],
        *,
        factor: float = 1.0,
        required: bool = False,
    ) -> float:
        """A checked number from a cell, times ``factor``; NaN when empty and optional."""
        column = self.column(slot_name)
        cell = self.cell(slot_name)
        if cell == "" and not required:
            return math.nan
        value = _number(cell)
        if value is None or not ok(value):
            self.problem(column, f"expected {expected}, got {_got(cell)}")
            return math.nan
        return value * factor

    def site_and_time(self, campaign: Campaign) -> tuple[str, np.datetime64]:
        """The row's site id and UTC time (NaT after a problem)."""
        site_id = self.cell("site")
        known = campaign.site_ids
        site = None
        if site_id == "":
            self.problem("site", f"expected a site id ({', '.join(known)}), got an empty cell")
        elif site_id not in known:
            self.problem("site", f"unknown site {site_id!r} (known: {', '.join(known)})")
        else:
            site = campaign.site(site_id)

        nat = np.datetime64("NaT", "ms")
        column = self.column("time_utc")
        text = self.cell("time_utc")
        if text == "":
            kind = "UTC" if column == "time_utc" else "local"
            example = _TIME_EXAMPLES[column]
            self.problem(
                column, f"expected an ISO 8601 {kind} time such as {example}, got an empty cell"
            )
            return site_id, nat
        try:
            if column == "time_utc":
                t = parse_utc(text)
            elif site is None:
                return site_id, nat  # the zone is unknown; the site problem says why
            elif site.timezone is None:
                self.problem(
                    column,
                    f"site {site.id!r} has no timezone in the campaign file; "
                    "give time_utc or add timezone",
                )
                return site_id, nat
            else:
                t = parse_local(text, site.timezone)
        except TimeFormatError as error:
            self.problem(column, error.message)
            return site_id, nat
        if not in_ephemeris_span(t):
            self.problem(
                column,
                f"expected a time between {_SPAN_TEXT} (the span of the bundled ephemeris), "
                f"got {text!r}",
            )
            return site_id, nat
        return site_id, t


def _read_all(
    campaign: Campaign,
    kind: str,
    paths: Iterable[str | os.PathLike[str]] | None,
    slots: Sequence[_Slot],
    parse_row: Callable[[_Row, Campaign], dict | None],
) -> tuple[list[dict], list[RowProblem], int, tuple[str, ...]]:
    """Read every file of one kind; the good rows as dicts, the problems, rows read, ignored."""
    chosen_paths = campaign.logs.get(kind, ()) if paths is None else tuple(paths)
    good: list[dict] = []
    problems: list[RowProblem] = []
    ignored: list[str] = []
    rows_read = 0
    for path in chosen_paths:
        label = _display_name(Path(path), campaign)
        table = _read_table(Path(path), label, slots)
        problems.extend(table.problems)
        ignored.extend(name for name in table.ignored if name not in ignored)
        for row_number, cells in table.rows:
            rows_read += 1
            if not cells:
                continue
            row = _Row(table, row_number, cells)
            values = parse_row(row, campaign)
            if row.problems or values is None:
                problems.extend(row.problems)
                continue
            values["file"] = label
            values["row"] = row_number
            good.append(values)
    return good, problems, rows_read, tuple(ignored)


def _arrays(good: list[dict], spec: dict[str, object]) -> dict[str, np.ndarray]:
    """Columns of the good rows as numpy arrays of the given dtypes."""
    return {
        name: np.array([values[name] for values in good], dtype=dtype)
        for name, dtype in spec.items()
    }


_COMMON_DTYPES: dict[str, object] = {
    "file": str,
    "row": np.int64,
    "site": str,
    "time_utc": "datetime64[ms]",
    "time_column": str,
}


def _text(row: _Row, slot_name: str) -> str:
    return row.cell(slot_name)


# --- shadows --------------------------------------------------------------------

_SHADOW_SLOTS = (
    _Slot(("site",), required=True),
    _Slot(_TIME_COLUMNS, required=True),
    _Slot(("shadow_m", "shadow_cm", "shadow_mm"), required=True),
    _Slot(("gnomon_m", "gnomon_cm", "gnomon_mm")),
    _Slot(("edge",)),
    _Slot(("temperature_c",)),
    _Slot(("pressure_hpa",)),
    _Slot(("observer",)),
    _Slot(("note",)),
)


def _unit_of(column: str) -> str:
    return column.rsplit("_", 1)[1]


def _parse_shadow_row(row: _Row, campaign: Campaign) -> dict:
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
            f"got {row.cell('shadow_m')!r} ({shadow_m:g} m)",
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
                f"got {row.cell('gnomon_m')!r} ({gnomon_m:g} m)",
            )
    edge_text = row.cell("edge")
    edge = None
    if edge_text:
        edge = edge_text.lower()
        if edge not in EDGES:
            row.problem("edge", f"expected edge umbra, middle or outer, got {edge_text!r}")
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
        "observer": _text(row, "observer"),
        "note": _text(row, "note"),
    }


def read_shadow_logs(
    campaign: Campaign, paths: Iterable[str | os.PathLike[str]] | None = None
) -> ShadowLog:
    """Read shadow logs: the good rows and a problem for each bad one.

    Parameters
    ----------
    campaign : Campaign
        Gives the known sites, their time zones and the default files.
    paths : iterable of path-like, optional
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
    good, problems, rows_read, ignored = _read_all(
        campaign, "shadows", paths, _SHADOW_SLOTS, _parse_shadow_row
    )
    dtypes = dict(_COMMON_DTYPES)
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
        **_arrays(good, dtypes),
        problems=tuple(problems),
        rows_read=rows_read,
        ignored_columns=ignored,
    )


# --- eclipse --------------------------------------------------------------------

_ECLIPSE_SLOTS = (
    _Slot(("site",), required=True),
    _Slot(_TIME_COLUMNS, required=True),
    _Slot(("event",), required=True),
    _Slot(("feature",)),
    _Slot(("time_sigma_s",)),
    _Slot(("observer",)),
)
_EVENT_SPELLINGS = {event.lower(): event for event in ECLIPSE_EVENTS}


def _parse_eclipse_row(row: _Row, campaign: Campaign) -> dict:
    site_id, t = row.site_and_time(campaign)
    event_text = row.cell("event")
    event = _EVENT_SPELLINGS.get(event_text.lower())
    feature = row.cell("feature")
    if event is None:
        row.problem(
            "event",
            f"expected an event U1, U2, U3, U4, immersion or emersion, got {_got(event_text)}",
        )
    elif event in ("immersion", "emersion") and not feature:
        row.problem(
            "feature",
            f"expected the lunar feature of the {event} (e.g. Kepler), got an empty cell",
        )
    elif event.startswith("U") and feature:
        row.problem(
            "feature",
            f"expected an empty cell for the umbral contact {event}, got {feature!r}",
        )
    time_sigma_s = row.number("time_sigma_s", "a positive number of seconds", lambda x: x > 0.0)
    return {
        "site": site_id,
        "time_utc": t,
        "time_column": row.column("time_utc"),
        "event": event,
        "feature": feature,
        "time_sigma_s": time_sigma_s,
        "observer": _text(row, "observer"),
    }


def read_eclipse_logs(
    campaign: Campaign, paths: Iterable[str | os.PathLike[str]] | None = None
) -> EclipseLog:
    """Read lunar-eclipse timing logs: the good rows and a problem for each bad one.

    Parameters
    ----------
    campaign : Campaign
        Gives the known sites, their time zones and the default files.
    paths : iterable of path-like, optional
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
    good, problems, rows_read, ignored = _read_all(
        campaign, "eclipse", paths, _ECLIPSE_SLOTS, _parse_eclipse_row
    )
    dtypes = dict(_COMMON_DTYPES)
    dtypes.update(event=str, feature=object, time_sigma_s=float, observer=object)
    return EclipseLog(
        **_arrays(good, dtypes),
        problems=tuple(problems),
        rows_read=rows_read,
        ignored_columns=ignored,
    )


# --- phases ---------------------------------------------------------------------

_PHASE_SLOTS = (
    _Slot(("site",), required=True),
    _Slot(_TIME_COLUMNS, required=True),
    _Slot(("quarter",), required=True),
    _Slot(("elongation_deg",)),
    _Slot(("illuminated_fraction",)),
    _Slot(("time_sigma_s",)),
    _Slot(("observer",)),
)


def _parse_phase_row(row: _Row, campaign: Campaign) -> dict:
    site_id, t = row.site_and_time(campaign)
    quarter_text = row.cell("quarter")
    quarter = quarter_text.lower()
    if quarter not in QUARTERS:
        row.problem("quarter", f"expected quarter first or last, got {_got(quarter_text)}")
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
    time_sigma_s = row.number("time_sigma_s", "a positive number of seconds", lambda x: x > 0.0)
    return {
        "site": site_id,
        "time_utc": t,
        "time_column": row.column("time_utc"),
        "quarter": quarter,
        "elongation_deg": elongation_deg,
        "illuminated_fraction": illuminated_fraction,
        "time_sigma_s": time_sigma_s,
        "observer": _text(row, "observer"),
    }


def read_phase_logs(
    campaign: Campaign, paths: Iterable[str | os.PathLike[str]] | None = None
) -> PhaseLog:
    """Read half-moon timing logs: the good rows and a problem for each bad one.

    Parameters
    ----------
    campaign : Campaign
        Gives the known sites, their time zones and the default files.
    paths : iterable of path-like, optional
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
    good, problems, rows_read, ignored = _read_all(
        campaign, "phases", paths, _PHASE_SLOTS, _parse_phase_row
    )
    dtypes = dict(_COMMON_DTYPES)
    dtypes.update(
        quarter=str,
        elongation_deg=float,
        illuminated_fraction=float,
        time_sigma_s=float,
        observer=object,
    )
    return PhaseLog(
        **_arrays(good, dtypes),
        problems=tuple(problems),
        rows_read=rows_read,
        ignored_columns=ignored,
    )
