"""The command line read directly, without typer, when it is plain.

typer (and with it its copy of click, and inspect, subprocess, platform, gettext) costs every
command's cold start some 50 ms before any work. Most command lines are plain: a command, its
campaign file and a few options, each given once as ``--name value``, ``--name=value``, ``-o
value`` or a flag. :func:`run_direct` reads such a line itself and calls the command with exactly
the values typer would give it (the same types, defaults and range checks, the same exit status
after it returns, after Ctrl-C, a closed pipe or an end of input). Every other line -- help, no
command, an option unknown, repeated or clustered, a value that starts with ``-`` or is not a
plain number or path, an argument missing or too many, a declaration this does not know -- is
left to typer, whose parsing and messages stay the reference. ``tests/test_cli_direct.py`` runs
command lines both ways and compares what each command receives.

The commands declare their options with :class:`Option` and :class:`Argument` (typer's own names
and settings); :func:`typer_ready` turns a command into the function typer expects when typer
reads the line.
"""

from __future__ import annotations

import errno
import os
import sys
import typing
from pathlib import Path

from firstrung.patterns import pattern

#: Settings of an option that change nothing in how a plain line is read (the help's, the range's).
_PLAIN_SETTINGS = frozenset({"help", "show_default", "metavar", "hidden", "min", "max", "rich_help_panel"})


class Option:
    """A command's option as typer declares it (``Option("--top", min=1, help=...)``); typer's own
    is made from it only when typer reads the command line."""

    _typer_kind = "Option"

    def __init__(self, *param_decls: str, **settings) -> None:
        self.param_decls = param_decls
        self.settings = settings

    # what the conversion of plain values reads (as of typer's ParameterInfo)
    @property
    def min(self):  # noqa: A003 - typer's name
        return self.settings.get("min")

    @property
    def max(self):  # noqa: A003 - typer's name
        return self.settings.get("max")

    @property
    def clamp(self) -> bool:
        return bool(self.settings.get("clamp", False))

    def for_typer(self):
        """typer's own declaration with the same names and settings."""
        import typer

        return getattr(typer, self._typer_kind)(*self.param_decls, **self.settings)


class Argument(Option):
    """A command's positional argument as typer declares it; see :class:`Option`."""

    _typer_kind = "Argument"


class NotPlain(Exception):
    """The command line is left to typer."""


# --- the commands, found without typer -----------------------------------------------------------


class _Recorder:
    """Stands in for a typer app while a command module registers its commands: name -> function.
    Anything but ``command(name)`` (or settings that change parsing) leaves the line to typer."""

    def __init__(self) -> None:
        self.commands: dict[str, typing.Callable] = {}

    def command(self, name: str | None = None, **settings):
        if set(settings) - {"help", "hidden"}:
            raise NotPlain
        return lambda func: self.commands.setdefault(name or func.__name__.replace("_", "-"), func)


def _command(args: list[str]) -> tuple[typing.Callable, list[str]]:
    """The function a command line names and the words after its name."""
    import importlib

    from firstrung.cli.command_names import GROUPS, TOP_LEVEL_HELP
    from firstrung.methods import REGISTRY

    if not args:
        raise NotPlain
    recorder = _Recorder()
    if args[0] in GROUPS and len(args) > 1:
        _, command_attr, _, adder = GROUPS[args[0]]
        methods = [m for m in REGISTRY if args[1] in (getattr(m, command_attr), *m.aliases)]
        if len(methods) != 1:
            raise NotPlain
        getattr(methods[0].module("commands"), adder)(recorder)
        if len(recorder.commands) != 1:
            raise NotPlain
        return next(iter(recorder.commands.values())), args[2:]
    if args[0] in TOP_LEVEL_HELP:
        importlib.import_module(f"firstrung.cli.{TOP_LEVEL_HELP[args[0]][0]}").register(recorder)
        if args[0] in recorder.commands:
            return recorder.commands[args[0]], args[1:]
    raise NotPlain


# --- a plain line read as typer reads it ---------------------------------------------------------

