"""Reading the observers' CSV logs: shadows, eclipse timings and half-moon timings.

The readers never raise on a bad row. Each bad cell becomes a
:class:`~firstrung.errors.RowProblem` (``file:row:column: message``), the row
is left out, and every good row is kept. A problem with a whole file (missing,
not UTF-8, a required column absent) is a problem with no row, and that file
yields no rows.

File format (the design's "Files" contract): UTF-8 (a BOM is accepted), one
header line, column names matched without regard to case, surrounding spaces,
or spaces inside for ``_`` (``Time UTC`` is ``time_utc``). Blank lines, lines
whose cells are all empty and lines starting with ``#`` are skipped, before or
after the header. **Row numbers count data rows only**: the first data row
after the header is row 1, and skipped lines are not counted. Unknown columns
are ignored and listed in ``ignored_columns``.

Numbers use a decimal point (``103.8``). Units are in the column names:
``shadow_m``/``shadow_cm``/``shadow_mm`` (exactly one of them), lengths are
returned in metres.

What spreadsheet programs write is read when it cannot be misread, and each
such file gets one line in the log's ``notes``:

- ``;``- or tab-separated files (the separator is the one that splits the
  header into known column names). In such a file a comma in a number is a
  decimal comma (``103,8``), the export of a decimal-comma locale; a number
  written like ``1.038`` in a file that also has decimal commas could be
  1.038 or 1038 and is refused.
- In a ``,``-separated file a decimal comma is refused: a row that it split
  into more cells than the header is refused with a message naming the cells.
- UTF-16 text (with or without a byte-order mark), and, when the bytes are not
  UTF-8, Windows-1252 text (only free text such as observers' names can hold
  letters outside ASCII, so no reading depends on the guess).
- Workbooks (``.xlsx``, ``.ods``, ``.xls``) and UTF-32 text are refused.
"""

from __future__ import annotations

import csv
import io
import itertools
import math
import os
import re
from collections.abc import Callable, Iterable, Sequence
from dataclasses import dataclass, fields, replace
from pathlib import Path

import numpy as np

from firstrung.campaign import EDGES, Campaign
from firstrung.constants import EPHEMERIS_FIRST_UTC, EPHEMERIS_LAST_UTC
from firstrung.errors import RowProblem
from firstrung.times import (
    QUOTED_LIMIT,
    TimeFormatError,
    in_ephemeris_span,
    parse_local,
    parse_utc,
    quoted,
)

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
#: Largest accepted timing uncertainty [s]: beyond an hour a timing says nothing
#: about a contact or a half moon, and the value is a unit typed wrongly.
TIME_SIGMA_LIMIT_S = 3600.0
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
            Problems, ``rows_read``, ``ignored_columns`` and ``notes`` are kept
            as they are.
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
    problems, rows_read, ignored_columns, notes
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
    notes: tuple[str, ...] = ()


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
    problems, rows_read, ignored_columns, notes
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
    notes: tuple[str, ...] = ()


# --- the shared core -----------------------------------------------------------

