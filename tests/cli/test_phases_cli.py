"""``firstrung plan phases`` and ``reduce phases``: contract keys, the calendar, determinism, bad input."""

from __future__ import annotations

import json
import shutil
from pathlib import Path

import numpy as np
import pytest

from helpers import run_cli

EXAMPLES = Path(__file__).resolve().parents[1] / "data" / "clean_campaign"
SECOND = 1.0


def run(args, capsys, monkeypatch):
    return run_cli(args, capsys, monkeypatch, columns=110)


@pytest.fixture()
def campaign(tmp_path):
    """The example campaign with its half-moon log listed (as the lead adds it to examples/)."""
    folder = tmp_path / "camp"
    shutil.copytree(EXAMPLES, folder)
    path = folder / "campaign.toml"
    text = path.read_text()
    if "phases =" not in text:
        text = text.replace('shadows = ["logs/shadows.csv"]', 'shadows = ["logs/shadows.csv"]\nphases = ["logs/phases.csv"]')
        path.write_text(text)
    return path


def test_plan_phases_json_contract(campaign, capsys, monkeypatch):
    code, out, err = run(["plan", "phases", campaign, "--from", "2027-03-01", "--to", "2027-04-30", "--json"], capsys, monkeypatch)
    assert code == 0, err
    data = json.loads(out)
    quarters = data["quarters"]
    assert [q["quarter"] for q in quarters] == ["first", "last", "first", "last"]
    for q in quarters:
        assert q["quadrature_utc"].endswith("Z") and q["dichotomy_utc"].endswith("Z")
        quad = np.datetime64(q["quadrature_utc"][:-1])
        half = np.datetime64(q["dichotomy_utc"][:-1])
        minutes = (half - quad).astype("timedelta64[s]").astype(int) / 60
        assert (-20.5 < minutes < -14.5) if q["quarter"] == "first" else (15.5 < minutes < 22.5)
        assert set(q["sites"]) == {"fjell", "lowmead", "sardo"}
        assert (q["rank"] is None) == bool(q["excluded"])
        for s in q["sites"].values():
            assert s["dichotomy_utc"].endswith("Z")
            assert abs(s["minutes_from_geocentric_dichotomy"]) < 130
            for w in s["windows"]:
                assert w["start_utc"] < w["end_utc"]
                assert min(w["sun_altitude_deg"], w["moon_altitude_deg"]) >= 10.0 - 0.2
                assert w["contains_dichotomy"] == (w["start_utc"] <= s["dichotomy_utc"] <= w["end_utc"])
    # 2027-03-15: the first-quarter half moon falls in the afternoon at all three sites
    best = quarters[0]
    assert best["rank"] == 1 and best["sites_with_half_moon_in_window"] == 3
    assert "Sun" in data["caution"] and "ISO 12312-2" in data["caution"]


def test_plan_phases_calendar_is_deterministic_and_carries_the_caution(campaign, tmp_path, capsys, monkeypatch):
    first, second = tmp_path / "a.ics", tmp_path / "b.ics"
    args = ["plan", "phases", campaign, "--from", "2027-03-01", "--to", "2027-04-30"]
    code, out, err = run([*args, "--ics", first], capsys, monkeypatch)
    assert code == 0, err
    assert "calendar written" in out and "2027-03-15 16:25" in out
    run([*args, "--ics", second], capsys, monkeypatch)
    assert first.read_bytes() == second.read_bytes()
    from icalendar import Calendar

    cal = Calendar.from_ical(first.read_bytes())
    events = [c for c in cal.walk("VEVENT")]
    assert events and all(str(e["uid"]).endswith("@firstrung") for e in events)
    assert len({str(e["uid"]) for e in events}) == len(events)
    for e in events:
        assert e["dtstart"].dt.utcoffset().total_seconds() == 0
        assert e["dtstamp"].dt == e["dtstart"].dt  # derived from the event, not the clock
        assert "never sight the Sun" in str(e["description"])


