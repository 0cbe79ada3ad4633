"""Quarters, true half moons and the Sun-Moon geometry seen from a site.

Published values: Meeus, Astronomical Algorithms (2nd ed., 1998), Example 49.b.
Independent references: skyfield's almanac.moon_phases (the ephemeris almanac);
astropy reading the same DE421 file (tests/reference/make_dichotomy_astropy.py);
skyfield's full observer pipeline (IAU 2000A, diurnal aberration).
Regression values computed for this project (reference-values section 5, code C)
are labelled as such.
"""

from __future__ import annotations

import csv
from pathlib import Path

import numpy as np
import pytest

from firstrung.ephemeris import _skyfield_time
from firstrung.ephemeris._core import _body, _loaded
from firstrung.errors import EphemerisRangeError, InputError
from firstrung.methods.phases import prediction as ep
from firstrung.methods.phases.topocentric import both_up_windows, sun_moon_topocentric

SECOND = 1.0
MINUTE = 60.0
ARCSEC = 1.0 / 3600.0
REFERENCE = Path(__file__).resolve().parent.parent / "reference" / "dichotomy_astropy_de421.csv"


def _s(delta) -> np.ndarray:
    return np.asarray(delta, dtype="timedelta64[us]").astype(np.int64) / 1e6


@pytest.fixture(scope="module")
def quarters_2025():
    return ep.quarters_between("2025-01-01T00:00Z", "2026-01-01T00:00Z")


# --- against the ephemeris almanac and a published worked example -------------------------------


def test_quadratures_of_2025_match_skyfield_almanac(quarters_2025):
    # Reference: skyfield's almanac.moon_phases with find_discrete (1 ms resolution), same DE421.
    from skyfield import almanac

    ts, eph = _loaded()[0], _loaded()[1]
    t, phase = almanac.find_discrete(ts.utc(2025, 1, 1), ts.utc(2026, 1, 1), almanac.moon_phases(eph))
    keep = (phase == 1) | (phase == 3)
    ref_tt = t.tt[keep]
    ours_tt = _skyfield_time(quarters_2025.quadrature_utc).tt
    assert len(quarters_2025) == keep.sum() == 25
    assert list(quarters_2025.quarter) == ["first" if p == 1 else "last" for p in phase[keep]]
    diff_s = np.abs(ours_tt - ref_tt) * 86400.0
    # the contract: within 60 s of the ephemeris almanac; found: < 0.01 s (same definition,
    # same ephemeris; the residue is the 2000B nutation and the two root finders)
    assert diff_s.max() < 60 * SECOND
    assert diff_s.max() < 0.05 * SECOND


def test_last_quarter_of_january_2044_matches_meeus_49b():
    # Meeus 1998, Example 49.b: last quarter 2044 Jan 21, JDE 2467636.49186 = 23h48m17s TD (V2);
    # DE421 gives JDE 2467636.491865 (reference-values 2.6, C). The book's series is good to
    # a few seconds, so 60 s (the almanac tolerance) is generous; DE421 agrees to 1 s.
    t, q = ep.quadratures_between("2044-01-18T00:00Z", "2044-01-25T00:00Z")
    assert list(q) == ["last"]
    jd_tt = float(_skyfield_time(t).tt[0])
    assert abs(jd_tt - 2467636.49186) * 86400 < 60 * SECOND
    assert abs(jd_tt - 2467636.491865) * 86400 < 1 * SECOND


