"""``plan eclipses`` and ``reduce eclipse`` in process: contract keys, calendar, refusals.

The example campaign's invented sites; its eclipse log (examples/logs/eclipse.csv,
made by examples/make_example_eclipse_log.py) times the total eclipse of
2029-12-20 on a Danjon umbra. Published check values: NASA catalogue kinds and
magnitudes of 2026-2029 eclipses (from memory of the NASA Five Millennium
Catalog, to 0.01; reference-values 4.2 for the method).
"""

from __future__ import annotations

import json
import re
import shutil
from pathlib import Path

import pytest

from helpers import run_cli

EXAMPLES = Path(__file__).resolve().parent.parent.parent / "examples"


def run(args, capsys, monkeypatch):
    return run_cli(args, capsys, monkeypatch, columns=120)


@pytest.fixture()
def example(tmp_path):
    """A copy of the example campaign with the eclipse log listed."""
    folder = tmp_path / "camp"
    shutil.copytree(EXAMPLES, folder)
    toml = folder / "campaign.toml"
    text = toml.read_text(encoding="utf-8")
    if "eclipse = [" not in text:
        text = text.replace('shadows = ["logs/shadows.csv"]', 'shadows = ["logs/shadows.csv"]\neclipse = ["logs/eclipse.csv"]')
    toml.write_text(text, encoding="utf-8")
    return folder


def test_plan_eclipses_json_contract_and_ranking(example, capsys, monkeypatch):
    code, out, err = run(
        ["plan", "eclipses", example / "campaign.toml", "--from", "2026-01-01", "--to", "2029-12-31", "--json"],
        capsys, monkeypatch,
    )
    assert code == 0, err
    data = json.loads(out)
    by_date = {e["date"]: e for e in data["eclipses"]}
    # NASA catalogue (from memory): 2026-03-03 total 1.15, 2026-08-28 partial 0.93,
    # 2028-12-31 total 1.25, 2029-06-26 total 1.84, 2029-12-20 total 1.12, 2027-02-20 penumbral
    for date, kind, mag in (("2026-03-03", "total", 1.15), ("2026-08-28", "partial", 0.93),
                            ("2028-12-31", "total", 1.25), ("2029-06-26", "total", 1.84),
                            ("2029-12-20", "total", 1.12)):
        assert by_date[date]["kind"] == kind
        assert by_date[date]["umbral_magnitude"] == pytest.approx(mag, abs=0.01)
    assert by_date["2027-02-20"]["kind"] == "penumbral"
    for e in data["eclipses"]:
        assert re.fullmatch(r"\d{4}-\d\d-\d\dT\d\d:\d\d:\d\dZ", e["greatest_utc"])
        assert set(e["contacts_utc"]) <= {"P1", "U1", "U2", "U3", "U4", "P4"}
        assert ("U2" in e["contacts_utc"]) == (e["kind"] == "total")
        assert (e["rank"] is None) == bool(e["excluded"])
        for sid in ("fjell", "lowmead", "sardo"):
            for contact in e["contacts_utc"]:
                assert -90 <= e["sites"][sid][contact]["moon_altitude_deg"] <= 90
    assert by_date["2027-02-20"]["rank"] is None and "penumbral" in by_date["2027-02-20"]["excluded"][0]
    # every umbral contact of 2029-12-20 is high in a dark sky at all three sites: ranked first
    best = by_date["2029-12-20"]
    assert best["rank"] == 1
    assert best["sites"]["sardo"]["timeable_contacts"] == ["U1", "U2", "U3", "U4"]
    assert best["sites"]["lowmead"]["U2"]["dark"] and best["sites"]["lowmead"]["U2"]["sky"] == "night"


