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
import stat
import sys
from collections.abc import Callable, Iterable, Sequence
from dataclasses import fields, replace
from pathlib import Path

import numpy as np

from firstrung.campaign_model import Campaign
from firstrung.constants import EPHEMERIS_FIRST_UTC, EPHEMERIS_LAST_UTC
from firstrung.csv_bytes import plain_chunks
from firstrung.csv_cells import (
    _DECIMAL_COMMA_RE,
    TIME_COLUMNS,
    Slot,
    _choose_columns,
    _surplus_message,
    _swallowed,
    column_arrays,
    got,
)
from firstrung.csv_table import Table, column_chunks, raw_rows_kept
from firstrung.errors import RowProblem, merged_problems
from firstrung.memory import release_free_memory, repeated_object
from firstrung.spreadsheet import date_and_time_text, mean_noon_utc
from firstrung.text_files import (
    decode,
    is_skipped,
    normal_name,
    sniff_delimiter,
)
from firstrung.times import (
    TimeFormatError,
    in_ephemeris_span,
    parse_local,
    parse_utc,
    quoted,
)

__all__ = ["COMMON_DTYPES", "FAST_PATH", "TIME_COLUMNS", "LogRows", "Row", "Slot", "Table", "column_arrays", "decode", "display_name", "got", "is_skipped", "raw_rows_kept", "read_log", "read_rows"]


#: Largest log file read [bytes]: about four million rows; a larger file is refused with a
#: message (the text and its rows are held in memory while they are read).
MAX_LOG_BYTES = 256 * 1024 * 1024
#: No limit on a cell's length short of the file's (csv's default, 128 kB, stopped the whole file
#: at one long note and lost every row after it).
csv.field_size_limit(min(sys.maxsize, 2**31 - 1))

#: Plain rows of a kind with a column reader take it (same results as the full row checks, which
#: read every row when this is off; a test compares the two on the whole bad-input corpus).
FAST_PATH = True
#: After reading this many rows the freed memory of their cells is given back to the system.
_RELEASE_AFTER_ROWS = 100_000
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


def display_name(path: Path, campaign: Campaign) -> str:
    """A log path as given relative to the campaign's folder when that is possible."""
    if campaign.path is None:
        return Path(path).as_posix()
    try:
        return Path(os.path.relpath(path, campaign.folder)).as_posix()
    except ValueError:  # another drive on Windows
        return Path(path).as_posix()


def _read_table(path: Path, label: str, slots: Sequence[Slot], columnar: bool = False) -> Table:
    """Read one CSV file into its data rows; file-level problems leave it without rows.

    ``columnar``: try :func:`firstrung.csv_table.column_chunks` first (rows in ``chunks``).
    """
    table = Table(label=label, chosen={}, rows=[], problems=[], ignored=[], path=Path(path))
    try:
        info = os.stat(path)  # before opening: a FIFO would block the open, a device never end
        if stat.S_ISREG(info.st_mode) and info.st_size > MAX_LOG_BYTES:
            table.problems.append(RowProblem(label, None, None, (
                f"{info.st_size / 1e6:,.0f} MB; logs over {MAX_LOG_BYTES / 1e6:,.0f} MB are not read "
                "(split it into several files, or check that it is the log)")))
            return table
        if not stat.S_ISREG(info.st_mode) and not stat.S_ISDIR(info.st_mode):
            table.problems.append(RowProblem(label, None, None, (
                "not a regular file (a device, pipe or socket); expected a CSV file")))
            return table
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
    # the bytes kept only when they are the text's UTF-8 and may be read as they are (plain_chunks)
    utf8 = data if columnar and problem is None and table.encoding is None and not data.startswith(b"\xef\xbb\xbf") \
        else None
    del data  # else the text alone from here (a large log is not held twice)
    if problem is not None:
        table.problems.append(problem)
        return table
    if text.startswith("\ufeff"):
        text = text[1:]

    known = {name for slot in slots for name in slot.names}
    table.delimiter = sniff_delimiter(text, known)
    if columnar:
        table.chunks = plain_chunks(table, text, slots, known, utf8=utf8)
        del utf8
        if table.chunks is not None:
            return table
        table.chunks = column_chunks(table, text, slots, known)
        if table.chunks is not None:
            return table
    lines = io.StringIO(text, newline="").readlines()
    del text
    header: list[str] | None = None
    row_number = 0
    first_line = 0  # the physical line the current reader starts at
    while first_line is not None:
        start, first_line = first_line, None
        reader = csv.reader(itertools.islice(lines, start, None), delimiter=table.delimiter)
        consumed = 0
        try:
            for cells in reader:
                record_line, consumed = start + consumed, reader.line_num
                if is_skipped(cells):
                    continue
                if header is None:
                    header = [normal_name(cell) for cell in cells]
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
                        "takes in lines that look like rows (a closing quote missing?); the row is "
                        "left out and the lines after it are read as rows"
                    )
                    table.problems.append(RowProblem(label, row_number, column, message))
                    table.rows.append((row_number, {}))
                    first_line = record_line + 1  # read on from the next line, with a new reader
                    break
                values = {}
                for index, name in enumerate(header):
                    if name in known and name not in values:
                        values[name] = cells[index].strip() if index < len(cells) else ""
                table.rows.append((row_number, values))
        except csv.Error as error:
            table.problems.append(
                RowProblem(label, None, None, f"CSV error at line {start + reader.line_num}: {error}")
            )
    if header is None:
        required = ", ".join(slot.shown for slot in slots if slot.required)
        table.problems.append(
            RowProblem(label, None, None, f"empty file (expected a header line: {required})")
        )
    elif table.delimiter != ",":
        numeric = [table.chosen.get(slot.names[0]) for slot in slots if slot.numeric]
        table.decimal_comma = any(
            _DECIMAL_COMMA_RE().match(values.get(column, ""))
            for _, values in table.rows
            for column in numeric
            if column is not None
        )
    return table


