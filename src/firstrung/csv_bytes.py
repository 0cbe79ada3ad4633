"""A plain comma-separated log read from its bytes, a column at a time, with no Python object per cell.

:mod:`firstrung.csv_table` reads a log's records with the csv module, which makes a Python string
of every cell. A plain file (``,``-separated, no double quote, no NUL, no carriage return but
before a line feed) has one record a line and its cells lie between commas, so here the line
ends and the commas are found with numpy, and each wanted column becomes a fixed-width bytes
array of its cells, stripped as ``str.strip`` strips them (:class:`ByteChunk`). Rows that are
not regular (fewer or more cells than the header, a cell longer than :data:`WIDEST_CELL` bytes,
a line that may be a skipped one) are parsed one by one exactly as the csv module parses them,
and give the same cells; rows refused for surplus cells give the same problem. The readers of
each kind take the byte columns where they know how (``methods.shadows.log_bytes``) and the
text columns (:attr:`ByteChunk.columns`, made on first use) elsewhere.
"""

from __future__ import annotations

from collections.abc import Iterator, Sequence

import numpy as np

from firstrung import csv_table
from firstrung.csv_cells import Slot, _surplus_message
from firstrung.csv_table import Table, _header
from firstrung.distinct import distinct_texts
from firstrung.errors import RowProblem
from firstrung.text_files import is_skipped

__all__ = ["BYTE_READER", "ROWS_PER_CHUNK", "WIDEST_CELL", "ByteChunk", "LineCells", "byte_chunks", "plain_chunks"]

#: Plain comma-separated files are read from their bytes; off, the csv module reads them (the
#: same rows, cells and problems: a test compares the two on the bad-input corpus).
BYTE_READER = True

#: Lines turned into arrays at a time (a chunk's temporaries stay a few tens of megabytes).
ROWS_PER_CHUNK = 262_144
#: Cells longer than this [bytes] make their row take the row-by-row parse (fixed-width arrays
#: stay narrow whatever one long note holds).
WIDEST_CELL = 64
#: The ASCII characters ``str.strip`` removes (the rest of its white space is not ASCII).
_STRIPPED = np.zeros(256, bool)
_STRIPPED[[9, 10, 11, 12, 13, 28, 29, 30, 31, 32]] = True
_ALNUM = np.zeros(256, bool)
_ALNUM[48:58] = _ALNUM[65:91] = _ALNUM[97:123] = True


def plain_bytes(text: str, utf8: bytes | None = None) -> bytes | None:
    """The text as UTF-8 when every record is one line without quotes, else None (the csv module reads it).

    ``utf8``: the text's own UTF-8 bytes when the file held them (looked at instead, and not encoded again).
    """
    if utf8 is not None:
        if b'"' in utf8 or b"\x00" in utf8:
            return None
        if b"\r" in utf8 and utf8.count(b"\r") != utf8.count(b"\r\n"):
            return None
        return utf8 + bytes(WIDEST_CELL)
    if '"' in text or "\x00" in text:
        return None
    if "\r" in text and text.count("\r") != text.count("\r\n"):
        return None  # a carriage return alone ends a record for the csv module
    return text.encode("utf-8") + bytes(WIDEST_CELL)  # NUL after the text: any cell's bytes can be cut out as
    # a window of the widest width (the NULs are no line and no cell: the lines end where the text does)


def plain_chunks(table: Table, text: str, slots: Sequence[Slot], known: set[str],
                 rows_per_chunk: int | None = None, utf8: bytes | None = None) -> Iterator[Table] | None:
    """A plain comma-separated file's rows as :class:`ByteChunk` tables (see :func:`byte_chunks`).

    None, with ``table`` unchanged, when the file is not plain (a quote, a NUL, a lone carriage
    return, another separator) or every line is skipped: :func:`firstrung.csv_table.column_chunks`
    or the row-by-row loop reads it then.
    """
    if not BYTE_READER or table.delimiter != ",":
        return None
    data = plain_bytes(text, utf8)
    if data is None:
        return None

    def header_of(cells):
        header = _header(table, [cells], slots, known)
        if header is None or csv_table._RAW_KEPT is None:
            return header, None
        kept = (tuple(header), [], LineCells(data))  # the check's copy of every row, cut from the bytes on use
        csv_table._RAW_KEPT[str(table.path)] = kept
        return header, kept

    return byte_chunks(table, data, header_of, known, rows_per_chunk)


