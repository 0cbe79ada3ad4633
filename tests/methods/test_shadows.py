"""The Earth's radius from noon shadows: synthetic campaigns built from the ephemeris.

Check values come from outside the method: the WGS84 meridian arc per radian
of latitude over the sites' span (GeographicLib, Karney 2013, J. Geodesy
87:43, through geographiclib's Geodesic.WGS84 along a meridian), which is
what a perfect measurement must return (reference-values section 6).
"""

from __future__ import annotations

import numpy as np
import pytest
from geographiclib.geodesic import Geodesic

from firstrung.errors import ComputationError
from firstrung.methods.shadows.altitude import (
    centre_altitude_deg,
    edge_altitude_deg,
    penumbra_width_m,
)
from firstrung.methods.shadows.inputs import BaselineInput, ShadowReadings, SiteInput
from firstrung.methods.shadows.reduction import monte_carlo_radius, reduce_shadows
from firstrung.methods.shadows.rehearsal import (
    ShadowErrors,
    reading_times_utc,
    simulate_shadow_readings,
)

PERCENT = 0.01
KM = 1.0
ARCSEC = 1.0 / 3600.0


def geographiclib_radius_km(lat1, lat2):
    """Meridian arc between two latitudes per radian, from GeographicLib (independent of firstrung)."""
    arc_m = Geodesic.WGS84.Inverse(lat1, 0.0, lat2, 0.0)["s12"]
    return arc_m / 1000.0 / np.radians(abs(lat2 - lat1))


NO_ERRORS = ShadowErrors()


def campaign(lats, lons, dates, *, errors=NO_ERRORS, edges=None, seed=1, heights=None,
             logged_edges=None, shadow_sigma_m=0.002, gnomon_sigma_m=0.001, span_min=30.0):
    n = len(lats)
    sites = tuple(SiteInput(f"s{i}", f"Site {i}", la, lo, 200.0) for i, (la, lo) in enumerate(zip(lats, lons, strict=False)))
    lat, lon = np.array(lats, float), np.array(lons, float)
    elev = np.full(n, 200.0)
    times, pair = reading_times_utc(dates, lat, lon, elev, half_span_min=span_min)
    idx = pair % n
    edges = np.array(edges or ["umbra"] * n, dtype=object)
    heights = np.array(heights or [1.0] * n)
    syn = simulate_shadow_readings(idx, times, lat, lon, elev, heights, edges, errors, np.random.default_rng(seed))
    logged = np.array(logged_edges, dtype=object)[idx] if logged_edges else syn.edge
    k = len(idx)
    readings = ShadowReadings(
        site_index=idx, time_utc=syn.time_utc, shadow_m=syn.shadow_m, gnomon_m=syn.gnomon_m, edge=logged,
        shadow_sigma_m=np.full(k, shadow_sigma_m), gnomon_sigma_m=np.full(k, gnomon_sigma_m),
        temperature_c=np.full(k, np.nan), pressure_hpa=np.full(k, np.nan),
    )
    return sites, readings


@pytest.mark.parametrize(
    "lats, lons, date",
    [
        ([41.0, 46.4], [7.0, 7.0], "2027-03-20"),  # a pair on one meridian
        ([41.0, 46.4], [2.0, 12.0], "2027-06-21"),  # 10 deg apart in longitude (40 min of time)
        ([12.0, 31.0], [30.0, 30.0], "2027-06-21"),  # straddling the subsolar latitude (23.4 N)
        ([-22.0, -37.5], [145.0, 150.0], "2027-12-21"),  # southern hemisphere, near its summer solstice
    ],
)
def test_noise_free_pairs_recover_the_meridional_radius(lats, lons, date):
    sites, readings = campaign(lats, lons, [date])
    r = reduce_shadows(sites, readings)
    truth = geographiclib_radius_km(*lats)
    assert r.earth_radius_km.value == pytest.approx(truth, rel=0.05 * PERCENT)
    assert r.expected_radius_km == pytest.approx(truth, rel=1e-6)


