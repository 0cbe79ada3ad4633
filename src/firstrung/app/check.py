"""From a campaign file to a check of its logs: read, check each kind of log, summarise.

Each kind of log is checked by its method's ``check.check_campaign`` (the registry's), which takes
the campaign and returns its flags and per-series diagnoses. Eclipse and
phase logs add their own entry here when their checks exist. The raw rows
of every file are kept (as read, every cell) for the summary and for the
copy with a ``status`` column (:func:`status_csv`).
"""

from __future__ import annotations

import csv
import io
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from firstrung import tabular as _logs
from firstrung import text_files
from firstrung.campaign import read_campaign
from firstrung.campaign_model import Campaign
from firstrung.distinct import distinct_texts
from firstrung.errors import InputError
from firstrung.flags import Flag, KindCheck, SeriesDiagnosis, SummaryRow, summarize_coded


@dataclass(frozen=True)
class RawFile:
    """One log file as read: its header and every data row (1-based numbers as the readers count them).

    The rows are kept as two columns, their numbers and their cells, as the reader gives them
    (``rows`` pairs them on demand).
    """

    kind: str
    label: str
    path: Path
    header: tuple[str, ...]
    numbers: Sequence[int]
    cells: Sequence[Sequence[str]]

    @property
    def rows(self) -> tuple[tuple[int, tuple[str, ...]], ...]:
        """Every data row: (its number, its cells)."""
        return tuple(zip(self.numbers, map(tuple, self.cells), strict=True))

    def column_cells(self, column: str) -> list[str]:
        """Every row's cell of a column (stripped, '' when absent), as :meth:`cell` gives them."""
        wanted = column.strip().lower()
        k = next((k for k, name in enumerate(self.header) if name == wanted), None)
        if k is None:
            return [""] * len(self.numbers)
        if hasattr(self.cells, "column"):  # cells cut from a plain file's bytes: the column at once
            return self.cells.column(k)
        return [cells[k].strip() if k < len(cells) else "" for cells in self.cells]

    def column_codes(self, column: str) -> tuple[list[str], np.ndarray]:
        """:meth:`column_cells` as its distinct texts and each row's index into them."""
        wanted = column.strip().lower()
        k = next((k for k, name in enumerate(self.header) if name == wanted), None)
        if k is not None and hasattr(self.cells, "column_codes"):  # cut from a plain file's bytes
            return self.cells.column_codes(k)
        names, code = distinct_texts(np.array(self.column_cells(column), dtype=object))
        return names.tolist(), code

    def cell(self, cells: tuple[str, ...], column: str) -> str:
        """The cell of a column (matched like the readers: case and spaces ignored), '' when absent."""
        wanted = column.strip().lower()
        for k, name in enumerate(self.header):
            if name == wanted:
                return cells[k].strip() if k < len(cells) else ""
        return ""


def _log_checks() -> dict[str, Callable[[Campaign], KindCheck]]:
    """The check of each kind of log, by the campaign's ``[logs]`` key, from the registry of methods
    (a method's check module is imported only when its kind of log is checked)."""
    from firstrung.methods import REGISTRY

    def check_of(method) -> Callable[[Campaign], KindCheck]:
        return lambda campaign: method.module("check").check_campaign(campaign)

    return {m.log_kind: check_of(m) for m in REGISTRY}


@dataclass(frozen=True)
class CheckRun:
    """The check of a campaign's logs."""

    campaign: Campaign
    kinds: tuple[str, ...]
    flags: tuple[Flag, ...]
    series: tuple[SeriesDiagnosis, ...]
    summary: tuple[SummaryRow, ...]
    files: tuple[RawFile, ...]
    noon_only: bool | None

    @property
    def rows_read(self) -> int:
        return sum(len(f.numbers) for f in self.files)

    def inputs(self) -> list[Path]:
        """Every file the check read (an output must not replace one)."""
        return [p for p in [self.campaign.path] if p is not None] + [f.path for f in self.files]


#: The readers' column slots of each kind (for the separator sniffing and the header names).


def _text_of(data: bytes, label: str) -> str | None:
    """The file's text decoded as the readers decode it, or None when they refuse it."""
    decoded = text_files.decode(data, label)
    text, problem = decoded[0], decoded[-1]
    if problem is not None or text is None:
        return None
    return text[1:] if text.startswith("\ufeff") else text


def read_raw_rows(campaign: Campaign, kind: str, kept: dict | None = None) -> tuple[RawFile, ...]:
    """Every data row of a kind's log files, as text cells, numbered as the readers number them.

    The same decoding, separator, skipped lines and header names as
    the log readers (:mod:`firstrung.tabular`); files that cannot be read give no rows (the
    reader's problem says why). ``kept``: the rows the readers kept while the
    check read them (:func:`firstrung.tabular.raw_rows_kept`); those files are not read again.
    """
    from firstrung.methods import by_log_kind

    slots = by_log_kind(kind).module("log").LOG_SLOTS
    known = {name for slot in slots for name in slot.names}
    normal = text_files.normal_name
    out = []
    for path in campaign.logs.get(kind, ()):
        label = _logs.display_name(Path(path), campaign)
        if kept is not None and str(Path(path)) in kept:  # already read by the check: no second read
            header, numbers, cells = kept[str(Path(path))]
            out.append(RawFile(kind, label, Path(path), header, numbers, cells))
            continue
        try:
            text = _text_of(Path(path).read_bytes(), label)
        except (OSError, ValueError):
            text = None
        header: tuple[str, ...] = ()
        rows = []
        if text is not None:
            delimiter = text_files.sniff_delimiter(text, known)
            try:
                number = 0
                for cells in csv.reader(io.StringIO(text, newline=""), delimiter=delimiter):
                    if text_files.is_skipped(cells):
                        continue
                    if not header:
                        header = tuple(normal(c) for c in cells)
                        continue
                    number += 1
                    rows.append((number, tuple(cells)))
            except csv.Error:
                pass
        out.append(RawFile(kind, label, Path(path), header, [n for n, _ in rows], [c for _, c in rows]))
    return tuple(out)


