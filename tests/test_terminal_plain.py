"""Plain tables laid out by firstrung (firstrung.terminal.plain_table_lines) are rich's own layout,
character for character: the same tables printed by rich itself give the same text (the
outside reference here is rich, the library the commands' tables come from)."""

from __future__ import annotations

import io
import random

import pytest
from rich import box
from rich.console import Console
from rich.table import Table

from firstrung.terminal import FittingConsole, fit_table, plain_table_lines

BOXES = [box.SIMPLE_HEAD, box.SIMPLE, box.ROUNDED, box.HEAVY_HEAD, box.MINIMAL, box.ASCII, None]
PIECES = ["2027-03-20", "16:58Z", "42.9", "1.07N", "s12", "noon", "alt", "(deg)", "6,349±1", "-0.0445",
          "north", "a", "longer-word", "x", "", "sigma R", "-"]


def _text(rng: random.Random) -> str:
    """A cell: words, sometimes more spaces, sometimes a second line."""
    lines = []
    for _ in range(rng.choice([1, 1, 1, 2, 3])):
        words = [rng.choice(PIECES) for _ in range(rng.randint(0, 4))]
        sep = rng.choice([" ", " ", "  "])
        lines.append(sep.join(words) + rng.choice(["", "", " "]))
    return "\n".join(lines).strip("\n") if rng.random() < 0.9 else " ".join(lines)


def _table(rng: random.Random) -> Table:
    table = Table(box=rng.choice(BOXES), show_edge=rng.random() < 0.8)
    for _ in range(rng.randint(1, 6)):
        table.add_column(_text(rng), justify=rng.choice(["left", "right", "center", "default"]))
    for _ in range(rng.randint(0, 6)):
        table.add_row(*[_text(rng) for _ in table.columns])
    for column in table.columns:
        texts = [column.header, *column._cells]
        longest_word = max((len(w) for t in texts for w in t.split()), default=1)
        longest_line = max((len(line) for t in texts for line in t.split("\n")), default=1)
        column.width = max(1, rng.randint(max(1, longest_word - 1), max(1, longest_line + 2)))
    return table


def _by_rich(table: Table, width: int) -> str:
    out = io.StringIO()
    Console(file=out, width=width, color_system=None, highlight=False, soft_wrap=False).print(table)
    return out.getvalue()


def test_plain_tables_are_laid_out_as_rich_lays_them_out():
    rng = random.Random(18)
    laid_out = 0
    for _ in range(600):
        table = _table(rng)
        width = rng.randint(20, 120)
        console = Console(file=io.StringIO(), width=width, color_system=None)
        lines = plain_table_lines(console, table)
        if lines is None:
            continue
        laid_out += 1
        assert "\n".join(lines) + "\n" == _by_rich(table, width)
    assert laid_out > 200  # the comparison covered many tables (the others are left to rich)


def test_what_it_does_not_lay_out_is_left_to_rich():
    table = Table(box=box.SIMPLE_HEAD)
    table.add_column("site")
    table.add_row("[bold]a[/bold]")
    table.columns[0].width = 10
    console = Console(file=io.StringIO(), width=80, color_system=None)
    assert plain_table_lines(console, table) is None  # markup: rich's own rendering
    table.columns[0]._cells[0] = "a"
    assert plain_table_lines(console, table) is not None
    table.columns[0]._cells[0] = "abcdefghijkl"  # a word wider than its column: rich folds it
    assert plain_table_lines(console, table) is None
    styled = Console(file=io.StringIO(), width=80, color_system="truecolor", force_terminal=True)
    table.columns[0]._cells[0] = "a"
    assert plain_table_lines(styled, table) is None  # colours: rich draws them


@pytest.mark.parametrize("width", [30, 52, 80, 131])
def test_fitted_tables_print_the_same_either_way(width):
    """The commands' consoles: a wide table split in parts, each part laid out here or by rich."""
    rng = random.Random(width)
    table = Table(title="Best days", box=box.SIMPLE_HEAD, caption="noon: local apparent noon")
    table.add_column("rank", justify="right")
    table.add_column("date")
    for k in range(9):
        table.add_column(f"s{k}\nnoon alt shadow(m)")
    for r in range(12):
        table.add_row(str(r + 1), f"2027-09-{r + 10}",
                      *[f"{rng.randint(0, 23):02d}:{rng.randint(0, 59):02d}Z {rng.uniform(10, 80):.1f} "
                        f"{rng.uniform(0.1, 3):.2f}N" for _ in range(9)])
    fast, slow = io.StringIO(), io.StringIO()
    FittingConsole(file=fast, width=width, color_system=None, highlight=False).print(table)
    # rich's own layout of the same parts: a keyword argument leaves every table to rich
    FittingConsole(file=slow, width=width, color_system=None, highlight=False).print(table, end="\n")
    assert fast.getvalue() == slow.getvalue()
    assert len(fit_table(Console(width=width), table, keep=2)) >= (2 if width < 100 else 1)
