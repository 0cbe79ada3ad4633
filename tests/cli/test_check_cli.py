"""``firstrung check`` in process: exit codes, contract keys, the status copy, determinism."""

from __future__ import annotations

import csv
import datetime as dt
import json
import shutil
from pathlib import Path

import pytest

from helpers import run_cli, shadows_only

EXAMPLES = Path(__file__).resolve().parent.parent / "data" / "clean_campaign"


def run(args, capsys, monkeypatch):
    return run_cli(args, capsys, monkeypatch, columns=120)


@pytest.fixture()
def example(tmp_path):
    """The clean campaign with its shadow log only (these tests are about shadow rows)."""
    shutil.copytree(EXAMPLES, tmp_path / "camp")
    toml = tmp_path / "camp" / "campaign.toml"
    shadows_only(toml)
    return tmp_path / "camp"


def _blunder(example: Path) -> None:
    """lowmead's clock 2 h fast, sardo's lengths typed 10x too long, row 5 mistyped, row 3 entered twice."""
    path = example / "logs" / "shadows.csv"
    with path.open(newline="") as f:
        rows = list(csv.reader(f))
    out = [rows[0]]
    for k, r in enumerate(rows[1:], start=1):
        r = list(r)
        if r[0] == "lowmead":
            t = dt.datetime.fromisoformat(r[1].replace("Z", "")) + dt.timedelta(hours=2)
            r[1] = t.isoformat() + "Z"
        if r[0] == "sardo":
            r[2] = str(int(r[2]) * 10)
        if k == 5:
            r[2] = str(int(r[2]) + 150)
        out.append(r)
    out.append(out[3])
    out.append(["nowhere", "2027-03-20T11:00:00Z", "1200", "x", ""])
    with path.open("w", newline="") as f:
        csv.writer(f, lineterminator="\n").writerows(out)


def test_clean_example_passes_with_exit_0(example, capsys, monkeypatch):
    code, out, err = run(["check", example / "campaign.toml", "--json"], capsys, monkeypatch)
    assert code == 0, err
    data = json.loads(out)
    assert data["flags"] == []
    assert data["rows"] == {"read": 93, "accepted": 93, "flagged": 0, "rejected": 0}
    assert [s["site"] for s in data["summary"] if s["observer"] is None] == ["fjell", "lowmead", "sardo"]
    assert all(s["verdict"] == "fits" for s in data["series"])


def test_blunders_are_flagged_with_contract_keys_and_exit_1(example, capsys, monkeypatch):
    _blunder(example)
    code, out, err = run(["check", example / "campaign.toml", "--json"], capsys, monkeypatch)
    assert code == 1, err
    data = json.loads(out)
    for f in data["flags"]:
        assert {"file", "row", "site", "code", "message", "severity", "fix"} <= set(f)
        assert f["file"] == "logs/shadows.csv"
    by_code = {}
    for f in data["flags"]:
        by_code.setdefault(f["code"], []).append(f)
    shift = by_code["time-shift-hours"]
    assert {f["site"] for f in shift} == {"lowmead"} and len(shift) == 31
    assert {f["hours"] for f in shift} == {-2.0}
    assert "2 hours earlier than logged" in shift[0]["message"]
    unit = by_code["length-unit"]
    assert {f["site"] for f in unit} == {"sardo"} and {f["factor"] for f in unit} == {10.0}
    assert [f["row"] for f in by_code["outlier"]] == [5]
    assert [f["row"] for f in by_code["duplicate-row"]] == [94]
    assert by_code["unknown-site"][0]["row"] == 95 and by_code["unknown-site"][0]["site"] == "nowhere"
    assert data["rows"]["read"] == 95
    assert data["rows"]["rejected"] == 31 + 31 + 1 + 1 + 1
    fjell = next(s for s in data["summary"] if s["site"] == "fjell" and s["observer"] is None)
    assert (fjell["read"], fjell["accepted"], fjell["errors"]) == (32, 30, 2)


def test_table_is_grouped_by_site(example, capsys, monkeypatch):
    _blunder(example)
    code, out, _ = run(["check", example / "campaign.toml"], capsys, monkeypatch)
    assert code == 1
    assert "Site lowmead: 31 flags" in out and "Site sardo: 31 flags" in out
    assert "logs/shadows.csv:32-62" in out  # consecutive rows with one diagnosis are shown once
    assert "Rows per site and observer" in out
    assert "95 rows read, 30 accepted" in out


def test_accepted_copy_has_a_status_column_and_inputs_are_untouched(example, capsys, monkeypatch, tmp_path):
    _blunder(example)
    log = example / "logs" / "shadows.csv"
    before = log.read_bytes()
    target = tmp_path / "status.csv"
    code, _, err = run(["check", example / "campaign.toml", "--accepted", target], capsys, monkeypatch)
    assert code == 1, err
    assert log.read_bytes() == before
    with target.open(newline="") as f:
        rows = list(csv.DictReader(f))
    assert len(rows) == 95
    assert rows[0]["status"] == "accepted" and rows[0]["source_row"] == "1"
    assert rows[4]["status"] == "rejected" and rows[4]["flags"] == "outlier"
    assert sum(r["status"] == "rejected" for r in rows) == 65
    assert list(rows[0])[:5] == ["site", "time_utc", "shadow_mm", "observer", "note"]


def test_accepted_refuses_to_overwrite_an_input(example, capsys, monkeypatch):
    log = example / "logs" / "shadows.csv"
    before = log.read_bytes()
    code, out, err = run(["check", example / "campaign.toml", "--accepted", log], capsys, monkeypatch)
    assert code == 2
    assert "one of the inputs" in err and "Traceback" not in err
    assert log.read_bytes() == before


def test_json_is_byte_identical_between_runs(example, capsys, monkeypatch):
    _blunder(example)
    _, first, _ = run(["check", example / "campaign.toml", "--json"], capsys, monkeypatch)
    _, second, _ = run(["check", example / "campaign.toml", "--json"], capsys, monkeypatch)
    assert first == second


def test_unreadable_campaign_is_exit_2(tmp_path, capsys, monkeypatch):
    code, out, err = run(["check", tmp_path / "missing.toml"], capsys, monkeypatch)
    assert code == 2 and out == "" and "no such file" in err
