"""The campaign report: self-contained HTML, escaped user text, cautions, determinism, Markdown."""

from __future__ import annotations

import re
import shutil
from pathlib import Path

import pytest

from helpers import run_cli, shadows_only

EXAMPLES = Path(__file__).resolve().parent.parent / "examples"  # the demo: every rung measured
CLEAN = Path(__file__).resolve().parent / "data" / "clean_campaign"


def run(args, capsys, monkeypatch):
    return run_cli(args, capsys, monkeypatch, columns=100)


@pytest.fixture()
def hostile_campaign(tmp_path):
    shutil.copytree(EXAMPLES, tmp_path / "camp")
    camp = tmp_path / "camp" / "campaign.toml"
    text = camp.read_text().replace('name = "Fjellvik astronomy club dome"', 'name = "<script>alert(1)</script> & dome"')
    camp.write_text(text)
    return camp


def test_html_report_is_self_contained_escaped_and_deterministic(hostile_campaign, tmp_path, capsys, monkeypatch):
    out_file = tmp_path / "report.html"
    code, out, err = run(["report", hostile_campaign, "-o", out_file, "--samples", "20000"], capsys, monkeypatch)
    assert code == 0, err
    html = out_file.read_text()
    from test_sheets import parse  # balanced tags (the sheets' HTML checker)

    parse(html)
    assert "<script>" not in html and "&lt;script&gt;alert(1)&lt;/script&gt; &amp; dome" in html
    # ladder, shadow fits, latitude line, eclipse, half moon, transit chords, parallax ellipse, light curves
    assert html.count("<svg") == 8
    assert not re.search(r'(src|href)="(https?:)?//', html)  # nothing fetched when opened
    assert "Never look at the Sun" in html and "ISO 12312-2" in html
    assert "error budget" in html and "limited most by" in html
    assert "What the check found" in html and "duplicate-row" in html
    first = out_file.read_bytes()
    run(["report", hostile_campaign, "-o", out_file, "--samples", "20000"], capsys, monkeypatch)
    assert out_file.read_bytes() == first


def test_markdown_report_with_png_figures(hostile_campaign, tmp_path, capsys, monkeypatch):
    out_file = tmp_path / "report.md"
    code, out, err = run(["report", hostile_campaign, "-o", out_file, "--markdown", "--samples", "20000"], capsys, monkeypatch)
    assert code == 0, err
    text = out_file.read_text()
    for name in ("ladder", "shadows_series", "shadows_latitude", "eclipse_track", "phases_ratio"):
        png = tmp_path / f"report-{name}.png"
        assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
        assert f"(report-{name}.png)" in text
    assert "| Earth's radius (km) |" in text


def test_report_refuses_to_overwrite_an_input(hostile_campaign, capsys, monkeypatch):
    code, out, err = run(["report", hostile_campaign, "-o", hostile_campaign], capsys, monkeypatch)
    assert code == 2 and "one of the inputs" in err


def test_a_shadows_only_campaign_shows_the_other_rungs_as_not_measured(tmp_path, capsys, monkeypatch):
    shutil.copytree(CLEAN, tmp_path / "camp")
    camp = tmp_path / "camp" / "campaign.toml"
    shadows_only(camp)
    out_file = tmp_path / "report.html"
    code, out, err = run(["report", camp, "-o", out_file, "--samples", "20000"], capsys, monkeypatch)
    assert code == 0, err
    html = out_file.read_text()
    assert "Not measured in this campaign" in html and html.count("<svg") == 3


def test_page_one_says_each_number_once():
    """The headlines' values and intervals are the ladder table's beside them, never a second value of one thing."""
    from firstrung.app.report import build_report

    rep = build_report(EXAMPLES / "campaign.toml", samples=2000, seed=1)
    rows = {r["quantity"]: r for r in rep.context["ladder"]}
    for name, quantity in (("shadows", "earth_radius_km"), ("eclipse", "moon_distance_km")):
        row, headline = rows[quantity], rep.context["section"][name]["headline"]
        assert f"{row['value_text']} km" in headline, (headline, row)
        assert f"(68 % interval {row['interval_text']} km)" in headline, (headline, row)