#: Separators a log may use, and how a note names them.
_DELIMITER_NAMES = {",": "','-separated", ";": "';'-separated", "\t": "tab-separated"}
#: A number with a decimal comma (``103,8``, ``-0,5``, ``,25``, ``1,5e3``).
_DECIMAL_COMMA_RE = re.compile(r"^[+-]?\d*,\d+(?:[eE][+-]?\d+)?$")
#: A number that a decimal-comma locale writes with ``.`` between groups of thousands.
_GROUPED_POINT_RE = re.compile(r"^[+-]?\d{1,3}(?:\.\d{3})+$")
#: Two cells that a decimal comma may have split (``103`` and ``8``).
_INTEGER_RE = re.compile(r"^[+-]?\d+$")
_DIGITS_RE = re.compile(r"^\d+$")
#: Characters that leave a cell blank (separators of another kind included).
_BLANK_CHARS = " \t\r\n\f\v\u00a0,;"
#: File signatures of spreadsheet workbooks: ZIP (.xlsx, .ods) and OLE2 (.xls).
_WORKBOOK_SIGNATURES = (b"PK\x03\x04", b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1")
#: Column names listed at most in a message about a header.
_SHOWN_COLUMNS = 12
#: Lines read to find the header when choosing the separator.
_SNIFF_LINES = 200
_SAVE_AS = "save the file as CSV UTF-8"


@dataclass(frozen=True)
class _Slot:
    """One logical column: a single name or a family of alternatives (units, time kinds)."""

    names: tuple[str, ...]
    required: bool = False
    numeric: bool = False

    @property
    def shown(self) -> str:
        return "|".join(self.names)


@dataclass
class _Table:
    """The cells of one file, keyed by the chosen name of each slot, and how it was read."""

    label: str
    chosen: dict[str, str | None]
    rows: list[tuple[int, dict[str, str]]]
    problems: list[RowProblem]
    ignored: list[str]
    delimiter: str = ","
    decimal_comma: bool = False
    encoding: str | None = None

    @property
    def note(self) -> str | None:
        """One line saying how the file was read, when that is not plain CSV UTF-8."""
        parts = []
        if self.encoding is not None:
            parts.append(self.encoding)
        if self.delimiter != ",":
            shown = _DELIMITER_NAMES[self.delimiter]
            parts.append(shown + (" with decimal commas" if self.decimal_comma else ""))
        return f"{self.label}: read as {', '.join(parts)}" if parts else None

    def read_number(self, cell: str) -> tuple[float | None, str | None]:
        """A cell as a finite number, or ``None`` and, when it helps, why it is refused."""
        if "," in cell:
            if "." in cell:
                return None, "write numbers without thousands separators"
            if self.delimiter == ",":
                return None, (
                    "a comma in a number in a ','-separated file: write it with a decimal "
                    "point and no thousands separator"
                )
            if not _DECIMAL_COMMA_RE.match(cell):
                return None, None
            cell = cell.replace(",", ".")
        elif self.decimal_comma and _GROUPED_POINT_RE.match(cell):
            digits = cell.replace(".", "")
            return None, (
                f"ambiguous in a file with decimal commas: {cell.lstrip('+')} or "
                f"{int(digits)}? write {cell.replace('.', ',')} or {digits}"
            )
        value = _number(cell)
        if value is None and _NUMBER_RE.match(cell):
            return None, "too large to be a measurement"
        return value, None


def _display_name(path: Path, campaign: Campaign) -> str:
    """A log path as given relative to the campaign's folder when that is possible."""
    if campaign.path is None:
        return Path(path).as_posix()
    try:
        return Path(os.path.relpath(path, campaign.folder)).as_posix()
    except ValueError:  # another drive on Windows
        return Path(path).as_posix()


def _utf16_without_bom(data: bytes) -> str | None:
    """``'utf-16-le'``/``'utf-16-be'`` when the bytes read as UTF-16 with no byte-order mark.

    Text in the Latin range written as UTF-16 has a NUL in every other byte;
    CSV UTF-8 has none.
    """
    sample = data[:4096]
    pairs = len(sample) // 2
    if pairs < 2:
        return None
    even = sample[0 : 2 * pairs : 2].count(0)
    odd = sample[1 : 2 * pairs : 2].count(0)
    if odd >= 0.75 * pairs and even <= 0.05 * pairs:
        return "utf-16-le"
    if even >= 0.75 * pairs and odd <= 0.05 * pairs:
        return "utf-16-be"
    return None


def _decode(data: bytes, label: str) -> tuple[str | None, str | None, RowProblem | None]:
    """The text of a file, how it was read when not as UTF-8, or the problem that stops it."""

    def refuse(message: str) -> tuple[None, None, RowProblem]:
        return None, None, RowProblem(label, None, None, message)

    if data.startswith(_WORKBOOK_SIGNATURES):
        return refuse(
            "a spreadsheet workbook (.xlsx, .ods or .xls), not CSV text; "
            "save the sheet as CSV UTF-8"
        )
    if data.startswith((b"\xff\xfe\x00\x00", b"\x00\x00\xfe\xff")):
        return refuse(f"UTF-32 text; {_SAVE_AS}")
    if data.startswith((b"\xff\xfe", b"\xfe\xff")):
        codec, encoding = "utf-16", "UTF-16 text"
    else:
        codec, encoding = _utf16_without_bom(data), "UTF-16 text without a byte-order mark"
    if codec is not None:
        try:
            return data.decode(codec), encoding, None
        except UnicodeDecodeError as error:
            return refuse(f"not valid UTF-16 text (at byte offset {error.start}); {_SAVE_AS}")
    if data.startswith(b"\xef\xbb\xbf"):
        try:
            return data[3:].decode("utf-8"), None, None
        except UnicodeDecodeError as error:
            offset = error.start + 3
            return refuse(
                "not UTF-8 text although it starts with a UTF-8 byte-order mark "
                f"(byte 0x{data[offset]:02x} at offset {offset}); {_SAVE_AS}"
            )
    try:
        return data.decode("utf-8"), None, None
    except UnicodeDecodeError as error:
        # Readings are ASCII (numbers, ISO times, site ids); only free text can
        # hold other letters, so reading the usual 8-bit spreadsheet encoding
        # loses nothing and at worst misspells a name.
        encoding = (
            f"Windows-1252 text, as it is not UTF-8 (byte 0x{data[error.start]:02x} at offset "
            f"{error.start}; check letters outside ASCII in names and notes)"
        )
        return data.decode("cp1252", errors="replace"), encoding, None


def _is_skipped(cells: Sequence[str]) -> bool:
    """Blank lines, lines of empty cells and comment lines (starting with ``#``)."""
    if not cells or all(not cell.strip(_BLANK_CHARS) for cell in cells):
        return True
    return cells[0].lstrip().startswith("#")


def _normal_name(cell: str) -> str:
    """A header cell as a column name: lower case, no surrounding spaces, ``_`` for inner ones."""
    return re.sub(r"\s+", "_", cell.replace("\ufeff", "").strip().lower())


def _sniff_delimiter(text: str, known: set[str]) -> str:
    """The separator that splits the header line into the most known column names."""
    best, best_count = ",", 0
    for delimiter in _DELIMITER_NAMES:
        reader = csv.reader(io.StringIO(text, newline=""), delimiter=delimiter)
        try:
            header = next(
                (cells for cells in itertools.islice(reader, _SNIFF_LINES) if not _is_skipped(cells)),
                [],
            )
        except csv.Error:
            continue
        count = sum(_normal_name(cell) in known for cell in header)
        if count > best_count:
            best, best_count = delimiter, count
    return best


def _printable(name: str) -> str:
    """A header name for a one-line message: as it is, or quoted when odd or very long."""
    return name if name.isprintable() and len(name) <= QUOTED_LIMIT else quoted(name)


def _swallowed(cells: Sequence[str], delimiter: str, width: int) -> tuple[int, int] | None:
    """A quoted cell that took in lines looking like rows: its index and how many line ends."""
    for index, cell in enumerate(cells):
        if "\n" not in cell and "\r" not in cell:
            continue
        more = cell.splitlines()[1:]
        if any(line.count(delimiter) >= min(width, 3) - 1 for line in more):
            return index, len(more)
    return None


def _surplus_message(cells: Sequence[str], expected: int, delimiter: str) -> str:
    """Why a row has more cells than the header, as precisely as the cells show."""
    message = f"expected {expected} cells as in the header, got {len(cells)}"
    if delimiter == ",":
        for left, right in zip(cells, cells[1:], strict=False):
            left, right = left.strip(), right.strip()
            if _INTEGER_RE.match(left) and _DIGITS_RE.match(right):
                return (
                    f"{message} (is '{left},{right}' a number with a decimal comma? In a "
                    f"','-separated file write {left}.{right}, or save the file with ';' separators)"
                )
    shown = "tab" if delimiter == "\t" else repr(delimiter)
    return f"{message}; put a cell that holds a {shown} in double quotes"


def _choose_columns(
    header: list[str], slots: Sequence[_Slot], label: str
) -> tuple[dict[str, str | None], list[RowProblem]]:
    """Which header name fills each slot, and the file-level problems of the header."""
    problems: list[RowProblem] = []
    chosen: dict[str, str | None] = {}
    seen: set[str] = set()
    for name in header:
        if name and name in seen:
            problems.append(RowProblem(label, None, None, f"column {quoted(name)} appears twice"))
        seen.add(name)
    required = ", ".join(slot.shown for slot in slots if slot.required)
    names = [_printable(name) for name in header if name]
    found = ", ".join(names[:_SHOWN_COLUMNS]) or "no column names"
    if len(names) > _SHOWN_COLUMNS:
        found += f" and {len(names) - _SHOWN_COLUMNS} more"
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
    except ValueError:  # a NUL character in the path
        message = "not a usable file name (it holds a NUL character)"
        table.problems.append(RowProblem(label, None, None, message))
        return table
    text, table.encoding, problem = _decode(data, label)
    if problem is not None:
        table.problems.append(problem)
        return table
    if text.startswith("\ufeff"):
        text = text[1:]

    known = {name for slot in slots for name in slot.names}
    table.delimiter = _sniff_delimiter(text, known)
    reader = csv.reader(io.StringIO(text, newline=""), delimiter=table.delimiter)
    header: list[str] | None = None
    row_number = 0
    try:
        for cells in reader:
            if _is_skipped(cells):
                continue
            if header is None:
                header = [_normal_name(cell) for cell in cells]
                table.chosen, problems = _choose_columns(header, slots, label)
                table.problems.extend(problems)
                if problems:
                    return table
                table.ignored = [name for name in header if name and name not in known]
                continue
            row_number += 1
            if len(cells) > len(header) and any(cell.strip() for cell in cells[len(header) :]):
                message = _surplus_message(cells, len(header), table.delimiter)
                table.problems.append(RowProblem(label, row_number, None, message))
                table.rows.append((row_number, {}))  # counted as read, not kept
                continue
            swallowed = _swallowed(cells, table.delimiter, len(header))
            if swallowed is not None:
                index, line_ends = swallowed
                column = header[index] if index < len(header) and header[index] else None
                message = (
                    f"a double quote opens a cell that runs on over {line_ends} line end(s) and "
                    "takes in lines that look like rows (a closing quote missing?); "
                    "those lines are not read"
                )
                table.problems.append(RowProblem(label, row_number, column, message))
                table.rows.append((row_number, {}))
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
    elif table.delimiter != ",":
        numeric = [table.chosen.get(slot.names[0]) for slot in slots if slot.numeric]
        table.decimal_comma = any(
            _DECIMAL_COMMA_RE.match(values.get(column, ""))
            for _, values in table.rows
            for column in numeric
            if column is not None
        )
    return table


def _got(cell: str) -> str:
    return "an empty cell" if cell == "" else quoted(cell)


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
        value, reason = self.table.read_number(cell)
        if value is None or not ok(value):
            why = "" if reason is None else f" ({reason})"
            self.problem(column, f"expected {expected}, got {_got(cell)}{why}")
            return math.nan
        return value * factor

    def site_and_time(self, campaign: Campaign) -> tuple[str, np.datetime64]:
        """The row's site id and UTC time (NaT after a problem)."""
        site_id = self.cell("site")
        known = campaign.site_ids
        site = None
        if site_id == "":
            self.problem("site", f"expected a site id ({', '.join(known)}), got an empty cell")
        elif site_id not in campaign._site_by_id:
            self.problem("site", f"unknown site {quoted(site_id)} (known: {', '.join(known)})")
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
                f"got {quoted(text)}",
            )
            return site_id, nat
        return site_id, t


