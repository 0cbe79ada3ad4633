"""Errors raised on purpose by firstrung.

Everything firstrung raises deliberately derives from :class:`FirstrungError`;
bad input also subclasses :class:`ValueError`. The command line turns these
into one line on standard error and exit status 2, never a traceback.
"""

from __future__ import annotations

from dataclasses import dataclass


class FirstrungError(Exception):
    """Base class of every error firstrung raises on purpose."""


@dataclass(frozen=True)
class RowProblem:
    """One rejected cell or row of an input file.

    ``str()`` gives the one-line form ``file:row:column: message``; ``row`` is
    the 1-based data row (the first line after the header is row 1).
    """

    file: str
    row: int | None
    column: str | None
    message: str
    #: Every row with the same problem when one message stands for several (``row`` is the first).
    rows: tuple[int, ...] = ()

    def __str__(self) -> str:
        where = [self.file]
        if self.rows:
            where.append("rows " + row_ranges(self.rows))
        elif self.row is not None:
            where.append(str(self.row))
        if self.column:
            where.append(self.column)
        return ":".join(where) + ": " + self.message


def row_ranges(rows) -> str:
    """Row numbers as runs: ``3-31, 40, 42-43``.

    >>> row_ranges([3, 4, 5, 40, 42, 43])
    '3-5, 40, 42-43'
    """
    ordered = sorted(set(int(r) for r in rows))
    parts, start = [], None
    for i, r in enumerate(ordered):
        if start is None:
            start = r
        if i + 1 == len(ordered) or ordered[i + 1] != r + 1:
            parts.append(str(start) if start == r else f"{start}-{r}")
            start = None
    return ", ".join(parts)


#: Rows with one and the same problem that are said once, with their rows listed.
MERGED_PROBLEM_ROWS = 3


def merged_problems(problems) -> list[RowProblem]:
    """One problem per file, column and message, listing its rows, when it hits several rows.

    A problem that hits fewer than :data:`MERGED_PROBLEM_ROWS` rows is kept as
    it is; the merged one stands where its first row stood.

    >>> ps = [RowProblem("a.csv", r, "time_local", "no zone") for r in (3, 4, 5)]
    >>> [str(p) for p in merged_problems(ps)]
    ['a.csv:rows 3-5:time_local: no zone']
    """
    groups: dict[tuple, list[RowProblem]] = {}
    for p in problems:
        key = (p.file, p.column, p.message) if p.row is not None and not p.rows else (id(p),)
        groups.setdefault(key, []).append(p)
    out = []
    for p in problems:
        same = groups[(p.file, p.column, p.message) if p.row is not None and not p.rows else (id(p),)]
        if len(same) < MERGED_PROBLEM_ROWS:
            out.append(p)
        elif p is same[0]:
            out.append(RowProblem(p.file, p.row, p.column, p.message, tuple(q.row for q in same)))
    return out


def refused_rows(problems) -> int:
    """How many rows the problems refuse: each row once, a problem with no row as one.

    >>> ps = [RowProblem("a.csv", 3, "t", "x", (3, 4, 5)), RowProblem("a.csv", 4, "d", "y"),
    ...       RowProblem("a.csv", None, None, "no header")]
    >>> refused_rows(ps)
    4
    """
    rows, whole = set(), 0
    for p in problems:
        if p.rows:
            rows.update((p.file, r) for r in p.rows)
        elif p.row is not None:
            rows.add((p.file, p.row))
        else:
            whole += 1
    return len(rows) + whole


class InputError(FirstrungError, ValueError):
    """Bad input: a file, a cell or a parameter that is not what was expected.

    Parameters
    ----------
    message : str
        What was received and what was expected, with its unit.
    file, row, column : optional
        Where the problem is; ``str()`` prefixes them as ``file:row:column:``.
    problems : sequence of RowProblem, optional
        Every problem found, when there were several.
    """

    def __init__(
        self,
        message: str,
        *,
        file: str | None = None,
        row: int | None = None,
        column: str | None = None,
        problems: tuple[RowProblem, ...] = (),
    ) -> None:
        self.message = message
        self.file = file
        self.row = row
        self.column = column
        self.problems = tuple(problems)
        super().__init__(str(self))

    def __str__(self) -> str:
        if self.file is None:
            return self.message
        return str(RowProblem(self.file, self.row, self.column, self.message))


class EphemerisRangeError(InputError):
    """A time outside the span the bundled ephemeris covers."""


class ComputationError(FirstrungError):
    """A reduction that cannot be carried out with the data given (too few sites, no spread).

    Parameters
    ----------
    message : str
        What is missing.
    problems : sequence of RowProblem, optional
        The rows and files refused on the way, which often explain it (the
        command line prints each before the message).
    """

    def __init__(self, message: str, *, problems: tuple[RowProblem, ...] = ()) -> None:
        self.message = message
        self.problems = tuple(problems)
        super().__init__(message)
