"""The root command and its groups."""

from __future__ import annotations

import importlib
from pathlib import Path
from typing import Annotated

from firstrung import __version__
from firstrung.cli.command_names import GROUPS, TOP_LEVEL, TOP_LEVEL_HELP
from firstrung.cli.direct import Option, TyperApp, typer_ready

HELP = (
    "Plan, check and reduce geometric-astronomy measurement campaigns: noon shadows at "
    "separated sites give the Earth's radius. Never look at the Sun directly or through "
    "optics without a certified filter; measure the shadow, not the Sun."
)


def _version(value: bool) -> None:
    import typer

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


def _add_aliases(group, infos, aliases) -> None:
    """The same commands under the method's other spellings, hidden from the help."""
    import copy

    for info in list(infos):
        for alias in aliases:
            if alias != info.name:
                twin = copy.copy(info)
                twin.name, twin.hidden = alias, True
                group.registered_commands.append(twin)


def build(args=None):
    """The command tree; given the command line, only the named command's modules are imported.

    With no command named (``firstrung --help``), every command is listed by
    name and one-line help without importing its module.
    """
    import typer

    app = typer.Typer(
        name="firstrung",
        help=HELP,
        no_args_is_help=True,
        add_completion=False,
        pretty_exceptions_enable=False,
        rich_markup_mode=None,
    )

    def root(
        version: Annotated[
            bool, Option("--version", callback=_version, is_eager=True, help="Show the version and exit.")
        ] = False,
        debug: Annotated[bool, Option("--debug", help="Show the traceback of an internal error.")] = False,
    ) -> None:
        """firstrung: campaigns of classical geometric astronomy."""

    app.callback()(typer_ready(root))

    from ..methods import REGISTRY

    wanted = None if args is None else _first_command(args)
    sub = None if args is None or wanted not in GROUPS else _first_command(args[args.index(wanted) + 1:])
    known = set(GROUPS) | set(TOP_LEVEL_HELP)
    listing_only = args is not None and wanted is None
    for name, (help_text, command_attr, help_attr, adder) in GROUPS.items():
        group = typer.Typer(help=help_text, no_args_is_help=True)
        for m in REGISTRY:
            command = getattr(m, command_attr)
            if args is None or (wanted == name and sub in (command, *m.aliases)):
                before = len(group.registered_commands)
                getattr(m.module("commands"), adder)(TyperApp(group))
                _add_aliases(group, group.registered_commands[before:], m.aliases)
                continue
            # listed by name and help only: the method's modules are not imported
            group.command(command, help=getattr(m, help_attr))(lambda: None)
        app.add_typer(group, name=name)
    wanted_module = TOP_LEVEL_HELP[wanted][0] if wanted in TOP_LEVEL_HELP else None
    for name, (module, help_text) in TOP_LEVEL_HELP.items():
        if listing_only or (wanted in known and module != wanted_module):
            app.command(name, help=help_text)(lambda: None)
    modules = TOP_LEVEL if not (listing_only or wanted in known) else (
        [TOP_LEVEL_HELP[wanted][0]] if wanted in TOP_LEVEL_HELP else []
    )
    for module in modules:
        importlib.import_module(f"firstrung.cli.{module}").register(TyperApp(app))
    return app


def plain_values() -> None:
    """Convert the command line's values of the simple types (text, whole and decimal numbers, paths,
    lists of text, flags) directly, as typer would, without building typer's general converters.

    typer (0.2x) converts every value through pydantic, whose import and per-option set-up cost
    a command's start more than the rest of its parsing; the values and the messages are the same
    (a value this does not recognise goes to typer's own converter). A typer without that
    machinery is left as it is. tests/test_startup_libraries.py runs the same app both ways and fails
    if typer's conversion changes; pyproject.toml bounds typer to the versions tested.
    """
    from firstrung.cli.direct import UNSURE, plain_value

    try:
        from typer import _coercion, core
        from typer._param_types import coerce_cli_path
    except ImportError:  # pragma: no cover - another typer: its own conversion, unchanged
        return
    typers_own = _coercion.build_runtime_param
    if getattr(core, "build_runtime_param", None) is not typers_own:
        return  # already in place, or a typer laid out otherwise

    class PlainValue(_coercion.RuntimeParam):
        def _coerce_value(self, value, param, ctx):
            info = self.parameter_info
            if self.annotation is Path and info.path_type is None and info.parser is None:
                if isinstance(value, str) and value and "\x00" not in value:
                    return coerce_cli_path(Path(value), info, path_type=Path, param=param, ctx=ctx)
            elif info.parser is None:
                out = plain_value(self.annotation, info, value)
                if out is not UNSURE:
                    return out
            return typers_own(param.type_descriptor)._coerce_value(value, param=param, ctx=ctx)

    def runtime_param(descriptor):
        if descriptor.is_file:
            return typers_own(descriptor)
        return PlainValue(descriptor.parameter_info, descriptor.annotation)

    core.build_runtime_param = runtime_param
