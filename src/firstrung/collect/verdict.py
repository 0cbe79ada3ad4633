"""A submitted reading, read and checked by its method's own code.

A reading is checked together with its site's stored readings by the method's
``log_flags``, the check ``firstrung check`` runs, on the same log file the
coordinator downloads (:func:`firstrung.collect.export.log_csv`); the flags of
its row are its verdict. That file is read once by the method's reader
(:func:`firstrung.methods.<name>.log.read_*_logs`, on :mod:`firstrung.tabular`).
When the reader finds a problem in a new row there, or a new row is written in
another column than it was posted in (a unit, a local time), the posted cells
are first read on their own as a log: a problem there refuses the reading,
naming the field, and only the readings it takes are checked.

What a check of a site's readings needs is all it gets: the campaign with only
the sites at hand, and the Sun of each day from a kept hourly grid of that day
(:func:`firstrung.ephemeris.sun.grid_preferred`). Readings that arrive together
are read and checked in one pass (the check's cost is mostly per call, not per
row). ``tests/collect/test_verdict.py`` holds each verdict to the full check's
on the same rows.

On a machine of two cores or more the check runs in a process of its own
(:class:`CheckProcess`): the server's process answers pages meanwhile, on the
other core, without waiting for the interpreter's lock. Each batch takes
along the campaign restricted to its sites (a school that joined is there at
once) and the sites' stored readings, so the process keeps no state of its
own to go stale; should it fail, the batch is checked in the server's thread.
"""

from __future__ import annotations

import itertools
import os
import signal
import tempfile
import threading
import time
from collections.abc import Sequence
from dataclasses import dataclass, replace
from dataclasses import field as _field
from pathlib import Path

from firstrung.collect.export import log_columns, log_csv
from firstrung.collect.kinds import LogKind
from firstrung.ephemeris.sun import grid_preferred

#: Longest cell accepted from a form [characters]; a longer one is refused.
CELL_LIMIT = 200


@dataclass(frozen=True)
class Submission:
    """One posted reading: its kind, site, cells (log column -> text) and form id."""

    kind: str
    site: str
    cells: dict[str, str]
    form_id: str


@dataclass
class Outcome:
    """What the collection point answers: refused (with the field and why) or the check's flags."""

    refused: bool
    field: str | None = None
    reason: str | None = None
    flags: list[dict] = _field(default_factory=list)

    def verdict(self) -> dict:
        return {"flags": self.flags, "looks_right": not self.flags}


def cells_problem(kind: LogKind, cells: dict[str, str]) -> tuple[str, str] | None:
    """A problem the reader would state about a whole file, said of the form's field instead."""
    for name, value in cells.items():
        if len(value) > CELL_LIMIT:
            return name, f"expected at most {CELL_LIMIT} characters, got {len(value)}"
    for slot in kind.slots:
        if slot.names == ("site",):
            continue
        given = [n for n in slot.names if cells.get(n, "") != ""]
        if len(given) > 1:
            return given[0], f"give one of {', '.join(slot.names)}, not {' and '.join(given)}"
        instead = [n for n in slot.unless if cells.get(n, "") != ""]  # an angle or a tip instead of a length
        if slot.required and not given and not instead:
            return slot.names[0], f"a value is needed (as {' or '.join(slot.names)})"
    return None


def flag_json(flag) -> dict:
    out = {"code": flag.code, "severity": flag.severity, "message": flag.message, "fix": flag.fix}
    out.update({k: v for k, v in flag.fields.items() if k not in out})
    return out


