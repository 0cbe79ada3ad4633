"""A log file's cells read a column at a time, in chunks of rows: the columnar pass of the readers.

:mod:`firstrung.tabular` reads a log row by row when it must (a quoted line end, a csv error, an
empty file); every other file is read here, with the per-row work left to C (the csv module,
``zip``, ``map``) and the same rows, numbers, problems and cells as the row-by-row loop (a test
compares them on the whole bad-input corpus). A plain comma-separated file without quotes is read
in chunks of :data:`CHUNK_CHARS` characters, each turned into arrays before the next is read, so that a
long log never holds all its rows as Python lists at once (a million rows read in a few hundred
megabytes).
"""

from __future__ import annotations

import contextlib
import csv
import io
import operator
from collections.abc import Iterator, Sequence
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from firstrung.csv_cells import (
    _DECIMAL_COMMA_RE,
    _GROUPED_POINT_RE,
    _NUMBER_RE,
    Slot,
    _choose_columns,
    _number,
    _surplus_message,
)
from firstrung.errors import RowProblem
from firstrung.text_files import _DELIMITER_NAMES, is_skipped, normal_name

__all__ = ["CHUNK_CHARS", "Table", "column_chunks", "raw_rows_kept"]

#: Characters read at a time from a plain comma-separated log, about 65,000 rows of a usual log
#: (a chunk's cells are Python strings until they become arrays; larger chunks cost memory,
#: smaller ones time).
CHUNK_CHARS = 4 * 1024 * 1024


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
    #: Read in one columnar pass (see :func:`column_chunks`): the kept rows' numbers and their
    #: cells column by column; ``rows`` then holds only the rows counted but not kept.
    numbers: list[int] | None = None
    columns: dict[str, list[str]] | None = None
    path: Path | None = None
    #: The file's rows as tables of chunks (:func:`column_chunks`), when it is read a column at a time.
    chunks: Iterator[Table] | None = None

    def cells_of(self, k: int) -> dict[str, str]:
        """The cells of the ``k``-th kept row of a columnar read, as the row-by-row read gives them."""
        return {name: column[k] for name, column in self.columns.items()}

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
            if not _DECIMAL_COMMA_RE().match(cell):
                return None, None
            cell = cell.replace(",", ".")
        elif self.decimal_comma and _GROUPED_POINT_RE().match(cell):
            digits = cell.replace(".", "")
            return None, (
                f"ambiguous in a file with decimal commas: {cell.lstrip('+')} or "
                f"{int(digits)}? write {cell.replace('.', ',')} or {digits}"
            )
        value = _number(cell)
        if value is None and _NUMBER_RE().match(cell):
            return None, "too large to be a measurement"
        return value, None


_FIRST_CELL = operator.itemgetter(0)
_FIRST_CHAR = operator.itemgetter(slice(0, 1))


#: While :func:`raw_rows_kept` runs: every row of each file read in one columnar pass, by path.
_RAW_KEPT: dict[str, tuple[tuple[str, ...], list[int], list[list[str]]]] | None = None


@contextlib.contextmanager
def raw_rows_kept():
    """Keep, for the files read inside the block, their header and every data row as read.

    Yields a dictionary: path (as ``str``) -> (header names, row numbers, the rows' cells).
    A file read another way (a quoted line end, a bad header, not decodable) is
    not in it; the caller reads those itself.
    """
    global _RAW_KEPT
    previous, _RAW_KEPT = _RAW_KEPT, {}
    try:
        yield _RAW_KEPT
    finally:
        _RAW_KEPT = previous


def _unskipped(records: list[list[str]]) -> list[list[str]]:
    """The records but the skipped lines (blank, every cell empty, ``#`` first), found a column at a time."""
    # a row can be skipped only when it is empty or its first cell starts with no letter or digit
    lengths = np.fromiter(map(len, records), np.int64, len(records))
    filled = np.flatnonzero(lengths > 0)
    firsts = list(map(_FIRST_CHAR, map(_FIRST_CELL, records if filled.size == len(records) else
                                       (records[k] for k in filled))))
    codes = np.array(firsts, dtype="<U1").view(np.uint32) if firsts else np.zeros(0, np.uint32)
    alnum = (codes - 48 < 10) | (codes - 65 < 26) | (codes - 97 < 26)
    maybe = np.concatenate([np.flatnonzero(lengths == 0), filled[~alnum]])
    skipped = {int(k) for k in maybe if is_skipped(records[k])}
    return [r for k, r in enumerate(records) if k not in skipped] if skipped else records


