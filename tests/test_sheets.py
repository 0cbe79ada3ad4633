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
    assert abs(float(row[2]) - pred["noon_shadow_m"] * 1000) <= 1.0 * MM


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
