"""Rows never hidden, check and the reductions agreeing, the terminal kept safe, the library's edges.

Every case starts from a copy of ``examples/`` (invented data).
"""

from __future__ import annotations

import csv
import io
import json
import shutil
from pathlib import Path

import numpy as np
import pytest

from firstrung.campaign import read_campaign
from firstrung.ephemeris import solar_transit, sun_position, sun_track
from firstrung.methods.eclipse.log import read_eclipse_logs
from firstrung.methods.phases.log import read_phase_logs
from firstrung.methods.shadows.log import read_shadow_logs
from helpers import run_cli

EXAMPLES = Path(__file__).resolve().parents[1] / "examples"


@pytest.fixture
def c(tmp_path) -> Path:
    folder = tmp_path / "c"
    shutil.copytree(EXAMPLES, folder)
    return folder


def edit_csv(path: Path, change) -> None:
    rows = list(csv.reader(io.StringIO(path.read_text())))
    change(rows[0], rows[1:])
    buf = io.StringIO()
    csv.writer(buf, lineterminator="\n").writerows(rows)
    path.write_text(buf.getvalue())


# --- refusals are shown, and counted as refused --------------------------------------------------


def test_reduce_shadows_shows_the_refusals_that_leave_one_site(c, capsys, monkeypatch):
    def change(header, rows):
        for r in rows[:125]:
            r[header.index("time_utc")] = "2027-13-45T12:00:00Z"

    edit_csv(c / "logs" / "shadows.csv", change)
    code, out, err = run_cli(["reduce", "shadows", c / "campaign.toml"], capsys, monkeypatch)
    # a campaign of declared sites left with one by its refusals is not quietly turned into
    # the one-site (subsolar) method: it says so
    assert (code, out) == (2, "")
    lines = err.splitlines()
    # the 125 refusals are one problem on many rows: said once with its rows, then why nothing was reduced
    assert len(lines) == 2
    assert lines[0] == ("firstrung: logs/shadows.csv:rows 1-125:time_utc: expected an ISO 8601 UTC time such as "
                        "2027-03-20T11:38:00Z, got '2027-13-45T12:00:00Z' (no such date or time)")
    assert lines[-1] == "firstrung: need usable shadow readings from at least two sites; got 1"


def test_reduce_shadows_json_counts_every_refused_row(c, capsys, monkeypatch):
    def change(header, rows):
        for r in rows[:3]:
            r[header.index("time_utc")] = "2027-13-45T12:00:00Z"

    edit_csv(c / "logs" / "shadows.csv", change)
    code, out, err = run_cli(["reduce", "shadows", c / "campaign.toml", "--json"], capsys, monkeypatch)
    assert code == 2
    # three rows with one problem are said once, and counted as three refused rows
    assert "logs/shadows.csv:rows 1-3:time_utc: expected an ISO 8601 UTC time" in err
    assert json.loads(out)["rows"]["refused"] == 3


def test_check_counts_a_refused_file_as_refused(c, tmp_path, capsys, monkeypatch):
    log = c / "logs" / "shadows.csv"
    log.write_text(log.read_text().replace("site,", "station,", 1))
    out_file = tmp_path / "accepted.csv"
    code, out, err = run_cli(["check", c / "campaign.toml", "--json", "--accepted", out_file], capsys, monkeypatch)
    assert code == 1
    data = json.loads(out)
    # 187 shadow rows the reader refused whole (no 'site' column) + 139 eclipse and half-moon rows
    # + 20 transit timings, one of them a C4 logged as C3 on purpose (flagged and rejected)
    # + 27 astrometry and 30 light-curve rows of the stars
    assert data["rows"] == {"read": 403, "accepted": 215, "flagged": 188, "rejected": 188}
    refused = [f for f in data["flags"] if f["code"] == "unreadable-file"]
    assert len(refused) == 1 and "missing column 'site'" in refused[0]["message"]
    rows = list(csv.DictReader(io.StringIO(out_file.read_text())))
    shadow_rows = [r for r in rows if r["log"] == "shadows"]
    assert len(shadow_rows) == 187
    assert {(r["status"], r["flags"]) for r in shadow_rows} == {("rejected", "unreadable-file")}


# --- check and the eclipse reduction: one reader, one crater lookup -----------------------------


def refused_by_reduce(err: str) -> set[int]:
    return {int(line.split(":")[2]) for line in err.splitlines() if line.startswith("firstrung: logs/eclipse.csv:")}


