"""A long shadow reduction holds less and gives what it gave: the check runs on the readings (the log is
not kept beside them), a file's name is one text for all its rows, the readings' error sources and the
duplicate rows are found without per-row texts or a sort of row tuples.

Nothing here is timed or measured (``benchmarks/run.py --million`` measures the peak memory); each test
compares the lean path with the plain one, or with the definition written out row by row.
"""

from __future__ import annotations

import dataclasses
import shutil
from pathlib import Path

import numpy as np
from tests.helpers import shadows_only

from firstrung.campaign import read_campaign
from firstrung.flags import checks_shared, without_error_rows
from firstrung.memory import repeated_object
from firstrung.methods.shadows.check import CheckSite, log_flags
from firstrung.methods.shadows.check_messages import _duplicate_flags
from firstrung.methods.shadows.forms import READING_SOURCE, reading_sources
from firstrung.methods.shadows.inputs import ShadowReadings
from firstrung.methods.shadows.log import read_shadow_logs, shadow_readings
from firstrung.methods.shadows.run import _without_flagged, run_shadows

EXAMPLES = Path(__file__).resolve().parents[1] / "examples"


def _same_readings(a: ShadowReadings, b: ShadowReadings) -> None:
    assert len(a) == len(b)
    for field in dataclasses.fields(ShadowReadings):
        x, y = getattr(a, field.name), getattr(b, field.name)
        if x is None or y is None:
            assert x is None and y is None, field.name
            continue
        x, y = np.asarray(x), np.asarray(y)
        assert x.dtype == y.dtype, field.name
        if x.dtype.kind == "f":
            assert np.array_equal(x, y, equal_nan=True), field.name
        else:
            assert x.tolist() == y.tolist(), field.name


def _campaign_with_blunders(tmp_path):
    """The example campaign's shadow part (its blunders), two rows copied (duplicates the check flags as
    errors) and two rows of a site without a gnomon (refused by the readings, never checked)."""
    shutil.copytree(EXAMPLES, tmp_path / "c")
    toml = tmp_path / "c" / "campaign.toml"
    shadows_only(toml)
    log = tmp_path / "c" / "logs" / "shadows.csv"
    lines = log.read_text().splitlines(keepends=True)
    no_gnomon = ["karoo,2027-03-22T10:30:00Z,500,a,b\n", "karoo,2027-03-22T10:32:00Z,501,a,b\n"]
    log.write_text("".join(lines + lines[5:7] + no_gnomon))
    return toml


def test_readings_left_out_after_the_check_equal_the_log_left_out_then_read(tmp_path):
    """The reduction's readings: the check made on all readings and its error rows taken out of them are
    the readings of the log with those rows taken out (the way ``without_error_rows`` goes), row for row."""
    toml = _campaign_with_blunders(tmp_path)
    campaign = read_campaign(toml)
    log = read_shadow_logs(campaign)
    kept_log, left_out = without_error_rows(campaign, log, log_flags)
    plain, plain_extra = shadow_readings(campaign, kept_log)
    readings, extra = shadow_readings(campaign, log)
    flags, lean, lean_left_out = _without_flagged(campaign, None, readings, extra, log.rows_read)
    assert left_out >= 3 and lean_left_out == left_out  # the blunders and both copies
    copies = {(f.row, f.fields["duplicate_of"].split(":")[-1]) for f in flags if f.code == "duplicate-row"}
    assert {(188, "5"), (189, "6")} <= copies  # the log's 187 rows, then the copies of its rows 5 and 6
    assert flags == tuple(log_flags(campaign, log))
    assert len(extra) == 2 and [str(p) for p in extra] == [str(p) for p in plain_extra]
    _same_readings(lean, plain)
    run = run_shadows(toml)
    assert run.rows_left_out_flagged == left_out and run.flags == flags
    _same_readings(run.readings, plain)
    with checks_shared():  # a report's run: the check of the log is kept for the report's own check
        shared_flags, shared, shared_left_out = _without_flagged(campaign, log, readings, extra, log.rows_read)
        assert log_flags(campaign, log) == list(shared_flags)
    assert shared_flags == flags and shared_left_out == left_out
    _same_readings(shared, plain)


