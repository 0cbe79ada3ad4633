"""A log's header and cells: matching the header to the expected columns, cells a separator split,\nand numbers (decimal points, decimal commas where they cannot be misread).\n"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from firstrung.errors import RowProblem
from firstrung.patterns import pattern
from firstrung.text_files import (
    _printable,
)
from firstrung.times import (
    quoted,
)

TIME_COLUMNS = ("time_utc", "time_local")


@dataclass(frozen=True)
class Slot:
    """One logical column: a single name or a family of alternatives (units, time kinds)."""

    names: tuple[str, ...]
    required: bool = False
    numeric: bool = False
    #: Columns any one of which makes a required slot optional (an angle instead of a length).
    unless: tuple[str, ...] = ()

    @property
    def shown(self) -> str:
        return "|".join(self.names)

_NUMBER_RE = pattern(r"^[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?$")


#: A number with a decimal comma (``103,8``, ``-0,5``, ``,25``, ``1,5e3``).
_DECIMAL_COMMA_RE = pattern(r"^[+-]?\d*,\d+(?:[eE][+-]?\d+)?$")


#: A number that a decimal-comma locale writes with ``.`` between groups of thousands.
_GROUPED_POINT_RE = pattern(r"^[+-]?\d{1,3}(?:\.\d{3})+$")


#: Two cells that a decimal comma may have split (``103`` and ``8``).
_INTEGER_RE = pattern(r"^[+-]?\d+$")


_DIGITS_RE = pattern(r"^\d+$")


#: Column names listed at most in a message about a header.
_SHOWN_COLUMNS = 12


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
            if _INTEGER_RE().match(left) and _DIGITS_RE().match(right):
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
        elif not present and slot.required and not any(name in seen for name in slot.unless):
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


def got(cell: str) -> str:
    return "an empty cell" if cell == "" else quoted(cell)


def _number(cell: str) -> float | None:
    """A plain decimal number (decimal point, optional exponent), else ``None``."""
    if not _NUMBER_RE().match(cell):
        return None
    value = float(cell)
    return value if math.isfinite(value) else None


#: Largest accepted timing uncertainty [s]: beyond an hour a timing says nothing
#: about a contact or a half moon, and the value is a unit typed wrongly.
TIME_SIGMA_LIMIT_S = 3600.0
#: Timing uncertainties must be at least this [s]: no timing by eye or camera is better, and
#: a vanishing one would give one row infinite weight.
TIME_SIGMA_MIN_S = 0.01


def column_arrays(good: list[dict], spec: dict[str, object]) -> dict[str, np.ndarray]:
    """Columns of the good rows as numpy arrays of the given dtypes."""
    return {
        name: np.array([values[name] for values in good], dtype=dtype)
        for name, dtype in spec.items()
    }


def cell_text(row, slot_name: str) -> str:
    return row.cell(slot_name)


def time_sigma_s(row) -> float:
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
