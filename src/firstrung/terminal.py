"""Terminal tables that never cut a value.

rich shrinks a table that is wider than the terminal by cutting cells (``2027-06-…``).
:func:`fit_table` never lets that happen: it gives every column at least the width of its
longest unbreakable piece (a number, a date, a time, a word), lets text wrap at spaces, and
when even that is too wide it splits the table into parts, each repeating the key columns
(the first ``keep``) and saying in its title that more columns follow. :class:`FittingConsole`
does this for every table it prints, so no command can cut a value at any width.

When nothing is styled (output to a file or a pipe, where rich writes no colours) and every cell
is plain text, :func:`plain_table_lines` lays a table out itself, character for character as rich
would (rich's layout costs a command a fifth of a second for a few hundred cells); a test compares
the two on many tables, another checks that the parts of rich it reads are there
(tests/test_startup_libraries.py), and pyproject.toml bounds rich to the versions tested.
"""

from __future__ import annotations

import copy

from rich.cells import cell_len
from rich.console import Console
from rich.measure import Measurement
from rich.table import Table
from rich.text import Text

from firstrung.patterns import pattern

#: Below this width a table is not split further: a column then folds its longest piece.
NARROWEST = 20


def _part(table: Table, columns: list, title: str | None, caption: str | None) -> Table:
    """A copy of ``table`` with only ``columns`` (their cells kept), a title and a caption."""
    part = copy.copy(table)
    part.columns = []
    for i, column in enumerate(columns):
        c = copy.copy(column)
        c._index = i
        c._cells = column._cells  # shared, never changed: a part is printed, not filled
        part.columns.append(c)
    part.title = title
    part.caption = caption
    return part


def _measures(console: Console, table: Table, columns_seen: dict | None = None) -> list[tuple[int, int]]:
    """Each column's (minimum, maximum) width, padding included.

    The minimum is the longest unbreakable piece of its header and cells; in a column that
    may not wrap (``no_wrap``), the widest cell whole (its header may still wrap).
    ``columns_seen``: the widths of the columns already measured in this layout (a table split
    in parts tries each column in several parts; its cells are the same list in each).
    """
    options = console.options.update_width(10**6)
    known = _measured(console)

    def measure(renderable) -> Measurement:
        if type(renderable) is not str:
            return Measurement.get(console, options, renderable)
        found = known.get(renderable)
        if found is None:
            found = plain(renderable) if plain is not None else None
            found = known[renderable] = found or Measurement.get(console, options, renderable)
        return found

    plain = _plain_measure if _no_styles(console) else None
    out = []
    for column in table.columns:
        pad = table._get_padding_width(column._index)
        key = (id(column._cells), id(column.header), table.show_header, column.no_wrap, column.min_width)
        seen = None if columns_seen is None else columns_seen.get(key)
        if seen is not None and seen[0] is column._cells and seen[1] is column.header:
            lo, hi = seen[2]
        else:
            head = measure(column.header) if table.show_header else Measurement(0, 0)
            cells = [measure(c) for c in column._cells] or [Measurement(1, 1)]
            body_min = max((c.maximum if column.no_wrap else c.minimum) for c in cells)
            lo = max(head.minimum, body_min, column.min_width or 0)
            hi = max(head.maximum, max(c.maximum for c in cells), lo)
            if columns_seen is not None:  # the list and header kept: their ids stay theirs
                columns_seen[key] = (column._cells, column.header, (lo, hi))
        out.append((lo + pad, hi + pad))
    return out


def _measured(console: Console) -> dict[str, Measurement]:
    """The widths of the texts this console has measured (a table split in parts measures its cells again)."""
    known = getattr(console, "_firstrung_measured", None)
    if known is None:
        known = {}
        console._firstrung_measured = known
    return known


def _fits(console: Console, table: Table, width: int, columns_seen: dict | None = None) -> bool:
    return sum(lo for lo, _ in _measures(console, table, columns_seen)) + table._extra_width <= width


def _set_widths(console: Console, table: Table, width: int, columns_seen: dict | None = None) -> None:
    """Fix each column's width between its minimum and maximum so the table fits ``width``."""
    measures = _measures(console, table, columns_seen)
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
    seen: dict = {}  # each column measured once for all the parts tried
    if _fits(console, table, width, seen) or len(table.columns) <= keep + 1:
        whole = _part(table, table.columns, table.title, table.caption)
        _set_widths(console, whole, width, seen)
        return [whole]
    key = table.columns[:keep]
    groups: list[list] = []
    current: list = []
    for column in table.columns[keep:]:
        trial = _part(table, key + current + [column], None, None)
        if current and not _fits(console, trial, width, seen):
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
        _set_widths(console, part, width, seen)
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
                    lines = None if kwargs else plain_table_lines(self, part)
                    if lines is None:
                        super().print(part, **kwargs)
                    else:
                        self.out("\n".join(lines))
                    if caption:
                        super().print(Text("  " + str(caption)), **kwargs)
            else:
                super().print(o, **kwargs)
        return None


# --- plain tables, laid out as rich lays them out ------------------------------------------------

