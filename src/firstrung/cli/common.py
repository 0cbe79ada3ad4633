"""Options, error handling and output shared by every command."""

from __future__ import annotations

import functools
import os
import sys
from pathlib import Path
from typing import Annotated

from firstrung.cli.direct import Argument, Option
from firstrung.patterns import CONTROL_CHARACTERS, pattern

CampaignArgument = Annotated[
    Path, Argument(help="The campaign file (TOML) that lists the sites, instruments and logs.", show_default=False, metavar="CAMPAIGN")
]
JsonOption = Annotated[bool, Option("--json", help="Print one JSON object on stdout and nothing else there.")]
VerboseOption = Annotated[bool, Option("--verbose", "-v", help="Show every step: per-day fits and assumptions.")]


#: Control characters a terminal would act on, line feeds included (``one_line``); without them,
#: :data:`firstrung.patterns.CONTROL_CHARACTERS`.
_CONTROL_OR_LINE_FEED = pattern("[\x00-\x08\x0a-\x1f\x7f-\x9f\u2028\u2029]")


def terminal_text(text: str, *, one_line: bool = False) -> str:
    r"""Text safe for a terminal: each control character shown as its escape (``\x1b``), never sent.

    Names and cells from users' files reach the screen; an escape sequence in
    one must not clear the screen or retitle the window. With ``one_line``,
    line breaks are shown as ``\n`` too.

    >>> print(terminal_text("site \x1b[2J\x07 ok"))
    site \x1b[2J\x07 ok
    """
    control = (_CONTROL_OR_LINE_FEED if one_line else CONTROL_CHARACTERS)()
    return control.sub(lambda m: m.group().encode("unicode_escape").decode("ascii"), text)


CalendarSiteOption = Annotated[
    str | None,
    Option("--site", help="Put only this site's events in the calendar (--ics); the site id from the campaign file.",
                 show_default=False),
]


def check_site_id(campaign, site: str | None) -> None:
    """An unknown ``--site`` id is one clear error."""
    if site is not None:
        campaign.site(site)


def html_output(path: Path, option: str = "-o", suffix: str = ".html") -> None:
    """Refuse, in one clear line, a PDF output: firstrung writes documents made to print, not PDF."""
    from firstrung.errors import InputError

    if path.suffix.lower() == ".pdf":
        raise InputError(f"{option} {path}: firstrung writes {suffix[1:].upper()} made to print, not PDF; write "
                         f"{path.with_suffix(suffix)} and print it to PDF from a browser")


def fail(message: str, status: int = 2) -> SystemExit:
    """Print one line on stderr and give the exit to raise."""
    print(f"firstrung: {terminal_text(str(message), one_line=True)}", file=sys.stderr)
    return SystemExit(status)


def handles_errors(command):
    """Turn firstrung's own errors into one line on stderr and exit status 2, never a traceback."""

    @functools.wraps(command)
    def wrapper(*args, **kwargs):
        from firstrung.errors import FirstrungError

        try:
            _refuse_non_finite(kwargs)
            _refuse_outputs_over_inputs(kwargs)
            _note_outside_folder(kwargs.get("campaign"))
            return command(*args, **kwargs)
        except FirstrungError as error:
            # the rows refused on the way explain a failure ("got 1 site" after 125 bad dates)
            report_problems(p for p in getattr(error, "problems", ()) if str(p) not in str(error))
            raise fail(str(error)) from None
        except Exception as error:
            # the ephemeris library's own range error (an instant just outside DE421 after its
            # corrections) is a user's date, not a fault
            if type(error).__name__ == "EphemerisRangeError":
                raise fail(f"a date outside the bundled ephemeris: {error}") from None
            raise

    return wrapper


def _note_outside_folder(campaign_path) -> None:
    """A note on stderr when the campaign lists logs outside its folder (allowed, but worth knowing)."""
    if campaign_path is None:
        return
    from firstrung.campaign import read_campaign
    from firstrung.errors import FirstrungError

    try:
        outside = read_campaign(campaign_path).logs_outside_folder()
    except (FirstrungError, OSError):
        return  # the command itself reports an unreadable campaign
    if outside:
        listed = ", ".join(str(p) for p in outside)
        print(terminal_text(f"firstrung: note: the campaign reads logs outside its folder: {listed}", one_line=True),
              file=sys.stderr)


#: The options that name a file or folder a command writes.
_OUTPUT_OPTIONS = ("output", "ics", "accepted")


def _refuse_outputs_over_inputs(kwargs: dict) -> None:
    """Refuse at once, before any work, an output that names one of the campaign's inputs.

    The writer checks again when it writes (:func:`firstrung.output.write_atomic`);
    this only spares the user the wait.
    """
    campaign = kwargs.get("campaign")
    if campaign is None:
        return
    from firstrung.output import campaign_inputs, refuse_overwriting_inputs

    inputs = None
    for name in _OUTPUT_OPTIONS:
        path = kwargs.get(name)
        if isinstance(path, Path) and not path.is_dir():
            inputs = campaign_inputs(campaign) if inputs is None else inputs
            refuse_overwriting_inputs(path, inputs)


