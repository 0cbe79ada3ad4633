"""What a check of the logs gives: flags, their codes, per-observer summaries, and the causes
of a timing that disagrees with its prediction (shared by the event checks of every method).

Each log row that looks wrong gets a :class:`Flag`: where it is (file, 1-based data row, site),
a code from the design's list, a severity (``error`` for a blunder that a reduction leaves out,
``warning`` for a doubtful row it keeps), a plain-language diagnosis and the fix to ask the
observer for. Each method's ``check`` module makes the flags of its own log.
"""

from __future__ import annotations

import contextlib
import datetime as dt
from dataclasses import dataclass, field
from zoneinfo import ZoneInfo

import numpy as np

from firstrung.patterns import pattern

#: Flag codes: the design's contract codes first, then firstrung's own.
CODES = (
    "time-shift-hours",
    "local-time-as-utc",
    "longitude-sign",
    "latitude-sign",
    "length-unit",
    "edge-convention",
    "sun-below-horizon",
    "outlier",
    "duplicate-row",
    "unknown-site",
    "bad-value",
    "event-time-mismatch",
    "series-mismatch",
    "far-from-noon",
    "unreadable-file",
    "moon-below-horizon",
    "zenith-distance-as-altitude",
    "degrees-minutes",
    "wrong-limb",
    "contact-label",
)


@dataclass(frozen=True)
class Flag:
    """One problem found in one log row (or, with ``row`` None, in a whole file).

    ``fields`` holds the code's own values (``hours``, ``factor``, ...), in
    the order they are shown.
    """

    file: str
    row: int | None
    site: str | None
    code: str
    severity: str
    message: str
    fix: str
    observer: str = ""
    fields: dict = field(default_factory=dict)


@dataclass(frozen=True)
class SummaryRow:
    """Rows read, accepted and flagged for one site and observer (observer '' = the whole site)."""

    site: str
    observer: str
    read: int
    accepted: int
    flagged: int
    errors: int
    warnings: int


_UNKNOWN_SITE_RE = pattern(r"unknown site '([^']*)'")


def problem_flags(problems, site_of=None, observer_of=None) -> list[Flag]:
    """The readers' row problems as flags: ``unknown-site``, ``bad-value`` or ``unreadable-file``.

    ``site_of`` / ``observer_of`` map (file, row) to the row's raw site and
    observer cells, when the caller has them.

    >>> from firstrung.errors import RowProblem
    >>> p = RowProblem("logs/a.csv", 4, "site", "unknown site 'nowhere' (known: ridge)")
    >>> f = problem_flags([p])[0]
    >>> f.code, f.site, f.row
    ('unknown-site', 'nowhere', 4)
    """
    site_of = site_of or {}
    observer_of = observer_of or {}
    out = []
    for p in problems:
        key = (p.file, p.row)
        site = site_of.get(key) or None
        match = _UNKNOWN_SITE_RE().search(p.message)
        if p.row is None:
            code, fix = "unreadable-file", "fix the file as the message says and send it again"
        elif p.column == "site":
            code = "unknown-site"
            site = match.group(1) if match else site
            fix = "use one of the campaign's site ids in the site column, or add the site to the campaign file"
        else:
            code = "bad-value"
            fix = f"correct the {p.column or 'row'} cell as the message says" if p.column else "correct the row"
        out.append(Flag(p.file, p.row, site, code, "error", str(p), fix, observer_of.get(key, ""),
                        {"column": p.column} if p.column else {}))
    return out


def row_severities(flags):
    """The worst severity flagged on each (file, row), and a lookup that also knows refused files.

    A file the reader refused whole (an ``unreadable-file`` error: a missing
    column, an undecodable file) has every row refused, though each row is
    not flagged on its own. Returns ``severity(file, row)``: ``"error"``,
    ``"warning"`` or None.

    >>> sev = row_severities([Flag("a.csv", None, None, "unreadable-file", "error", "m", "f"),
    ...                       Flag("b.csv", 3, "ridge", "outlier", "warning", "m", "f")])
    >>> sev("a.csv", 7), sev("b.csv", 3), sev("b.csv", 4)
    ('error', 'warning', None)
    """
    worst: dict[tuple, str] = {}
    refused: set[str] = set()
    for f in flags:
        if f.row is None:
            if f.code == "unreadable-file" and f.severity == "error":
                refused.add(f.file)
            continue
        key = (f.file, f.row)
        if worst.get(key) != "error":
            worst[key] = f.severity
    return lambda file, row: "error" if file in refused else worst.get((file, row))