def test_dichotomy_offsets_and_elongations_2025_regression(quarters_2025):
    # Regression (DE421; the physical half moon: the phase angle is 90 deg with the Sun where the
    # light reaching the Moon left it, as the astropy reference below; the geometric Sun made it
    # 40 s later, reference-values section 5's table).
    table = [  # (dichotomy - quarter [min], the triangle's E [deg], ratio, apparent E [deg])
        (-15.96, 89.85553, 397.14, 89.85532),
        (+20.92, 89.84296, 364.42, 89.84314),
        (-16.00, 89.85556, 397.22, 89.85536),
        (+20.18, 89.84509, 369.45, 89.84528),
        (-16.36, 89.85508, 395.87, 89.85488),
        (+18.95, 89.84881, 378.53, 89.84900),
    ]
    q = quarters_2025
    for k, (minutes, e, ratio, apparent) in enumerate(table):
        assert q.dichotomy_minus_quadrature_s[k] == pytest.approx(minutes * MINUTE, abs=0.6 * SECOND)
        assert q.elongation_deg[k] == pytest.approx(e, abs=0.00001)
        assert q.distance_ratio[k] == pytest.approx(ratio, abs=0.01)
        assert q.apparent_elongation_deg[k] == pytest.approx(apparent, abs=0.00001)
    # DESIGN section 7: the half moon comes 15-20 min before first and 16-22 min after last quarter
    offset_min = q.dichotomy_minus_quadrature_s / 60.0
    first = q.quarter == "first"
    assert np.all((offset_min[first] > -20.5) & (offset_min[first] < -14.5))
    # (DESIGN's 16-22 min after last quarter is for the geometric Sun; the physical half moon,
    # lit by the Sun's apparent place, comes about 40 s earlier: 15.2-20.9 min in 2025)
    assert np.all((offset_min[~first] > 14.5) & (offset_min[~first] < 22.5))


def test_elongation_at_dichotomy_reproduces_the_handbook_value(quarters_2025):
    # Published: "the true value of this angle is close to 89 deg 50'" (Wikipedia, "Aristarchus of
    # Samos", section "Distance to the Sun (lunar dichotomy)", read 2025); Berry (1898), A Short
    # History of Astronomy, section 32: the Sun "about 400 times as distant as the moon".
    # The mean over a year is 89.852 deg (DESIGN section 7, C: 89.852 +/- 0.008 deg).
    e = quarters_2025.elongation_deg
    assert abs(e.mean() - (89 + 50 / 60)) < 1.5 / 60  # "close to" 89 deg 50', to the arcminute
    assert e.mean() == pytest.approx(89.852, abs=0.002)
    assert np.all(np.abs(e - 89.852) < 0.01)  # the 2025 extremes are 89.8428 and 89.8602 deg
    ratio = quarters_2025.distance_ratio
    assert 364 < ratio.min() and ratio.max() < 411  # DESIGN section 7, C: 364-411, mean 388
    assert ratio.mean() == pytest.approx(400, rel=0.05)  # Berry: "about 400"


# --- against astropy on the same DE421 ----------------------------------------------------------


def _astropy_rows():
    with open(REFERENCE, newline="") as f:
        return list(csv.DictReader(f))


def test_geocentric_and_site_dichotomies_match_astropy(quarters_2025):
    # Reference: tests/reference/dichotomy_astropy_de421.csv (astropy 8 + ERFA on DE421, its own
    # Earth orientation with IERS-B UT1 and polar motion). Polar motion moves a site by ~10 m,
    # i.e. the Moon's direction by 0.005": well below 0.1 s of the half moon. 1 s is the bar.
    rows = _astropy_rows()
    geo = [r for r in rows if r["site"] == "geocentre"]
    ref = np.array([np.datetime64(r["dichotomy_utc"][:-1]) for r in geo], dtype="datetime64[us]")
    assert len(ref) == len(quarters_2025)
    assert [r["quarter"] for r in geo] == list(quarters_2025.quarter)
    assert np.abs(_s(quarters_2025.dichotomy_utc - ref)).max() < 0.01 * SECOND
    sites = sorted({r["site"] for r in rows} - {"geocentre"})
    worst_s, worst_e = 0.0, 0.0
    offsets = []
    for name in sites:
        sel = [r for r in rows if r["site"] == name]
        lat, lon, elev = (float(sel[0][k]) for k in ("latitude_deg", "longitude_deg", "elevation_m"))
        ref = np.array([np.datetime64(r["dichotomy_utc"][:-1]) for r in sel], dtype="datetime64[us]")
        ours = ep.topocentric_dichotomy_utc(quarters_2025.dichotomy_utc, lat, lon, elev)
        worst_s = max(worst_s, float(np.abs(_s(ours - ref)).max()))
        g = sun_moon_topocentric(ours, lat, lon, elev)
        worst_e = max(worst_e, float(np.abs(g.elongation_deg - np.array([float(r["elongation_deg"]) for r in sel])).max()))
        offsets.append(_s(ours - quarters_2025.dichotomy_utc) / 60.0)
    assert worst_s < 1 * SECOND
    assert worst_e < 0.01 * ARCSEC
    # DESIGN section 7: seen from a site the half moon moves by up to about +/- 100 min (parallax)
    offsets = np.concatenate(offsets)
    assert 60 < np.abs(offsets).max() < 130