class Judge:
    """Reads and checks submissions of one campaign, with temporary log files in a private folder."""

    def __init__(self, campaign, folder: Path | None = None) -> None:
        self.campaign = campaign
        self.zones = {s.id: s.timezone for s in campaign.sites}
        self.folder = Path(folder) if folder is not None else Path(tempfile.mkdtemp(prefix="firstrung-collect-"))
        self._count = itertools.count()

    def _read(self, kind: LogKind, campaign, text: str):
        path = self.folder / f"{next(self._count)}.csv"
        path.write_text(text, encoding="utf-8")
        try:
            return kind.read(campaign, [path])
        finally:
            os.unlink(path)

    def campaign_of(self, site_ids) -> object:
        """The campaign with only these sites (and their baselines' other sites): what their readings' check
        reads. The reader and the check then build their per-site tables for a few sites, not every site."""
        wanted = set(site_ids)
        for baseline in self.campaign.baselines:
            if wanted & set(baseline.sites):
                wanted |= set(baseline.sites)
        return replace(self.campaign, sites=tuple(s for s in self.campaign.sites if s.id in wanted))

    def judge(self, kind: LogKind, subs: Sequence[Submission], stored: dict[str, list[dict[str, str]]]) -> list[Outcome]:
        """The outcome of each submission of one kind; ``stored`` holds each site's readings' cells.

        A refused submission is left out of the check of the others.
        """
        outcomes: list[Outcome | None] = [None] * len(subs)
        candidates = []
        for i, sub in enumerate(subs):
            problem = cells_problem(kind, sub.cells)
            if problem is not None:
                outcomes[i] = Outcome(True, problem[0], problem[1])
            else:
                candidates.append(i)
        if not candidates:
            return outcomes
        campaign = self.campaign_of(subs[i].site for i in candidates)
        # 1. one read of each site's stored readings with the new ones, as the coordinator downloads them
        checked = self._combined(kind, campaign, subs, candidates, stored, quick=True)
        if checked is None:
            # 2. a new reading the reader does not take there, or written in other columns than it was posted
            # in: each is read on its own first, with the cells as posted (one file per set of columns, so
            # messages name them), and only those it takes are checked
            self._read_alone(kind, campaign, subs, candidates, outcomes)
            accepted = [i for i in candidates if outcomes[i] is None]
            if not accepted:
                return outcomes
            checked = self._combined(kind, campaign, subs, accepted, stored, quick=False)
        log, new_row = checked
        for i in new_row.values():
            outcomes[i] = Outcome(False)
        for p in log.problems:  # the reader accepted each row alone; say so if it does not now
            if p.row in new_row:
                outcomes[new_row[p.row]].flags.append(
                    {"code": "bad-value", "severity": "error", "message": p.message, "fix": "correct the reading"})
        with grid_preferred():  # the Sun of these days from their kept grids, not a skyfield call per batch
            flags = kind.log_flags(campaign, log)
        for flag in flags:
            if flag.row in new_row:
                outcomes[new_row[flag.row]].flags.append(flag_json(flag))
        return outcomes

    def _read_alone(self, kind: LogKind, campaign, subs, members, outcomes) -> None:
        """Refuse (in ``outcomes``) each submission the reader refuses with the cells as posted."""
        groups: dict[tuple[str, ...], list[int]] = {}
        for i in members:
            groups.setdefault(tuple(sorted(subs[i].cells)), []).append(i)
        for group in groups.values():
            log = self._read(kind, campaign, log_csv(kind.slots, [(subs[i].site, subs[i].cells) for i in group],
                                                     self.zones))
            for p in log.problems:
                for i in (group if p.row is None else [group[p.row - 1]]):
                    if outcomes[i] is None:
                        outcomes[i] = Outcome(True, p.column or "kind", p.message)

    def _combined(self, kind: LogKind, campaign, subs, members, stored, quick: bool):
        """The log of the members' sites' stored readings and the members, and the member of each new row.

        ``quick``: None instead when a member's row is not written with its cells as posted (another
        column of a slot: a unit, a local time) or the reader finds a problem in a member's row or the
        file; then :meth:`_read_alone` must say first which members the reader takes on their own.
        """
        rows: list[tuple[str, dict[str, str]]] = []
        new_row: dict[int, int] = {}
        for site in dict.fromkeys(subs[i].site for i in members):
            rows.extend((site, cells) for cells in stored.get(site, []))
            for i in members:
                if subs[i].site == site:
                    rows.append((site, subs[i].cells))
                    new_row[len(rows)] = i
        columns = log_columns(kind.slots, rows)
        if quick:
            written = {name for _, name in columns}
            if any(not written.issuperset(k for k, v in subs[i].cells.items() if v != "") for i in members):
                return None
        log = self._read(kind, campaign, log_csv(kind.slots, rows, self.zones, columns=columns))
        if quick and any(p.row is None or p.row in new_row for p in log.problems):
            return None
        return log, new_row


