"""Stored readings as the CSV log that ``firstrung`` reads, safe to open in a spreadsheet.

A reading is kept as posted: a mapping from the log's own column names to the
cells typed. A log file holds one column per slot, so readings that chose
different names of one slot are brought to one: times to ``time_utc`` (a
local time read in the site's zone, exactly as the reader reads it), lengths
and other ``_m``/``_cm``/``_mm`` families to the finest unit used (an exact
decimal shift, no rounding).

Free text that a spreadsheet would take for a formula (a cell starting with
``=``, ``+``, ``-``, ``@``, a tab or a carriage return, and not a plain
number) is written with a leading apostrophe (formula injection; OWASP's
"CSV Injection" advice, common practice).
"""

from __future__ import annotations

import csv
import io
from collections.abc import Iterable, Sequence
from decimal import Decimal, InvalidOperation

import numpy as np

from firstrung.patterns import pattern
from firstrung.tabular import TIME_COLUMNS, Slot

#: Characters that make a spreadsheet read a cell as a formula.
FORMULA_STARTS = ("=", "+", "-", "@", "\t", "\r")
_PLAIN_NUMBER_RE = pattern(r"^[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?$")
#: Length units of a column family and their size in metres (finest last).
_UNITS = {"m": Decimal(1), "cm": Decimal("0.01"), "mm": Decimal("0.001")}


def formula_safe(cell: str) -> str:
    """A cell that no spreadsheet runs as a formula; plain numbers are left alone.

    >>> formula_safe("=HYPERLINK(\\"x\\")"), formula_safe("-3.5"), formula_safe("T. Okafor")
    ('\\'=HYPERLINK("x")', '-3.5', 'T. Okafor')
    """
    if cell.startswith(FORMULA_STARTS) and not _PLAIN_NUMBER_RE().match(cell):
        return "'" + cell
    return cell


def _unit(name: str) -> str | None:
    suffix = name.rsplit("_", 1)[-1]
    return suffix if suffix in _UNITS and "_" in name else None


def _chosen(slot: Slot, used: set[str]) -> str:
    """The one column a log file gives a slot whose readings used the names ``used``."""
    if len(used) == 1:
        return next(iter(used))
    if slot.names == TIME_COLUMNS:
        return "time_utc"
    if all(_unit(n) for n in used):
        return min(used, key=lambda n: _UNITS[_unit(n)])
    return next(n for n in slot.names if n in used)


def _converted(value: str, source: str, target: str, zone: str | None) -> str:
    """A cell of column ``source`` written in column ``target`` of the same slot."""
    if source == target:
        return value
    if source == "time_local" and target == "time_utc" and zone is not None:
        from firstrung.times import TimeFormatError, parse_local

        try:
            return str(np.datetime64(parse_local(value, zone), "ms")) + "Z"
        except (TimeFormatError, ValueError):
            return value
    if _unit(source) and _unit(target):
        try:
            scaled = Decimal(value) * _UNITS[_unit(source)] / _UNITS[_unit(target)]
        except InvalidOperation:
            return value
        text = format(scaled.normalize(), "f")
        return text
    return value


def log_columns(slots: Sequence[Slot], rows: Sequence[tuple[str, dict[str, str]]]) -> list[tuple[Slot, str]]:
    """The columns of the log file holding ``rows``: each used slot with the one name it is written under."""
    given = {name for _, cells in rows for name, value in cells.items() if value != ""}
    columns: list[tuple[Slot, str]] = []
    for slot in slots:
        if slot.names == ("site",):
            columns.append((slot, "site"))
            continue
        used = given.intersection(slot.names)
        if used:
            columns.append((slot, _chosen(slot, used)))
    return columns


def log_csv(slots: Sequence[Slot], rows: Iterable[tuple[str, dict[str, str]]], zones: dict[str, str | None],
            columns: list[tuple[Slot, str]] | None = None) -> str:
    """A log file holding ``rows`` (site id, cells by column name), one column per slot used.

    Parameters
    ----------
    slots : sequence of Slot
        The log's columns (its ``log`` module's slots); the first is ``site``.
    rows : iterable of (str, dict)
        Each reading's site id and cells as posted.
    zones : dict
        Each site's IANA zone (None when it has none), to write local times as UTC.
    columns : list, optional
        :func:`log_columns` of these rows, when already known.

    >>> from firstrung.tabular import Slot, TIME_COLUMNS
    >>> s = (Slot(("site",)), Slot(TIME_COLUMNS), Slot(("shadow_m", "shadow_cm", "shadow_mm")), Slot(("note",)))
    >>> print(log_csv(s, [("a", {"time_utc": "2027-03-20T11:38:00Z", "shadow_cm": "103.8", "note": "=1+1"}),
    ...                   ("a", {"time_utc": "2027-03-20T11:40:00Z", "shadow_mm": "1036"})], {"a": None}), end="")
    site,time_utc,shadow_mm,note
    a,2027-03-20T11:38:00Z,1038,'=1+1
    a,2027-03-20T11:40:00Z,1036,
    """
    rows = list(rows)
    columns = log_columns(slots, rows) if columns is None else columns
    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\n")
    writer.writerow([name for _, name in columns])
    for site, cells in rows:
        out = []
        for slot, name in columns:
            if name == "site":
                out.append(site)
                continue
            source = next((n for n in slot.names if cells.get(n, "") != ""), None)
            value = "" if source is None else _converted(cells[source], source, name, zones.get(site))
            out.append(formula_safe(value))
        writer.writerow(out)
    return buffer.getvalue()
