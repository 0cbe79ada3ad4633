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

HELP = (
    "Plan, check and reduce geometric-astronomy measurement campaigns: noon shadows at "
    "separated sites give the Earth's radius. Never look at the Sun directly or through "
    "optics without a certified filter; measure the shadow, not the Sun."
)


def _version(value: bool) -> None:
    if value:
        print(f"firstrung {__version__}")
        raise typer.Exit(0)


def build() -> typer.Typer:
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

    for name, (help_text, modules) in GROUPS.items():
        if not modules:
            continue
        group = typer.Typer(help=help_text, no_args_is_help=True)
        for module in modules:
            importlib.import_module(f"firstrung.cli.{module}").register(group)
        app.add_typer(group, name=name)
    for module in TOP_LEVEL:
        importlib.import_module(f"firstrung.cli.{module}").register(app)
    return app
