"""The root command and its groups."""

from __future__ import annotations

import importlib
from typing import Annotated

import typer

from .. import __version__

#: Commands by group: each module in firstrung.cli defines ``register(app)``.
#: A new command adds its module's name here (one line).
GROUPS = {
    "plan": ("Plan a campaign: dates and times that work at every site, predictions, calendars.", ["plan_shadows", "plan_eclipses", "plan_phases"]),
    "reduce": ("Reduce a campaign's logs to a result with its uncertainty.", ["reduce_shadows", "reduce_eclipse", "reduce_phases"]),
}
#: Commands at the top level (check, sheet, simulate, ladder, report, demo, ...).
TOP_LEVEL = ["sheet", "simulate", "ladder", "report", "check", "demo"]
#: The top-level names each TOP_LEVEL module registers, with their one-line help, so that
#: ``firstrung --help`` lists every command without importing any (a test keeps this true).
TOP_LEVEL_HELP = {
    "check": ("check", "Check every log of a campaign and name the rows that look wrong, with the fix to ask for."),
    "demo": ("demo", "Simulate an invented campaign's logs, check them, reduce every rung, chain the ladder, write the report."),
    "ladder": ("ladder", "Earth's radius -> the Moon's distance -> the Sun's distance -> the sizes of Moon and Sun."),
    "report": ("report", "Write the campaign report: the ladder, each rung's data, fits and error budget, data quality, cautions."),
    "sheet": ("sheet", "A printable noon-shadow field sheet for one site and day, with the predicted readings."),
    "blank-sheets": ("sheet", "Blank field sheets (HTML) and CSV log templates for shadows, eclipse and half-moon work."),
    "simulate": ("simulate", "Write synthetic logs a campaign would produce, with its stated errors."),
}

HELP = (
    "Plan, check and reduce geometric-astronomy measurement campaigns: noon shadows at "
    "separated sites give the Earth's radius. Never look at the Sun directly or through "
    "optics without a certified filter; measure the shadow, not the Sun."
)


def _version(value: bool) -> None:
    if value:
        print(f"firstrung {__version__}")
        raise typer.Exit(0)


def _first_command(args) -> str | None:
    """The first word of the command line that is not an option (the command or group named)."""
    for a in args:
        if a == "--":
            return None
        if not a.startswith("-"):
            return a
    return None


def build(args=None) -> typer.Typer:
    """The command tree; given the command line, only the named command's modules are imported.

    With no command named (``firstrung --help``), every command is listed by
    name and one-line help without importing its module.
    """
    app = typer.Typer(
        name="firstrung",
        help=HELP,
        no_args_is_help=True,
        add_completion=False,
        pretty_exceptions_enable=False,
        rich_markup_mode=None,
    )

    @app.callback()
    def root(
        version: Annotated[
            bool, typer.Option("--version", callback=_version, is_eager=True, help="Show the version and exit.")
        ] = False,
        debug: Annotated[bool, typer.Option("--debug", help="Show the traceback of an internal error.")] = False,
    ) -> None:
        """firstrung: campaigns of classical geometric astronomy."""

    wanted = None if args is None else _first_command(args)
    known = set(GROUPS) | set(TOP_LEVEL_HELP)
    listing_only = args is not None and wanted is None
    for name, (help_text, modules) in GROUPS.items():
        if not modules:
            continue
        group = typer.Typer(help=help_text, no_args_is_help=True)
        if listing_only or (wanted in known and wanted != name):
            group.command("listing", hidden=True)(lambda: None)
        else:
            for module in modules:
                importlib.import_module(f"firstrung.cli.{module}").register(group)
        app.add_typer(group, name=name)
    wanted_module = TOP_LEVEL_HELP[wanted][0] if wanted in TOP_LEVEL_HELP else None
    for name, (module, help_text) in TOP_LEVEL_HELP.items():
        if listing_only or (wanted in known and module != wanted_module):
            if module == "simulate":
                placeholder = typer.Typer(help=help_text)
                placeholder.command("listing", hidden=True)(lambda: None)
                app.add_typer(placeholder, name=name)
            else:
                app.command(name, help=help_text)(lambda: None)
    modules = TOP_LEVEL if not (listing_only or wanted in known) else (
        [TOP_LEVEL_HELP[wanted][0]] if wanted in TOP_LEVEL_HELP else []
    )
    for module in modules:
        importlib.import_module(f"firstrung.cli.{module}").register(app)
    return app