def summarize(records, flags) -> tuple[SummaryRow, ...]:
    """Rows read, accepted (no error flag) and flagged, per site and per site and observer.

    ``records`` holds one (file, row, site, observer) per data row read.

    >>> rec = [("a.csv", 1, "ridge", "T. O."), ("a.csv", 2, "ridge", "T. O.")]
    >>> fl = [Flag("a.csv", 2, "ridge", "outlier", "error", "m", "f")]
    >>> [(s.site, s.observer, s.read, s.accepted, s.errors) for s in summarize(rec, fl)]
    [('ridge', '', 2, 1, 1), ('ridge', 'T. O.', 2, 1, 1)]
    """
    if not records:
        return ()
    file, row, site, observer = zip(*records, strict=True)
    return summarize_columns(file, row, site, observer, flags)


def summarize_columns(file, row, site, observer, flags) -> tuple[SummaryRow, ...]:
    """:func:`summarize` of rows given column by column (arrays or sequences of equal length)."""
    from firstrung.distinct import distinct_texts

    if len(row) == 0:
        return ()
    site = ["" if s is None else s for s in site]

    def coded(values):
        names, code = distinct_texts(np.array(list(values), dtype=object))
        return names.tolist(), code

    return summarize_coded(coded(file), row, coded(site), coded(observer), flags)


