"""The ladder: Monte Carlo chaining with correlations kept and skewed rungs kept skewed."""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest

from firstrung.app.ladder import MODERN_VALUES, LadderInputs, climb
from firstrung.cli import main
from firstrung.uncertainty import Draw, earth_radius_draw, reciprocal_of_gaussian

EXAMPLE = Path(__file__).resolve().parent.parent / "examples" / "campaign.toml"


def full_inputs(elongation_sigma_deg=0.001):
    # Aristarchus-style inputs near the modern values: R = 6371 km (IUGG), D_moon = 60.27 R
    # (384 400 km, NASA fact sheet), E = 89.853 deg so that 1/cos E = 389.2 (DESIGN section 7),
    # angular diameters 0.518 deg (Moon) and 0.533 deg (Sun) (from memory, mean values)
    parallax = np.arcsin(1 / 60.27)
    return LadderInputs(
        earth_radius_km=Draw("reciprocal", 1 / 6371.0, 0.01 / 6371.0),
        moon_distance_earth_radii=Draw("reciprocal_sine", parallax, 0.01 * parallax),
        sun_moon_distance_ratio=Draw("secant", np.radians(89.8528), np.radians(elongation_sigma_deg)),
        moon_angular_diameter_deg=Draw("gaussian", 0.518, 0.001),
        sun_angular_diameter_deg=Draw("gaussian", 0.533, 0.001),
    )


def test_chain_reproduces_modern_scale():
    lad = climb(full_inputs(), samples=20_000, seed=3)
    moon = lad.rung("moon_distance_km").measured
    sun = lad.rung("sun_distance_au").measured
    assert moon.value == pytest.approx(384_400, rel=0.01)
    assert sun.value == pytest.approx(1.0, rel=0.05)
    assert lad.rung("moon_diameter_km").measured.value == pytest.approx(2 * 1737.4, rel=0.02)
    assert lad.rung("sun_diameter_km").measured.value == pytest.approx(2 * 695_700, rel=0.05)
    assert lad.rung("earth_radius_km").z_score == pytest.approx(0.0, abs=0.1)


def test_one_radius_sample_feeds_both_distances():
    # with exact parallax and elongation, Moon and Sun distances are the radius times constants:
    # their relative scatter must be the radius's (1 %), and fully correlated
    inputs = LadderInputs(
        earth_radius_km=Draw("reciprocal", 1 / 6371.0, 0.01 / 6371.0),
        moon_distance_earth_radii=Draw("reciprocal_sine", np.arcsin(1 / 60.27), 0.0),
        sun_moon_distance_ratio=Draw("secant", np.radians(89.85), 0.0),
    )
    lad = climb(inputs, samples=20_000, seed=1)
    m = lad.rung("moon_distance_km").measured
    s = lad.rung("sun_distance_km").measured
    assert m.sigma / m.value == pytest.approx(0.01, rel=0.05)
    assert s.sigma / s.value == pytest.approx(m.sigma / m.value, rel=1e-6)


def test_a_half_moon_near_90_degrees_gives_a_lower_bound_only():
    # sigma of E = 0.5 deg: E may reach 90 deg, so the ratio has no upper bound (DESIGN section 5)
    lad = climb(full_inputs(elongation_sigma_deg=0.5), samples=20_000, seed=2)
    sun = lad.rung("sun_distance_km").measured
    assert sun.high is None and sun.low > 0
    assert "lower bound" in lad.rung("sun_distance_km").note


def test_missing_rungs_are_not_measured_never_invented():
    lad = climb(LadderInputs(earth_radius_km=Draw("reciprocal", 1 / 6400.0, 1e-7)), samples=5000)
    for key in ("moon_distance_km", "sun_distance_km", "sun_distance_au", "moon_diameter_km", "sun_diameter_km"):
        assert lad.rung(key).measured is None and lad.rung(key).note.startswith("not measured")


def test_earth_radius_draw_matches_the_reduction_interval():
    m = reciprocal_of_gaussian(1.0, 1 / 6400.0, 2e-6, "km")
    lad = climb(LadderInputs(earth_radius_km=earth_radius_draw(m)), samples=200_000, seed=4)
    r = lad.rung("earth_radius_km").measured
    assert r.low == pytest.approx(m.low, rel=2e-3) and r.high == pytest.approx(m.high, rel=2e-3)


def test_modern_values_name_their_sources():
    assert MODERN_VALUES["sun_distance_km"][0] == 149_597_870.7  # IAU 2012 Resolution B2
    assert all(source for _, _, source in MODERN_VALUES.values())


def test_ladder_command_json_and_determinism(capsys, monkeypatch):
    monkeypatch.setenv("COLUMNS", "110")
    outs = []
    for _ in range(2):
        with pytest.raises(SystemExit) as done:
            main(["ladder", str(EXAMPLE), "--json", "--samples", "20000", "--seed", "9"])
        assert done.value.code == 0
        outs.append(capsys.readouterr().out)
    assert outs[0] == outs[1]
    data = json.loads(outs[0])
    for key in ("earth_radius_km", "moon_distance_km", "sun_distance_km", "sun_distance_au",
                "moon_diameter_km", "sun_diameter_km"):
        assert key in data
    assert data["earth_radius_km"]["unit"] == "km"