def _read_all(
    campaign: Campaign,
    kind: str,
    paths: Iterable[str | os.PathLike[str]] | None,
    slots: Sequence[_Slot],
    parse_row: Callable[[_Row, Campaign], dict | None],
    fast_row: Callable | None = None,
) -> tuple[list[dict], list[RowProblem], int, tuple[str, ...], tuple[str, ...]]:
    """Read every file of one kind: good rows as dicts, problems, rows read, ignored, notes.

    ``fast_row(table, cells, campaign)`` may read a plain row directly (a few
    microseconds); it returns ``None`` for anything unusual, which then goes
    through ``parse_row`` and its exact messages.
    """
    chosen_paths = campaign.logs.get(kind, ()) if paths is None else tuple(paths)
    good: list[dict] = []
    problems: list[RowProblem] = []
    ignored: list[str] = []
    notes: list[str] = []
    rows_read = 0
    for path in chosen_paths:
        label = _display_name(Path(path), campaign)
        table = _read_table(Path(path), label, slots)
        problems.extend(table.problems)
        if table.note is not None:
            notes.append(table.note)
        ignored.extend(name for name in table.ignored if name not in ignored)
        fast = fast_row if (fast_row is not None and _FAST_PATH and table.delimiter == ","
                            and not table.decimal_comma) else None
        for row_number, cells in table.rows:
            rows_read += 1
            if not cells:
                continue
            if fast is not None:
                values = fast(table, cells, campaign)
                if values is not None:
                    values["file"] = label
                    values["row"] = row_number
                    good.append(values)
                    continue
            row = _Row(table, row_number, cells)
            values = parse_row(row, campaign)
            if row.problems or values is None:
                problems.extend(row.problems)
                continue
            values["file"] = label
            values["row"] = row_number
            good.append(values)
    return good, problems, rows_read, tuple(ignored), tuple(notes)


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


