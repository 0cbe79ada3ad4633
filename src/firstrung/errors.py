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

    def __str__(self) -> str:
        where = [self.file]
        if self.row is not None:
            where.append(str(self.row))
        if self.column:
            where.append(self.column)
        return ":".join(where) + ": " + self.message


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