def summarize_coded(file, row, site, observer, flags) -> tuple[SummaryRow, ...]:
    """:func:`summarize` of rows whose file, site and observer are each given as (distinct texts, each row's
    index into them): the rows are counted by site and observer pair at once, then the flagged rows' counts
    are taken off (a site of None counts as '')."""
    file_names, file_code = file
    site_names, site_code = site
    observer_names, observer_code = observer
    n = len(file_code)
    if n == 0:
        return ()
    file_names = _texts(list(file_names))
    site_names = _texts(["" if s is None else s for s in site_names])
    observer_names = _texts(list(observer_names))
    refused = {f.file for f in flags if f.row is None and f.code == "unreadable-file" and f.severity == "error"}
    marked: dict[str, tuple[set, set]] = {}  # per file: rows with a flag, rows with an error flag
    for f in flags:
        if f.row is not None:
            rows_of = marked.setdefault(f.file, (set(), set()))
            rows_of[0].add(f.row)
            if f.severity == "error":
                rows_of[1].add(f.row)
    file_code = np.asarray(file_code, np.int64)
    flagged, error = np.zeros(n, bool), np.zeros(n, bool)
    numbers = None
    for k, name in enumerate(file_names):
        if name in refused:  # every row of a file that could not be read has an error
            flagged |= file_code == k
            error |= file_code == k
        elif name in marked:
            numbers = np.asarray(row, np.int64) if numbers is None else numbers
            on_file = file_code == k
            flagged |= on_file & np.isin(numbers, np.fromiter(marked[name][0], np.int64))
            error |= on_file & np.isin(numbers, np.fromiter(marked[name][1], np.int64))
    width = max(1, len(observer_names))
    pairs, pair = np.unique(np.asarray(site_code, np.int64) * width + np.asarray(observer_code, np.int64),
                            return_inverse=True)
    pair = pair.reshape(-1)
    read = np.bincount(pair, minlength=pairs.size).tolist()
    flagged_count = np.bincount(pair[flagged], minlength=pairs.size).tolist()
    error_count = np.bincount(pair[error], minlength=pairs.size).tolist()
    table: dict[tuple[str, str], list[int]] = {}
    for j, p in enumerate(pairs.tolist()):
        s, o = site_names[p // width], observer_names[p % width]
        for key in ((s, ""), (s, o)) if o else ((s, ""),):
            counts = table.setdefault(key, [0, 0, 0, 0, 0])  # read, accepted, flagged, errors, warnings
            counts[0] += read[j]
            counts[1] += read[j] - error_count[j]
            counts[2] += flagged_count[j]
            counts[3] += error_count[j]
            counts[4] += flagged_count[j] - error_count[j]
    return tuple(SummaryRow(s, o, *v) for (s, o), v in sorted(table.items()))


def _texts(values) -> list[str]:
    """Each value as text, as a NumPy string array holds it (trailing NUL characters dropped)."""
    if type(values) is list and set(map(type, values)) <= {str}:  # texts already (the usual case)
        return values if "\x00" not in "".join(values) else [v.rstrip("\x00") for v in values]
    out = [v if type(v) is str else str(v) for v in values]
    if "\x00" in "".join(out):
        out = [v.rstrip("\x00") for v in out]
    return out


#: A difference this close to a whole number of hours is taken as a clock or zone mistake [s].
WHOLE_HOUR_MARGIN_S = 150.0


def zone_offset_h(zone: str | None, t_utc) -> float | None:
    if zone is None:
        return None
    aware = np.datetime64(t_utc, "s").astype(dt.datetime).replace(tzinfo=dt.UTC)
    return aware.astimezone(ZoneInfo(zone)).utcoffset().total_seconds() / 3600.0


def likely_cause(delta_s: float, zone_offset_h: float | None, time_column: str, margin_s: float = WHOLE_HOUR_MARGIN_S):
    """The clock or zone mistake a time difference points to: (cause, hours), or (None, None).

    ``delta_s`` is logged minus predicted. Local time typed as UTC is
    preferred when the difference equals the site's UTC offset on that date.

    >>> likely_cause(3605.0, 1.0, "time_utc")
    ('local-time-as-utc', -1)
    >>> likely_cause(-7190.0, None, "time_utc")
    ('time-shift-hours', 2)
    >>> likely_cause(900.0, 1.0, "time_utc")
    (None, None)
    """
    if time_column == "time_utc" and zone_offset_h and abs(delta_s - zone_offset_h * 3600.0) <= margin_s:
        return "local-time-as-utc", -int(round(zone_offset_h))
    hours = round(delta_s / 3600.0)
    if 1 <= abs(hours) <= 3 and abs(delta_s - hours * 3600.0) <= margin_s:
        return "time-shift-hours", -int(hours)
    return None, None
    if time_column == "time_utc" and zone_offset_h and abs(delta_s - zone_offset_h * 3600.0) <= margin_s:
        return "local-time-as-utc", -int(round(zone_offset_h))
    if abs(hours) <= 3:
        return "time-shift-hours", -int(hours)
    return None, None


def timing_mismatch_flag(file, row, site, observer, what, delta_s, tolerance_s, zone_h, column, severity="error") -> Flag:
    cause, hours = likely_cause(delta_s, zone_h, column)
    minutes = delta_s / 60.0
    message = f"{what} is logged {abs(minutes):.1f} min {'after' if delta_s > 0 else 'before'} its predicted time"
    if cause == "local-time-as-utc":
        message += f": local clock time (UTC{zone_h:+g} h) was probably typed in the time_utc column"
        fix = f"ask {observer or 'the observer'} to confirm; then give the time as time_local, or subtract {zone_h:g} h"
    elif cause == "time-shift-hours":
        message += f": a clock {abs(hours)} h {'fast' if hours < 0 else 'slow'}, on another zone or on daylight-saving time?"
        fix = f"ask {observer or 'the observer'} which clock was used; then shift the time by {hours:+d} h"
    else:
        message += f" (more than the {tolerance_s / 60:.0f} min a timing may be off): a typing error, another date?"
        fix = f"ask {observer or 'the observer'} to check the time against the field sheet"
    fields = {"seconds": round(float(delta_s), 1)}
    if cause is not None:
        fields.update({"cause": cause, "hours": hours})
    return Flag(file, row, site, "event-time-mismatch", severity, message, fix, observer, fields)


def has_column(table, name) -> bool:
    """Whether the crater table knows the feature (an unknown one is the reduction's to report)."""
    return bool(name) and table.index(name) is not None


@dataclass(frozen=True)
class SeriesDiagnosis:
    """One series (file, site, local day): the statistic as logged and under the best explanation."""

    file: str
    site: str
    date: str
    rows: int
    statistic_logged: float
    level_arcmin: float
    level_sigma: float
    best: str | None
    statistic_best: float | None
    verdict: str  # "fits", "explained", "unexplained", "ambiguous"


@dataclass(frozen=True)
class KindCheck:
    """What the check of one kind of log gives."""

    flags: tuple[Flag, ...]
    series: tuple[SeriesDiagnosis, ...] = ()
    noon_only: bool | None = None


#: While :func:`checks_shared` runs: the checks made, by kind, campaign and log (see :func:`shared_check`).
_SHARED: dict | None = None


@contextlib.contextmanager
def checks_shared():
    """Within: a log checked twice (a report reduces its logs, leaving out the rows the check refuses,
    then shows the check itself) is checked once, when the campaign and the log read are the same."""
    global _SHARED
    previous, _SHARED = _SHARED, {}
    try:
        yield
    finally:
        _SHARED = previous


def checks_are_shared() -> bool:
    """Whether a :func:`checks_shared` block is running (a check made now is kept for a later one)."""
    return _SHARED is not None


def shared_check(kind: str, campaign, log, compute):
    """``compute()``, or within :func:`checks_shared` the result it gave for the same campaign (the same
    object) and a log of the same content (every array and problem, compared by their serialised bytes)."""
    if _SHARED is None:
        return compute()
    import hashlib
    import pickle

    key = (kind, id(campaign), hashlib.blake2b(pickle.dumps(log, protocol=5)).digest())
    found = _SHARED.get(key)
    if found is not None and found[0] is campaign:
        return found[1]
    result = compute()
    _SHARED[key] = (campaign, result)
    return result


def error_rows(campaign, log, check) -> frozenset[tuple[str, int]]:
    """(file, row) of every row ``check`` flags as an error: the rows reductions leave out.

    ``check(campaign, log)`` gives the flags of one kind of log: the ``log_flags`` of
    that method's ``check`` module.
    """
    return frozenset((f.file, f.row) for f in check(campaign, log) if f.severity == "error" and f.row is not None)


def without_error_rows(campaign, log, check):
    """The log without the rows ``check`` flags as errors, and how many were left out. ``log``: anything
    with ``file``, ``row`` and ``select`` (a method's log, or the shadow readings made from one).

    >>> from firstrung.campaign import parse_campaign
    >>> from firstrung.methods.shadows.check import log_flags
    >>> from firstrung.methods.shadows.log import ShadowLog
    >>> c = parse_campaign('[[site]]\\nid = "a"\\nlatitude_deg = 45.0\\nlongitude_deg = 7.0\\n')
    >>> kept, left_out = without_error_rows(c, ShadowLog(*[np.array([])] * 13), log_flags)
    >>> left_out
    0
    """
    if len(log) == 0:
        return log, 0
    bad = error_rows(campaign, log, check)
    if not bad:
        return log, 0  # nothing to leave out: the log as it is, not a copy
    keep = rows_kept(log.file, log.row, bad)
    return log.select(keep), int(np.sum(~keep))


def rows_kept(file, row, bad) -> np.ndarray:
    """True where the row (``file[i]``, ``row[i]``) is not one of the ``bad`` (file, row) pairs.

    >>> rows_kept(np.array(["a", "a", "b"]), np.array([1, 2, 1]), {("a", 2)}).tolist()
    [True, False, True]
    """
    file, row = np.asarray(file), np.asarray(row)
    keep = np.ones(len(file), bool)
    by_file: dict[str, list[int]] = {}
    for f, r in bad:
        by_file.setdefault(f, []).append(r)
    for f, rows in by_file.items():  # a file at a time, its bad rows looked up together
        at = np.flatnonzero(file == f)
        keep[at[np.isin(row[at], rows)]] = False
    return keep