def run_check(campaign_path) -> CheckRun:
    """Read a campaign and check every log it lists (every kind the registry of methods knows).

    Raises
    ------
    InputError
        The campaign file is unreadable or lists no log of a kind that can be checked.
    """
    campaign = read_campaign(campaign_path)
    log_checks = _log_checks()
    kinds = tuple(k for k in log_checks if campaign.logs.get(k))
    if not kinds:
        raise InputError(
            f"the campaign file lists no logs to check ([logs] {' / '.join(log_checks)} = [...])",
            file=str(campaign_path),
        )
    flags: list[Flag] = []
    series: list[SeriesDiagnosis] = []
    files: list[RawFile] = []
    noon_only = None
    for kind in kinds:
        with _logs.raw_rows_kept() as kept:
            result = log_checks[kind](campaign)
        flags.extend(result.flags)
        series.extend(result.series)
        noon_only = result.noon_only if result.noon_only is not None else noon_only
        files.extend(read_raw_rows(campaign, kind, kept))
    needed = {(f.file, f.row) for f in flags if f.site is None and f.row is not None}
    site_of, observer_of = {}, {}
    for raw in files:  # only the rows whose flags lack a site
        label, numbers = raw.label, raw.numbers
        if any(file == label for file, _ in needed):
            sites, observers = raw.column_cells("site"), raw.column_cells("observer")
            place = dict(zip(numbers, range(len(numbers)), strict=True))
            for file, row in needed:
                if file == label and row in place:
                    site_of[(file, row)] = sites[place[row]]
                    observer_of[(file, row)] = observers[place[row]]
    flags = [
        f if (f.site is not None or f.row is None) else _with_site(f, site_of.get((f.file, f.row)), observer_of)
        for f in flags
    ]
    flags.sort(key=lambda f: (f.file, -1 if f.row is None else f.row))
    summary = summarize_coded(*_coded_columns(files), flags)
    return CheckRun(campaign, kinds, tuple(flags), tuple(series), summary, tuple(files), noon_only)


def _coded_columns(files: Sequence[RawFile]):
    """The files' rows as :func:`firstrung.flags.summarize_coded` takes them: file, row, site and observer,
    each text column as (distinct texts, each row's index into them)."""
    labels, file_code, rows, sites, observers = [], [], [], ([], []), ([], [])
    for raw in files:
        file_code.append(np.full(len(raw.numbers), len(labels), np.int64))
        labels.append(raw.label)
        rows.append(np.asarray(raw.numbers, np.int64).reshape(-1))
        for column, (names, codes) in zip((sites, observers), (raw.column_codes("site"), raw.column_codes("observer")),
                                          strict=True):
            codes = np.asarray(codes, np.int64) + len(column[0])
            column[0].extend(names)
            column[1].append(codes)

    def joined(parts):
        return np.concatenate(parts) if parts else np.zeros(0, np.int64)

    return ((labels, joined(file_code)), joined(rows), (sites[0], joined(sites[1])),
            (observers[0], joined(observers[1])))


def _with_site(flag: Flag, site: str | None, observer_of) -> Flag:
    from dataclasses import replace

    return replace(flag, site=site or None, observer=flag.observer or observer_of.get((flag.file, flag.row), ""))


#: Status of a row in the copy: no flag, warnings only, or an error flag (left out by reductions).
STATUS_WORDS = {None: "accepted", "warning": "accepted-with-warning", "error": "rejected"}


def status_csv(run: CheckRun) -> str:
    """Every row read, with its original cells, then ``status``, ``flags``, ``source_file`` and ``source_row``.

    Columns are the union of the files' headers in order of first appearance.
    A cell a spreadsheet would run as a formula (``=``, ``+``, ``-``, ``@``,
    tab or line-break first) is written with a leading ``'``
    (:func:`firstrung.output.spreadsheet_safe`).
    """
    from firstrung.flags import row_severities
    from firstrung.output import spreadsheet_safe

    severity = row_severities(run.flags)
    codes: dict[tuple[str, int], list[str]] = {}
    for f in run.flags:
        key = (f.file, f.row)
        codes.setdefault(key, [])
        if f.code not in codes[key]:
            codes[key].append(f.code)
    columns: list[str] = []
    for f in run.files:
        columns.extend(c for c in f.header if c and c not in columns)
    several = len(run.kinds) > 1
    buf = io.StringIO()
    writer = csv.writer(buf, lineterminator="\n")
    writer.writerow(columns + ["status", "flags", "source_file", "source_row"] + (["log"] if several else []))
    for f in run.files:
        by_column = [f.column_cells(c) for c in columns]
        for number, values in zip(f.numbers, zip(*by_column, strict=True) if by_column else [()] * len(f.numbers),
                                  strict=True):
            values = list(values)
            key = (f.label, number)
            extra = [f.kind] if several else []
            row_codes = codes.get(key, []) + [c for c in codes.get((f.label, None), []) if c == "unreadable-file"]
            row = values + [STATUS_WORDS[severity(f.label, number)], ";".join(row_codes), f.label, number] + extra
            writer.writerow([spreadsheet_safe(v) if isinstance(v, str) else v for v in row])
    return buf.getvalue()