def _cells(line: str) -> list[str]:
    """A line without quotes as the csv module splits it (an empty line has no cells)."""
    return line.split(",") if line else []


class ByteChunk(Table):
    """A chunk of a plain file's rows: each wanted column's cells as stripped fixed-width bytes.

    ``byte_columns[name][k]`` is the ``k``-th kept row's cell (``b""`` for a row in
    ``irregular``, whose cells :meth:`cells_of` parses from its line). ``columns``
    (lists of ``str``, as :func:`firstrung.csv_table.column_chunks` gives them) is made
    on first use.
    """

    def __init__(self, table: Table, data: bytes, wanted: dict[str, int]):
        super().__init__(label=table.label, chosen=table.chosen, rows=[], problems=[], ignored=table.ignored,
                         delimiter=table.delimiter, path=table.path)
        self._data, self._wanted = data, wanted
        self.byte_columns: dict[str, np.ndarray] = {}
        self.irregular = np.zeros(0, bool)
        self.line_start = self.line_end = np.zeros(0, np.int64)

    @property
    def columns(self) -> dict[str, list[str]]:
        if self._columns is None and self.byte_columns:
            self._columns = {name: self._text_column(name) for name in self._wanted}
        return self._columns

    @columns.setter
    def columns(self, value) -> None:
        self._columns = value

    def distinct(self, name: str, rows: np.ndarray | None = None) -> tuple[list[str], np.ndarray]:
        """The distinct texts of a column's regular cells and each kept row's index into them (of the kept
        rows ``rows`` only, when given)."""
        values, inverse = distinct_texts(self.byte_columns[name] if rows is None else self.byte_columns[name][rows])
        return [v.decode("utf-8").strip() for v in values.tolist()], inverse

    def _text_column(self, name: str) -> list[str]:
        texts, inverse = self.distinct(name)
        out = np.array(texts, dtype=object)[inverse].tolist() if texts else []
        for k in np.flatnonzero(self.irregular).tolist():
            out[k] = self.cells_of(k)[name]
        return out

    def cells_of(self, k: int) -> dict[str, str]:
        """The cells of the ``k``-th kept row, as the csv module and ``str.strip`` give them."""
        if self._columns is not None:
            return {name: column[k] for name, column in self._columns.items()}
        cells = _cells(self._data[self.line_start[k]:self.line_end[k]].decode("utf-8"))
        return {name: cells[i].strip() if i < len(cells) else "" for name, i in self._wanted.items()}


class LineCells(Sequence):
    """The cells of some lines of a plain file (lists of ``str``, as :func:`_cells` splits a line), cut from
    its bytes when asked for: no Python object per cell is kept. :meth:`column` gives one column of every
    line at once."""

    def __init__(self, data: bytes) -> None:
        self._data = data
        self._parts: list[tuple[np.ndarray, np.ndarray]] = []
        self._size = 0
        self._comma_cache: tuple | None = None

    def add(self, start: np.ndarray, end: np.ndarray) -> None:
        """Lines ``data[start:end]`` after those already held."""
        self._parts.append((start, end))
        self._size += start.size

    def _spans(self) -> tuple[np.ndarray, np.ndarray]:
        if not self._parts:
            return np.zeros(0, np.int64), np.zeros(0, np.int64)
        return np.concatenate([p[0] for p in self._parts]), np.concatenate([p[1] for p in self._parts])

    def __len__(self) -> int:
        return self._size

    def __getitem__(self, k):
        if isinstance(k, slice):
            return [self[i] for i in range(*k.indices(self._size))]
        if k < 0:
            k += self._size
        if not 0 <= k < self._size:
            raise IndexError(k)
        for start, end in self._parts:
            if k < start.size:
                return _cells(self._data[start[k]:end[k]].decode("utf-8"))
            k -= start.size
        raise IndexError(k)

    def __iter__(self):
        data = self._data
        for start, end in self._parts:
            for s, e in zip(start.tolist(), end.tolist(), strict=True):
                yield _cells(data[s:e].decode("utf-8"))

    def column(self, k: int) -> list[str]:
        """Every line's ``k``-th cell, stripped as ``str.strip`` strips it ('' when the line has fewer)."""
        names, code = self.column_codes(k)
        return np.array(names, dtype=object)[code].tolist() if names else []

    def column_codes(self, k: int) -> tuple[list[str], np.ndarray]:
        """:meth:`column` as its distinct texts and each line's index into them."""
        raw, start, end, commas, first, within = self._commas()
        n = start.size
        if n == 0:
            return [], np.zeros(0, np.int64)
        at = np.flatnonzero(within >= k)
        s = start[at] if k == 0 else commas[first[at] + k - 1] + 1
        e = end[at] if commas.size == 0 else np.where(
            within[at] > k, commas[np.minimum(first[at] + k, commas.size - 1)], end[at])
        names = [""]  # a line without the cell
        code = np.zeros(n, np.int64)
        long = (e - s) > WIDEST_CELL
        short = np.flatnonzero(~long)
        if short.size:
            values, inverse = distinct_texts(_gather(raw, s[short], e[short]))
            names.extend(v.decode("utf-8").strip() for v in values.tolist())
            code[at[short]] = inverse + 1
        for j in np.flatnonzero(long).tolist():
            code[at[j]] = len(names)
            names.append(self._data[s[j]:e[j]].decode("utf-8").strip())
        index: dict[str, int] = {}  # cells that differ only in their spaces are one text
        same = np.array([index.setdefault(name, len(index)) for name in names], np.int64)
        return list(index), same[code]

    def _commas(self) -> tuple[np.ndarray, ...]:
        """The bytes, every line's start and end, the commas, each line's first comma and its count of them
        (kept for the next column)."""
        if self._comma_cache is None or self._comma_cache[0] != self._size:
            start, end = self._spans()
            raw = np.frombuffer(self._data, np.uint8)
            commas = np.flatnonzero(raw == 44)
            first = np.searchsorted(commas, start)
            within = np.searchsorted(commas, end) - first  # commas inside each line
            self._comma_cache = (self._size, raw, start, end, commas, first, within)
        return self._comma_cache[1:]