def _refuse_non_finite(kwargs: dict) -> None:
    """InputError naming the option when a number given on the command line is NaN or infinite."""
    import math

    from firstrung.errors import InputError

    for name, value in kwargs.items():
        if isinstance(value, float) and not math.isfinite(value):
            option = "--" + name.replace("_", "-")  # each float option is named after its parameter
            raise InputError(f"{option}: expected a finite number, got {value}")


def console(stderr: bool = False):
    """A rich console that never cuts a table's value; the width follows COLUMNS when set (tests fix it)."""
    width = int(os.environ["COLUMNS"]) if os.environ.get("COLUMNS", "").isdigit() else None
    return _safe_console_class()(stderr=stderr, width=width, highlight=False, soft_wrap=False)


def _safe_console_class():
    """A console whose tables never cut a value (:class:`firstrung.terminal.FittingConsole`) and whose
    text never carries a control character from the data (:func:`terminal_text`)."""
    from rich.segment import Segment

    from firstrung.terminal import FittingConsole

    class SafeConsole(FittingConsole):
        def _render_buffer(self, buffer):
            return super()._render_buffer(
                segment if segment.control else Segment(terminal_text(segment.text), segment.style)
                for segment in buffer
            )

    return SafeConsole


def progress_bar():
    """A transient progress bar on stderr, shown on a terminal only (a log or a pipe gets no stray lines)."""
    from rich.progress import BarColumn, Progress, TextColumn

    err = console(stderr=True)
    return Progress(TextColumn("{task.description}"), BarColumn(), console=err, transient=True,
                    disable=not err.is_terminal)


def report_problems(problems) -> None:
    """Each refused row or file as one line on stderr."""
    for p in problems:
        print(f"firstrung: {terminal_text(str(p), one_line=True)}", file=sys.stderr)


def print_json(obj: dict) -> None:
    """The result as JSON on stdout, written as it is made (a million pairs are never one text)."""
    from firstrung.jsonout import write_json

    write_json(obj, sys.stdout)


IncludeFlaggedOption = Annotated[
    bool, Option("--include-flagged", help="Keep the rows that 'firstrung check' flags as errors.")
]


def rows_line(rows: dict, accepted_as: str) -> str:
    """The reduction's count of rows: read, accepted (``accepted_as`` names how), and refused if any.

    >>> rows_line({"read": 30, "accepted": 28, "refused": 2}, "used")
    '  rows: 30 read, 28 used, 2 refused'
    """
    return (f"  rows: {rows['read']} read, {rows['accepted']} {accepted_as}"
            + (f", {rows['refused']} refused" if rows["refused"] else ""))


def interval_text(q: dict, digits: int, no_low: str = "?") -> str:
    """A measured quantity's 68 % interval as "low to high" (``no_low`` when it has no lower end),
    thousands separated by commas as every number firstrung prints.

    >>> interval_text({"low": 1.234, "high": None}, 2), interval_text({"low": None, "high": 3.0}, 1, "any value")
    ('1.23 to no upper bound', 'any value')
    >>> interval_text({"low": 396837.4, "high": 401852.0}, 0)
    '396,837 to 401,852'
    """
    if q["low"] is None and no_low != "?":
        return no_low
    high = "no upper bound" if q["high"] is None else f"{q['high']:,.{digits}f}"
    low = no_low if q["low"] is None else f"{q['low']:,.{digits}f}"
    return f"{low} to {high}"


def report_left_out(count: int) -> None:
    """One line on stderr saying how many rows the check's errors left out of a reduction."""
    if count:
        print(f"firstrung: {count:,} {'row' if count == 1 else 'rows'} flagged as errors by check left out "
              "(--include-flagged keeps them)",
              file=sys.stderr)


def finish_reduction(run, data: dict, *, render, json_output: bool, verbose: bool, campaign: Path | None = None,
                     figure: Path | None = None, draw=None) -> None:
    """The common end of a ``reduce`` command: its figure, its output, its left-out rows and refusals.

    ``draw()`` makes the figure (only when ``--figure`` names a file, for a reduction that has
    one); ``render(data, verbose)`` prints the terminal form. Exit status 2 when any row or file
    was refused.
    """
    if figure is not None and draw is not None:
        from firstrung import figures
        from firstrung.output import write_atomic

        fig = draw()
        body = figures.to_png(fig) if figure.suffix.lower() == ".png" else figures.to_svg(fig).encode()
        write_atomic(figure, body, inputs=[campaign])
    if json_output:
        print_json(data)
    else:
        render(data, verbose)
        if figure is not None:
            console().print(f"  figure written to {figure}")
    report_left_out(run.rows_left_out_flagged)
    report_problems(run.problems)
    if run.problems:
        raise SystemExit(2)