def test_plan_eclipses_text_and_deterministic_calendar(example, capsys, monkeypatch, tmp_path):
    ics = tmp_path / "eclipses.ics"
    args = ["plan", "eclipses", example / "campaign.toml", "--from", "2029-01-01", "--to", "2029-12-31", "--ics", ics]
    code, out, err = run(args, capsys, monkeypatch)
    assert code == 0, err
    assert "2029-12-20" in out and "total" in out and "safe to watch" in out
    first = ics.read_bytes()
    code, _, _ = run(args, capsys, monkeypatch)
    assert code == 0 and ics.read_bytes() == first
    import icalendar

    cal = icalendar.Calendar.from_ical(first)
    events = [c for c in cal.walk("VEVENT")]
    assert len(events) == 2
    uids = {str(e["UID"]) for e in events}
    assert "lunar-eclipse-20291220T224202Z@firstrung" in uids
    dec = next(e for e in events if "20291220" in str(e["UID"]))
    assert dec.decoded("DTSTAMP").isoformat() == "2029-12-20T22:42:02+00:00"
    assert dec.decoded("DTSTART").utcoffset().total_seconds() == 0
    assert "U2 2029-12-20T22:15:12Z" in str(dec["DESCRIPTION"])


def test_plan_eclipses_bad_dates_are_one_line(example, capsys, monkeypatch):
    code, out, err = run(["plan", "eclipses", example / "campaign.toml", "--from", "2029-13-01", "--to", "2029-12-31"],
                         capsys, monkeypatch)
    assert code == 2 and out == "" and err.count("\n") == 1 and "--from" in err
    code, _, err = run(["plan", "eclipses", example / "campaign.toml", "--from", "2029-01-01", "--to", "2029-12-31",
                        "--convention", "soft"], capsys, monkeypatch)
    assert code == 2 and "convention" in err and "Traceback" not in err


def test_reduce_eclipse_json_contract_keys(example, capsys, monkeypatch):
    code, out, err = run(["reduce", "eclipse", example / "campaign.toml", "--json"], capsys, monkeypatch)
    assert code == 0, err
    data = json.loads(out)
    (e,) = data["eclipses"]
    assert e["date"] == "2029-12-20"
    for key in ("shadow_moon_ratio", "moon_distance_earth_radii", "moon_distance_km", "umbra_enlargement_percent"):
        assert set(e[key]) == {"value", "sigma", "low", "high", "unit"}
    assert e["moon_distance_km"]["unit"] == "km"
    # ephemeris-assisted (no [eclipse] data): the ephemeris distance at greatest eclipse within 1 %
    assert e["moon"]["semidiameter_source"] == "ephemeris" and not e["moon"]["observational"]
    assert any("ephemeris-assisted" in a for a in e["assumptions"])
    modern = e["modern"]["moon_distance_earth_radii"]
    assert e["moon_distance_earth_radii"]["value"] == pytest.approx(modern, rel=0.01)
    # the log's umbra is Danjon's: the craters give its enlargement back
    assert e["umbra_enlargement_percent"]["value"] == pytest.approx(e["modern"]["umbra_enlargement_percent"], abs=0.3)
    u1 = next(t for t in e["timings"] if t["event"] == "U1")
    assert len(u1["rejected"]) == 1 and u1["timings_used"] == 5  # the U1 typed four minutes late
    assert data["earth_radius_source"].startswith("the campaign's own shadow")


def test_reduce_eclipse_observational_with_a_given_earth_radius(example, capsys, monkeypatch):
    toml = example / "campaign.toml"
    # the observers' own Moon: diameter 30.1' and rate 0.4718 deg/h (as measured on the night)
    toml.write_text(toml.read_text(encoding="utf-8") + "\n[eclipse]\nmoon_diameter_arcmin = 30.0\n"
                    "moon_diameter_sigma_arcmin = 0.2\nmoon_sky_rate_deg_per_h = 0.5129\n", encoding="utf-8")
    code, out, err = run(["reduce", "eclipse", toml, "--earth-radius-km", "6371", "--earth-radius-sigma-km", "30", "--json"],
                         capsys, monkeypatch)
    assert code == 0, err
    (e,) = json.loads(out)["eclipses"]
    assert e["moon"]["observational"] and e["moon"]["rate_source"] == "observers (sky rate)"
    assert any("purely observational" in a for a in e["assumptions"])
    # (2e-6: the JSON rounds the distance in Earth radii to 4 decimals; the observers' sky rate is now
    # reduced as topocentric, which moves the distance to where that rounding exceeds 1e-6)
    assert e["moon_distance_km"]["value"] == pytest.approx(e["moon_distance_earth_radii"]["value"] * 6371, rel=2e-6)
    code, out, err = run(["reduce", "eclipse", toml], capsys, monkeypatch)
    assert code == 0 and "Moon's distance" in out and "Error budget" in out