def _lines(data: bytes) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """The bytes as uint8, and every line's start and end (a line feed and a carriage return before it left out).

    ``data`` ends with :data:`WIDEST_CELL` NUL bytes that belong to no line.
    """
    padded = np.frombuffer(data, np.uint8)
    raw = padded[:padded.size - WIDEST_CELL]
    feeds = np.flatnonzero(raw == 10)
    start = np.concatenate([[0], feeds + 1])
    end = np.concatenate([feeds, [raw.size]])
    if start[-1] == raw.size:  # the text ends with a line feed: no line after it
        start, end = start[:-1], end[:-1]
    if b"\r" in data:
        end = end - ((end > start) & (raw[np.maximum(end - 1, 0)] == 13))
    return padded, start, end


def byte_chunks(table: Table, data: bytes, header_of, known: set[str],
                rows_per_chunk: int | None = None) -> Iterator[Table] | None:
    """The data rows of a plain file as :class:`ByteChunk` tables, numbered as the row-by-row loop numbers them.

    ``header_of(cells)`` takes the first unskipped line's cells, chooses the columns (setting
    ``table``'s header, problems and ignored names) and returns the header names, or None when
    the file is refused, and the (header, numbers, cells) lists that get every data row as read
    (the check's copy) or None. None, with nothing read, when every line is skipped (the
    loop's message).
    """
    raw, start, end = _lines(data)  # raw: the padded bytes
    first = 0
    while first < start.size:
        cells = _cells(data[start[first]:end[first]].decode("utf-8"))
        if not is_skipped(cells):
            break
        first += 1
    if first == start.size:
        return None
    header, raw_kept = header_of(cells)
    if header is None:
        return iter(())
    wanted: dict[str, int] = {}
    for index, name in enumerate(header):
        if name in known and name not in wanted:
            wanted[name] = index
    return _chunks(table, data, raw, start[first + 1:], end[first + 1:], len(header), wanted, raw_kept,
                   rows_per_chunk or ROWS_PER_CHUNK)


def _chunks(table, data, raw, start, end, width, wanted, raw_kept, step) -> Iterator[Table]:
    number = 1
    for a in range(0, max(start.size, 1), step):
        chunk = _chunk(table, data, raw, start[a:a + step], end[a:a + step], number, width, wanted, raw_kept)
        number += chunk.data_rows
        if chunk.data_rows or a == 0:
            yield chunk


