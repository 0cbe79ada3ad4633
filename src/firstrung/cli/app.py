"""The root command and its groups."""

from __future__ import annotations

from typing import Annotated

import typer

from .. import __version__
from . import reduce as reduce_commands

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

    app.add_typer(reduce_commands.app, name="reduce")
    return app
