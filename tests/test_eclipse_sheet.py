"""The eclipse sheet for one site and night: contacts in the site's clock time, the Moon's
altitude, craters chosen by the stated criterion, one printed page."""

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

from helpers import run_cli
from test_sheets import parse

EXAMPLE = Path(__file__).resolve().parent.parent / "examples" / "campaign.toml"
BROWSER = shutil.which("chromium") or shutil.which("chromium-browser")


def test_eclipse_sheet_times_in_the_sites_clock_and_craters_by_the_criterion(tmp_path, capsys, monkeypatch):
    code, out, err = run_cli(["plan", "eclipse", EXAMPLE, "--from", "2029-12-20", "--to", "2029-12-21", "--json"],
                             capsys, monkeypatch)
    assert code == 0, err
    plan = json.loads(out)["eclipses"][0]
    sheet = tmp_path / "e.html"
    code, out, err = run_cli(["sheet", EXAMPLE, "--kind", "eclipse", "--site", "sardo", "--date", "2029-12-20",
                              "-o", sheet], capsys, monkeypatch)
    assert code == 0, err
    text = sheet.read_text()
    rows = parse(text).rows
    contacts = {r[0]: r for r in rows if r and r[0] in ("P1", "U1", "U2", "U3", "U4", "P4")}
    assert set(contacts) == set(plan["contacts_utc"])
    for name, row in contacts.items():
        # the site's clock: the IANA zone Europe/Rome (UTC+1 in December) through zoneinfo
        t = dt.datetime.fromisoformat(plan["contacts_utc"][name].replace("Z", "+00:00"))
        assert row[2] == t.astimezone(ZoneInfo("Europe/Rome")).strftime("%H:%M:%S")
        assert row[4] == f"{plan['sites']['sardo'][name]['moon_altitude_deg']:+.0f}°"
    craters = [r for r in rows if len(r) == 6 and r[0].isdigit()]
    assert len(craters) == 12
    from firstrung.methods.eclipse.craters import load_craters

    table = load_craters()
    immersions = [r[2] for r in craters]
    assert immersions == sorted(immersions)  # in the order they go in (all before midnight here)
    for r in craters:
        i = table.index(r[1])
        assert i is not None and table.diameter_km[i] >= 25.0
    u1 = dt.datetime.fromisoformat(plan["contacts_utc"]["U1"].replace("Z", "+00:00")).astimezone(ZoneInfo("Europe/Rome"))
    assert immersions[0] >= u1.strftime("%H:%M:%S")
    # spread over the eclipse: no two chosen immersions closer than a tenth of their span
    secs = np.array([int(h) * 3600 + int(m) * 60 + int(s) for h, m, s in (x.split(":") for x in immersions)])
    assert np.min(np.diff(secs)) > 0.1 * (secs[-1] - secs[0]) / 11
    assert "IAU Gazetteer" in text and "39.2000° N" in text
    code, out, err = run_cli(["sheet", EXAMPLE, "--kind", "eclipse", "--site", "sardo", "--date", "2029-12-20",
                              "-o", sheet, "--blind"], capsys, monkeypatch)
    assert code == 0 and "immersion, predicted" not in sheet.read_text()
    code, out, err = run_cli(["sheet", EXAMPLE, "--kind", "eclipse", "--site", "sardo", "--date", "2029-12-10",
                              "-o", tmp_path / "x.html"], capsys, monkeypatch)
    assert code == 2 and "no lunar eclipse" in err and len(err.strip().splitlines()) == 1


@pytest.mark.skipif(BROWSER is None, reason="no headless Chromium on this machine (Debian package 'chromium')")
def test_eclipse_sheet_prints_on_one_page(tmp_path, capsys, monkeypatch):
    html = tmp_path / "e.html"
    code, out, err = run_cli(["sheet", EXAMPLE, "--kind", "eclipse", "--site", "fjell", "--date", "2029-12-20",
                              "-o", html], capsys, monkeypatch)
    assert code == 0, err
    pdf = tmp_path / "e.pdf"
    subprocess.run([BROWSER, "--headless", "--no-sandbox", "--disable-gpu", "--no-first-run",
                    "--disable-background-networking", "--disable-component-update", "--disable-sync",
                    f"--user-data-dir={tmp_path / 'profile'}", "--no-pdf-header-footer", f"--print-to-pdf={pdf}",
                    html.as_uri()], capture_output=True, timeout=120, check=False)
    assert len(re.findall(rb"/Type\s*/Page[^s]", pdf.read_bytes())) == 1


