"""Calendars: one site's events with --site; eclipses only when some site can see them."""

from __future__ import annotations

import json
from pathlib import Path

import icalendar
from tests.helpers import run_cli

EXAMPLE = Path(__file__).resolve().parents[2] / "examples" / "campaign.toml"


def _events(path):
    return [c for c in icalendar.Calendar.from_ical(path.read_bytes()).walk() if c.name == "VEVENT"]


def test_eclipse_calendar_lists_only_eclipses_a_site_can_see(tmp_path, capsys, monkeypatch):
    args = ["plan", "eclipses", EXAMPLE, "--from", "2027-01-01", "--to", "2029-12-31"]
    code, out, err = run_cli([*args, "--json"], capsys, monkeypatch)
    assert code == 0, err
    plan = json.loads(out)["eclipses"]

    def seen(e, sites=None):
        return any(c.get("moon_altitude_deg", -90) > 0 for sid, s in e["sites"].items()
                   if sites is None or sid in sites for c in s.values() if isinstance(c, dict))

    ics = tmp_path / "e.ics"
    code, out, err = run_cli([*args, "--ics", ics], capsys, monkeypatch)
    assert code == 0, err
    starts = sorted(str(ev["DTSTART"].dt)[:10] for ev in _events(ics))
    visible = [e for e in plan if seen(e) and e["kind"] != "penumbral"]
    assert len(starts) == len(visible) and len(visible) < len(plan)
    assert all("Penumbral" not in str(ev["SUMMARY"]) for ev in _events(ics))
    code, out, err = run_cli([*args, "--ics", ics, "--penumbral"], capsys, monkeypatch)
    assert len(_events(ics)) == sum(seen(e) for e in plan)
    # one site: only that site's altitudes in each event, and only eclipses it sees
    code, out, err = run_cli([*args, "--ics", ics, "--site", "sardo"], capsys, monkeypatch)
    assert code == 0, err
    events = _events(ics)
    assert len(events) == sum(seen(e, {"sardo"}) and e["kind"] != "penumbral" for e in plan)
    assert all("sardo:" in str(ev["DESCRIPTION"]) and "fjell:" not in str(ev["DESCRIPTION"]) for ev in events)


def test_shadow_and_half_moon_calendars_for_one_site(tmp_path, capsys, monkeypatch):
    ics = tmp_path / "s.ics"
    code, out, err = run_cli(["plan", "shadows", EXAMPLE, "--from", "2027-03-01", "--to", "2027-03-31", "--top", "4",
                              "--ics", ics, "--site", "lowmead"], capsys, monkeypatch)
    assert code == 0, err
    events = _events(ics)
    assert len(events) == 4 and {str(ev["LOCATION"]) for ev in events} == {"Lowmead planetarium roof"}
    code, out, err = run_cli(["plan", "phases", EXAMPLE, "--from", "2027-03-01", "--to", "2027-04-30",
                              "--ics", ics, "--site", "fjell"], capsys, monkeypatch)
    assert code == 0, err
    assert {str(ev["LOCATION"]) for ev in _events(ics)} == {"Fjellvik astronomy club dome"}
    code, out, err = run_cli(["plan", "shadows", EXAMPLE, "--from", "2027-03-01", "--to", "2027-03-31",
                              "--ics", ics, "--site", "nowhere"], capsys, monkeypatch)
    assert code == 2 and "nowhere" in err and len(err.strip().splitlines()) == 1
