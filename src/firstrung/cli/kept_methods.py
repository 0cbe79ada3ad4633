"""Dataclass methods compiled once and kept, as Python keeps a module's bytecode.

Every frozen dataclass a command imports has its ``__init__``, ``__repr__``,
``__eq__``, ``__hash__``, ``__setattr__`` and ``__delattr__`` written as text and
compiled by :mod:`dataclasses` when its module is imported: about 1.5 ms a class,
some 60 to 90 ms of a command's cold start. The command line (and only it:
importing firstrung as a library changes nothing) lets :mod:`dataclasses` compile
through :func:`kept_exec`, which looks the text up among the code compiled by
earlier runs and compiles only what it has not seen. The code is the same code
object ``exec`` would compile from that text (same file name ``<string>``, no
inherited ``__future__`` flags, the interpreter's optimisation level), so every
class is the same class; the cache is keyed by the whole text, never by a hash.

Kept per module in the package's ``__pycache__`` folder, one file per module whose
classes were made (``kept-methods.<module>.<interpreter tag>.opt-<level>.marshal``),
each beginning with the interpreter's bytecode magic number: a file from another
interpreter, or one that cannot be read, is ignored. A file is written again only
when a run made a text it did not hold; texts of classes since changed are dropped
once they outnumber the current ones. Nothing is written when Python is told not
to write bytecode, and a folder that cannot be written is skipped: the commands
then compile as usual.
"""

from __future__ import annotations

import builtins
import marshal
import os
import sys
from importlib.util import MAGIC_NUMBER
from pathlib import Path

#: The folder of the kept code: beside the package's own bytecode.
FOLDER = Path(__file__).resolve().parent.parent / "__pycache__"

#: module name -> {text: code} read from its file (None: no usable file), and the texts made this run.
_read: dict[str, dict | None] = {}
_made: dict[str, dict] = {}


def _file(module: str) -> Path:
    tag = sys.implementation.cache_tag or "python"
    return FOLDER / f"kept-methods.{module}.{tag}.opt-{sys.flags.optimize}.marshal"


def _load(module: str) -> dict | None:
    try:
        data = _file(module).read_bytes()
    except OSError:
        return None
    if not data.startswith(MAGIC_NUMBER):
        return None
    try:
        kept = marshal.loads(data[len(MAGIC_NUMBER):])
    except (EOFError, ValueError, TypeError):
        return None
    return kept if isinstance(kept, dict) else None


def kept_exec(source, globals=None, locals=None):  # noqa: A002 - exec's own parameter names
    """``exec(source, globals, locals)``, with a text's compiled code kept between runs."""
    if isinstance(source, str) and isinstance(globals, dict) and isinstance(globals.get("__name__"), str):
        module = globals["__name__"]
        if module not in _read:
            _read[module] = _load(module)
        kept = _read[module]
        code = None if kept is None else kept.get(source)
        if code is None:
            code = compile(source, "<string>", "exec", dont_inherit=True)
        _made.setdefault(module, {})[source] = code
        source = code
    return builtins.exec(source, globals, locals)


def install() -> None:
    """Let :mod:`dataclasses` compile through :func:`kept_exec` (the command line calls this first)."""
    import dataclasses

    if getattr(dataclasses, "exec", None) is not kept_exec:
        dataclasses.exec = kept_exec


def keep() -> None:
    """Write, atomically, the code of each module that made a text its file did not hold."""
    if sys.dont_write_bytecode:
        return
    for module, made in list(_made.items()):
        kept = _read.get(module) or {}
        if all(text in kept for text in made):
            continue
        # the texts of this run with those kept before (a class made only inside a function is then not
        # lost between runs), unless the old ones outnumber the new: classes changed, old texts dropped
        merged = {**kept, **made} if len(kept) <= 3 * len(made) + 16 else dict(made)
        path = _file(module)
        temporary = path.with_name(f"{path.name}.{os.getpid()}.tmp")
        try:
            FOLDER.mkdir(exist_ok=True)
            temporary.write_bytes(MAGIC_NUMBER + marshal.dumps(merged))
            os.replace(temporary, path)
        except (OSError, ValueError):
            try:
                temporary.unlink(missing_ok=True)
            except OSError:
                pass
            continue
        _read[module] = merged


__all__ = ["install", "keep", "kept_exec"]
