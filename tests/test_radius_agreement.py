"""The radius is judged against what a perfect measurement of the campaign gives, the same way
by ``reduce shadows``, ``ladder`` and the report.

Outside reference: the WGS84 meridian arc between the southernmost and the northernmost site,
from GeographicLib (Karney 2013), divided by their latitude difference in radians, is the
meridional radius over the sites' span.
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
from geographiclib.geodesic import Geodesic
from tests.helpers import run_cli

EXAMPLE = Path(__file__).resolve().parent.parent / "examples" / "campaign.toml"


def test_ladder_states_reduce_shadows_sigma_against_the_campaigns_expected_radius(capsys, monkeypatch):
    code, out, err = run_cli(["reduce", "shadows", EXAMPLE, "--json"], capsys, monkeypatch)
    assert code == 0, err
    shadows = json.loads(out)
    # a perfect measurement: the sites' geodetic latitudes against their meridian arcs (GeographicLib),
    # fitted with the reduction's weights (each site's latitude sigma)
    lat = np.array([site["latitude_deg"] for site in shadows["sites"]])
    sigma = np.array([site["astronomical_latitude_deg"]["sigma"] for site in shadows["sites"]])
    arc_km = np.array([Geodesic.WGS84.Inverse(0.0, 0.0, x, 0.0)["s12"] / 1000.0 for x in lat])
    slope = np.polyfit(arc_km, np.radians(lat), 1, w=1.0 / np.radians(sigma))[0]
    assert abs(shadows["expected_radius_km"] - 1.0 / slope) < 0.05, (shadows["expected_radius_km"], 1.0 / slope)
    r = shadows["earth_radius_km"]
    z_reduce = (r["value"] - shadows["expected_radius_km"]) / r["sigma"]

    code, out, err = run_cli(["ladder", EXAMPLE, "--json", "--samples", "4000"], capsys, monkeypatch)
    assert code == 0, err
    rung = next(row for row in json.loads(out)["comparison"] if row["quantity"] == "earth_radius_km")
    assert abs(rung["modern"] - shadows["expected_radius_km"]) < 1e-3
    assert rung["z_score"] == round(z_reduce, 2)
    assert "meridional" in rung["modern_source"] and "6,371.0" in rung["modern_source"]
    # the comparison is not the IUGG mean's (6,371.0 km, Moritz 2000): these sites' span gives 2 km more
    assert abs(shadows["expected_radius_km"] - 6371.0087714) > 1.0


def test_the_report_states_the_same_radius_and_sigma_as_reduce_shadows():
    from firstrung.app.report import build_report
    from firstrung.methods.shadows.run import run_shadows

    red = run_shadows(EXAMPLE).reduction
    z = (red.earth_radius_km.value - red.expected_radius_km) / red.earth_radius_km.sigma
    rep = build_report(EXAMPLE, samples=2000, seed=1)
    section = rep.context["section"]["shadows"]
    assert section["z"] == z
    assert f"({z:+.1f} sigma)" in section["headline"]
    row = next(r for r in rep.context["ladder"] if r["quantity"] == "earth_radius_km")
    assert row["z_score"] == round(z, 2)
    assert row["measured"]["value"] == round(red.earth_radius_km.value, 3)  # as reduce shadows' JSON gives it
    # page one says each number once: the headline's radius and interval are the table's, rounded once
    assert f"{row['value_text']} km (68 % interval {row['interval_text']} km)" in section["headline"]
    assert row["value_text"] == f"{red.earth_radius_km.value:,.0f}"
