"""The command line, in process: exit codes, one-line errors, contract keys, determinism."""

from __future__ import annotations

import json
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

from helpers import run_cli

# a clean campaign (no blunders in its logs), kept for tests; examples/ holds the demo
EXAMPLES = Path(__file__).resolve().parent / "data" / "clean_campaign"


def run(args, capsys, monkeypatch):
    return run_cli(args, capsys, monkeypatch, columns=100)


@pytest.fixture()
def example(tmp_path):
    """A copy of the example campaign that a test may change."""
    shutil.copytree(EXAMPLES, tmp_path / "camp")
    return tmp_path / "camp"


def test_version_and_help(capsys, monkeypatch):
    code, out, _ = run(["--version"], capsys, monkeypatch)
    assert code == 0 and out.strip() == "firstrung 0.1.0"
    code, out, _ = run(["reduce", "shadows", "--help"], capsys, monkeypatch)
    assert code == 0 and "--json" in out and "--samples" in out


def test_reduce_shadows_json_contract_keys(example, capsys, monkeypatch):
    code, out, err = run(["reduce", "shadows", example / "campaign.toml", "--json"], capsys, monkeypatch)
    assert code == 0, err
    data = json.loads(out)
    for key in ("earth_radius_km", "circumference_km"):
        assert set(data[key]) == {"value", "sigma", "low", "high", "unit"}
        assert data[key]["unit"] == "km"
    assert data["circumference_km"]["value"] == pytest.approx(2 * 3.141592653589793 * data["earth_radius_km"]["value"], rel=1e-6)
    # the three invented sites span 39.2-58.95 N: WGS84 meridian arc per radian over that span
    # (GeographicLib, Karney 2013) is 6373.0 km
    assert data["expected_radius_km"] == pytest.approx(6373.0, abs=0.5)
    assert [s["id"] for s in data["sites"]] == ["fjell", "lowmead", "sardo"]
    assert data["error_budget"][0]["source"] == data["limited_by"]
    r = data["earth_radius_km"]
    assert r["low"] < r["value"] < r["high"]
    assert abs(r["value"] - data["expected_radius_km"]) < 3 * r["sigma"]


def test_reduce_shadows_table(example, capsys, monkeypatch):
    code, out, _ = run(["reduce", "shadows", example / "campaign.toml", "--verbose"], capsys, monkeypatch)
    assert code == 0
    assert "Earth's radius from noon shadows" in out
    assert "68 % interval" in out
    assert "Error budget of the radius" in out
    assert "limited most by" in out
    assert "implied longitude" in out


def test_same_inputs_give_byte_identical_json(example, capsys, monkeypatch):
    args = ["reduce", "shadows", example / "campaign.toml", "--json", "--monte-carlo", "500", "--seed", "4"]
    _, first, _ = run(args, capsys, monkeypatch)
    _, second, _ = run(args, capsys, monkeypatch)
    assert first == second
    assert json.loads(first)["monte_carlo"]["seed"] == 4


def _break_row(example: Path, row: int, new_line: str) -> None:
    path = example / "logs" / "shadows.csv"
    lines = path.read_text().splitlines()
    lines[row] = new_line  # lines[0] is the header: data row k is lines[k]
    path.write_text("\n".join(lines) + "\n")


@pytest.mark.parametrize(
    "row, line, expected",
    [
        (3, "lowmead,2027-03-20T11:25:00Z,abc,club team B,", "logs/shadows.csv:3:shadow_mm: "),
        (4, "lowmead,2027-03-20T11:27:00Z,0,club team B,", "logs/shadows.csv:4:shadow_mm: "),
        (5, "lowmead,2027-03-20T11:29:00Z,-12,club team B,", "logs/shadows.csv:5:shadow_mm: "),
        (6, "nowhere,2027-03-20T11:29:00Z,1200,club team B,", "logs/shadows.csv:6:site: unknown site 'nowhere'"),
        (7, "lowmead,2060-03-20T11:29:00Z,1200,club team B,", "logs/shadows.csv:7:time_utc: "),
        (8, "lowmead,20.3.2027 11:29,1200,club team B,", "logs/shadows.csv:8:time_utc: "),
    ],
)
def test_a_bad_cell_is_one_line_exit_2_and_good_rows_count(example, capsys, monkeypatch, row, line, expected):
    _break_row(example, row, line)
    before = (example / "logs" / "shadows.csv").read_bytes()
    code, out, err = run(["reduce", "shadows", example / "campaign.toml", "--json"], capsys, monkeypatch)
    assert code == 2
    lines = err.strip().splitlines()
    assert len(lines) == 1, err
    assert expected in lines[0]
    assert "Traceback" not in err
    data = json.loads(out)
    assert data["rows"]["accepted"] == 92  # the 92 good rows of 93 still count
    assert (example / "logs" / "shadows.csv").read_bytes() == before  # inputs never modified