WEEKDAYS = ("mon", "tue", "wed", "thu", "fri", "sat", "sun")

FromOption = Annotated[str, Option("--from", help="First date (ISO 8601, e.g. 2027-01-01).", show_default=False)]
ToOption = Annotated[str, Option("--to", help="Last date, included.", show_default=False)]


def parse_weekdays(text: str | None) -> tuple[int, ...] | None:
    """'mon-fri' or 'mon,wed,sat' to weekday numbers (0 = Monday)."""
    from firstrung.errors import InputError

    if not text:
        return None
    days: set[int] = set()
    for part in text.lower().replace(" ", "").split(","):
        ends = part.split("-")
        try:
            if len(ends) == 1:
                days.add(WEEKDAYS.index(ends[0][:3]))
            elif len(ends) == 2:
                a, b = WEEKDAYS.index(ends[0][:3]), WEEKDAYS.index(ends[1][:3])
                days.update(range(a, b + 1) if a <= b else [*range(a, 7), *range(0, b + 1)])
            else:
                raise ValueError
        except ValueError:
            raise InputError(f"--weekdays: expected names such as 'mon-fri' or 'mon,wed,sat', got {text!r}") from None
    return tuple(sorted(days))


def parse_dates(values: list[str]) -> tuple[str, ...]:
    """Excluded dates, given repeated or comma-separated."""
    import numpy as np

    from firstrung.errors import InputError

    out = []
    for v in values:
        for part in v.split(","):
            part = part.strip()
            if not part:
                continue
            try:
                out.append(str(np.datetime64(part, "D")))
            except ValueError:
                raise InputError(f"--exclude: expected ISO dates such as 2027-04-01, got {part!r}") from None
    return tuple(out)


def parse_date(option: str, value: str) -> str:
    import numpy as np

    from firstrung.errors import InputError

    try:
        return str(np.datetime64(value.strip(), "D"))
    except ValueError:
        raise InputError(f"{option}: expected an ISO date such as 2027-03-20, got {value!r}") from None


OutputOption = Annotated[Path, Option("-o", "--output", help="Folder for the log file.", show_default=False)]
SeedOption = Annotated[int, Option("--seed", help="Seed of the random errors (same seed, same logs).")]


def write_simulated(campaign, kind: str, rows, columns, output: Path, what: str) -> None:
    """Write one simulated log as ``<output>/<kind>.csv`` (never over one of the campaign's inputs)."""
    from rich.markup import escape

    from firstrung.campaign import read_campaign
    from firstrung.errors import InputError
    from firstrung.output import campaign_inputs, make_folder, rows_to_csv, write_atomic

    if not rows:
        raise InputError(f"nothing to simulate: no {what} in that range at the campaign's sites", file=str(campaign))
    c = read_campaign(campaign)
    make_folder(output)
    path = write_atomic(output / f"{kind}.csv", rows_to_csv(rows, columns), inputs=campaign_inputs(c))
    console().print(f"{len(rows)} synthetic {what} written to {escape(str(path))}")


def simulation_range(date_from: str, date_to: str) -> tuple[str, str]:
    """The --from and --to dates of a simulation, checked to be in order."""
    from firstrung.errors import InputError

    first, last = parse_date("--from", date_from), parse_date("--to", date_to)
    if last < first:
        raise InputError(f"--to {last} is before --from {first}")
    return first, last


def figure_path(figure: Path | None) -> Path | None:
    """A ``--figure`` path, refused (before any work) unless it ends in .svg or .png."""
    if figure is not None and figure.suffix.lower() not in (".svg", ".png"):
        from firstrung.errors import InputError

        raise InputError(f"--figure: expected a file name ending in .svg or .png, got {figure.name!r}")
    return figure


def budget_table(title: str, rows: list[dict], key: str, unit: str, digits: int):
    """A reduction's error budget as a terminal table: each source and its sigma (``rows[i][key]``)."""
    from rich import box
    from rich.table import Table

    budget = Table(title=title, box=box.SIMPLE_HEAD)
    budget.add_column("source")
    budget.add_column(f"sigma ({unit})", justify="right", no_wrap=True)
    for b in rows:
        budget.add_row(b["source"], f"{b[key]:.{digits}f}")
    return budget


def print_assumptions(out, data: dict, verbose: bool) -> None:
    """The assumptions a plan or reduction made, one line each, with ``--verbose``."""
    if verbose:
        for a in data["assumptions"]:
            out.print(f"  - {a}")


def registers(name: str, command):
    """A method's ``register_plan``/``register_reduce``/``register_simulate``: adds ``command``
    (its errors handled) to the group under ``name``."""

    def register(group) -> None:
        group.command(name)(handles_errors(command))

    return register
