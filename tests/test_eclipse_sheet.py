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
    here = json.loads(out)["quarters"][0]["sites"]["lowmead"]
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
    assert code == 0 and t.strftime("%Y-%m-%d %H:%M") not in sheet.read_text()
