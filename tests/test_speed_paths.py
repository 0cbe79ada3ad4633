"""The faster paths give what the plain ones gave: the check's hypotheses tried only where they can
decide, the per-site summary counted by array operations, the campaign file parsed once per command.

No test here times anything (speed is measured by ``benchmarks/run.py``); each compares the fast
path's result with one computed independently, row by row.
"""

from __future__ import annotations

import itertools
from collections import Counter
from pathlib import Path

import numpy as np
from tests.helpers import umbra_rows

from firstrung.campaign import read_campaign
from firstrung.flags import Flag, summarize_columns
from firstrung.methods.shadows.check import CheckSite, check_shadow_rows
from firstrung.methods.shadows.rehearsal import ShadowErrors, simulate_shadow_readings


def _day(site: CheckSite, k: int, day: str, noon_utc: str, rng):
    """Twelve readings 4 minutes apart around a site's noon, simulated with the usual errors."""
    t = np.datetime64(f"{day}T{noon_utc}", "ms") + np.arange(-6, 6) * np.timedelta64(4, "m")
    syn = simulate_shadow_readings(np.zeros(t.size, int), t, [site.latitude_deg], [site.longitude_deg],
                                   [site.elevation_m], [1.0], np.array(["umbra"], dtype=object), ShadowErrors(), rng)
    return np.full(t.size, k), t, syn.shadow_m


def test_a_series_verdict_does_not_depend_on_the_other_series():
    """A series with centimetres typed as metres is diagnosed the same alone and among many clean series
    (the hypotheses are tried only on series whose statistic can be lowered decisively)."""
    rng = np.random.default_rng(7)
    sites = tuple(CheckSite(f"s{k}", 40.0 + k, 5.0 + 3 * k, 100.0) for k in range(6))
    parts = [_day(sites[k], k, "2027-03-20", f"{11 - k // 3:02d}:{40 - 12 * (k % 3):02d}", rng) for k in range(6)]
    index, t, shadow = (np.concatenate(p) for p in zip(*parts, strict=True))
    shadow[index == 2] *= 100.0  # centimetres typed in a metre column at the third site
    every = check_shadow_rows(sites, umbra_rows(index, t, shadow))
    alone_pick = index == 2
    alone = check_shadow_rows(sites, umbra_rows(index[alone_pick], t[alone_pick], shadow[alone_pick]))
    codes = {(f.code, f.fields.get("factor")) for f in every.flags if f.site == "s2"}
    assert codes == {("length-unit", 100.0)}
    assert codes == {(f.code, f.fields.get("factor")) for f in alone.flags}
    diag = [d for d in every.series if d.site == "s2"]
    assert [(d.verdict, d.best, d.statistic_best) for d in diag] == [(d.verdict, d.best, d.statistic_best)
                                                                     for d in alone.series]
    assert all(d.verdict == "fits" for d in every.series if d.site != "s2")


def _row_by_row(file, row, site, observer, flags):
    """The per-site summary counted one row at a time (the definition, written out)."""
    refused = {f.file for f in flags if f.row is None and f.code == "unreadable-file" and f.severity == "error"}
    states = {}
    for f in flags:
        if f.row is not None:
            key = (f.file, f.row)
            states[key] = "error" if "error" in (states.get(key), f.severity) else f.severity
    table = Counter()
    for fi, r, s, o in zip(file, row, site, observer, strict=True):
        state = "error" if fi in refused else states.get((fi, r))
        for key in [(s, "")] + ([(s, o)] if o else []):
            table[key + ("read",)] += 1
            table[key + ("accepted",)] += state != "error"
            table[key + ("flagged",)] += state is not None
            table[key + ("errors",)] += state == "error"
            table[key + ("warnings",)] += state == "warning"
    return table