def test_noise_free_five_sites_recover_the_meridional_radius():
    lats = [30.0, 35.0, 40.0, 45.0, 50.0]
    sites, readings = campaign(lats, [0.0, 5.0, -5.0, 10.0, 3.0], ["2027-09-01"])
    r = reduce_shadows(sites, readings)
    # Reference: GeographicLib arc over the whole span; on the ellipsoid the fitted
    # slope differs from the end-to-end value by far less than 0.05 %.
    assert r.earth_radius_km.value == pytest.approx(geographiclib_radius_km(30.0, 50.0), rel=0.05 * PERCENT)
    assert r.outliers == ()


def test_straddling_pair_puts_the_sun_on_both_sides():
    sites, readings = campaign([12.0, 31.0], [30.0, 30.0], ["2027-06-21"])
    r = reduce_shadows(sites, readings)
    sides = {s.id: s.series[0].sun_side for s in r.sites}
    assert sides == {"s0": "north", "s1": "south"}
    dec = r.sites[0].series[0].declination_deg
    assert dec == pytest.approx(23.43, abs=0.02)  # June solstice declination (Meeus 1998, ch. 27; common knowledge)


def test_declination_is_taken_at_each_sites_own_transit():
    # Sites 10 deg apart in longitude transit 40 min apart. At an equinox the declination
    # changes by sin(eps) cos(lambda) dlambda/dt = 0.3978 * 0.9856 deg/day = 58.8"/h
    # (spherical astronomy, Meeus 1998 eq. 13.4 differentiated; mean motion 0.9856 deg/day),
    # i.e. ~39" between the two transits.
    sites, readings = campaign([41.0, 46.4], [2.0, 12.0], ["2027-03-20"])
    r = reduce_shadows(sites, readings)
    d0, d1 = (s.series[0].declination_deg for s in r.sites)
    assert abs(d0 - d1) * 3600 == pytest.approx(39.2, abs=2.0)
    assert r.earth_radius_km.value == pytest.approx(geographiclib_radius_km(41.0, 46.4), rel=0.05 * PERCENT)


def test_clock_offset_is_fitted_and_does_not_bias_the_radius():
    sites, readings = campaign([41.0, 46.4], [7.0, 7.0], ["2027-03-20"])
    shifted = ShadowReadings(**{**readings.__dict__, "time_utc": readings.time_utc + np.timedelta64(90, "s")})
    r = reduce_shadows(sites, shifted)
    for s in r.sites:
        assert s.series[0].clock_offset_s.value == pytest.approx(90.0, abs=1.0)
        # 90 s fast is apparent noon seen 90 s late: 22.5' further west (15 deg/h)
        assert s.series[0].implied_longitude_deg.value == pytest.approx(7.0 - 0.375, abs=0.005)
    assert r.earth_radius_km.value == pytest.approx(geographiclib_radius_km(41.0, 46.4), rel=0.05 * PERCENT)


def test_mixed_edges_are_handled_and_a_wrong_label_shows_the_known_bias():
    # DESIGN section 7: one site marking the umbra edge and the other the middle biases R by ~5 %
    # when the difference is ignored.
    sites, readings = campaign([41.0, 46.4], [7.0, 7.0], ["2027-03-20"], edges=["umbra", "middle"])
    good = reduce_shadows(sites, readings)
    assert good.earth_radius_km.value == pytest.approx(geographiclib_radius_km(41.0, 46.4), rel=0.05 * PERCENT)
    sites, wrong = campaign([41.0, 46.4], [7.0, 7.0], ["2027-03-20"], edges=["umbra", "middle"],
                            logged_edges=["umbra", "umbra"])
    bad = reduce_shadows(sites, wrong)
    assert abs(bad.earth_radius_km.value / good.earth_radius_km.value - 1) == pytest.approx(0.05, abs=0.015)


def test_single_reading_per_site_still_reduces():
    sites, readings = campaign([41.0, 46.4], [7.0, 7.0], ["2027-03-20"], span_min=0.0)
    assert len(readings) == 2
    r = reduce_shadows(sites, readings)
    assert r.earth_radius_km.value == pytest.approx(geographiclib_radius_km(41.0, 46.4), rel=0.05 * PERCENT)