def _time_sigma_s(row: _Row) -> float:
    """The row's timing uncertainty [s]; NaN when absent or refused."""
    sigma_s = row.number("time_sigma_s", "a positive number of seconds", lambda x: x > 0.0)
    if sigma_s > TIME_SIGMA_LIMIT_S:
        row.problem(
            "time_sigma_s",
            f"expected a timing uncertainty of at most {TIME_SIGMA_LIMIT_S:g} s, "
            f"got {quoted(row.cell('time_sigma_s'))}",
        )
        return math.nan
    return sigma_s


# --- shadows --------------------------------------------------------------------

_SHADOW_SLOTS = (
    _Slot(("site",), required=True),
    _Slot(_TIME_COLUMNS, required=True),
    _Slot(("shadow_m", "shadow_cm", "shadow_mm"), required=True, numeric=True),
    _Slot(("gnomon_m", "gnomon_cm", "gnomon_mm"), numeric=True),
    _Slot(("edge",)),
    _Slot(("temperature_c",), numeric=True),
    _Slot(("pressure_hpa",), numeric=True),
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
        "observer": _text(row, "observer"),
        "note": _text(row, "note"),
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
    from firstrung.campaign import DEFAULT_HEIGHT_SIGMA_M, DEFAULT_SHADOW_SIGMA_M

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
_FAST_PATH = True
_PLAIN_UTC_RE = re.compile(r"^(\d{4}-\d{2}-\d{2})[T ](\d{2}:\d{2}(?::\d{2}(?:\.\d{1,3})?)?)(?:Z|\+00:00)?$")
_PLAIN_NUMBER_RE = re.compile(r"^\d+(?:\.\d+)?$")
_SPAN_MS = (np.datetime64(EPHEMERIS_FIRST_UTC, "ms"), np.datetime64(EPHEMERIS_LAST_UTC, "ms"))


def _plain(cell: str, low: float, high: float, factor: float = 1.0) -> float | None:
    """A plain positive decimal within [low, high] after ``factor``, else None (the slow path decides)."""
    if not _PLAIN_NUMBER_RE.match(cell):
        return None
    value = float(cell) * factor
    return value if low <= value <= high else None


def _fast_shadow_row(table: _Table, cells: dict[str, str], campaign: Campaign) -> dict | None:
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
    good, problems, rows_read, ignored, notes = _read_all(
        campaign, "shadows", paths, _SHADOW_SLOTS, _parse_shadow_row, _fast_shadow_row
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
        notes=notes,
    )


# --- eclipse --------------------------------------------------------------------

_ECLIPSE_SLOTS = (
    _Slot(("site",), required=True),
    _Slot(_TIME_COLUMNS, required=True),
    _Slot(("event",), required=True),
    _Slot(("feature",)),
    _Slot(("time_sigma_s",), numeric=True),
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
            f"expected an empty cell for the umbral contact {event}, got {quoted(feature)}",
        )
    time_sigma_s = _time_sigma_s(row)
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
    good, problems, rows_read, ignored, notes = _read_all(
        campaign, "eclipse", paths, _ECLIPSE_SLOTS, _parse_eclipse_row
    )
    dtypes = dict(_COMMON_DTYPES)
    dtypes.update(event=str, feature=object, time_sigma_s=float, observer=object)
    return EclipseLog(
        **_arrays(good, dtypes),
        problems=tuple(problems),
        rows_read=rows_read,
        ignored_columns=ignored,
        notes=notes,
    )


# --- phases ---------------------------------------------------------------------

_PHASE_SLOTS = (
    _Slot(("site",), required=True),
    _Slot(_TIME_COLUMNS, required=True),
    _Slot(("quarter",), required=True),
    _Slot(("elongation_deg",), numeric=True),
    _Slot(("illuminated_fraction",), numeric=True),
    _Slot(("time_sigma_s",), numeric=True),
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
    time_sigma_s = _time_sigma_s(row)
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
    good, problems, rows_read, ignored, notes = _read_all(
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
        notes=notes,
    )