def test_missing_column_is_one_line(example, capsys, monkeypatch):
    path = example / "logs" / "shadows.csv"
    text = path.read_text().replace("site,time_utc,shadow_mm", "station,time_utc,shadow_mm", 1)
    path.write_text(text)
    code, out, err = run(["reduce", "shadows", example / "campaign.toml"], capsys, monkeypatch)
    assert code == 2
    assert len(err.strip().splitlines()) == 1 and "missing column 'site'" in err
    assert "Traceback" not in err


def test_latitude_beyond_90_is_one_line(example, capsys, monkeypatch):
    path = example / "campaign.toml"
    path.write_text(path.read_text().replace("latitude_deg = 47.80", "latitude_deg = 97.80"))
    code, out, err = run(["reduce", "shadows", path], capsys, monkeypatch)
    assert code == 2 and out == ""
    assert len(err.strip().splitlines()) == 1 and "latitude_deg" in err and "97.8" in err


def test_local_time_without_zone_and_in_a_dst_gap(example, capsys, monkeypatch):
    camp = example / "campaign.toml"
    camp.write_text(camp.read_text().replace('timezone = "Europe/Oslo"\n', ""))
    log = example / "logs" / "extra.csv"
    log.write_text(
        "site,time_local,shadow_cm\n"
        "fjell,2027-03-20T12:00:00,166.0\n"  # fjell has no timezone now
        "lowmead,2027-03-28T02:30:00,150.0\n"  # Europe/Zurich springs forward at 02:00 that day
    )
    camp.write_text(camp.read_text().replace('shadows = ["logs/shadows.csv"]', 'shadows = ["logs/shadows.csv", "logs/extra.csv"]'))
    code, out, err = run(["reduce", "shadows", camp, "--json"], capsys, monkeypatch)
    assert code == 2
    lines = err.strip().splitlines()
    assert len(lines) == 2
    assert lines[0].startswith("firstrung: logs/extra.csv:1:time_local: ") and "timezone" in lines[0]
    assert lines[1].startswith("firstrung: logs/extra.csv:2:time_local: ") and "Europe/Zurich" in lines[1]
    assert json.loads(out)["rows"]["accepted"] == 93


def test_no_such_campaign_file(tmp_path, capsys, monkeypatch):
    code, out, err = run(["reduce", "shadows", tmp_path / "missing.toml"], capsys, monkeypatch)
    assert code == 2 and "no such file" in err and "Traceback" not in err


def test_python_dash_m_and_console_script_agree(example):
    out = subprocess.run(
        [sys.executable, "-m", "firstrung", "reduce", "shadows", str(example / "campaign.toml"), "--json"],
        capture_output=True, text=True, timeout=120,
    )
    assert out.returncode == 0, out.stderr
    assert json.loads(out.stdout)["earth_radius_km"]["unit"] == "km"


def test_core_imports_without_cli_or_plotting_libraries():
    code = (
        "import sys\n"
        "import firstrung.methods.shadows.run, firstrung.methods.shadows.reduction, firstrung.ephemeris, firstrung.methods.shadows.rehearsal\n"
        "bad = [m for m in ('typer', 'rich', 'matplotlib', 'jinja2') if m in sys.modules]\n"
        "print(','.join(bad))\n"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=120)
    assert out.returncode == 0, out.stderr
    assert out.stdout.strip() == ""
