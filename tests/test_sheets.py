"""Field sheets: well-formed HTML with the predictions and the caution; the blank kit in the repo."""

from __future__ import annotations

import csv
import html.parser
import os
from pathlib import Path

import numpy as np
import pytest

from firstrung.methods.shadows.prediction import PlanSite
from firstrung.methods.shadows.sheet import (
    blank_field_kit,
    render_shadow_sheet,
    shadow_sheet_predictions,
)
from firstrung.refraction import apparent_from_true_altitude_deg
from helpers import run_cli

ROOT = Path(__file__).resolve().parent.parent
VOID = {"meta", "br", "hr", "img", "input", "link", "col", "wbr"}
MM = 1.0  # shadow lengths on the sheet are whole millimetres


class _Checker(html.parser.HTMLParser):
    """Balanced tags, and the text of every table row."""

    def __init__(self):
        super().__init__()
        self.stack, self.rows, self._row, self._cell = [], [], None, None

    def handle_starttag(self, tag, attrs):
        if tag not in VOID:
            self.stack.append(tag)
        if tag == "tr":
            self._row = []
        if tag in ("td", "th"):
            self._cell = ""

    def handle_endtag(self, tag):
        assert self.stack and self.stack[-1] == tag, f"</{tag}> closes <{self.stack[-1] if self.stack else None}>"
        self.stack.pop()
        if tag in ("td", "th") and self._row is not None:
            self._row.append(self._cell.strip())
            self._cell = None
        if tag == "tr":
            self.rows.append(self._row)
            self._row = None

    def handle_data(self, data):
        if self._cell is not None:
            self._cell += data


def parse(text):
    p = _Checker()
    p.feed(text)
    p.close()
    assert p.stack == []
    return p


SITE = PlanSite("north", "North <dome> & co", 46.2, 7.4, 620.0, "Europe/Zurich", 1.0, 0.001, 0.002, "umbra")


def test_sheet_is_well_formed_with_predictions_and_caution():
    text = render_shadow_sheet("Camp <b>", SITE, "2024-03-21")
    p = parse(text)
    assert "Never look at the Sun" in text and "ISO 12312-2" in text
    assert "North &lt;dome&gt; &amp; co" in text and "<dome>" not in text  # user text escaped
    readings = [r for r in p.rows if len(r) == 6 and r[0][:2].isdigit()]
    assert len(readings) == 31  # every 2 minutes from -30 to +30
    pred = shadow_sheet_predictions(SITE, "2024-03-21")
    noon = str(np.datetime64(pred["transit_utc"], "m"))[11:16]
    assert any(r[1] == noon for r in readings)
    # the noon row's length against astropy's airless altitude at transit on that date
    # (tests/reference/sun_astropy_de421.csv, made by make_sun_astropy.py)
    with open(ROOT / "tests" / "reference" / "sun_astropy_de421.csv") as f:
        ref = next(r for r in csv.DictReader(f) if r["site"] == "north" and r["date"] == "2024-03-21" and r["kind"] == "transit")
    # the umbra tip is cast by the upper limb: + the semi-diameter, 16.05' on 21 March (from memory,
    # almanac value; 0.1' changes the length by 0.06 mm here)
    upper_limb = float(ref["altitude_deg"]) + 16.05 / 60.0
    expected_mm = 1000.0 / np.tan(np.radians(apparent_from_true_altitude_deg(upper_limb)))
    assert pred["noon_shadow_m"] * 1000 == pytest.approx(expected_mm, abs=1.0 * MM)
    row = next(r for r in readings if r[1] == noon)
    assert abs(float(row[2].replace(",", "")) - pred["noon_shadow_m"] * 1000) <= 1.0 * MM


def test_letter_paper_and_blank_cells():
    text = render_shadow_sheet("Camp", SITE, "2027-06-21", paper="letter")
    assert "size: letter" in text
    assert text.count('class="blank"') == 31 * 3


