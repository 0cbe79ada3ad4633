"""Checks of eclipse and half-moon timings: far from the prediction, and why."""

from __future__ import annotations

import csv
import datetime as dt
import json
import shutil
from pathlib import Path

import pytest

from firstrung.flags import likely_cause
from helpers import run_cli

CLEAN = Path(__file__).resolve().parent / "data" / "clean_campaign"


def test_likely_cause_of_a_time_difference():
    # Europe/Zurich is UTC+1 in December (IANA tz database; common knowledge)
    assert likely_cause(3600.0 + 20.0, 1.0, "time_utc") == ("local-time-as-utc", -1)
    assert likely_cause(3600.0, 1.0, "time_local") == ("time-shift-hours", -1)
    assert likely_cause(-2 * 3600.0 + 30.0, None, "time_utc") == ("time-shift-hours", 2)
    assert likely_cause(600.0, 1.0, "time_utc") == (None, None)
    assert likely_cause(5 * 3600.0, None, "time_utc") == (None, None)


def _edit(path: Path, changes: dict[int, dt.timedelta]) -> None:
    with path.open(newline="") as f:
        rows = list(csv.reader(f))
    for k, shift in changes.items():
        t = dt.datetime.fromisoformat(rows[k][1].replace("Z", "")) + shift
        rows[k][1] = t.isoformat() + "Z"
    with path.open("w", newline="") as f:
        csv.writer(f, lineterminator="\n").writerows(rows)


@pytest.fixture()
def camp(tmp_path):
    shutil.copytree(CLEAN, tmp_path / "camp")
    return tmp_path / "camp" / "campaign.toml"


def _flags(camp, capsys, monkeypatch, kind):
    code, out, err = run_cli(["check", camp, "--json"], capsys, monkeypatch)
    data = json.loads(out)
    return code, {f["row"]: f for f in data["flags"] if f["file"] == f"logs/{kind}.csv"}


def test_clean_eclipse_and_half_moon_logs_raise_no_timing_flag(camp, capsys, monkeypatch):
    code, eclipse = _flags(camp, capsys, monkeypatch, "eclipse")
    # only the U1 that the example log types four minutes late on purpose (data row 6, 5.3 min
    # after the Danjon prediction: beyond the 5 min a contact may be off)
    assert set(eclipse) == {6} and eclipse[6]["code"] == "event-time-mismatch"
    code, phases = _flags(camp, capsys, monkeypatch, "phases")
    assert phases == {}


def test_eclipse_timings_far_from_their_prediction_are_diagnosed(camp, capsys, monkeypatch):
    log = camp.parent / "logs" / "eclipse.csv"
    # row 2 is lowmead's U1 (Europe/Zurich, UTC+1): typed in local time; row 3 fjell's U1 two hours
    # late; row 7 a crater time ten minutes late; row 8 a day late (row 6: the example's own late U1)
    with log.open(newline="") as f:
        rows = list(csv.reader(f))
    assert rows[2][0] == "lowmead" and rows[2][2] == "U1"
    _edit(log, {2: dt.timedelta(hours=1), 3: dt.timedelta(hours=2), 7: dt.timedelta(minutes=10),
                8: dt.timedelta(days=1)})
    code, flags = _flags(camp, capsys, monkeypatch, "eclipse")
    assert code == 1
    assert flags[2]["code"] == "event-time-mismatch" and flags[2]["cause"] == "local-time-as-utc"
    assert flags[3]["cause"] == "time-shift-hours" and flags[3]["hours"] == -2
    assert flags[7]["code"] == "event-time-mismatch" and "cause" not in flags[7]
    assert flags[7]["seconds"] == pytest.approx(600, abs=60)
    assert "no lunar eclipse within 12 h" in flags[8]["message"]
    assert set(flags) == {2, 3, 6, 7, 8}


def test_half_moon_far_from_the_sites_true_half_moon_and_moon_down(camp, capsys, monkeypatch):
    log = camp.parent / "logs" / "phases.csv"
    with log.open(newline="") as f:
        rows = list(csv.reader(f))
    k = next(i for i, r in enumerate(rows) if i and r[5] == "1200")  # a timing by eye
    _edit(log, {k: dt.timedelta(hours=5)})
    code, flags = _flags(camp, capsys, monkeypatch, "phases")
    assert code == 1
    flag = flags[k]
    assert flag["code"] in ("event-time-mismatch", "moon-below-horizon")
    if flag["code"] == "event-time-mismatch":
        assert flag["severity"] == "warning" and flag["seconds"] > 4 * 3600


def test_reductions_leave_out_flagged_timings_and_say_so(camp, capsys, monkeypatch):
    log = camp.parent / "logs" / "eclipse.csv"
    _edit(log, {2: dt.timedelta(hours=1)})  # lowmead's U1 typed in local time
    code, out, err = run_cli(["reduce", "eclipse", camp, "--json"], capsys, monkeypatch)
    assert code == 0, err
    data = json.loads(out)
    # the local-time U1 and the example's own late U1 (data row 6) are left out
    assert data["rows"]["left_out_flagged"] == 2
    assert "2 rows flagged as errors by check left out" in err
    code, out, err = run_cli(["reduce", "eclipse", camp, "--json", "--include-flagged"], capsys, monkeypatch)
    assert json.loads(out)["rows"]["left_out_flagged"] == 0