def test_plan_phases_rules_out_with_reasons(campaign, capsys, monkeypatch):
    code, out, err = run(["plan", "phases", campaign, "--from", "2027-03-01", "--to", "2027-04-30",
                          "--min-altitude-deg", "60", "--json"], capsys, monkeypatch)
    assert code == 0, err
    quarters = json.loads(out)["quarters"]
    ruled_out = [q for q in quarters if q["rank"] is None]
    assert ruled_out and all("above 60 deg" in q["excluded"][0] for q in ruled_out)


def test_reduce_phases_json_contract_and_determinism(campaign, capsys, monkeypatch):
    code, out, err = run(["reduce", "phases", campaign, "--json"], capsys, monkeypatch)
    assert code == 0, err
    data = json.loads(out)
    for key in ("sun_moon_distance_ratio", "elongation_deg"):
        assert set(data[key]) == {"value", "sigma", "low", "high", "unit"}
    assert data["elongation_deg"]["unit"] == "deg"
    e = data["elongation_deg"]
    assert 89.0 < e["value"] < 91.0 and e["low"] < e["value"] < e["high"]
    r = data["sun_moon_distance_ratio"]
    assert r["low"] is not None and (r["high"] is None) == data["only_lower_bound"]
    assert 364 < data["expected_ratio"] < 411
    assert {x["kind"] for x in data["estimates"]} == {"elongation", "timing", "fraction series"}
    assert "to know the ratio within 10 %" in data["precision"]["sentence"]
    assert data["precision"]["within_10_percent"]["time_min"] == pytest.approx(1.7, abs=0.4)
    _, again, _ = run(["reduce", "phases", campaign, "--json"], capsys, monkeypatch)
    assert again == out


def test_reduce_phases_table(campaign, capsys, monkeypatch):
    code, out, _ = run(["reduce", "phases", campaign, "--verbose"], capsys, monkeypatch)
    assert code == 0
    assert "the Sun's distance from the half moon" in out
    assert "to know the ratio within 10 %" in out
    assert "interval method" in out and "Estimates" in out
    assert "never sight the Sun" in out


def test_reduce_phases_bad_row_and_missing_logs(campaign, capsys, monkeypatch):
    log = campaign.parent / "logs" / "phases.csv"
    lines = log.read_text().splitlines()
    lines.append("sardo,2027-03-15T15:29:10Z,full,,,,")
    log.write_text("\n".join(lines) + "\n")
    code, out, err = run(["reduce", "phases", campaign, "--json"], capsys, monkeypatch)
    assert code == 2
    assert json.loads(out)["rows"]["refused"] == 1
    assert err.strip().splitlines()[0].startswith("firstrung: logs/phases.csv:35:quarter")
    campaign.write_text(campaign.read_text().replace('phases = ["logs/phases.csv"]\n', ""))
    code, out, err = run(["reduce", "phases", campaign], capsys, monkeypatch)
    assert code == 2 and out == ""
    assert len(err.strip().splitlines()) == 1 and "no half-moon logs" in err
    code, _, err = run(["plan", "phases", campaign, "--from", "2027-05-01", "--to", "2027-04-01"], capsys, monkeypatch)
    assert code == 2 and "--to" in err and "Traceback" not in err


def test_plan_phases_range_without_quarters_and_bad_date(campaign, capsys, monkeypatch):
    code, out, err = run(["plan", "phases", campaign, "--from", "2027-03-16", "--to", "2027-03-20", "--json"], capsys, monkeypatch)
    assert code == 0, err
    assert json.loads(out)["quarters"] == []
    code, out, err = run(["plan", "phases", campaign, "--from", "2027-13-01", "--to", "2027-03-20"], capsys, monkeypatch)
    assert code == 2 and out == "" and err.startswith("firstrung: --from: expected an ISO date")