def _chunk(table, data, raw, start, end, number, width, wanted, raw_kept) -> ByteChunk:
    chunk = ByteChunk(table, data, wanted)
    n = start.size
    first_byte = np.where(end > start, raw[np.minimum(start, raw.size - 1)], 0)
    skipped = np.zeros(n, bool)
    for k in np.flatnonzero(~_ALNUM[first_byte]).tolist():  # blank, comment or odd first character: look
        skipped[k] = is_skipped(_cells(data[start[k]:end[k]].decode("utf-8")))
    lo, hi = (int(start[0]), int(end[-1])) if n else (0, 0)
    commas = np.flatnonzero(raw[lo:hi] == 44) + lo
    first_comma = np.searchsorted(commas, start)  # each line's commas: commas[first_comma:][:count]
    count = np.searchsorted(commas, end) - first_comma
    counted = np.flatnonzero(~skipped)
    chunk.data_rows = counted.size
    numbers = np.empty(n, np.int64)
    numbers[counted] = np.arange(number, number + counted.size)
    refused = np.zeros(n, bool)
    for k in np.flatnonzero(~skipped & (count > width - 1)).tolist():
        cells = _cells(data[start[k]:end[k]].decode("utf-8"))
        if any(cell.strip() for cell in cells[width:]):
            message = _surplus_message(cells, width, table.delimiter)
            chunk.problems.append(RowProblem(table.label, int(numbers[k]), None, message))
            chunk.rows.append((int(numbers[k]), {}))  # counted as read, not kept
            refused[k] = True
    if raw_kept is not None:
        raw_kept[1].extend(numbers[counted].tolist())
        raw_kept[2].add(start[counted], end[counted])
    kept = np.flatnonzero(~skipped & ~refused)
    chunk.numbers = numbers[kept].tolist()
    chunk.line_start, chunk.line_end = start[kept], end[kept]
    regular = count[kept] == width - 1
    # the cells of the regular rows: between the line's start, its commas and its end
    bounds = commas[first_comma[kept[regular]][:, None] + np.arange(width - 1)] if width > 1 else \
        np.zeros((int(regular.sum()), 0))
    cell_start = np.concatenate([start[kept[regular]][:, None], bounds + 1], axis=1)
    cell_end = np.concatenate([bounds, end[kept[regular]][:, None]], axis=1)
    at = np.flatnonzero(regular)
    too_long = np.zeros(at.size, bool)
    spans = {}
    for name, index in wanted.items():
        s, e = _stripped(raw, cell_start[:, index].copy(), cell_end[:, index].copy())
        too_long |= (e - s) > WIDEST_CELL
        spans[name] = (s, e)
    regular[at[too_long]] = False
    chunk.irregular = ~regular
    for name, (s, e) in spans.items():
        column = np.zeros(kept.size, dtype="S1")
        ok = ~too_long
        if ok.any():
            column = np.zeros(kept.size, dtype=f"S{max(1, int((e - s)[ok].max()))}")
            column[at[ok]] = _gather(raw, s[ok], e[ok])
        chunk.byte_columns[name] = column
    return chunk


def _stripped(raw: np.ndarray, s: np.ndarray, e: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Cell spans with the ASCII white space ``str.strip`` removes taken off both ends."""
    # (``raw`` ends with NUL padding, so ``raw[s]`` is a byte even for an empty last cell; ``raw[e - 1]`` for
    # e = 0 is a padding NUL: neither is white space)
    at = np.flatnonzero(_STRIPPED[raw[s]])  # most cells start with no white space: one look at them all
    while at.size:
        at = at[e[at] > s[at]]
        s[at] += 1
        at = at[_STRIPPED[raw[s[at]]]]
    at = np.flatnonzero(_STRIPPED[raw[e - 1]])
    while at.size:
        at = at[e[at] > s[at]]
        e[at] -= 1
        at = at[_STRIPPED[raw[e[at] - 1]]]
    return s, e


def _gather(raw: np.ndarray, s: np.ndarray, e: np.ndarray) -> np.ndarray:
    """The byte ranges ``[s, e)`` as a fixed-width bytes array (shorter cells padded with NUL, which it drops).

    ``raw`` ends with at least the widest range's width of padding, so each range is cut out as a
    window of that width (one copy of the bytes, no index per byte).
    """
    length = e - s
    width = max(1, int(length.max()) if length.size else 1)
    # a window of ``width`` bytes starting at every byte: cutting one out is one item's copy
    windows = np.ndarray(buffer=raw, dtype=f"S{width}", shape=(raw.size - width + 1,), strides=(1,))
    out = windows[s]
    cells = out.view(np.uint8).reshape(-1, width)
    short = np.flatnonzero(length < width)
    if short.size > cells.shape[0] // 8:  # many short cells: every row at once, in place
        cells *= np.arange(width)[None, :] < length[:, None]
    elif short.size:
        cells[short] *= np.arange(width, dtype=np.int64)[None, :] < length[short, None]
    return out