def test_a_subset_keeps_a_default_column_one_value():
    n = 5
    r = ShadowReadings(np.arange(n), np.arange(n).astype("datetime64[ms]"), np.linspace(1, 2, n), np.ones(n),
                       np.full(n, "umbra", dtype=object), np.full(n, 0.002), np.full(n, 0.001), np.full(n, np.nan),
                       np.full(n, np.nan))
    sub = r.select(np.array([True, False, True, True, False]))
    assert sub.site_index.tolist() == [0, 2, 3] and sub.shadow_m.tolist() == [1.0, 1.5, 1.75]
    assert sub.form.strides == (0,) and sub.form.tolist() == ["length"] * 3  # one value, seen three times
    assert sub.limb.tolist() == ["centre"] * 3 and np.isnan(sub.tip_x_m).all()
    assert len(r.select(np.zeros(n, bool))) == 0


def test_a_file_name_is_one_text_for_every_row(tmp_path):
    """A plain log read a column at a time: each row's file name and length column are one shared text."""
    lines = ["site,time_utc,shadow_mm,observer"]
    lines += [f"s{k % 2},2027-03-20T{10 + k // 60:02d}:{k % 60:02d}:00Z,{900 + k},obs{k % 3}" for k in range(120)]
    (tmp_path / "s.csv").write_text("\n".join(lines) + "\n")
    (tmp_path / "c.toml").write_text(
        '[campaign]\nname = "x"\n'
        + "".join(f'[[site]]\nid = "s{k}"\nlatitude_deg = {40 + 10 * k}\nlongitude_deg = 7.0\n'
                  '[site.gnomon]\nheight_m = 1.0\n' for k in range(2))
        + '[logs]\nshadows = ["s.csv"]\n')
    log = read_shadow_logs(read_campaign(tmp_path / "c.toml"))
    assert len(log) == 120 and not log.problems
    assert len({id(x) for x in log.file}) == 1 and log.file[0] == "s.csv"
    assert len({id(x) for x in log.shadow_column}) == 1 and log.shadow_column[0] == "shadow_mm"
    a = repeated_object("x.csv", 4)
    assert a.dtype == object and a.tolist() == ["x.csv"] * 4 and a[0] is a[3]


def test_reading_sources_follow_the_forms():
    """Each reading's error source, as READING_SOURCE names it: a trace without times is 'untimed'."""
    form = np.array(["length", "angle", "trace", "trace", "length"])
    timed = np.array([True, True, True, False, False])
    names = list(READING_SOURCE)
    expected = [names.index("untimed" if f == "trace" and not t else f) for f, t in zip(form, timed, strict=True)]
    assert reading_sources(form, timed).tolist() == expected == [0, 1, 2, 3, 0]
    seen_each_time = np.broadcast_to(np.array("length", dtype="<U6"), (4,))
    assert reading_sources(seen_each_time, np.broadcast_to(np.array(True), (4,))).tolist() == [0] * 4


def test_duplicates_name_the_first_copy(tmp_path):
    """Every later copy of a (site, time, length) is flagged once, naming the first copy (in the rows'
    order), across files; a same time and length at another site, or another length, is no copy."""
    t = np.array(["2027-03-20T11:00", "2027-03-20T11:00", "2027-03-20T11:04", "2027-03-20T11:00",
                  "2027-03-20T11:00", "2027-03-20T11:04", "2027-03-20T11:00"], dtype="datetime64[ms]")
    site = np.array([0, 1, 0, 0, 0, 0, 0])
    length = np.array([0.9, 0.9, 0.95, 0.9, 0.901, 0.95, 0.9])
    file = np.array(["a.csv", "a.csv", "a.csv", "b.csv", "b.csv", "b.csv", "b.csv"], dtype=object)
    row = np.array([1, 2, 3, 1, 2, 3, 4])
    n = t.size
    rows = ShadowReadings(site, t, length, np.ones(n), np.full(n, "umbra", dtype=object), np.full(n, 0.002),
                          np.full(n, 0.001), np.full(n, np.nan), np.full(n, np.nan), file=file, row=row,
                          observer=np.full(n, "", dtype=object))
    sites = (CheckSite("s0", 45.0, 7.0, 100.0), CheckSite("s1", 46.0, 7.0, 100.0))
    first: dict = {}
    expected = []
    for i in range(n):  # the definition, row by row
        key = (site[i], t[i], round(length[i] * 1e6))
        if key in first:
            j = first[key]
            expected.append((file[i], row[i], f"{file[j]}:{row[j]}"))
        else:
            first[key] = i
    got = [(f.file, f.row, f.fields["duplicate_of"]) for f in _duplicate_flags(sites, rows)]
    assert got == expected == [("b.csv", 1, "a.csv:1"), ("b.csv", 3, "a.csv:3"), ("b.csv", 4, "a.csv:1")]