def test_surveyed_baseline_replaces_the_map_and_its_sigma_enters_the_budget():
    sites, readings = campaign([41.0, 46.4], [7.0, 7.0], ["2027-03-20"])
    arc_km = Geodesic.WGS84.Inverse(41.0, 7.0, 46.4, 7.0)["s12"] / 1000.0
    surveyed = (BaselineInput(0, 1, arc_km * 1.01, 2.0, 0.0),)  # 1 % longer than the map, due north
    r = reduce_shadows(sites, readings, surveyed)
    assert r.earth_radius_km.value == pytest.approx(1.01 * geographiclib_radius_km(41.0, 46.4), rel=0.05 * PERCENT)
    terms = {t.source: t.sigma for t in r.budget}
    # sigma of R from the baseline alone: R * 2 km / arc
    assert terms["baselines"] == pytest.approx(r.earth_radius_km.value * 2.0 / arc_km, rel=0.02)
    # a bearing of 60 deg keeps only half the distance north-south
    slanted = (BaselineInput(0, 1, 2 * arc_km, 2.0, 60.0),)
    r2 = reduce_shadows(sites, readings, slanted)
    assert r2.earth_radius_km.value == pytest.approx(geographiclib_radius_km(41.0, 46.4), rel=0.05 * PERCENT)


def test_outlying_site_is_named_and_left_out():
    lats = [30.0, 35.0, 40.0, 45.0, 50.0, 55.0]
    sites, readings = campaign(lats, [5.0] * 6, ["2027-09-01"])
    # site s3's gnomon is really 5 cm shorter than logged: a blunder of ~1 deg in altitude
    bad = readings.shadow_m.copy()
    bad[readings.site_index == 3] *= 0.95
    r = reduce_shadows(sites, ShadowReadings(**{**readings.__dict__, "shadow_m": bad}))
    assert r.outliers == ("s3",)
    assert r.earth_radius_km.value == pytest.approx(geographiclib_radius_km(30.0, 55.0), rel=0.05 * PERCENT)


def test_linear_sigma_agrees_with_monte_carlo():
    errors = ShadowErrors.stated(0.002, 0.001, clock_sigma_s=30.0)
    sites, readings = campaign([38.0, 44.0, 49.0], [7.0, 9.0, 5.0], ["2027-03-20"], errors=errors, seed=3)
    r = reduce_shadows(sites, readings)
    samples = monte_carlo_radius(sites, readings, samples=3000, seed=5)
    assert np.std(samples) == pytest.approx(r.earth_radius_km.sigma, rel=0.10)


def test_error_budget_names_the_largest_input_and_adds_up():
    errors = ShadowErrors.stated(0.002, 0.001)
    sites, readings = campaign([41.0, 46.4], [7.0, 7.0], ["2027-03-20"], errors=errors, seed=2)
    r = reduce_shadows(sites, readings)
    total = np.sqrt(sum(t.sigma**2 for t in r.budget))
    assert total == pytest.approx(r.earth_radius_km.sigma, rel=1e-9)
    assert r.budget[0].sigma == max(t.sigma for t in r.budget)
    assert {t.source for t in r.budget} >= {"shadow reading", "clock", "gnomon height", "edge location", "refraction"}


