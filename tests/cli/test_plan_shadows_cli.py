"""``firstrung plan shadows``: contract keys, the calendar file read back, constraints."""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest

from helpers import run_cli

EXAMPLE = Path(__file__).resolve().parents[2] / "examples" / "campaign.toml"
SECOND = 1.0


def run(args, capsys, monkeypatch):
    return run_cli(args, capsys, monkeypatch, columns=110)


def test_plan_shadows_json_contract(capsys, monkeypatch):
    code, out, err = run(["plan", "shadows", EXAMPLE, "--from", "2027-03-01", "--to", "2027-03-31", "--json"], capsys, monkeypatch)
    assert code == 0, err
    data = json.loads(out)
    assert [d["date"] for d in data["days"]][:2] == ["2027-03-01", "2027-03-02"]
    assert len(data["days"]) == 31
    day = data["days"][19]
    assert day["date"] == "2027-03-20" and "March equinox" in day["special"]
    for site in ("fjell", "lowmead", "sardo"):
        s = day["sites"][site]
        assert s["transit_utc"].endswith("Z")
        assert s["altitude_deg"] > s["altitude_airless_deg"]  # refraction lifts the Sun
        assert s["shadow_m"] > 0
    ranked = [d for d in data["days"] if d["rank"] is not None]
    excluded = [d for d in data["days"] if d["rank"] is None]
    assert all(d["excluded"] for d in excluded)
    assert sorted(d["rank"] for d in ranked) == list(range(1, len(ranked) + 1))
    assert all(isinstance(d["sigma_radius_km"], float) for d in data["days"])


def test_calendar_parses_back_into_the_same_events(tmp_path, capsys, monkeypatch):
    from icalendar import Calendar

    ics = tmp_path / "plan.ics"
    args = ["plan", "shadows", EXAMPLE, "--from", "2027-09-01", "--to", "2027-09-30", "--top", "3", "--ics", ics]
    code, out, err = run(args, capsys, monkeypatch)
    assert code == 0, err
    code, out, _ = run(args[:-2] + ["--json"], capsys, monkeypatch)
    data = json.loads(out)
    best = sorted((d for d in data["days"] if d["rank"] is not None), key=lambda d: d["rank"])[:3]
    cal = Calendar.from_ical(ics.read_bytes())
    events = [c for c in cal.walk("VEVENT")]
    assert len(events) == 3 * 3  # three days, three sites
    uids = {str(e["UID"]) for e in events}
    assert len(uids) == 9
    for e in events:
        start = np.datetime64(e.decoded("DTSTART").replace(tzinfo=None), "s")
        end = np.datetime64(e.decoded("DTEND").replace(tzinfo=None), "s")
        assert e.decoded("DTSTART").utcoffset().total_seconds() == 0
        middle = start + (end - start) // 2
        parts = str(e["UID"]).split("-")  # ...-<site>-<yyyy>-<mm>-<dd>-shadows@firstrung
        site, date = parts[-5], "-".join(parts[-4:-1])
        day = next(d for d in best if d["date"] == date)
        transit = np.datetime64(day["sites"][site]["transit_utc"].rstrip("Z"), "s")
        assert abs((middle - transit).astype(int)) <= 1 * SECOND
        assert "Caution" in str(e["DESCRIPTION"])
        assert "DTSTAMP" in e
    # same plan, same bytes
    first = ics.read_bytes()
    run(args, capsys, monkeypatch)
    assert ics.read_bytes() == first


def test_table_and_constraint_options(capsys, monkeypatch):
    code, out, err = run(["plan", "shadows", EXAMPLE, "--from", "2027-01-01", "--to", "2027-12-31",
                          "--max-shadow", "3", "--weekdays", "mon-fri", "--exclude", "2027-06-21,2027-06-22",
                          "--top", "5"], capsys, monkeypatch)
    assert code == 0, err
    assert "Best days" in out and "Caution" in out
    assert "not a chosen weekday" in out and "shadow longer than the board" in out


@pytest.mark.parametrize(
    "extra, message",
    [
        (["--weekdays", "funday"], "--weekdays: expected names"),
        (["--exclude", "21/06/2027"], "--exclude: expected ISO dates"),
    ],
)
def test_bad_options_are_one_line(extra, message, capsys, monkeypatch):
    code, out, err = run(["plan", "shadows", EXAMPLE, "--from", "2027-01-01", "--to", "2027-01-31", *extra], capsys, monkeypatch)
    assert code == 2 and message in err and "Traceback" not in err


def test_bad_date_is_one_line(capsys, monkeypatch):
    code, out, err = run(["plan", "shadows", EXAMPLE, "--from", "2027-13-01", "--to", "2027-12-31"], capsys, monkeypatch)
    assert code == 2 and "--from: expected an ISO date" in err
