"""Options, error handling and output shared by every command."""

from __future__ import annotations

import functools
import os
import sys
from pathlib import Path
from typing import Annotated

import typer

CampaignArgument = Annotated[
    Path, typer.Argument(help="The campaign file (TOML) that lists the sites, instruments and logs.", show_default=False, metavar="CAMPAIGN")
]
JsonOption = Annotated[bool, typer.Option("--json", help="Print one JSON object on stdout and nothing else there.")]
VerboseOption = Annotated[bool, typer.Option("--verbose", "-v", help="Show every step: per-day fits and assumptions.")]


def fail(message: str, status: int = 2) -> typer.Exit:
    """Print one line on stderr and give the exit to raise."""
    print(f"firstrung: {message}", file=sys.stderr)
    return typer.Exit(status)


def handles_errors(command):
    """Turn firstrung's own errors into one line on stderr and exit status 2, never a traceback."""

    @functools.wraps(command)
    def wrapper(*args, **kwargs):
        from ..errors import FirstrungError

        try:
            return command(*args, **kwargs)
        except FirstrungError as error:
            raise fail(str(error)) from None

    return wrapper


def console(stderr: bool = False):
    """A rich console; the width follows COLUMNS when set (tests fix it)."""
    from rich.console import Console

    width = int(os.environ["COLUMNS"]) if os.environ.get("COLUMNS", "").isdigit() else None
    return Console(stderr=stderr, width=width, highlight=False, soft_wrap=False)


def report_problems(problems) -> None:
    """Each refused row or file as one line on stderr."""
    for p in problems:
        print(f"firstrung: {p}", file=sys.stderr)


def print_json(obj: dict) -> None:
    from ..serialize import dumps

    sys.stdout.write(dumps(obj) + "\n")


IncludeFlaggedOption = Annotated[
    bool, typer.Option("--include-flagged", help="Keep the rows that 'firstrung check' flags as errors.")
]


def report_left_out(count: int) -> None:
    """One line on stderr saying how many rows the check's errors left out of a reduction."""
    if count:
        print(f"firstrung: {count} rows flagged as errors by check left out (--include-flagged keeps them)",
              file=sys.stderr)