@pytest.mark.parametrize(
    "feature, known",
    [("Tycho crater", True), ("crater Tycho", True), ("  tycho ", True), ("Tychoo", False), ("Mare Crisium", False)],
)
def test_check_and_reduce_agree_on_crater_names(c, capsys, monkeypatch, feature, known):
    def change(header, rows):
        k = next(i for i, r in enumerate(rows) if r[header.index("feature")] == "Tycho")
        rows[k][header.index("feature")] = feature

    edit_csv(c / "logs" / "eclipse.csv", change)
    code, out, err = run_cli(["check", c / "campaign.toml", "--json"], capsys, monkeypatch)
    flags = json.loads(out)["flags"]
    check_refused = {f["row"] for f in flags if f["file"] == "logs/eclipse.csv" and f["severity"] == "error"}
    unknown = {f["row"] for f in flags if f.get("column") == "feature"}
    code, out, err = run_cli(["reduce", "eclipse", c / "campaign.toml", "--include-flagged"], capsys, monkeypatch)
    assert refused_by_reduce(err) == unknown
    assert (len(unknown) == 0) == known
    if not known:
        assert unknown <= check_refused
        (row,) = unknown
        assert (f"logs/eclipse.csv:{row}:feature: unknown lunar feature {feature!r}: expected a crater of the crater "
                "table") in err


def test_check_and_reduce_refuse_the_same_eclipse_rows_of_the_bad_corpus(c, capsys, monkeypatch):
    bad = Path(__file__).resolve().parent / "data" / "bad" / "eclipse_bad_rows.csv"
    text = (c / "campaign.toml").read_text()
    (c / "campaign.toml").write_text(text.replace('eclipse = ["logs/eclipse.csv"]',
                                                  'eclipse = ["logs/eclipse.csv", "logs/bad.csv"]'))
    # the corpus's sites are ridge/coast/plain: renamed to this campaign's ('harbour' stays unknown)
    text = bad.read_text()
    for old, new in (("ridge,", "fjell,"), ("coast,", "lowmead,"), ("plain,", "sardo,")):
        text = text.replace(old, new)
    (c / "logs" / "bad.csv").write_text(text)
    code, out, err = run_cli(["check", c / "campaign.toml", "--json"], capsys, monkeypatch)
    flags = json.loads(out)["flags"]
    check_refused = {f["row"] for f in flags if f["file"] == "logs/bad.csv" and f["severity"] == "error"}
    code, out, err = run_cli(["reduce", "eclipse", c / "campaign.toml", "--include-flagged"], capsys, monkeypatch)
    reduce_refused = {int(line.split(":")[2]) for line in err.splitlines()
                      if line.startswith("firstrung: logs/bad.csv:")}
    # every row the reduction refuses, check flags as an error (check also flags timings far from the
    # prediction, which the reduction weighs instead)
    assert reduce_refused == {1, 2, 3, 4, 5, 6, 7, 8}
    assert reduce_refused <= check_refused


# --- the terminal ------------------------------------------------------------------------------


HOSTILE = "\x1b[2J\x1b]0;title\x07\x9b31m"


def test_escape_sequences_from_names_never_reach_the_terminal(c, capsys, monkeypatch):
    camp = c / "campaign.toml"
    text = camp.read_text().replace('name = "Equinox', 'name = "X\\u001b[2J\\u0007Equinox', 1)
    camp.write_text(text.replace('name = "Fjellvik', 'name = "F\\u001b]0;t\\u0007jellvik', 1))

    def change(header, rows):
        for r in rows:
            r[header.index("observer")] = "obs" + HOSTILE
        rows[0][header.index("site")] = "fjell" + HOSTILE  # an unknown site: its name goes to stderr

    for log in ("shadows", "eclipse", "phases"):
        edit_csv(c / "logs" / f"{log}.csv", change)
    # one console class and one stderr printer serve every command: a few commands show it
    for args in (["check", camp, "-v"], ["reduce", "shadows", camp], ["reduce", "phases", camp],
                 ["plan", "eclipses", camp, "--from", "2029-12-01", "--to", "2029-12-31"]):
        code, out, err = run_cli(args, capsys, monkeypatch, columns=200)
        assert "internal error" not in err
        for stream in (out, err):
            assert not any(ch in stream for ch in "\x1b\x07\x9b"), (args, stream[:300])
    code, out, err = run_cli(["check", camp], capsys, monkeypatch, columns=200)
    assert "obs\\x1b[2J\\x1b]0;title" in out  # shown, escaped, so the odd cell can be found
    code, out, err = run_cli(["reduce", "shadows", camp], capsys, monkeypatch, columns=200)
    assert "logs/shadows.csv:1:site: unknown site 'fjell\\x1b[2J" in err


