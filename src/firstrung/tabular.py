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

from firstrung.campaign_model import Campaign
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

__all__ = ["COMMON_DTYPES", "FAST_PATH", "TIME_COLUMNS", "LogRows", "Row", "Slot", "Table", "cell_text", "column_arrays", "decode", "display_name", "got", "is_skipped", "read_rows", "time_sigma_s"]


#: Largest accepted timing uncertainty [s]: beyond an hour a timing says nothing
#: about a contact or a half moon, and the value is a unit typed wrongly.
TIME_SIGMA_LIMIT_S = 3600.0
#: Timing uncertainties must be at least this [s]: no timing by eye or camera is better, and
#: a vanishing one would give one row infinite weight.
TIME_SIGMA_MIN_S = 0.01

_NUMBER_RE = re.compile(r"^[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?$")

#: Plain shadow rows take a direct path (same results as the full row checks; a test compares them).
FAST_PATH = True
TIME_COLUMNS = ("time_utc", "time_local")
_TIME_EXAMPLES = {"time_utc": "2027-03-20T11:38:00Z", "time_local": "2027-03-20T12:38:00"}
_SPAN_TEXT = f"{EPHEMERIS_FIRST_UTC[:10]} and {EPHEMERIS_LAST_UTC[:10]}"


# --- results -------------------------------------------------------------------


class LogRows:
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
class Slot:
    """One logical column: a single name or a family of alternatives (units, time kinds)."""

    names: tuple[str, ...]
    required: bool = False
    numeric: bool = False

    @property
    def shown(self) -> str:
        return "|".join(self.names)


@dataclass
class Table:
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


def display_name(path: Path, campaign: Campaign) -> str:
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


def decode(data: bytes, label: str) -> tuple[str | None, str | None, RowProblem | None]:
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


def is_skipped(cells: Sequence[str]) -> bool:
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
                (cells for cells in itertools.islice(reader, _SNIFF_LINES) if not is_skipped(cells)),
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
    header: list[str], slots: Sequence[Slot], label: str
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
            if slot.names == TIME_COLUMNS:
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


def _read_table(path: Path, label: str, slots: Sequence[Slot]) -> Table:
    """Read one CSV file into its data rows; file-level problems leave it without rows."""
    table = Table(label=label, chosen={}, rows=[], problems=[], ignored=[])
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
    text, table.encoding, problem = decode(data, label)
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
            if is_skipped(cells):
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


def got(cell: str) -> str:
    return "an empty cell" if cell == "" else quoted(cell)


def _number(cell: str) -> float | None:
    """A plain decimal number (decimal point, optional exponent), else ``None``."""
    if not _NUMBER_RE.match(cell):
        return None
    value = float(cell)
    return value if math.isfinite(value) else None


class Row:
    """The cells of one data row and the problems found in them."""

    def __init__(self, table: Table, row: int, cells: dict[str, str]) -> None:
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
            self.problem(column, f"expected {expected}, got {got(cell)}{why}")
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


def read_rows(
    campaign: Campaign,
    kind: str,
    paths: Iterable[str | os.PathLike[str]] | None,
    slots: Sequence[Slot],
    parse_row: Callable[[Row, Campaign], dict | None],
    fast_row: Callable | None = None,
) -> tuple[list[dict], list[RowProblem], int, tuple[str, ...], tuple[str, ...]]:
    """Read every file of one kind: good rows as dicts, problems, rows read, ignored, notes.

    ``fast_row(table, cells, campaign)`` may read a plain row directly (a few
    microseconds); it returns ``None`` for anything unusual, which then goes
    through ``parse_row`` and its exact messages.
    """
    if isinstance(paths, (str, bytes, os.PathLike)):  # one file, not the characters of its name
        paths = (os.fsdecode(paths),)
    chosen_paths = campaign.logs.get(kind, ()) if paths is None else tuple(paths)
    good: list[dict] = []
    problems: list[RowProblem] = []
    ignored: list[str] = []
    notes: list[str] = []
    rows_read = 0
    for path in chosen_paths:
        label = display_name(Path(path), campaign)
        table = _read_table(Path(path), label, slots)
        problems.extend(table.problems)
        if table.note is not None:
            notes.append(table.note)
        ignored.extend(name for name in table.ignored if name not in ignored)
        fast = fast_row if (fast_row is not None and FAST_PATH and table.delimiter == ","
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
            row = Row(table, row_number, cells)
            values = parse_row(row, campaign)
            if row.problems or values is None:
                problems.extend(row.problems)
                continue
            values["file"] = label
            values["row"] = row_number
            good.append(values)
    return good, problems, rows_read, tuple(ignored), tuple(notes)


def column_arrays(good: list[dict], spec: dict[str, object]) -> dict[str, np.ndarray]:
    """Columns of the good rows as numpy arrays of the given dtypes."""
    return {
        name: np.array([values[name] for values in good], dtype=dtype)
        for name, dtype in spec.items()
    }


COMMON_DTYPES: dict[str, object] = {
    "file": str,
    "row": np.int64,
    "site": str,
    "time_utc": "datetime64[ms]",
    "time_column": str,
}


def cell_text(row: Row, slot_name: str) -> str:
    return row.cell(slot_name)


def time_sigma_s(row: Row) -> float:
    """The row's timing uncertainty [s]; NaN when absent or refused."""
    sigma_s = row.number("time_sigma_s", "a positive number of seconds", lambda x: x > 0.0)
    if sigma_s < TIME_SIGMA_MIN_S:
        row.problem(
            "time_sigma_s",
            f"expected a timing uncertainty of at least {TIME_SIGMA_MIN_S:g} s, got {quoted(row.cell('time_sigma_s'))}",
        )
        return math.nan
    if sigma_s > TIME_SIGMA_LIMIT_S:
        row.problem(
            "time_sigma_s",
            f"expected a timing uncertainty of at most {TIME_SIGMA_LIMIT_S:g} s, "
            f"got {quoted(row.cell('time_sigma_s'))}",
        )
        return math.nan
    return sigma_s


# --- shadows --------------------------------------------------------------------


# --- eclipse --------------------------------------------------------------------


# --- phases ---------------------------------------------------------------------