# --- the site's geometry against skyfield's full observer pipeline ----------------------------


def test_apparent_topocentric_elongation_and_altitudes_match_skyfield():
    # Reference: skyfield (earth + wgs84 site).at(t).observe(body).apparent() with IAU 2000A and
    # diurnal aberration. Ours leaves out diurnal aberration (<= 0.3") and uses 2000B: 0.5" bar.
    from skyfield.api import wgs84

    times = np.arange(np.datetime64("2027-03-14T00:00"), np.datetime64("2027-03-17T00:00"), np.timedelta64(5, "h"))
    lat, lon, elev = 47.8, 8.9, 450.0
    t = _skyfield_time(times)
    observer = _body("earth") + wgs84.latlon(lat, lon, elevation_m=elev)
    moon = observer.at(t).observe(_body("moon")).apparent()
    sun = observer.at(t).observe(_body("sun")).apparent()
    g = sun_moon_topocentric(times, lat, lon, elev)
    assert np.abs(g.apparent_elongation_deg - moon.separation_from(sun).degrees).max() < 0.5 * ARCSEC
    assert np.abs(g.moon_altitude_deg - moon.altaz()[0].degrees).max() < 0.5 * ARCSEC
    assert np.abs(g.sun_altitude_deg - sun.altaz()[0].degrees).max() < 0.5 * ARCSEC
    # refraction raises both bodies: when both are up the observed angle differs from the airless one
    up = (g.moon_altitude_deg > 5) & (g.sun_altitude_deg > 5)
    assert up.any()
    assert np.all(np.abs(g.observed_elongation_deg - g.apparent_elongation_deg)[up] > 1 * ARCSEC)
    # the rate of the elongation is about 0.5 deg/h, more or less by the diurnal parallax
    assert np.all((np.abs(g.elongation_rate_deg_per_h) > 0.2) & (np.abs(g.elongation_rate_deg_per_h) < 0.8))


def test_topocentric_quadrature_comes_after_first_and_before_last_half_moon(quarters_2025):
    q = quarters_2025
    half = ep.topocentric_dichotomy_utc(q.dichotomy_utc, -33.9, 151.1, 40.0)
    quad = ep.topocentric_quadrature_utc(half, -33.9, 151.1, 40.0)
    g = sun_moon_topocentric(quad, -33.9, 151.1, 40.0)
    assert np.abs(g.elongation_deg - 90.0).max() < 0.001 * ARCSEC
    lag_min = _s(quad - half) / 60.0
    first = q.quarter == "first"
    assert np.all(lag_min[first] > 8) and np.all(lag_min[~first] < -8)


