"""Campaigns with many sites: the text tables are summarised (and say so) unless --verbose."""

from __future__ import annotations

import re

import numpy as np
import pytest
from tests.helpers import run_cli

N_SITES = 25


@pytest.fixture
def many_sites(tmp_path, capsys, monkeypatch):
    """25 invented sites 30-60 deg from the equator, two days of simulated readings each."""
    folder = tmp_path
    rng = np.random.default_rng(11)
    lat = rng.uniform(30.0, 60.0, N_SITES) * np.where(np.arange(N_SITES) % 2, 1, -1)
    lon = rng.uniform(-30.0, 30.0, N_SITES)
    parts = ['[campaign]\nname = "many sites"\n']
    for i in range(N_SITES):
        parts.append(f'[[site]]\nid = "m{i:02d}"\nlatitude_deg = {lat[i]:.3f}\nlongitude_deg = {lon[i]:.3f}\n'
                     "elevation_m = 50\n[site.gnomon]\nheight_m = 1.0\n")
    campaign = folder / "campaign.toml"
    campaign.write_text("\n".join(parts))
    code, _, err = run_cli(["simulate", "shadows", campaign, "--from", "2027-03-20", "--to", "2027-03-21",
                            "-o", folder / "logs", "--seed", "4"], capsys, monkeypatch)
    assert code == 0, err
    (log,) = (folder / "logs").glob("*.csv")
    campaign.write_text("\n".join(parts) + f'[logs]\nshadows = ["logs/{log.name}"]\n')
    return campaign


def test_reduce_shadows_shows_forty_site_days_and_counts_the_rest(many_sites, capsys, monkeypatch):
    campaign = many_sites
    code, out, _ = run_cli(["reduce", "shadows", campaign], capsys, monkeypatch, columns=80)
    shown = set(re.findall(r"^\s+(m\d\d)\b", out, flags=re.M))
    # 25 sites x 2 days = 50 rows; 40 fit, i.e. 20 sites, and the line names the other 5
    assert len(shown) == 20
    assert "5 more sites not shown (--verbose shows every site, --json gives them all)" in out
    code, out, _ = run_cli(["reduce", "shadows", campaign, "--verbose"], capsys, monkeypatch, columns=80)
    assert len(set(re.findall(r"^\s+(m\d\d)\b", out, flags=re.M))) == N_SITES
    assert "not shown" not in out


def test_check_summary_shows_flagged_sites_only_unless_verbose(many_sites, capsys, monkeypatch):
    campaign = many_sites
    _, data, _ = run_cli(["check", campaign, "--json"], capsys, monkeypatch)
    import json

    summary = json.loads(data)["summary"]
    flagged_sites = {r["site"] for r in summary if r["flagged"]}
    assert len(summary) == 2 * N_SITES  # each site and its one observer
    _, out, _ = run_cli(["check", campaign], capsys, monkeypatch, columns=80)
    table = out.split("Rows per site and observer", 1)[1]
    assert set(re.findall(r"^\s+(m\d\d)\s", table, flags=re.M)) == flagged_sites
    hidden = N_SITES - len(flagged_sites)
    assert f"{hidden} more sites not shown, none flagged (--verbose or --json shows all)" in table
    _, out, _ = run_cli(["check", campaign, "--verbose"], capsys, monkeypatch, columns=80)
    table = out.split("Rows per site and observer", 1)[1]
    assert len(set(re.findall(r"^\s+(m\d\d)\s", table, flags=re.M))) == N_SITES


def test_report_draws_twelve_of_the_site_days_and_says_so(many_sites, capsys, monkeypatch):
    out_file = many_sites.parent / "report.html"
    code, _, err = run_cli(["report", many_sites, "-o", out_file, "--samples", "1000"], capsys, monkeypatch)
    assert code == 0, err
    html = out_file.read_text()
    assert "12 of the 50 site-days drawn (the outlying sites first)" in html
    # one panel title per drawn series: 'mNN 2027-03-2D' in the SVG text
    assert len(set(re.findall(r">(m\d\d 2027-03-2[01])<", html))) == 12