#: Command-line numbers read here: plain decimals only (anything else, and every value out of its
#: range, goes to typer's own converter and its messages).
_PLAIN_INT = pattern(r"-?(0|[1-9][0-9]{0,14})")
_PLAIN_FLOAT = pattern(r"-?(0|[1-9][0-9]{0,14})(\.[0-9]{1,17})?")
UNSURE = object()


def plain_value(annotation, info, value):
    """``value`` converted as typer would convert it for the simple types firstrung's options use,
    or ``UNSURE`` (typer's own converter then decides, with its own message)."""
    if annotation is str:
        return value if isinstance(value, str) else UNSURE
    if annotation is bool:
        return value if isinstance(value, bool) else UNSURE
    if annotation is int or annotation is float:
        if isinstance(value, str) and (_PLAIN_INT if annotation is int else _PLAIN_FLOAT)().fullmatch(value):
            number = annotation(value)
        elif type(value) is annotation or (annotation is float and type(value) is int):
            number = annotation(value)
        else:
            return UNSURE
        if info.clamp or (info.min is not None and number < info.min) or (info.max is not None and number > info.max):
            return UNSURE
        return number
    if annotation == list[str]:
        return list(value) if isinstance(value, (list, tuple)) and all(isinstance(v, str) for v in value) else UNSURE
    return UNSURE


def _plain_path(text: str) -> Path:
    """A path as typer gives it (no check asked for but that an existing path be readable)."""
    if not text or "\x00" in text:
        raise NotPlain
    path = Path(text)
    try:
        os.stat(path)
    except OSError:
        return path
    except ValueError:
        raise NotPlain from None
    if not os.access(path, os.R_OK):
        raise NotPlain  # typer's message: not readable
    return path


class _Parameter:
    """One parameter of a command: its name, type, declaration and default."""

    def __init__(self, name: str, hint, default) -> None:
        if typing.get_origin(hint) is not typing.Annotated:
            raise NotPlain
        base, *extras = typing.get_args(hint)
        infos = [e for e in extras if isinstance(e, Option)]
        if len(infos) != 1 or set(infos[0].settings) - _PLAIN_SETTINGS:
            raise NotPlain
        self.name, self.info, self.default = name, infos[0], default
        self.positional = isinstance(self.info, Argument)
        args = typing.get_args(base)
        self.optional = type(None) in args
        if self.optional:
            rest = [a for a in args if a is not type(None)]
            if len(rest) != 1:
                raise NotPlain
            base = rest[0]
        if base not in (str, int, float, bool, Path) and base != list[str]:
            raise NotPlain
        if base is bool and (self.optional or self.positional):
            raise NotPlain
        self.type = base
        self.multiple = base == list[str]
        self.decls = self.info.param_decls
        if any("/" in d or not d.startswith("-") for d in self.decls) or (not self.positional and not self.decls):
            raise NotPlain

    def convert(self, text: str):
        if self.type is Path:
            return _plain_path(text)
        value = plain_value(self.type, self.info, text)
        if value is UNSURE:
            raise NotPlain
        return value

    def value_when_absent(self):
        if self.default is _REQUIRED:
            raise NotPlain  # typer's message: missing
        if self.multiple and self.default is None:
            return None
        if self.default is None or self.type is bool:
            return self.default
        if self.type is Path or self.multiple:
            raise NotPlain  # typer checks a default path as a given one
        value = plain_value(self.type, self.info, self.default)
        if value is UNSURE:
            raise NotPlain
        return value


_REQUIRED = object()


def _parameters(command) -> list[_Parameter]:
    """The command's parameters in order, from the function it wraps (``functools.wraps``)."""
    inner = command
    while hasattr(inner, "__wrapped__"):
        inner = inner.__wrapped__
    code = inner.__code__
    if code.co_posonlyargcount or code.co_kwonlyargcount or code.co_flags & 0x0C:  # *args, **kwargs, keyword-only
        raise NotPlain
    names = code.co_varnames[:code.co_argcount]
    defaults = inner.__defaults__ or ()
    defaults = (_REQUIRED,) * (len(names) - len(defaults)) + tuple(defaults)
    try:
        hints = typing.get_type_hints(command, include_extras=True)
    except Exception as error:  # a declaration this cannot read: typer reads it
        raise NotPlain from error
    return [_Parameter(name, hints.get(name), default) for name, default in zip(names, defaults, strict=True)]