def test_summary_by_arrays_equals_the_row_by_row_count():
    rng = np.random.default_rng(3)
    n = 2_000
    file = rng.choice(["a.csv", "b.csv", "c.csv"], n)
    row = np.zeros(n, int)
    for name in ("a.csv", "b.csv", "c.csv"):
        row[file == name] = np.arange(1, int((file == name).sum()) + 1)
    site = rng.choice(["ridge", "fjell", "kap", ""], n)
    observer = rng.choice(["", "A. B.", "C. D."], n)
    picked = rng.choice(n, 300, replace=False)
    flags = [Flag(str(file[k]), int(row[k]), None, "outlier", str(rng.choice(["error", "warning"])), "m", "f")
             for k in itertools.chain(picked, picked[:50])]  # some rows flagged twice
    flags.append(Flag("c.csv", None, None, "unreadable-file", "error", "m", "f"))
    summary = summarize_columns(file, row, site, observer, flags)
    expected = _row_by_row(file, row, site, observer, flags)
    keys = sorted({k[:2] for k in expected})
    assert [(s.site, s.observer) for s in summary] == keys
    for s in summary:
        for what in ("read", "accepted", "flagged", "errors", "warnings"):
            assert getattr(s, what) == expected[(s.site, s.observer, what)], (s, what)
    assert sum(s.read for s in summary if s.observer == "") == n


def test_campaign_parsed_once_but_never_stale(tmp_path):
    path = tmp_path / "c.toml"
    path.write_text('[[site]]\nid = "ridge"\nlatitude_deg = 46.2\nlongitude_deg = 7.4\n')
    first = read_campaign(path)
    assert read_campaign(path) is first  # the same bytes: parsed once
    path.write_text('[[site]]\nid = "ridge"\nlatitude_deg = 46.3\nlongitude_deg = 7.4\n')
    assert read_campaign(path).sites[0].latitude_deg == 46.3  # new bytes: read again


# --- the reader in chunks ------------------------------------------------------------------------


def test_reading_in_chunks_gives_what_the_row_checks_give(tmp_path, monkeypatch):
    """A log read three rows at a time (skipped lines, refused rows and bad cells falling on the chunks'
    edges) gives the rows, numbers, problems and notes of the row-by-row read, and check keeps every row."""
    import shutil

    from firstrung import csv_bytes, csv_table, tabular
    from firstrung.app.check import run_check
    from firstrung.methods.shadows.log import read_shadow_logs

    shutil.copytree(Path(__file__).resolve().parents[1] / "examples", tmp_path / "camp")
    log = tmp_path / "camp" / "logs" / "shadows.csv"
    lines = log.read_text().splitlines()
    body = lines[1:]
    odd = ["", "# a comment", ",,,", "", "fjell,2027-03-22T11:00:00Z,1500,x,y,extra", "nowhere,2027-03-22T11:00:00Z,1500,x,y",
           "fjell,2027-03-22T11:00:00Z,abc,x,y", "", "", "", "fjell,2027-02-30T11:00:00Z,1500,x,y"]
    mixed = []
    for k, line in enumerate(body):
        mixed.append(line)
        if k % 7 == 3:
            mixed.append(odd[(k // 7) % len(odd)])
    log.write_text("\n".join(["", "# kept for the chunks' sake", lines[0]] + mixed + ["", ""]) + "\n")
    campaign = read_campaign(tmp_path / "camp" / "campaign.toml")
    monkeypatch.setattr(csv_table, "CHUNK_CHARS", 100)  # about two rows a chunk
    monkeypatch.setattr(csv_bytes, "ROWS_PER_CHUNK", 2)  # the same for a plain file read from its bytes
    chunked = read_shadow_logs(campaign)
    monkeypatch.setattr(tabular, "FAST_PATH", False)
    slow = read_shadow_logs(campaign)
    monkeypatch.setattr(tabular, "FAST_PATH", True)
    assert len(chunked) > 100 and len(chunked) == len(slow)
    for name in ("file", "row", "site", "time_utc", "shadow_m", "observer", "note"):
        assert np.asarray(getattr(chunked, name)).tolist() == np.asarray(getattr(slow, name)).tolist(), name
    assert [str(p) for p in chunked.problems] == [str(p) for p in slow.problems]
    assert len(chunked.problems) >= 5
    assert chunked.rows_read == slow.rows_read and chunked.notes == slow.notes
    run = run_check(tmp_path / "camp" / "campaign.toml")  # the check's copy of every row, kept across chunks
    kept = [f for f in run.files if f.kind == "shadows"][0]
    assert len(kept.rows) == slow.rows_read
    assert [n for n, _ in kept.rows] == list(range(1, slow.rows_read + 1))