# --- the check in a process of its own -----------------------------------------------------------

#: The check process's judge (its campaign and zones replaced by each batch's).
_APART: Judge | None = None


def _start_apart(campaign, kinds: tuple[str, ...], folder: str) -> None:
    """In the check process: a judge writing its files in a folder of its own within ``folder``, each kind's check run once (the
    ephemeris loaded, the modules imported), so that the first reading is answered fast. Ctrl-C is the
    server's to handle: it stops this process in order."""
    global _APART
    from firstrung.collect.kinds import log_kind

    signal.signal(signal.SIGINT, signal.SIG_IGN)
    threading.Thread(target=_end_with_server, args=(os.getppid(),), daemon=True).start()
    own = Path(folder) / f"check-{os.getpid()}"  # its own files: never the same name as the server's thread's
    own.mkdir(exist_ok=True)
    _APART = Judge(campaign, own)
    for name in kinds:
        kind = log_kind(name)
        try:
            kind.log_flags(campaign, kind.read(campaign, []))
        except Exception:  # a warm-up only
            pass


def _end_with_server(server_pid: int) -> None:
    """In the check process: end it when the server's process is gone (killed outright, it could not say so)."""
    while os.getppid() == server_pid:
        time.sleep(1.0)
    os._exit(0)


def _judge_apart(kind_name: str, subs, stored, campaign, zones) -> list[Outcome]:
    from firstrung.collect.kinds import log_kind

    _APART.campaign, _APART.zones = campaign, zones
    return _APART.judge(log_kind(kind_name), subs, stored)


class CheckProcess:
    """A :class:`Judge`'s checks run in a process of its own once :meth:`start` is called (two cores or
    more), else in the caller's thread; one batch at a time, from one thread (the server's writer)."""

    def __init__(self, judge: Judge, kinds: tuple[str, ...]) -> None:
        self.here, self.kinds = judge, tuple(kinds)
        self._pool = None

    def start(self) -> None:
        """Start the process (its warm-up runs meanwhile); nothing on a single core."""
        if (os.cpu_count() or 1) < 2 or self._pool is not None:
            return
        import multiprocessing
        from concurrent.futures import ProcessPoolExecutor

        # a new interpreter, not a fork: the server's process has threads and an event loop by then
        self._pool = ProcessPoolExecutor(max_workers=1, mp_context=multiprocessing.get_context("spawn"),
                                         initializer=_start_apart,
                                         initargs=(self.here.campaign, self.kinds, str(self.here.folder)))
        self._ready = self._pool.submit(int)  # start the process now, not at the first reading

    def wait_ready(self) -> None:
        """Wait until the process has warmed up; should it fail to start, the checks run in the caller's thread."""
        if self._pool is not None:
            try:
                self._ready.result()
            except Exception:
                self.stop()

    def stop(self) -> None:
        pool, self._pool = self._pool, None
        if pool is not None:
            pool.shutdown(wait=True, cancel_futures=True)

    def judge(self, kind: LogKind, subs: Sequence[Submission], stored: dict[str, list[dict[str, str]]]) -> list[Outcome]:
        """:meth:`Judge.judge`, in the check process when it runs."""
        if self._pool is None:
            return self.here.judge(kind, subs, stored)
        from concurrent.futures.process import BrokenProcessPool

        campaign = self.here.campaign_of(sub.site for sub in subs)
        zones = {s.id: self.here.zones.get(s.id) for s in campaign.sites}
        try:
            return self._pool.submit(_judge_apart, kind.kind, list(subs), stored, campaign, zones).result()
        except BrokenProcessPool:  # the process died (killed, out of memory): this batch here, a new process next
            self.stop()
            self.start()
            return self.here.judge(kind, subs, stored)