class Row:
    """The cells of one data row and the problems found in them."""

    def __init__(self, table: Table, row: int, cells: dict[str, str]) -> None:
        self.table = table
        self.row = row
        self.cells = cells
        self.problems: list[RowProblem] = []
        self.timed = True

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

    def site_and_time(self, campaign: Campaign, *, untimed: bool = False) -> tuple[str, np.datetime64]:
        """The row's site id (the cell may give its name) and UTC time (NaT after a problem).

        With a ``date`` column the time column holds the time of day; ``untimed``
        accepts an empty time then, at the date's mean noon (``self.timed`` False).
        """
        site_id, known, site = self.cell("site"), campaign.site_ids, None
        if site_id == "":
            self.problem("site", f"expected a site id ({', '.join(known)}), got an empty cell")
        elif (site := campaign.site_matching(site_id)) is None:
            self.problem("site", f"unknown site {quoted(site_id)} (known: {', '.join(known)})")
        else:
            site_id = site.id
        nat = np.datetime64("NaT", "ms")
        column, text, date_column = self.column("time_utc"), self.cell("time_utc"), self.column("date")
        if date_column is not None and text == "" and untimed:
            t, message = mean_noon_utc(self.cell("date"), campaign.date_order, site)
            if message is not None:
                self.problem(date_column, message)
            self.timed = not (site is not None and message is None)
            return site_id, t
        if column is None:
            self.problem(None, "expected a time_utc or time_local column (only a trace may go without times)")
            return site_id, nat
        if text == "":
            kind = "UTC" if column == "time_utc" else "local"
            example = _TIME_EXAMPLES[column] if date_column is None else "13:14 (the date in the date column)"
            self.problem(column, f"expected an ISO 8601 {kind} time such as {example}, got an empty cell")
            return site_id, nat
        if date_column is not None:
            text, problem_column, message = date_and_time_text(self.cell("date"), text, campaign.date_order)
            if message is not None:
                self.problem(date_column if problem_column == "date" else column, message)
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
) -> tuple[list[dict], list[RowProblem], int, tuple[str, ...], tuple[str, ...]]:
    """Read every file of one kind, row by row: good rows as dicts, problems, rows read, ignored, notes."""
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
        for row_number, cells in table.rows:
            rows_read += 1
            if not cells:
                continue
            row = Row(table, row_number, cells)
            values = parse_row(row, campaign)
            if row.problems or values is None:
                problems.extend(row.problems)
                continue
            values["file"] = label
            values["row"] = row_number
            good.append(values)
    return good, merged_problems(problems), rows_read, tuple(ignored), tuple(notes)



def read_log(log_type, campaign: Campaign, kind: str, paths, slots: Sequence[Slot], parse_row, dtypes: dict[str, object]):
    """Read every file of one kind row by row into a ``log_type`` (:class:`LogRows`; ``dtypes`` beyond the common ones)."""
    good, problems, rows_read, ignored, notes = read_rows(campaign, kind, paths, slots, parse_row)
    return log_type(**column_arrays(good, {**COMMON_DTYPES, **dtypes}), problems=tuple(problems),
                    rows_read=rows_read, ignored_columns=ignored, notes=notes)


