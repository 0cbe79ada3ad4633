"""The kinds of log a campaign collects, and each one's columns, reader and check, from the registry.

A method's ``log`` module holds its column slots and its reader
(``read_<name>_logs(campaign, paths)``), its ``check`` module ``log_flags(campaign, log)``
(docs/architecture.md, "Adding a method"). Nothing here names a method: a new method's
log kind gets a form as soon as it is in the registry.
"""

from __future__ import annotations

import tomllib
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path
from types import ModuleType

from firstrung.errors import InputError
from firstrung.tabular import Slot


@dataclass(frozen=True)
class LogKind:
    """One kind of log as the collection point sees it.

    Attributes
    ----------
    kind : str
        Its ``[logs]`` key, e.g. ``shadows``.
    slots : tuple of Slot
        Its columns (a slot with several names takes exactly one of them).
    read : callable
        ``read(campaign, paths)``: the method's own reader of log files.
    log_flags : callable
        ``log_flags(campaign, log)``: the method's own check, as ``firstrung check`` runs it.
    check_campaign : callable
        ``check_campaign(campaign)``: the method's check of every log of the kind.
    forms : tuple
        The log module's ``LOG_FORMS`` when it records a reading in more than one way (a
        length, an angle, a tip position): each has ``key``, ``title``, ``needs``,
        ``leaves_out`` and ``choice_words``; empty for a log with one form.
    """

    kind: str
    slots: tuple[Slot, ...]
    read: Callable
    log_flags: Callable
    check_campaign: Callable
    forms: tuple = ()

    @property
    def columns(self) -> tuple[str, ...]:
        """Every column name the log accepts."""
        return tuple(name for slot in self.slots for name in slot.names)

    def slot_of(self, column: str) -> Slot | None:
        for slot in self.slots:
            if column in slot.names:
                return slot
        return None


def _slots(module: ModuleType) -> tuple[Slot, ...]:
    """The column slots of a method's log module (its ``LOG_SLOTS``, as every method's log module has)."""
    return tuple(module.LOG_SLOTS)


def _reader(module: ModuleType) -> Callable:
    """The reader of a method's log module: ``read_logs``, else its one ``read_*_logs`` function."""
    found = getattr(module, "read_logs", None)
    if found is None:
        candidates = [
            value for name, value in vars(module).items()
            if name.startswith("read_") and name.endswith("_logs") and callable(value)
            and getattr(value, "__module__", None) == module.__name__
        ]
        if len(candidates) != 1:
            raise LookupError(f"{module.__name__} has no single read_*_logs function")
        found = candidates[0]
    return found


def log_kind(kind: str) -> LogKind:
    """The registry's log kind ``kind``, its modules imported.

    >>> k = log_kind("eclipse")
    >>> k.columns[:4]
    ('site', 'time_utc', 'time_local', 'event')
    """
    from firstrung.methods import by_log_kind

    method = by_log_kind(kind)
    log_module = method.module("log")
    check_module = method.module("check")
    return LogKind(kind, _slots(log_module), _reader(log_module), check_module.log_flags,
                   check_module.check_campaign, tuple(getattr(log_module, "LOG_FORMS", ())))


def named_kinds(campaign_path) -> tuple[str, ...]:
    """The kinds of log the campaign file names in ``[logs]``, an empty list included, in the registry's order.

    The campaign reader keeps every kind (absent or empty alike); the contract
    collects exactly the kinds named, so the file's ``[logs]`` keys are read here.
    """
    from firstrung.methods import REGISTRY

    path = Path(campaign_path)
    try:
        document = tomllib.loads(path.read_text(encoding="utf-8-sig"))
    except (OSError, UnicodeDecodeError, tomllib.TOMLDecodeError) as error:  # read_campaign said it first
        raise InputError(f"cannot read the campaign file: {error}", file=str(path)) from None
    logs = document.get("logs") or {}
    named = [m.log_kind for m in REGISTRY if isinstance(logs, dict) and m.log_kind in logs]
    if not named:
        kinds = ", ".join(m.log_kind for m in REGISTRY)
        raise InputError(
            f"the campaign file names no log to collect; add a [logs] table, e.g. shadows = [] (kinds: {kinds})",
            file=str(path),
        )
    return tuple(named)