@pytest.mark.parametrize(
    "args, printed",
    [
        (["report", "{camp}", "-o", "{dir}/[bold]x.html", "--samples", "1000"], "report written: {dir}/[bold]x.html"),
        (["sheet", "{camp}", "--site", "fjell", "--date", "2027-03-22", "-o", "{dir}/[red]s.html"],
         "field sheet written: {dir}/[red]s.html"),
        (["blank-sheets", "-o", "{dir}/[i]kit"], "10 files written to {dir}/[i]kit"),
        (["simulate", "shadows", "{camp}", "--from", "2027-03-22", "--to", "2027-03-22", "-o", "{dir}/[b]sim"],
         "93 synthetic shadow readings written to {dir}/[b]sim/shadows.csv"),
        (["plan", "eclipses", "{camp}", "--from", "2029-12-01", "--to", "2029-12-31", "--ics", "{dir}/[b]e.ics"],
         "  calendar written to {dir}/[b]e.ics"),
    ],
)
def test_output_paths_are_printed_as_given(c, tmp_path, capsys, monkeypatch, args, printed):
    argv = [a.format(camp=c / "campaign.toml", dir=tmp_path) for a in args]
    code, out, err = run_cli(argv, capsys, monkeypatch, columns=400)
    assert code == 0, err
    assert printed.format(dir=tmp_path) in out.splitlines()


# --- a campaign that reaches outside its folder --------------------------------------------------


def test_logs_outside_the_campaign_folder_are_read_with_a_note(c, tmp_path, capsys, monkeypatch):
    shared = tmp_path / "shared"
    shared.mkdir()
    shutil.move(c / "logs" / "phases.csv", shared / "phases.csv")
    camp = c / "campaign.toml"
    camp.write_text(camp.read_text().replace('"logs/phases.csv"', '"../shared/phases.csv"')
                    .replace('"logs/eclipse.csv"', f'"{c / "logs" / "eclipse.csv"}"'))
    code, out, err = run_cli(["check", camp, "--json"], capsys, monkeypatch)
    assert code == 1
    assert err == f"firstrung: note: the campaign reads logs outside its folder: {c / '..' / 'shared' / 'phases.csv'}\n"
    assert json.loads(out)["rows"]["read"] == 403  # read all the same (the absolute path inside is not noted)
    code, out, err = run_cli(["check", EXAMPLES / "campaign.toml", "--json"], capsys, monkeypatch)
    assert "note" not in err


# --- the library's edges -------------------------------------------------------------------------


def test_empty_arrays_give_empty_results():
    none = np.array([], dtype="datetime64[s]")
    p = sun_position(none, 45.0, 7.0)
    assert p.altitude_deg.shape == (0,) and p.declination_deg.shape == (0,)
    assert sun_track(none, 45.0, 7.0).hour_angle_rate_deg_per_s.shape == (0,)
    assert solar_transit(np.array([], dtype="datetime64[D]"), 45.0, 7.0).time_utc.shape == (0,)
    # no site, one date: an empty grid of the broadcast shape
    assert solar_transit(np.array(["2027-03-20"], dtype="datetime64[D]")[:, None], np.zeros(0),
                         np.zeros(0)).altitude_deg.shape == (1, 0)
    # and one value still matches the non-empty call (no state left behind)
    one = sun_position(np.array(["2027-06-21T12:00:00"], dtype="datetime64[s]"), 46.2, 7.4, 620.0)
    assert round(float(one.altitude_deg[0]), 1) == 66.6  # as the docstring example (checked against astropy)


@pytest.mark.parametrize("reader, name, rows",
                         [(read_shadow_logs, "shadows", 187), (read_eclipse_logs, "eclipse", 119),
                          (read_phase_logs, "phases", 20)])
def test_readers_take_one_path_as_one_file(reader, name, rows):
    campaign = read_campaign(EXAMPLES / "campaign.toml")
    path = EXAMPLES / "logs" / f"{name}.csv"
    for given in (str(path), path, [str(path)]):
        log = reader(campaign, given)
        assert (log.rows_read, list(log.problems)) == (rows, [])