#: rich's own patterns: a word with the spaces around it (its line breaking), an emoji code it
#: would replace in a string, the spaces at the end of a line.
_WORD = pattern(r"\s*\S+\s*")
_EMOJI_CODE = pattern(r":\S*?:")
_TRAILING = pattern(r"\s+$")


def _no_styles(console: Console) -> bool:
    """Whether the console writes text without any style (no colours: a file, a pipe)."""
    return console.color_system is None and not console.record and not console.legacy_windows


def _plain_text(text) -> bool:
    """Whether rich shows this cell as the text it is: a string without markup or emoji codes, one
    line or several, each character one column wide and printable."""
    if type(text) is not str or "[" in text or "\t" in text or text.startswith("\n") or text.endswith("\n"):
        return False
    if ":" in text and _EMOJI_CODE().search(text):
        return False
    return all(line.isprintable() and cell_len(line) == len(line) for line in text.split("\n"))


def _plain_measure(text: str) -> Measurement | None:
    """rich's measurement of a plain cell (its longest word, its longest line), or None."""
    if not _plain_text(text):
        return None
    lines = text.splitlines()
    longest = max((len(line) for line in lines), default=0)
    words = text.split()
    shortest = max((len(word) for word in words), default=longest)
    low, high = min(max(0, shortest), longest), max(0, shortest, longest)
    return Measurement(low, high) if high >= 1 else Measurement(0, 0)


def _cell_lines(text: str, width: int, justify: str) -> list[str] | None:
    """A plain cell's lines ``width`` wide, broken at spaces and justified as rich does, or None
    where rich would fold or crop a word (its own rendering then)."""
    out = []
    for line in text.split("\n"):
        breaks, used = [], 0
        for match in _WORD().finditer(line):
            start, word = match.start(), match.group()
            length = len(word.rstrip())
            if width - used >= length:
                used += len(word)
            elif length > width:
                return None
            elif used and start:
                breaks.append(start)
                used = len(word)
        for a, b in zip([0, *breaks], [*breaks, len(line)], strict=True):
            piece = line[a:b]
            if len(piece) > width:  # rich drops the spaces beyond the width
                trailing = _TRAILING().search(piece)
                if trailing is not None:
                    piece = piece[:len(piece) - min(len(trailing.group()), len(piece) - width)]
            if len(piece) > width:
                return None
            if justify in ("left", "default"):
                piece = piece + " " * (width - len(piece))
            elif justify == "right":
                piece = piece.rstrip()
                piece = " " * (width - len(piece)) + piece
            elif justify == "center":
                piece = piece.rstrip()
                piece = " " * ((width - len(piece)) // 2) + piece
                piece = piece + " " * (width - len(piece))
            else:
                return None
            out.append(piece)
    return out


def plain_table_lines(console: Console, table: Table) -> list[str] | None:
    """The lines rich would print for ``table`` on ``console``, or None when the table is not one
    this lays out (styles shown, markup or wide characters in a cell, a width left to rich, rows
    separated by lines, a footer, a title or a caption): rich prints it then.

    Every column must have its width fixed (as :func:`fit_table` fixes it).
    """
    if not _no_styles(console) or table.title or table.caption or table.show_footer or not table.show_header:
        return None
    if (table.show_lines or table.leading or table.expand or table.width is not None or table.min_width is not None
            or tuple(table.padding) != (0, 1, 0, 1) or not table.pad_edge or table.collapse_padding):
        return None
    if any(row.style or row.end_section for row in table.rows):
        return None
    columns = table.columns
    if not columns or any(c.width is None or c.no_wrap or c.vertical != "top" for c in columns):
        return None
    widths = [c.width + 2 for c in columns]
    if sum(widths) + table._extra_width > console.width:
        return None
    rows = [[c.header for c in columns]] + [[c._cells[r] for c in columns] for r in range(len(table.rows))]
    if not all(_plain_text(text) for row in rows for text in row):
        return None
    options = console.options
    box = table.box.substitute(options, safe=console.safe_box if table.safe_box is None else table.safe_box) \
        if table.box else None
    edge = table.show_edge and box is not None
    lines = [box.get_top(widths)] if edge else []
    for index, texts in enumerate(rows):
        cells = []
        for text, width, column in zip(texts, widths, columns, strict=True):
            body = _cell_lines(text, width - 2, column.justify)
            if body is None:
                return None
            cells.append([f" {line} " for line in body])
        height = max(len(c) for c in cells)
        for c, width in zip(cells, widths, strict=True):
            blank = [" " * width] * (height - len(c))
            c[:] = blank + c if index == 0 else c + blank  # the header at the bottom, the rows at the top
        if box is None:
            lines.extend("".join(c[k] for c in cells) for k in range(height))
            continue
        kind = "head" if index == 0 else ("foot" if index == len(rows) - 1 else "mid")
        left, right, divider = (getattr(box, f"{kind}_{part}") for part in ("left", "right", "vertical"))
        for k in range(height):
            lines.append((left if edge else "") + divider.join(c[k] for c in cells) + (right if edge else ""))
        if index == 0:
            lines.append(box.get_row(widths, "head", edge=edge))
    if edge:
        lines.append(box.get_bottom(widths))
    return lines


__all__ = ["FittingConsole", "fit_table", "plain_table_lines"]