def test_committed_blank_kit_is_what_the_tool_writes():
    files = blank_field_kit()
    folder = ROOT / "field_sheets"
    for name, text in files.items():
        assert (folder / name).read_text(encoding="utf-8") == text, f"field_sheets/{name} is stale: run firstrung blank-sheets"
        if name.endswith(".html"):
            parse(text)
    assert (folder / "shadows-template.csv").read_text().startswith("site,time_local,shadow_mm")


def run(args, capsys, monkeypatch):
    return run_cli(args, capsys, monkeypatch, columns=100)


def test_sheet_command_writes_and_refuses_unknown_site(tmp_path, capsys, monkeypatch):
    camp = ROOT / "examples" / "campaign.toml"
    out_file = tmp_path / "s.html"
    code, out, err = run(["sheet", camp, "--site", "fjell", "--date", "2027-03-20", "-o", out_file], capsys, monkeypatch)
    assert code == 0, err
    assert "Fjellvik" in out_file.read_text()
    code, out, err = run(["sheet", camp, "--site", "nowhere", "--date", "2027-03-20", "-o", out_file], capsys, monkeypatch)
    assert code == 2 and "nowhere" in err and len(err.strip().splitlines()) == 1
    code, out, err = run(["sheet", camp, "--site", "fjell", "--date", "2027-03-20", "-o", camp], capsys, monkeypatch)
    assert code == 2 and "one of the inputs" in err


def test_simulated_logs_reduce_to_the_expected_radius(tmp_path, capsys, monkeypatch):
    camp = ROOT / "examples" / "campaign.toml"
    code, out, err = run(["simulate", "shadows", camp, "--from", "2027-09-22", "--to", "2027-09-23",
                          "-o", tmp_path / "logs", "--seed", "5"], capsys, monkeypatch)
    assert code == 0, err
    first = (tmp_path / "logs" / "shadows.csv").read_bytes()
    run(["simulate", "shadows", camp, "--from", "2027-09-22", "--to", "2027-09-23", "-o", tmp_path / "logs", "--seed", "5"],
        capsys, monkeypatch)
    assert (tmp_path / "logs" / "shadows.csv").read_bytes() == first  # same seed, same bytes
    text = camp.read_text().replace('shadows = ["logs/shadows.csv"]', 'shadows = ["logs/shadows.csv"]')
    (tmp_path / "campaign.toml").write_text(text)
    from firstrung.methods.shadows.run import run_shadows

    r = run_shadows(tmp_path / "campaign.toml").reduction
    assert len(r.sites) == 3 and all(len(s.series) == 2 for s in r.sites)  # two days per site
    assert abs(r.earth_radius_km.value - r.expected_radius_km) < 3 * r.earth_radius_km.sigma
    assert os.path.exists(tmp_path / "logs" / "shadows.csv")


POLAR_CAMPAIGN = """[campaign]
name = "Polar and southern sheets (invented)"

[[site]]
id = "polar"
name = "Invented polar station"
latitude_deg = 78.22
longitude_deg = 15.65
elevation_m = 10
timezone = "Arctic/Longyearbyen"

[site.gnomon]
height_m = 1.0
height_sigma_m = 0.001
shadow_sigma_m = 0.002
edge = "umbra"

[[site]]
id = "cape"
name = "Invented southern school"
latitude_deg = -33.9249
longitude_deg = 18.4241
elevation_m = 20
timezone = "Africa/Johannesburg"

[site.gnomon]
height_m = 1.0
height_sigma_m = 0.001
shadow_sigma_m = 0.002
edge = "umbra"
"""


@pytest.fixture()
def polar_campaign(tmp_path):
    camp = tmp_path / "campaign.toml"
    camp.write_text(POLAR_CAMPAIGN)
    return camp


