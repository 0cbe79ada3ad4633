"""The root command and its groups."""

from __future__ import annotations

import importlib
from pathlib import Path
from typing import Annotated

import typer

from firstrung import __version__
from firstrung.patterns import pattern

#: The groups whose sub-commands come from the methods' registry (firstrung.methods.REGISTRY):
#: group -> (its help, the registry entry's attribute naming the sub-command, and its help,
#: and the function of the method's ``commands`` module that adds it).
GROUPS = {
    "plan": ("Plan a campaign: dates and times that work at every site, predictions, calendars.",
             "plan_command", "plan_help", "register_plan"),
    "reduce": ("Reduce a campaign's logs to a result with its uncertainty.",
               "reduce_command", "reduce_help", "register_reduce"),
    "simulate": ("Write synthetic logs a campaign would produce, with its stated errors.",
                 "simulate_command", "simulate_help", "register_simulate"),
}
#: Commands at the top level, each in its own module of firstrung.cli defining ``register(app)``.
TOP_LEVEL = ["sheet", "ladder", "report", "check", "demo", "serve"]
#: The top-level names each TOP_LEVEL module registers, with their one-line help, so that
#: ``firstrung --help`` lists every command without importing any (a test keeps this true).
TOP_LEVEL_HELP = {
    "check": ("check", "Check every log of a campaign and name the rows that look wrong, with the fix to ask for."),
    "demo": ("demo", "Simulate an invented campaign's logs, check them, reduce every rung, chain the ladder, write the report."),
    "ladder": ("ladder", "Earth's radius -> the Moon's distance -> the Sun's distance -> the sizes of Moon and Sun."),
    "report": ("report", "Write the campaign report: the ladder, each rung's data, fits and error budget, data quality, cautions."),
    "serve": ("serve", "Collect readings on line: a form per log for each site's link, the check's verdict at once."),
    "sheet": ("sheet", "A printable noon-shadow field sheet (one page) for one site and day, with the times to read."),
    "blank-sheets": ("sheet", "Blank field sheets (HTML) and CSV log templates for shadows, eclipse and half-moon work."),
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


def _add_aliases(group: typer.Typer, infos, aliases) -> None:
    """The same commands under the method's other spellings, hidden from the help."""
    import copy

    for info in list(infos):
        for alias in aliases:
            if alias != info.name:
                twin = copy.copy(info)
                twin.name, twin.hidden = alias, True
                group.registered_commands.append(twin)


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
                getattr(m.module("commands"), adder)(group)
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
        importlib.import_module(f"firstrung.cli.{module}").register(app)
    return app


#: Command-line numbers converted here, without typer's general converter: plain decimals only
#: (anything else, and every value out of its range, goes to typer's own converter and its messages).
_PLAIN_INT = pattern(r"-?(0|[1-9][0-9]{0,14})")
_PLAIN_FLOAT = pattern(r"-?(0|[1-9][0-9]{0,14})(\.[0-9]{1,17})?")
_UNSURE = object()


def _plain(annotation, info, value):
    """``value`` converted as typer would convert it for the simple types firstrung's options use,
    or ``_UNSURE`` (typer's own converter then decides, with its own message)."""
    if annotation is str:
        return value if isinstance(value, str) else _UNSURE
    if annotation is bool:
        return value if isinstance(value, bool) else _UNSURE
    if annotation is int or annotation is float:
        if isinstance(value, str) and (_PLAIN_INT if annotation is int else _PLAIN_FLOAT)().fullmatch(value):
            number = annotation(value)
        elif type(value) is annotation or (annotation is float and type(value) is int):
            number = annotation(value)
        else:
            return _UNSURE
        if info.clamp or (info.min is not None and number < info.min) or (info.max is not None and number > info.max):
            return _UNSURE
        return number
    if annotation == list[str]:
        return list(value) if isinstance(value, (list, tuple)) and all(isinstance(v, str) for v in value) else _UNSURE
    return _UNSURE


def plain_values() -> None:
    """Convert the command line's values of the simple types (text, whole and decimal numbers, paths,
    lists of text, flags) directly, as typer would, without building typer's general converters.

    typer (0.2x) converts every value through pydantic, whose import and per-option set-up cost
    a command's start more than the rest of its parsing; the values and the messages are the same
    (a value this does not recognise goes to typer's own converter). A typer without that
    machinery is left as it is. tests/test_startup_libraries.py runs the same app both ways and fails
    if typer's conversion changes; pyproject.toml bounds typer to the versions tested.
    """
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
                out = _plain(self.annotation, info, value)
                if out is not _UNSURE:
                    return out
            return typers_own(param.type_descriptor)._coerce_value(value, param=param, ctx=ctx)

    def runtime_param(descriptor):
        if descriptor.is_file:
            return typers_own(descriptor)
        return PlainValue(descriptor.parameter_info, descriptor.annotation)

    core.build_runtime_param = runtime_param
