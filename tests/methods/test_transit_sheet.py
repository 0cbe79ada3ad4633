"""The transit field sheet for one site and day (the demo's sites, the transit of Mercury of
2032-11-13): contacts in the site's clock time, the Sun's altitude, the solar-safety caution,
a warning where the Sun is low, one printed page; and the chords behind its chart."""

from __future__ import annotations

import datetime as dt
import json
import re
import shutil
import subprocess
from pathlib import Path
from zoneinfo import ZoneInfo

import numpy as np
import pytest
from tests.helpers import run_cli
from tests.test_sheets import parse

EXAMPLE = Path(__file__).resolve().parent.parent.parent / "examples" / "campaign.toml"
BROWSER = shutil.which("chromium") or shutil.which("chromium-browser")


@pytest.fixture(scope="module")
def plan_2032():
    from firstrung.campaign import read_campaign
    from firstrung.methods.transit.present import transit_plan_to_json
    from firstrung.methods.transit.run import plan_transits

    return transit_plan_to_json(plan_transits(read_campaign(EXAMPLE), "2032-11-13", "2032-11-13"))["transits"][0]


def test_transit_sheet_gives_the_sites_contacts_in_its_clock_time(tmp_path, capsys, monkeypatch, plan_2032):
    sheet = tmp_path / "t.html"
    code, out, err = run_cli(["sheet", EXAMPLE, "--kind", "transit", "--site", "nyeri", "--date", "2032-11-13",
                              "-o", sheet], capsys, monkeypatch)
    assert code == 0, err
    assert err == ""  # the Sun is high at every contact in Nyeri: no warning
    text = sheet.read_text()
    rows = {r[0]: r for r in parse(text).rows if r and r[0] in ("C1", "C2", "C3", "C4")}
    assert set(rows) == {"C1", "C2", "C3", "C4"}
    for name, row in rows.items():
        here = plan_2032["sites"]["nyeri"][name]
        t = dt.datetime.fromisoformat(here["time_utc"].replace("Z", "+00:00"))
        # the site's clock: the IANA zone Africa/Nairobi (UTC+3, no daylight saving) through zoneinfo
        assert row[1] == t.astimezone(ZoneInfo("Africa/Nairobi")).strftime("%H:%M:%S")
        assert row[2] == t.strftime("%H:%M:%S")
        assert row[3] == f"{here['sun_altitude_deg']:+.0f}°"
        assert abs(float(row[4].split("°")[0]) - here["position_angle_deg"]) <= 0.6
        assert row[5] == "yes"
    # Mercury enters on the east limb (position angle near 80 deg: the left of the disc, 9 o'clock)
    assert "9 o'clock" in rows["C1"][4]
    # the caution, in full, where the Sun itself is observed
    flat = re.sub(r"\s+", " ", text)
    for words in ("ISO 12312-2", "full-aperture", "never look through an unfiltered telescope",
                  "painless and can be permanent", "safety officer"):
        assert words in flat, words
    assert "0.4200° S" in text and "36.9500° E" in text


def test_a_low_sun_is_warned_and_a_blind_sheet_has_no_times(tmp_path, capsys, monkeypatch, plan_2032):
    sheet = tmp_path / "f.html"
    code, out, err = run_cli(["sheet", EXAMPLE, "--kind", "transit", "--site", "fjell", "--date", "2032-11-13",
                              "-o", sheet], capsys, monkeypatch)
    assert code == 0, err
    # at Fjellvik (59 deg N in November) the Sun rises after C2
    assert plan_2032["sites"]["fjell"]["C2"]["sun_altitude_deg"] < 0
    assert "warning" in err and "below the horizon at C1, C2" in err and len(err.strip().splitlines()) == 1
    text = sheet.read_text()
    assert "Low Sun" in text
    rows = {r[0]: r for r in parse(text).rows if r and r[0] in ("C1", "C2", "C3", "C4")}
    assert rows["C1"][5] == "Sun down" and rows["C3"][5] == "yes"
    code, out, err = run_cli(["sheet", EXAMPLE, "--kind", "transit", "--site", "nyeri", "--date", "2032-11-13",
                              "-o", sheet, "--blind"], capsys, monkeypatch)
    assert code == 0
    text = sheet.read_text()
    assert "predicted (" not in text and "greatest transit 1" not in text
    t = plan_2032["sites"]["nyeri"]["C1"]["time_utc"][11:19]
    assert t not in text


def test_a_day_without_a_transit_is_one_clear_line(tmp_path, capsys, monkeypatch):
    code, out, err = run_cli(["sheet", EXAMPLE, "--kind", "transit", "--site", "nyeri", "--date", "2032-11-20",
                              "-o", tmp_path / "x.html"], capsys, monkeypatch)
    assert code == 2 and "no transit of Mercury or Venus" in err and len(err.strip().splitlines()) == 1
    assert not (tmp_path / "x.html").exists()


@pytest.mark.skipif(BROWSER is None, reason="no headless Chromium on this machine (Debian package 'chromium')")
def test_transit_sheet_prints_on_one_page(tmp_path, capsys, monkeypatch):
    html = tmp_path / "t.html"
    code, out, err = run_cli(["sheet", EXAMPLE, "--kind", "transit", "--site", "fjell", "--date", "2032-11-13",
                              "-o", html], capsys, monkeypatch)
    assert code == 0, err
    pdf = tmp_path / "t.pdf"
    subprocess.run([BROWSER, "--headless", "--no-sandbox", "--disable-gpu", "--no-first-run",
                    "--disable-background-networking", "--disable-component-update", "--disable-sync",
                    f"--user-data-dir={tmp_path / 'profile'}", "--no-pdf-header-footer", f"--print-to-pdf={pdf}",
                    html.as_uri()], capture_output=True, timeout=120, check=False)
    assert len(re.findall(rb"/Type\s*/Page[^s]", pdf.read_bytes())) == 1


def test_the_chords_meet_the_limb_at_the_contacts():
    """At a site's C1 the planet's centre lies one Sun radius plus one planet radius from the Sun's
    centre, at the position angle the contact solver gives (two computations of the same geometry)."""
    from firstrung.methods.transit.chords import disc_offsets, planet_radius_on_disc
    from firstrung.methods.transit.prediction import (
        contacts_at_sites,
        inferior_planet_transits,
        site_itrs_km,
    )

    transits = inferior_planet_transits("2032-11-13T00:00Z", "2032-11-13T23:59Z")
    lat, lon = np.array([-0.42, 58.95]), np.array([36.95, 10.2])
    view = contacts_at_sites(transits, 0, lat, lon, 0.0)
    rp = planet_radius_on_disc(transits, 0)
    for name, expected in (("C1", 1 + rp), ("C2", 1 - rp), ("C3", 1 - rp), ("C4", 1 + rp)):
        east, north = disc_offsets(transits, 0, view.tt_jd[name], site_itrs_km(lat, lon, 0.0))
        assert np.allclose(np.hypot(east, north), expected, atol=2e-4), name
        pa = np.degrees(np.arctan2(east, north)) % 360
        assert np.allclose(pa, view.position_angle_deg[name], atol=0.05), name


def test_plan_json_is_what_the_sheet_reads(tmp_path, capsys, monkeypatch, plan_2032):
    code, out, err = run_cli(["plan", "transit", EXAMPLE, "--from", "2032-11-13", "--to", "2032-11-13", "--json"],
                             capsys, monkeypatch)
    assert code == 0, err
    assert json.loads(out)["transits"][0]["sites"]["nyeri"] == plan_2032["sites"]["nyeri"]