def _fill(table: Table, data: list[list[str]], first_number: int, header: list[str], known: set[str]) -> None:
    """The chunk's rows into ``table``: surplus cells refused (counted in ``rows``), the rest by column."""
    width = len(header)
    refused = set()
    for k, cells in enumerate(data):
        if len(cells) > width and any(cell.strip() for cell in cells[width:]):
            message = _surplus_message(cells, width, table.delimiter)
            table.problems.append(RowProblem(table.label, first_number + k, None, message))
            table.rows.append((first_number + k, {}))  # counted as read, not kept
            refused.add(k)
    kept = [cells for k, cells in enumerate(data) if k not in refused] if refused else data
    table.numbers = ([first_number + k for k in range(len(data)) if k not in refused] if refused
                     else list(range(first_number, first_number + len(data))))
    short = bool(kept) and min(map(len, kept)) < width
    wanted = {}
    for index, name in enumerate(header):
        if name in known and name not in wanted:
            wanted[name] = index
    by_index = list(zip(*kept, strict=False)) if kept and not short else None  # every column at once, in C
    table.columns = {}
    for name, index in wanted.items():
        if by_index is not None:
            cells = by_index[index] if index < len(by_index) else ("",) * len(kept)
        else:
            cells = [c[index] if index < len(c) else "" for c in kept]
        table.columns[name] = list(map(str.strip, cells))


def _header(table: Table, records, slots: Sequence[Slot], known: set[str]) -> list[str] | None:
    """The header from the first record, its columns chosen (problems on ``table``); None when refused."""
    header = [normal_name(cell) for cell in records[0]]
    table.chosen, problems = _choose_columns(header, slots, table.label)
    table.problems.extend(problems)
    table.numbers, table.columns = [], {}
    if problems:
        return None
    table.ignored = [name for name in header if name and name not in known]
    return header


def _record_chunks(text: str, chunk_chars: int) -> Iterator[list[list[str]]]:
    """The records of a comma-separated text without quotes, a slice of whole lines at a time.

    Each slice ends at a line feed, so no record is cut (without quotes a record is one line); only
    the slice is copied into the csv module's buffer, never the whole text.
    """
    start = 0
    while start < len(text):
        end = text.find("\n", start + chunk_chars)
        end = len(text) if end < 0 else end + 1
        yield list(csv.reader(io.StringIO(text[start:end], newline="")))
        start = end


def column_chunks(table: Table, text: str, slots: Sequence[Slot], known: set[str],
                  chunk_chars: int | None = None) -> Iterator[Table] | None:
    """Read a file whose records are one line each, column by column: its rows as tables of chunks.

    None, with nothing changed, when a record spans lines (a quoted line end)
    or the csv module stops: the row-by-row loop then reads the file and says
    what it found. Otherwise ``table`` gets the header (its chosen columns,
    ignored names and file-level problems) and the iterator gives one table per
    chunk of rows: their numbers, cells by column and the rows refused for
    surplus cells (``rows``, with their problems). A file with quotes or another
    separator than the comma is one chunk (its decimal commas are judged over
    the whole file).
    """
    if table.delimiter == "," and '"' not in text:
        records = _record_chunks(text, chunk_chars or CHUNK_CHARS)
    else:
        reader = csv.reader(io.StringIO(text, newline=""), delimiter=table.delimiter)
        try:
            whole = list(reader)
        except csv.Error:
            return None
        if len(whole) != reader.line_num:  # a record spans lines
            return None
        records = iter((whole,))
    first: list[list[str]] = []
    for raw in records:  # up to the header (lines before it may all be skipped ones)
        first = _unskipped(raw)
        if first:
            break
    if not first:
        return None  # an empty file: the loop's message
    header = _header(table, first, slots, known)
    if header is None:
        return iter(())
    kept_raw = None
    if _RAW_KEPT is not None:  # the check's copy of every row: the same read, kept
        kept_raw = _RAW_KEPT[str(table.path)] = (tuple(header), [], [])
    if table.delimiter != ",":  # one chunk, read now: its decimal commas are the file's
        chunk = _chunk(table, first[1:], 1, header, known, kept_raw)
        numeric = [table.chosen.get(slot.names[0]) for slot in slots if slot.numeric]
        chunk.decimal_comma = table.decimal_comma = any(
            _DECIMAL_COMMA_RE().match(value)
            for column in numeric
            if column is not None
            for value in chunk.columns.get(column, ())
        )
        return iter((chunk,))
    return _chunks(table, header, first[1:], records, known, kept_raw)


def _chunk(table: Table, data, number: int, header, known, kept_raw) -> Table:
    """One chunk of data rows, numbered from ``number``, as a table (kept for the check when asked)."""
    if kept_raw is not None:
        kept_raw[1].extend(range(number, number + len(data)))
        kept_raw[2].extend(data)
    chunk = Table(label=table.label, chosen=table.chosen, rows=[], problems=[], ignored=table.ignored,
                  delimiter=table.delimiter, path=table.path)
    _fill(chunk, data, number, header, known)
    return chunk


def _chunks(table: Table, header, data, records, known, kept_raw) -> Iterator[Table]:
    number = 1
    while True:
        chunk = _chunk(table, data, number, header, known, kept_raw)
        number += len(data)
        del data
        yield chunk
        del chunk
        data = []
        while not data:  # a chunk of skipped lines alone is passed over, never taken for the end
            raw = next(records, None)
            if raw is None:
                return
            data = _unskipped(raw)
