"""The Moon and the Sun-Moon geometry against published worked examples.

Meeus, Astronomical Algorithms (2nd ed., 1998), Examples 47.a and 48.a, as
recomputed from DE421 in reference-values sections 2.4 and 2.5 (the book's
own ELP-based values differ from DE421 by ~2" in right ascension).
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from firstrung import ephemeris

ARCSEC = 1.0 / 3600.0
KM = 1.0

# 1992 April 12.0 TD; TT - UTC = 32.184 s + 26 leap seconds (IERS Bulletin C) = 58.184 s
MEEUS_47A_UTC = np.array(["1992-04-11T23:59:01.816"], dtype="datetime64[ms]")


def test_apparent_moon_matches_meeus_47a_on_de421():
    g = ephemeris.sun_moon_geocentric(MEEUS_47A_UTC)
    x = g.moon_apparent_km[:, 0]
    ra = math.degrees(math.atan2(x[1], x[0])) % 360.0
    dec = math.degrees(math.asin(x[2] / np.linalg.norm(x)))
    # reference-values 2.4, DE421 column: alpha 134.687 915 deg, delta 13.768 449 deg;
    # Meeus's printed values (ELP): 134.688 470 deg, 13.768 368 deg (within 2")
    assert ra == pytest.approx(134.687915, abs=0.05 * ARCSEC / math.cos(math.radians(13.77)))
    assert dec == pytest.approx(13.768449, abs=0.05 * ARCSEC)
    assert ra == pytest.approx(134.688470, abs=3.0 * ARCSEC)
    # geometric distance: Meeus 368 409.7 km (ELP), DE421 368 405.5 km
    assert np.linalg.norm(g.moon_geometric_km[:, 0]) == pytest.approx(368405.5, abs=0.5 * KM)
    assert np.linalg.norm(g.moon_geometric_km[:, 0]) == pytest.approx(368409.7, abs=6 * KM)


def test_phase_angle_and_illuminated_fraction_match_meeus_48a():
    g = ephemeris.sun_moon_geocentric(MEEUS_47A_UTC)
    # Meeus Example 48.a: i = 69.0756 deg, k = 0.6786; DE421 (reference-values 2.5): 69.0817, 0.6785
    assert g.phase_angle_deg[0] == pytest.approx(69.0817, abs=0.001)
    assert g.phase_angle_deg[0] == pytest.approx(69.0756, abs=0.01)
    assert g.illuminated_fraction[0] == pytest.approx(0.6786, abs=0.0002)
    # geometric elongation 110.7869 deg, apparent 110.7923 deg (reference-values 2.5, DE421)
    assert g.elongation_geometric_deg[0] == pytest.approx(110.7869, abs=0.0005)
    assert g.elongation_apparent_deg[0] == pytest.approx(110.7923, abs=0.0005)


def test_topocentric_moon_matches_skyfield_full_pipeline():
    # Reference: skyfield's own observer-centred apparent alt/az with IAU 2000A nutation.
    from skyfield.api import wgs84

    times = np.arange(np.datetime64("2027-01-01T00:00"), np.datetime64("2027-02-01T00:00"), np.timedelta64(13, "h"))
    t = ephemeris._skyfield_time(times)
    earth, moon = ephemeris._core._body("earth"), ephemeris._core._body("moon")
    alt_ref, _, dist_ref = (earth + wgs84.latlon(46.2, 7.4, elevation_m=620.0)).at(t).observe(moon).apparent().altaz()
    p = ephemeris.moon_position(times, 46.2, 7.4, 620.0)
    assert np.max(np.abs(p.altitude_deg - alt_ref.degrees)) < 0.5 * ARCSEC
    assert np.max(np.abs(p.distance_km - dist_ref.km)) < 1.0 * KM
    # semi-diameter from the IAU mean radius 1737.4 km at the topocentric distance:
    # asin(1737.4 / d) matches the distance skyfield gives to 1e-9 deg
    assert np.degrees(np.arcsin(1737.4 / dist_ref.km)) == pytest.approx(p.semidiameter_deg, abs=1e-5)
