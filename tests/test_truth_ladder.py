"""The ladder's rungs meet at one epoch and in one Earth radius (perfect data in every rung).

References, outside the project:
- the Moon's and the Sun's distances: DE421 read through skyfield directly
  (geocentric Moon at greatest eclipse; the Sun seen from the half-moon site);
- WGS84 (NIMA TR8350.2): the equatorial radius a = 6378.137 km and the
  meridional radius of curvature M = a (1 - e^2) / (1 - e^2 sin^2 phi)^1.5.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from truth_helpers import (
    perfect_contact_rows,
    perfect_half_moon_rows,
    perfect_shadow_rows,
    write_campaign,
)

#: Two tropical sites on one meridian (invented), where the meridional radius is farthest
#: from the equatorial one (0.6 %).
SITES = [("norte", 20.0, -75.5, 0.0), ("sur", 4.0, -75.5, 0.0)]
ECLIPSE_GREATEST = "2029-06-26T03:22:00Z"  # total lunar eclipse (from memory; found by the tool below)


def _skyfield():
    import os

    import skyfield_data
    from skyfield.api import Loader, wgs84

    folder = os.path.join(os.path.dirname(skyfield_data.__file__), "data")
    load = Loader(folder, verbose=False)
    return load.timescale(builtin=True), load("de421.bsp"), wgs84


@pytest.fixture(scope="module")
def perfect(tmp_path_factory):
    from firstrung.methods.eclipse.prediction import eclipse_near

    e = eclipse_near(ECLIPSE_GREATEST)
    folder = tmp_path_factory.mktemp("perfect")
    shadows = perfect_shadow_rows(SITES, ["2029-03-01", "2029-03-02"])
    eclipse = perfect_contact_rows(e, "norte")
    phases = perfect_half_moon_rows(SITES[0], "2029-07-25", "2029-08-10")
    assert len(phases) >= 1
    return write_campaign(folder, SITES, shadows=shadows, eclipse=eclipse, phases=phases), e, phases


def test_perfect_tropical_ladder_gives_the_moon_within_0_1_percent(perfect):
    from firstrung.app.ladder_run import run_ladder

    path, e, phases = perfect
    ts, eph, wgs84 = _skyfield()
    t_ecl = ts.from_datetime(np.datetime64(e.greatest_utc[0], "us").astype(object).replace(tzinfo=__import__("datetime").UTC))
    moon_km = float((eph["moon"] - eph["earth"]).at(t_ecl).distance().km)  # DE421 via skyfield
    run = run_ladder(path, samples=40_000, seed=5)
    moon = run.ladder.rung("moon_distance_km").measured
    assert moon.value == pytest.approx(moon_km, rel=1e-3)


def test_perfect_ladder_brings_the_moon_to_the_half_moon_epoch_for_the_sun(perfect):
    from firstrung.app.ladder_run import run_ladder

    path, e, phases = perfect
    ts, eph, wgs84 = _skyfield()
    run = run_ladder(path, samples=40_000, seed=5)
    # the Sun's distance at the half moon, seen from the site (DE421 via skyfield)
    sid, lat, lon, elev = SITES[0]
    site = eph["earth"] + wgs84.latlon(lat, lon, elev)
    t_half = ts.utc(*[int(x) for x in phases[0][1][:10].split("-")], int(phases[0][1][11:13]),
                    int(phases[0][1][14:16]), float(phases[0][1][17:23]))
    sun_km = float((eph["sun"] - site).at(t_half).distance().km)
    sun = run.ladder.rung("sun_distance_km").measured
    assert sun.low <= sun_km <= sun.high
    assert sun.value == pytest.approx(sun_km, rel=0.01)
    au = run.ladder.rung("sun_distance_au")
    assert au.modern == pytest.approx(sun_km / 149_597_870.7, rel=1e-4)  # compared with the date's distance


def test_the_moon_in_km_uses_the_equatorial_radius_carried_from_the_shadows(perfect):
    from firstrung.constants import WGS84_FLATTENING
    from firstrung.methods.eclipse.run import run_eclipse

    path, e, _ = perfect
    run = run_eclipse(path)
    (r,) = run.results
    # the perfect shadows measure the meridional radius at the mean latitude, 12 deg (WGS84)
    e2 = WGS84_FLATTENING * (2 - WGS84_FLATTENING)
    meridional_12 = 6378.137 * (1 - e2) / (1 - e2 * math.sin(math.radians(12.0)) ** 2) ** 1.5
    assert meridional_12 < 6340.0  # 0.6 % below the equatorial radius
    assert run.earth_radius_km.value == pytest.approx(6378.137, rel=5e-4)
    truth_km = r.ephemeris_distance_earth_radii * 6378.137
    assert r.moon_distance_km.value == pytest.approx(truth_km, rel=1e-3)


def test_board_level_and_gnomon_plumb_enter_the_shadow_budget():
    # geometry (no reference needed beyond trigonometry): a board tilted by tau along the shadow
    # moves the marked altitude by tau cos^2 a; a rod leaning by psi, by psi sin^2 a
    from firstrung.methods.shadows.altitude import (
        BOARD_LEVEL_SIGMA_RAD,
        GNOMON_PLUMB_SIGMA_RAD,
        altitude_error_terms_rad,
    )

    h, length = 1.0, 1.7320508  # altitude 30 deg
    terms = altitude_error_terms_rad(h, length, 0.002, 0.001, "umbra", 30.0, 0.2667, 0.03, False)
    a = math.atan2(h, length)
    tilted = math.atan2(h, h / (math.tan(a) + math.tan(BOARD_LEVEL_SIGMA_RAD)))  # exact, ray on a tilted plane
    assert float(terms["board level"]) == pytest.approx(tilted - a, rel=0.01)
    leaned = math.atan2(h, length - h * math.tan(GNOMON_PLUMB_SIGMA_RAD))
    assert float(terms["gnomon plumb"]) == pytest.approx(leaned - a, rel=0.01)


def test_the_shadow_reduction_names_level_and_plumb_in_its_budget(perfect):
    from firstrung.methods.shadows.run import run_shadows

    path, _, _ = perfect
    names = {b.source for b in run_shadows(path).reduction.budget}
    assert {"board level", "gnomon plumb"} <= names