def test_polar_night_is_refused_and_a_low_sun_warned(polar_campaign, tmp_path, capsys, monkeypatch):
    out_file = tmp_path / "polar.html"
    # 78.22 N on the December solstice: the Sun's noon altitude is 90 - 78.22 - 23.44 = -11.7 deg
    # (declination 23.44 deg S at the solstice, from memory), so there is no shadow
    code, out, err = run(["sheet", polar_campaign, "--site", "polar", "--date", "2027-12-21", "-o", out_file],
                         capsys, monkeypatch)
    assert code == 2 and len(err.strip().splitlines()) == 1
    assert "does not rise" in err and "-11.7" in err and not out_file.exists()
    # 19 October: the declination is about -9.7 deg (from memory), the Sun about 2 deg high at noon
    code, out, err = run(["sheet", polar_campaign, "--site", "polar", "--date", "2027-10-19", "-o", out_file],
                         capsys, monkeypatch)
    assert code == 0, err
    assert "warning" in err and "2.1° high" in err
    text = out_file.read_text()
    assert "Low Sun" in text
    rows = [r for r in parse(text).rows if len(r) == 6 and r[0][:2].isdigit()]
    lengths = [float(r[2].replace(",", "")) for r in rows]
    # a 1 m gnomon with the upper limb about 2.4 deg up (refracted): 1 / tan(2.4 deg) = 23.9 m; never negative
    assert all(20_000 < x < 30_000 for x in lengths)


def test_blind_sheet_has_no_prediction_and_southern_latitudes_read_south(polar_campaign, tmp_path, capsys, monkeypatch):
    out_file = tmp_path / "cape.html"
    code, out, err = run(["sheet", polar_campaign, "--site", "cape", "--date", "2027-03-20", "-o", out_file,
                          "--blind"], capsys, monkeypatch)
    assert code == 0, err
    text = out_file.read_text()
    assert "33.9249° S" in text and "-33.9249" not in text
    assert "predicted shadow (mm)" not in text and " mm long at noon" not in text
    rows = [r for r in parse(text).rows if r and r[0][:2].isdigit()]
    assert len(rows) == 31 and all(len(r) == 5 for r in rows)
    code, out, err = run(["sheet", polar_campaign, "--site", "cape", "--date", "2027-03-20", "-o", out_file],
                         capsys, monkeypatch)
    assert "predicted shadow (mm)" in out_file.read_text()


BROWSER = __import__("shutil").which("chromium") or __import__("shutil").which("chromium-browser")


@pytest.mark.skipif(BROWSER is None, reason="no headless Chromium on this machine (Debian package 'chromium')")
@pytest.mark.parametrize("args", [["--site", "cape", "--date", "2027-03-20"],
                                  ["--site", "polar", "--date", "2027-10-19"],
                                  ["--site", "cape", "--date", "2027-03-20", "--paper", "letter"]])
def test_a_shadow_sheet_prints_on_one_page(args, polar_campaign, tmp_path, capsys, monkeypatch):
    import re
    import subprocess

    html = tmp_path / "sheet.html"
    code, out, err = run(["sheet", polar_campaign, *args, "-o", html], capsys, monkeypatch)
    assert code == 0, err
    pdf = tmp_path / "sheet.pdf"
    subprocess.run([BROWSER, "--headless", "--no-sandbox", "--disable-gpu", "--no-first-run",
                    "--disable-background-networking", "--disable-component-update", "--disable-sync",
                    f"--user-data-dir={tmp_path / 'profile'}", "--no-pdf-header-footer", f"--print-to-pdf={pdf}",
                    html.as_uri()], capture_output=True, timeout=120, check=False)
    assert pdf.read_bytes()[:5] == b"%PDF-"
    assert len(re.findall(rb"/Type\s*/Page[^s]", pdf.read_bytes())) == 1


def test_a_pdf_output_is_refused_in_one_clear_line(tmp_path, capsys, monkeypatch):
    camp = ROOT / "examples" / "campaign.toml"
    for args in (["sheet", camp, "--site", "fjell", "--date", "2027-03-20"], ["report", camp, "--samples", "1000"]):
        code, out, err = run([*args, "-o", tmp_path / "x.pdf"], capsys, monkeypatch)
        assert code == 2 and "not PDF" in err and "x.html" in err and len(err.strip().splitlines()) == 1
        assert not (tmp_path / "x.pdf").exists()
