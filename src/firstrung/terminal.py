"""Terminal tables that never cut a value.

rich shrinks a table that is wider than the terminal by cutting cells (``2027-06-…``).
:func:`fit_table` never lets that happen: it gives every column at least the width of its
longest unbreakable piece (a number, a date, a time, a word), lets text wrap at spaces, and
when even that is too wide it splits the table into parts, each repeating the key columns
(the first ``keep``) and saying in its title that more columns follow. :class:`FittingConsole`
does this for every table it prints, so no command can cut a value at any width.
"""

from __future__ import annotations

import copy

from rich.console import Console
from rich.measure import Measurement
from rich.table import Table
from rich.text import Text

#: Below this width a table is not split further: a column then folds its longest piece.
NARROWEST = 20


def _part(table: Table, columns: list, title: str | None, caption: str | None) -> Table:
    """A copy of ``table`` with only ``columns`` (their cells kept), a title and a caption."""
    part = copy.copy(table)
    part.columns = []
    for i, column in enumerate(columns):
        c = copy.copy(column)
        c._index = i
        c._cells = list(column._cells)
        part.columns.append(c)
    part.title = title
    part.caption = caption
    return part


def _measures(console: Console, table: Table) -> list[tuple[int, int]]:
    """Each column's (minimum, maximum) width, padding included.

    The minimum is the longest unbreakable piece of its header and cells; in a column that
    may not wrap (``no_wrap``), the widest cell whole (its header may still wrap).
    """
    options = console.options.update_width(10**6)
    known = _measured(console)

    def measure(renderable) -> Measurement:
        if type(renderable) is not str:
            return Measurement.get(console, options, renderable)
        found = known.get(renderable)
        if found is None:
            found = known[renderable] = Measurement.get(console, options, renderable)
        return found

    out = []
    for column in table.columns:
        pad = table._get_padding_width(column._index)
        head = measure(column.header) if table.show_header else Measurement(0, 0)
        cells = [measure(c) for c in column._cells] or [Measurement(1, 1)]
        body_min = max((c.maximum if column.no_wrap else c.minimum) for c in cells)
        lo = max(head.minimum, body_min, column.min_width or 0)
        hi = max(head.maximum, max(c.maximum for c in cells), lo)
        out.append((lo + pad, hi + pad))
    return out


def _measured(console: Console) -> dict[str, Measurement]:
    """The widths of the texts this console has measured (a table split in parts measures its cells again)."""
    known = getattr(console, "_firstrung_measured", None)
    if known is None:
        known = {}
        console._firstrung_measured = known
    return known


def _fits(console: Console, table: Table, width: int) -> bool:
    return sum(lo for lo, _ in _measures(console, table)) + table._extra_width <= width


def _set_widths(console: Console, table: Table, width: int) -> None:
    """Fix each column's width between its minimum and maximum so the table fits ``width``."""
    measures = _measures(console, table)
    room = width - table._extra_width - sum(lo for lo, _ in measures)
    slack = [hi - lo for lo, hi in measures]
    total = sum(slack)
    widths = []
    for (lo, _), s in zip(measures, slack, strict=True):
        extra = s if total <= room else (room * s) // total if total else 0
        widths.append(lo + extra)
    # what integer division left over goes to the columns that can still use it
    left = width - table._extra_width - sum(widths)
    for i, ((_, hi), w) in enumerate(zip(measures, widths, strict=True)):
        if left <= 0:
            break
        add = min(left, hi - w)
        widths[i] += add
        left -= add
    for column, w in zip(table.columns, widths, strict=True):
        column.width = max(1, w - table._get_padding_width(column._index))
        column.max_width = None
        column.no_wrap = False  # every cell fits whole; a header may wrap at its spaces
        if w > width - table._extra_width:  # one piece wider than the terminal: fold it, never cut
            column.overflow = "fold"


def fit_table(console: Console, table: Table, keep: int = 1) -> list[Table]:
    """The table, or parts of it, each as wide as the console allows, no cell ever cut.

    The first ``keep`` columns (the row's key: a site, a date, a rank) are repeated in every
    part; a part's title says which part it is, and every part but the last says in its
    caption that the next one continues the rows.
    """
    width = max(console.width, NARROWEST)
    if table.expand:
        table = copy.copy(table)
        table.expand = False
    if _fits(console, table, width) or len(table.columns) <= keep + 1:
        whole = _part(table, table.columns, table.title, table.caption)
        _set_widths(console, whole, width)
        return [whole]
    key = table.columns[:keep]
    groups: list[list] = []
    current: list = []
    for column in table.columns[keep:]:
        trial = _part(table, key + current + [column], None, None)
        if current and not _fits(console, trial, width):
            groups.append(current)
            current = [column]
        else:
            current.append(column)
    groups.append(current)
    parts = []
    title = f"{table.title} " if isinstance(table.title, str) and table.title else ""
    for n, group in enumerate(groups, 1):
        last = n == len(groups)
        part = _part(
            table, key + group,
            f"{title}(part 1 of {len(groups)})" if n == 1 else f"continued (part {n} of {len(groups)})",
            table.caption if last else f"more columns of these rows in part {n + 1} below",
        )
        _set_widths(console, part, width)
        parts.append(part)
    return parts


class FittingConsole(Console):
    """A rich console that prints every table through :func:`fit_table`."""

    def print(self, *objects, **kwargs):  # noqa: A003 - rich's own name
        if not any(isinstance(o, Table) for o in objects):
            return super().print(*objects, **kwargs)
        for o in objects:
            if isinstance(o, Table):
                for part in fit_table(self, o, keep=getattr(o, "keep_columns", 1)):
                    # title and caption at the terminal's width, never squeezed over a narrow part
                    title, caption = part.title, part.caption
                    part.title = part.caption = None
                    if title:
                        super().print(Text(str(title), style="bold"), **kwargs)
                    super().print(part, **kwargs)
                    if caption:
                        super().print(Text("  " + str(caption)), **kwargs)
            else:
                super().print(o, **kwargs)
        return None


__all__ = ["FittingConsole", "fit_table"]