def read_columns(
    campaign: Campaign,
    kind: str,
    paths: Iterable[str | os.PathLike[str]] | None,
    slots: Sequence[Slot],
    parse_row: Callable[[Row, Campaign], dict | None],
    fast_columns: Callable,
    dtypes: dict[str, object],
) -> tuple[dict[str, np.ndarray], list[RowProblem], int, tuple[str, ...], tuple[str, ...]]:
    """:func:`read_rows` with the good rows as columns, plain rows read a column at a time.

    ``fast_columns(table, campaign)`` takes a columnar table and returns the
    values of the plain rows (arrays, as ``dtypes`` says) and a mask of the
    rows it read; every other row goes through ``parse_row`` and its exact
    messages. The result is the same as :func:`read_rows` gives, row for row
    (with ``FAST_PATH`` off every row takes that path).
    """
    if isinstance(paths, (str, bytes, os.PathLike)):  # one file, not the characters of its name
        paths = (os.fsdecode(paths),)
    if not FAST_PATH:
        good, problems, rows_read, ignored, notes = read_rows(campaign, kind, paths, slots, parse_row)
        return column_arrays(good, dtypes), problems, rows_read, ignored, notes
    chosen_paths = campaign.logs.get(kind, ()) if paths is None else tuple(paths)
    parts: list[tuple[int, dict[str, np.ndarray]]] = []
    problems: list[RowProblem] = []
    ignored: list[str] = []
    notes: list[str] = []
    rows_read = 0
    for file_index, path in enumerate(chosen_paths):
        label = display_name(Path(path), campaign)
        table = _read_table(Path(path), label, slots, columnar=True)
        problems.extend(table.problems)
        if table.note is not None:
            notes.append(table.note)
        ignored.extend(name for name in table.ignored if name not in ignored)
        good: list[dict] = []
        if table.chunks is None:  # read row by row (quoted line ends, csv errors, empty files)
            for row_number, cells in table.rows:
                rows_read += 1
                if cells:
                    _parse_one(Row(table, row_number, cells), campaign, parse_row, label, good, problems)
            parts.append((file_index, column_arrays(good, dtypes)))
            continue
        surplus: list[RowProblem] = []  # the file's problems in the order a whole-file read gives them
        checked: list[RowProblem] = []
        for chunk in table.chunks:
            surplus.extend(chunk.problems)
            rows_read += len(chunk.numbers) + len(chunk.rows)
            n = len(chunk.numbers)
            handled = np.zeros(n, bool)
            if n and chunk.delimiter == "," and not chunk.decimal_comma:
                fast, handled = fast_columns(chunk, campaign)
                if fast is not None:
                    m = int(handled.sum())  # one shared text for an object column, not a copy a row
                    fast["file"] = repeated_object(label, m) if dtypes["file"] is object else np.full(m, label)
                    fast["row"] = np.asarray(chunk.numbers, dtype=np.int64)[handled]
                    parts.append((file_index, {name: fast[name] for name in dtypes}))
            good = []
            for k in np.flatnonzero(~handled):
                _parse_one(Row(chunk, chunk.numbers[k], chunk.cells_of(k)), campaign, parse_row, label, good, checked)
            if good:
                parts.append((file_index, column_arrays(good, dtypes)))
        problems.extend(surplus + checked)
    if not parts:
        return column_arrays([], dtypes), merged_problems(problems), rows_read, tuple(ignored), tuple(notes)
    # back to the files' order, and the rows' order inside each file
    file_of = np.concatenate([np.full(len(p["row"]), k, dtype=np.int64) for k, p in parts])
    merged = {name: np.concatenate([p.pop(name) for _, p in parts]) for name in dtypes}  # each part freed as it goes
    del parts
    if rows_read >= _RELEASE_AFTER_ROWS:  # the chunks' strings are gone: give their memory back
        release_free_memory()
    order = np.lexsort((merged["row"], file_of))
    if not np.array_equal(order, np.arange(order.size)):
        merged = {name: values[order] for name, values in merged.items()}
    for name, dtype in dtypes.items():
        if merged[name].dtype.kind != np.dtype(dtype).kind:
            merged[name] = merged[name].astype(dtype)
    return merged, merged_problems(problems), rows_read, tuple(ignored), tuple(notes)


def _parse_one(row: Row, campaign: Campaign, parse_row, label: str, good: list[dict], problems: list) -> None:
    values = parse_row(row, campaign)
    if row.problems or values is None:
        problems.extend(row.problems)
        return
    values["file"] = label
    values["row"] = row.row
    good.append(values)


COMMON_DTYPES: dict[str, object] = {
    "file": str,
    "row": np.int64,
    "site": str,
    "time_utc": "datetime64[ms]",
    "time_column": str,
}


# --- shadows --------------------------------------------------------------------


# --- eclipse --------------------------------------------------------------------


# --- phases ---------------------------------------------------------------------


