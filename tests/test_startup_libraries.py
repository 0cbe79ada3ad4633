"""The two places where firstrung copies a library's behaviour to start faster fail loudly here if the
library changes under them (pyproject.toml also bounds both libraries to the versions tested):

* ``cli.app.plain_values`` converts the command line's simple values itself instead of through typer's
  general converter: every value below must reach the command, or be refused with the message, exactly
  as typer's own converter does it (the same app run both ways), and the conversion must be in place.
* ``terminal.plain_table_lines`` lays plain tables out as rich does: tests/test_terminal_plain.py
  compares the two on many tables; here, each part of rich it reads must still be there.
"""

from __future__ import annotations

from pathlib import Path
from typing import Annotated

import pytest
import typer
from typer import core
from typer.testing import CliRunner

from firstrung.cli.app import plain_values

ARGUMENTS = [
    [], ["--top", "10"], ["--top", "0"], ["--top", "366"], ["--top", "367"], ["--top", "007"], ["--top", "+5"],
    ["--top", "1_000"], ["--top", " 5"], ["--top", "5.0"], ["--top", "x"], ["--top", "123456789012345678901"],
    ["--min-altitude", "20"], ["--min-altitude", "20.5"], ["--min-altitude", "-0"], ["--min-altitude", ".5"],
    ["--min-altitude", "1e3"], ["--min-altitude", "1."], ["--min-altitude", "nan"], ["--min-altitude", "0.04"],
    ["--min-altitude", "1000.0000001"], ["--min-altitude", "2.675"], ["--days", "mon-fri"], ["--days", ""],
    ["--exclude", "2027-03-02", "--exclude", "2027-03-05"], ["--out", "some/where.csv"], ["--out", ""],
    ["--json"], ["--no-json"],
]


def _run(arguments: list[str], plain: bool) -> tuple[int, str, dict]:
    """The exit status, the output and the values a small typer app received, with or without
    firstrung's conversion in place (typer's own converter restored after)."""
    from typer import _coercion

    before, typers_own = core.build_runtime_param, _coercion.build_runtime_param
    got: dict = {}
    try:
        core.build_runtime_param = typers_own  # as typer has it (a command run earlier put firstrung's in)
        if plain:
            plain_values()
            assert core.build_runtime_param is not typers_own, "firstrung's conversion is no longer put in place"
        app = typer.Typer(add_completion=False)

        @app.command()
        def command(
            top: Annotated[int, typer.Option(min=1, max=366)] = 5,
            min_altitude: Annotated[float, typer.Option("--min-altitude", min=0.05, max=1000.0)] = 20.0,
            days: Annotated[str, typer.Option()] = "all",
            exclude: Annotated[list[str] | None, typer.Option()] = None,
            out: Annotated[Path | None, typer.Option()] = None,
            json: Annotated[bool, typer.Option("--json/--no-json")] = False,
        ) -> None:
            got.update(top=top, min_altitude=min_altitude, days=days, exclude=exclude, out=out, json=json)

        result = CliRunner().invoke(app, arguments)
    finally:
        core.build_runtime_param = before
    return result.exit_code, result.output, {k: (type(v), repr(v)) for k, v in got.items()}


@pytest.mark.parametrize("arguments", ARGUMENTS, ids=" ".join)
def test_plain_values_are_typers_own_conversion(arguments):
    assert _run(arguments, plain=True) == _run(arguments, plain=False)


def test_the_plain_conversion_is_in_place_in_a_command():
    """A firstrung command runs with the conversion in place (else the start-up gain is silently lost)."""
    from typer import _coercion

    plain_values()
    assert core.build_runtime_param is not _coercion.build_runtime_param


def test_the_parts_of_rich_the_plain_tables_read_are_there():
    from rich import box
    from rich.console import Console
    from rich.measure import Measurement
    from rich.table import Column, Table

    table = Table(box=box.SIMPLE_HEAD)
    table.add_column("a")
    table.add_row("x")
    column = table.columns[0]
    assert column._cells == ["x"] and column._index == 0 and isinstance(column, Column)
    assert isinstance(table._extra_width, int) and table._get_padding_width(0) == 2
    console = Console(width=40, color_system=None)
    assert console.color_system is None and console.record is False and console.legacy_windows is False
    assert isinstance(console.safe_box, bool)
    substituted = table.box.substitute(console.options, safe=True)
    for part in ("head", "mid", "foot"):
        for side in ("left", "right", "vertical"):
            assert isinstance(getattr(substituted, f"{part}_{side}"), str)
    assert substituted.get_top([3]) and substituted.get_row([3], "head", edge=True) and substituted.get_bottom([3])
    assert Measurement.get(console, console.options, "ab cd") == Measurement(2, 5)