def test_half_moon_sheet_gives_the_sites_half_moon_in_its_clock_time(tmp_path, capsys, monkeypatch):
    code, out, err = run_cli(["plan", "phases", EXAMPLE, "--from", "2027-03-13", "--to", "2027-03-17", "--json"],
                             capsys, monkeypatch)
    assert code == 0, err
    quarter = json.loads(out)["quarters"][0]
    here = quarter["sites"]["lowmead"]
    sheet = tmp_path / "p.html"
    code, out, err = run_cli(["sheet", EXAMPLE, "--kind", "phases", "--site", "lowmead", "--date", "2027-03-15",
                              "-o", sheet], capsys, monkeypatch)
    assert code == 0, err
    text = sheet.read_text()
    parse(text)
    # Europe/Zurich (UTC+1 in March, before the change to summer time) through zoneinfo
    t = dt.datetime.fromisoformat(here["dichotomy_utc"].replace("Z", "+00:00")).astimezone(ZoneInfo("Europe/Zurich"))
    assert t.strftime("%Y-%m-%d %H:%M") in text and "47.8000° N" in text
    assert "never sight the Sun" in text
    code, out, err = run_cli(["sheet", EXAMPLE, "--kind", "phases", "--site", "lowmead", "--date", "2027-03-15",
                              "-o", sheet, "--blind"], capsys, monkeypatch)
    assert code == 0, err
    blind = sheet.read_text()
    # nothing that gives the half moon's moment away: neither its time, nor the quadrature's (minutes from
    # it), nor which window holds it, nor the altitudes at it; the windows and the boxes to fill stay
    q = dt.datetime.fromisoformat(quarter["quadrature_utc"].replace("Z", "+00:00")).astimezone(ZoneInfo("Europe/Zurich"))
    assert q.strftime("%Y-%m-%d %H:%M") in text
    for leak in (t.strftime("%H:%M"), q.strftime("%H:%M"), "<th>holds the half moon", "Moon's altitude", "quadrature "):
        assert leak not in blind, leak
    blind_rows, full_rows = parse(blind).rows, parse(text).rows
    windows = [r for r in full_rows if len(r) == 6 and r[2].replace(".", "").isdigit()]
    assert windows and all(r[:3] in blind_rows for r in windows)
    assert "Clock offset" in blind and blind.count('class="blank"') == text.count('class="blank"')


#: Excerpt of the IAU Gazetteer of Planetary Nomenclature (USGS Astrogeology), Moon craters: centre
#: latitude and east longitude (planetocentric, Mean Earth/Polar Axis frame) and diameter, as read in
#: its 2015 full CSV export and re-read for the craters of 50 km and more in a September 2025 export
#: (same centres; Grimaldi's diameter there 235 km, 173.49 km in 2015). Copied from the project's
#: reference values, section 8.1 (certainty V: read in the source).
GAZETTEER_EXCERPT = {
    "Riccioli": (-2.90, -74.42, 155.66), "Grimaldi": (-5.38, -68.36, 235.0), "Billy": (-13.83, -50.24, 45.57),
    "Byrgius A": (-24.55, -63.81, 18.45), "Campanus": (-28.04, -27.90, 46.41), "Kepler": (8.12, -38.01, 29.49),
    "Aristarchus": (23.73, -47.49, 39.99), "Harpalus": (52.73, -43.49, 39.77), "Copernicus": (9.62, -20.08, 96.07),
    "Pytheas": (20.57, -20.59, 18.81), "Timocharis": (26.72, -13.10, 34.14), "Tycho": (-43.30, -11.22, 85.29),
    "Plato": (51.62, -9.38, 100.68), "Manilius": (14.45, 9.07, 38.34), "Menelaus": (16.26, 15.93, 27.13),
    "Dionysius": (2.77, 17.29, 17.25), "Aristoteles": (50.24, 17.32, 87.57), "Eudoxus": (44.27, 16.23, 70.16),
    "Plinius": (15.36, 23.61, 41.31), "Nicolai A": (-42.47, 23.60, 13.71), "Censorinus": (-0.42, 32.69, 4.10),
    "Goclenius": (-10.05, 45.03, 73.04), "Taruntius": (5.50, 46.54, 57.32), "Proclus": (16.09, 46.89, 26.91),
    "Langrenus": (-8.86, 61.04, 131.98),
}


def test_the_crater_table_is_the_gazetteers_and_the_sheet_never_chooses_a_crater_from_memory():
    from firstrung.methods.eclipse.craters import load_craters
    from firstrung.methods.eclipse.prediction import eclipse_near
    from firstrung.methods.eclipse.sheet import crater_selection

    table = load_craters()
    read = {n for n, s in zip(table.name, table.source, strict=True) if s == "gazetteer"}
    assert read == set(GAZETTEER_EXCERPT)  # every row marked as read in the Gazetteer is in the excerpt
    for name, (lat, lon, diameter) in GAZETTEER_EXCERPT.items():
        i = table.index(name)
        assert (table.latitude_deg[i], table.longitude_deg[i], table.diameter_km[i]) == (lat, lon, diameter), name
    # every other row says it was written from memory, and no sheet lists it
    memory = {n for n, s in zip(table.name, table.source, strict=True) if s != "gazetteer"}
    assert memory and {table.source[table.index(n)] for n in memory} == {"memory"}
    assert {"Petavius", "Eratosthenes", "Theophilus"} <= memory
    for day in ("2029-12-20", "2028-12-31", "2026-03-03"):
        chosen = {x["name"] for x in crater_selection(eclipse_near(day + "T12:00:00Z", window_days=1.0))}
        assert len(chosen) == 12 and chosen <= read and not chosen & memory, day