@pytest.mark.slow
def test_68_percent_intervals_hold_the_truth_about_68_percent_of_the_time():
    # DESIGN section 6: over many simulated noisy campaigns the 68 % interval holds the truth 60-76 %.
    rng = np.random.default_rng(2027)
    hits = 0
    trials = 260
    trials_run = 0
    errors = ShadowErrors.stated(0.002, 0.001, clock_sigma_s=30.0)
    for _k in range(trials):
        lat1 = rng.uniform(-50, 40)
        lat2 = lat1 + rng.uniform(3.0, 12.0)
        lon = rng.uniform(-150, 150)
        day = int(rng.integers(0, 360))
        date = np.datetime64("2027-01-05") + np.timedelta64(day, "D")
        declination = 23.44 * np.sin(2 * np.pi * (day + 4 - 80) / 365.25)  # rough, to skip near-zenith noons
        if min(abs(lat1 - declination), abs(lat2 - declination)) < 3.0:
            continue
        trials_run += 1
        sites, readings = campaign([lat1, lat2], [lon, lon + rng.uniform(-5, 5)], [date], errors=errors,
                                   seed=int(rng.integers(1 << 30)), span_min=20.0)
        r = reduce_shadows(sites, readings)
        truth = geographiclib_radius_km(lat1, lat2)
        hi = np.inf if r.earth_radius_km.high is None else r.earth_radius_km.high
        hits += r.earth_radius_km.low <= truth <= hi
    assert trials_run >= 200
    coverage = hits / trials_run
    print(f"coverage {coverage:.3f} over {trials_run} campaigns")
    assert 0.60 <= coverage <= 0.76, coverage


def test_edge_altitude_and_centre_scalar_array():
    assert float(edge_altitude_deg(1.0, 1.0)) == pytest.approx(45.0)
    a = edge_altitude_deg(np.array([1.0, 1.0]), np.array([1.0, 0.5773502692]))
    assert a == pytest.approx([45.0, 60.0], abs=1e-6)
    # umbra edge = upper limb: the centre is one semi-diameter lower, after refraction
    c = centre_altitude_deg(np.array([45.0]), np.array(["umbra"], dtype=object), 0.27, 10.0, 1010.0)
    m = centre_altitude_deg(np.array([45.0]), np.array(["middle"], dtype=object), 0.27, 10.0, 1010.0)
    assert (m - c)[0] == pytest.approx(0.27)


def test_penumbra_width_grows_with_zenith_distance():
    # DESIGN section 7: the penumbra of a 1 m gnomon is ~8 cm wide at z = 70 deg.
    assert float(penumbra_width_m(1.0, 20.0, 0.267)) == pytest.approx(0.08, abs=0.005)
    assert float(penumbra_width_m(1.0, 60.0, 0.267)) < 0.015


def test_too_few_sites_is_a_clear_error():
    sites, readings = campaign([41.0], [7.0], ["2027-03-20"])
    with pytest.raises(ComputationError, match="at least two sites"):
        reduce_shadows(sites, readings)


def test_logged_temperature_and_pressure_are_honoured():
    from firstrung.refraction import refraction_from_apparent_deg, standard_pressure_hpa

    sites, readings = campaign([41.0, 46.4], [7.0, 7.0], ["2027-12-21"])
    base = reduce_shadows(sites, readings)
    k = len(readings)
    # the conditions the simulation used, written out explicitly, change nothing
    same = ShadowReadings(**{**readings.__dict__, "temperature_c": np.full(k, 10.0),
                             "pressure_hpa": np.full(k, float(standard_pressure_hpa(200.0)))})
    assert reduce_shadows(sites, same).earth_radius_km.value == pytest.approx(base.earth_radius_km.value, rel=1e-9)
    # a cold high-pressure day at the northern site only: its refraction grows by the
    # Bennett/Meeus (ch. 16) factor (P/1010)(283/(273+T)); its latitude moves by that extra refraction
    cold = readings.temperature_c.copy()
    press = readings.pressure_hpa.copy()
    north = readings.site_index == 1
    cold[north], press[north] = -20.0, 1040.0
    changed = reduce_shadows(sites, ShadowReadings(**{**readings.__dict__, "temperature_c": cold, "pressure_hpa": press}))
    lat_base = base.sites[1].astronomical_latitude_deg.value
    lat_cold = changed.sites[1].astronomical_latitude_deg.value
    alt = 90.0 - (46.4 + 23.43)
    extra = refraction_from_apparent_deg(alt, -20.0, 1040.0) - refraction_from_apparent_deg(
        alt, 10.0, float(standard_pressure_hpa(200.0)))
    # less true altitude -> larger zenith distance -> higher latitude, by the extra refraction
    assert lat_cold - lat_base == pytest.approx(extra, rel=0.05)
    assert any("temperature" in a for a in changed.assumptions)