def test_windows_edges_against_skyfield_altitudes():
    # Reference: skyfield's refracted altitudes (altaz('standard')), at the window edges and middle.
    from skyfield.api import wgs84

    center = np.array(["2027-03-15T16:09"], dtype="datetime64[us]")
    lat, lon, elev = np.array([47.8, 39.2]), np.array([8.9, 9.1]), np.array([450.0, 35.0])
    target = ep.topocentric_dichotomy_utc(center[:, None], lat, lon, elev)
    w = both_up_windows(center, target, lat, lon, elev, half_span_h=24, min_altitude_deg=10.0)
    assert len(w) >= 2
    for i in range(len(w)):
        observer = _body("earth") + wgs84.latlon(lat[w.site[i]], lon[w.site[i]], elevation_m=elev[w.site[i]])
        middle = w.start_utc[i] + (w.end_utc[i] - w.start_utc[i]) // 2
        t = _skyfield_time(np.array([w.start_utc[i], middle, w.end_utc[i]]))
        sun = observer.at(t).observe(_body("sun")).apparent().altaz("standard")[0].degrees
        moon = observer.at(t).observe(_body("moon")).apparent().altaz("standard")[0].degrees
        low = np.minimum(sun, moon)
        if not w.cut[i]:
            # linear interpolation on a 10 min grid: the edge is within ~1 min, i.e. 0.2 deg of altitude
            assert low[0] == pytest.approx(10.0, abs=0.2) and low[2] == pytest.approx(10.0, abs=0.2)
        assert low[1] > 10.0
    # the first-quarter half moon of 2027-03-15 falls in the afternoon windows of both sites
    assert w.contains_target.sum() == 2


# --- bad input -----------------------------------------------------------------------------------


def test_bad_ranges_are_refused():
    with pytest.raises(InputError, match="not after"):
        ep.quadratures_between("2025-02-01T00:00Z", "2025-01-01T00:00Z")
    with pytest.raises(EphemerisRangeError):
        ep.quarters_between("2060-01-01T00:00Z", "2060-02-01T00:00Z")
    with pytest.raises(InputError):
        sun_moon_topocentric("2025-01-06T23:59:20", 46.2, 7.4)  # naive time
    with pytest.raises(InputError, match="min_altitude_deg"):
        both_up_windows(np.array(["2025-01-06"], "datetime64[us]"), np.array([["2025-01-06"]], "datetime64[us]"),
                           [46.0], [7.0], [0.0], min_altitude_deg=95.0)


def test_scalar_and_array_shapes():
    g = sun_moon_topocentric("2025-01-06T23:59:20Z", 46.2, 7.4)
    assert np.shape(g.elongation_deg) == ()
    g = sun_moon_topocentric(np.array(["2025-01-06T23:59"], "datetime64[s]"), [46.2, -33.9], [7.4, 151.1])
    assert g.elongation_deg.shape == (2,)
    t = ep.topocentric_dichotomy_utc(np.array(["2025-01-06T23:41"], "datetime64[s]")[:, None], [46.2, -33.9], [7.4, 151.1])
    assert t.shape == (1, 2)


# --- speed ---------------------------------------------------------------------------------------


def test_a_year_of_quarters_for_100_sites_with_windows():
    # Its speed is measured by benchmarks/run.py as a whole command (no timed unit tests).
    from firstrung.campaign import parse_campaign
    from firstrung.methods.phases.present import phase_plan_to_json
    from firstrung.methods.phases.run import plan_phases

    rng = np.random.default_rng(5)
    lines = ["[campaign]", 'name = "a hundred invented sites"']
    for i in range(100):
        lines += ["[[site]]", f'id = "s{i}"', f"latitude_deg = {rng.uniform(-60, 60):.3f}",
                  f"longitude_deg = {rng.uniform(-180, 180):.3f}", f"elevation_m = {rng.uniform(0, 2000):.0f}"]
    campaign = parse_campaign("\n".join(lines))
    ep.quarters_between("2026-01-01T00:00Z", "2026-01-08T00:00Z")  # the ephemeris is loaded
    plan = plan_phases(campaign, "2026-01-01", "2026-12-31")
    data = phase_plan_to_json(plan)
    assert len(data["quarters"]) >= 24 and len(plan.windows) > 2000