def test_reduce_eclipse_refuses_u2_for_a_partial_eclipse(example, capsys, monkeypatch):
    (example / "logs" / "eclipse.csv").write_text(
        "site,time_utc,event,feature,observer\n"
        "sardo,2026-08-28T02:34:00Z,U1,,A\n"
        "sardo,2026-08-28T03:30:00Z,U2,,A\n"
        "sardo,2026-08-28T05:52:00Z,U4,,A\n",
        encoding="utf-8",
    )
    code, out, err = run(["reduce", "eclipse", example / "campaign.toml"], capsys, monkeypatch)
    assert code == 2 and out == ""
    assert err.count("\n") == 1 and "eclipse.csv:2:event" in err and "partial" in err and "no U2 or U3" in err


def test_reduce_eclipse_partial_with_magnitude_and_stray_rows(example, capsys, monkeypatch):
    from firstrung.methods.eclipse.prediction import eclipse_near

    e = eclipse_near("2026-08-28T04:13:00Z")
    u1 = str(e.contacts_utc["U1"][0].astype("datetime64[s]"))
    u4 = str(e.contacts_utc["U4"][0].astype("datetime64[s]"))
    (example / "logs" / "eclipse.csv").write_text(
        "site,time_utc,event,feature,observer\n"
        f"sardo,{u1}Z,U1,,A\nsardo,{u4}Z,U4,,A\n"
        "sardo,2026-09-02T03:30:00Z,U1,,B\n"
        f"sardo,{u4}Z,immersion,Atlantis,B\n",
        encoding="utf-8",
    )
    toml = example / "campaign.toml"
    # the Moon has set at sardo by U4 and the stray U1 is days from any eclipse: check flags them,
    # so the reduction's own handling is tested with --include-flagged
    code, out, err = run(["reduce", "eclipse", toml, "--json", "--include-flagged"], capsys, monkeypatch)
    assert code == 2  # stray rows were refused, the rest reduced
    assert "eclipse.csv:3:time_utc" in err and "eclipse.csv:4:feature" in err and "Atlantis" in err
    (res,) = json.loads(out)["eclipses"]
    assert res["moon_distance_earth_radii"] is None and "magnitude" in res["reduction_problem"]
    code, out, err = run(["reduce", "eclipse", toml, "--json", "--include-flagged", "--magnitude",
                          f"{e.umbral_magnitude[0]:.3f}", "--magnitude-sigma", "0.01"], capsys, monkeypatch)
    (res,) = json.loads(out)["eclipses"]
    truth = res["modern"]["moon_distance_earth_radii"]
    assert res["kind"] == "partial"
    assert res["moon_distance_earth_radii"]["value"] == pytest.approx(truth, rel=0.01)


def test_reduce_eclipse_is_deterministic_and_draws_its_figure(example, capsys, monkeypatch):
    args = ["reduce", "eclipse", example / "campaign.toml", "--json"]
    first = run(args, capsys, monkeypatch)[1]
    assert run(args, capsys, monkeypatch)[1] == first
    code, out, _ = run(["reduce", "eclipse", example / "campaign.toml", "--verbose"], capsys, monkeypatch)
    assert code == 0 and "Timings (combined per event)" in out and "Kepler" in out
    from matplotlib.figure import Figure

    from firstrung.methods.eclipse.run import eclipse_figure, run_eclipse

    result = run_eclipse(example / "campaign.toml").results[0]
    fig = eclipse_figure(result)
    assert isinstance(fig, Figure)
    ax = fig.axes[0]
    # immersions and emersions, each its own legend entry
    assert len(ax.collections) == 2
    assert sum(len(c.get_offsets()) for c in ax.collections) == len(result.crater_points["index"])
    labels = [t.get_text() for t in ax.get_legend().get_texts()]
    assert any("immersions" in x for x in labels) and any("emersions" in x for x in labels)
    assert len(ax.lines) == 3 + 4  # umbra, geometric umbra, track, the Moon's disc at U1-U4
