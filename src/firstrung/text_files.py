"""Reading a log file's text: its encoding (UTF-8 with or without a BOM, UTF-16, Windows-1252 with a\nnote), refusing workbooks and UTF-32, its separator, and the lines and cells a reader skips.\n"""

from __future__ import annotations

import csv
import itertools
from collections.abc import Sequence

from firstrung.errors import RowProblem
from firstrung.patterns import pattern
from firstrung.spreadsheet import header_name
from firstrung.times import (
    QUOTED_LIMIT,
    quoted,
)

#: Separators a log may use, and how a note names them.
_DELIMITER_NAMES = {",": "','-separated", ";": "';'-separated", "\t": "tab-separated"}


#: Characters that leave a cell blank (separators of another kind included).
_BLANK_CHARS = " \t\r\n\f\v\u00a0,;"


#: File signatures of spreadsheet workbooks: ZIP (.xlsx, .ods) and OLE2 (.xls).
_WORKBOOK_SIGNATURES = (b"PK\x03\x04", b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1")


#: Lines read to find the header when choosing the separator.
_SNIFF_LINES = 200


_SAVE_AS = "save the file as CSV UTF-8"


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
        mixed = _utf8_with_stray_lines(data)
        if mixed is not None:
            text, stray = mixed
            line, byte = stray[0]
            encoding = (
                f"UTF-8 text, with {len(stray)} line(s) that are not UTF-8 taken as Windows-1252 "
                f"(line {line}: byte 0x{byte:02x}; check letters outside ASCII in the names and notes there)"
            )
            return text, encoding, None
        # Readings are ASCII (numbers, ISO times, site ids); only free text can
        # hold other letters, so reading the usual 8-bit spreadsheet encoding
        # loses nothing and at worst misspells a name.
        encoding = (
            f"Windows-1252 text, as it is not UTF-8 (byte 0x{data[error.start]:02x} at offset "
            f"{error.start}; check letters outside ASCII in names and notes)"
        )
        return data.decode("cp1252", errors="replace"), encoding, None


def _utf8_with_stray_lines(data: bytes) -> tuple[str, list[tuple[int, int]]] | None:
    """UTF-8 text with a few lines in an 8-bit encoding (one pasted from elsewhere), or None.

    Each line that is UTF-8 is read as UTF-8, each other line as Windows-1252;
    returns the text and the stray lines' numbers (from 1) with their first
    non-UTF-8 byte. None unless some line holds real UTF-8 beyond ASCII
    (otherwise the whole file is read as Windows-1252, as before).
    """
    parts, stray, utf8_letters = [], [], False
    for number, line in enumerate(data.split(b"\n"), start=1):
        try:
            parts.append(line.decode("utf-8"))
            utf8_letters = utf8_letters or not line.isascii()
        except UnicodeDecodeError as error:
            parts.append(line.decode("cp1252", errors="replace"))
            stray.append((number, line[error.start]))
    if not utf8_letters or not stray:
        return None
    return "\n".join(parts), stray


def is_skipped(cells: Sequence[str]) -> bool:
    """Blank lines, lines of empty cells and comment lines (starting with ``#``)."""
    if not cells or all(not cell.strip(_BLANK_CHARS) for cell in cells):
        return True
    return cells[0].lstrip().startswith("#")


def normal_name(cell: str) -> str:
    """A header cell as a column name: lower case, no surrounding spaces, ``_`` for inner ones, a unit in
    brackets joined with ``_`` (``Shadow (cm)`` is ``shadow_cm``; see :func:`firstrung.spreadsheet.header_name`)."""
    return header_name(cell)


#: A line as ``io.StringIO(text, newline="")`` gives it: up to and with ``\r\n``, ``\r`` or ``\n``.
_LINE_RE = pattern(r"[^\r\n]*(?:\r\n|\r|\n)|[^\r\n]+$")


def _text_lines(text: str):
    """The lines of ``text`` one at a time, as a text stream without newline translation gives them
    (without copying the whole text, as a stream over it would)."""
    return (match.group() for match in _LINE_RE().finditer(text))


def sniff_delimiter(text: str, known: set[str]) -> str:
    """The separator that splits the header line into the most known column names."""
    best, best_count = ",", 0
    for delimiter in _DELIMITER_NAMES:
        reader = csv.reader(_text_lines(text), delimiter=delimiter)
        try:
            header = next(
                (cells for cells in itertools.islice(reader, _SNIFF_LINES) if not is_skipped(cells)),
                [],
            )
        except csv.Error:
            continue
        count = sum(normal_name(cell) in known for cell in header)
        if count > best_count:
            best, best_count = delimiter, count
    return best


def _printable(name: str) -> str:
    """A header name for a one-line message: as it is, or quoted when odd or very long."""
    return name if name.isprintable() and len(name) <= QUOTED_LIMIT else quoted(name)
