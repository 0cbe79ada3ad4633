"""A submitted reading, read and checked by its method's own code.

The posted cells become a one-row log and go through the method's reader
(:func:`firstrung.methods.<name>.log.read_*_logs`, on :mod:`firstrung.tabular`):
a problem there refuses the reading, naming the field. A reading the reader
accepts is checked together with its site's stored readings by the method's
``log_flags``, the check ``firstrung check`` runs, on the same log file the
coordinator downloads (:func:`firstrung.collect.export.log_csv`); the flags of
its row are its verdict. Readings that arrive together are read and checked
in one pass (the check's cost is mostly per call, not per row).
"""

from __future__ import annotations

import itertools
import os
import tempfile
from collections.abc import Sequence
from dataclasses import dataclass
from dataclasses import field as _field
from pathlib import Path

from firstrung.collect.export import log_csv
from firstrung.collect.kinds import LogKind

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

    def __init__(self, campaign) -> None:
        self.campaign = campaign
        self.zones = {s.id: s.timezone for s in campaign.sites}
        self._folder = Path(tempfile.mkdtemp(prefix="firstrung-collect-"))
        self._count = itertools.count()

    def _read(self, kind: LogKind, text: str):
        path = self._folder / f"{next(self._count)}.csv"
        path.write_text(text, encoding="utf-8")
        try:
            return kind.read(self.campaign, [path]), str(path)
        finally:
            os.unlink(path)

    def judge(self, kind: LogKind, subs: Sequence[Submission], stored: dict[str, list[dict[str, str]]]) -> list[Outcome]:
        """The outcome of each submission of one kind; ``stored`` holds each site's readings' cells.

        A refused submission is left out of the check of the others.
        """
        outcomes: list[Outcome | None] = [None] * len(subs)
        # 1. the reader, on the cells as posted (one file per set of columns, so messages name them)
        groups: dict[tuple[str, ...], list[int]] = {}
        for i, sub in enumerate(subs):
            problem = cells_problem(kind, sub.cells)
            if problem is not None:
                outcomes[i] = Outcome(True, problem[0], problem[1])
                continue
            groups.setdefault(tuple(sorted(sub.cells)), []).append(i)
        for members in groups.values():
            log, _ = self._read(kind, log_csv(kind.slots, [(subs[i].site, subs[i].cells) for i in members], self.zones))
            for p in log.problems:
                if p.row is None:
                    targets = members
                else:
                    targets = [members[p.row - 1]]
                for i in targets:
                    if outcomes[i] is None:
                        outcomes[i] = Outcome(True, p.column or "kind", p.message)
        accepted = [i for i in range(len(subs)) if outcomes[i] is None]
        if not accepted:
            return outcomes
        # 2. the check, on each site's stored readings and the new ones: the log the coordinator downloads
        sites = list(dict.fromkeys(subs[i].site for i in accepted))
        rows: list[tuple[str, dict[str, str]]] = []
        new_row: dict[int, int] = {}
        for site in sites:
            rows.extend((site, cells) for cells in stored.get(site, []))
            for i in accepted:
                if subs[i].site == site:
                    rows.append((site, subs[i].cells))
                    new_row[len(rows)] = i
        log, label = self._read(kind, log_csv(kind.slots, rows, self.zones))
        for i in accepted:
            outcomes[i] = Outcome(False)
        for p in log.problems:  # the reader accepted each row alone; say so if it does not now
            if p.row in new_row:
                outcomes[new_row[p.row]].flags.append(
                    {"code": "bad-value", "severity": "error", "message": p.message, "fix": "correct the reading"})
        for flag in kind.log_flags(self.campaign, log):
            if flag.row in new_row:
                outcomes[new_row[flag.row]].flags.append(flag_json(flag))
        return outcomes