def parse(command, words: list[str]) -> dict:
    """The keyword arguments typer would call ``command`` with for ``words``, or NotPlain."""
    parameters = _parameters(command)
    by_decl = {d: p for p in parameters if not p.positional for d in p.decls}
    positional = [p for p in parameters if p.positional]
    given: dict[str, object] = {}
    k = 0
    while k < len(words):
        word = words[k]
        k += 1
        if word == "--" or word in ("--help", "-h"):
            raise NotPlain
        if word.startswith("-") and word != "-":
            name, eq, value = word.partition("=") if word.startswith("--") else (word, "", "")
            p = by_decl.get(name)
            if p is None or (not word.startswith("--") and len(word) != 2):
                raise NotPlain
            if p.type is bool:
                if eq or p.name in given:
                    raise NotPlain
                given[p.name] = True
                continue
            if not eq:
                if k >= len(words) or words[k].startswith("-"):
                    raise NotPlain
                value = words[k]
                k += 1
            if p.multiple:
                given.setdefault(p.name, []).append(value)
            elif p.name in given:
                raise NotPlain
            else:
                given[p.name] = p.convert(value)
            continue
        if not positional:
            raise NotPlain
        p = positional.pop(0)
        given[p.name] = p.convert(word)
    return {p.name: given[p.name] if p.name in given else p.value_when_absent() for p in parameters}


class _QuietFlush:
    """A stream whose flush ignores a closed pipe (the reader went away), as typer leaves it."""

    def __init__(self, wrapped) -> None:
        self.wrapped = wrapped

    def flush(self) -> None:
        try:
            self.wrapped.flush()
        except OSError as error:
            if error.errno != errno.EPIPE:
                raise

    def __getattr__(self, name):
        return getattr(self.wrapped, name)


def run_direct(args: list[str]) -> bool:
    """Run a plain command line as typer would (ending in SystemExit), or False: typer reads it."""
    try:
        command, words = _command(args)
        kwargs = parse(command, words)
    except NotPlain:
        return False
    try:
        command(**kwargs)
    except EOFError:
        print(file=sys.stderr)
        print("Aborted!", file=sys.stderr)
        sys.exit(1)
    except KeyboardInterrupt as error:
        raise SystemExit(130) from error
    except OSError as error:
        if error.errno != errno.EPIPE:
            raise
        sys.stdout, sys.stderr = _QuietFlush(sys.stdout), _QuietFlush(sys.stderr)
        sys.exit(1)
    sys.exit(0)


def typer_ready(command):
    """``command`` as typer reads it: the same function, its :class:`Option` declarations typer's."""
    import functools
    import inspect

    signature = inspect.signature(command)
    hints = typing.get_type_hints(command, include_extras=True)

    def typers(hint):
        if typing.get_origin(hint) is not typing.Annotated:
            return hint
        base, *extras = typing.get_args(hint)
        return typing.Annotated[(base, *(e.for_typer() if isinstance(e, Option) else e for e in extras))]

    parameters = [p.replace(annotation=typers(hints.get(p.name, p.annotation))) for p in signature.parameters.values()]

    @functools.wraps(command)
    def ready(*args, **kwargs):
        return command(*args, **kwargs)

    ready.__signature__ = signature.replace(parameters=parameters, return_annotation=inspect.Signature.empty)
    ready.__annotations__ = {p.name: p.annotation for p in parameters}
    return ready


class TyperApp:
    """A typer app as a command module sees it when it registers: each command made typer-ready."""

    def __init__(self, app) -> None:
        self.app = app

    def command(self, *args, **kwargs):
        add = self.app.command(*args, **kwargs)
        return lambda func: add(typer_ready(func))


__all__ = ["Argument", "NotPlain", "Option", "TyperApp", "parse", "plain_value", "run_direct", "typer_ready"]
