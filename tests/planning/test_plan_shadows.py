"""Planning shadow campaigns: predictions against independent references and the error model
against simulated campaigns."""

from __future__ import annotations

import csv
import os

import numpy as np
import pytest
from geographiclib.geodesic import Geodesic

from firstrung.errors import InputError
from firstrung.methods.shadows.inputs import ShadowReadings, SiteInput
from firstrung.methods.shadows.prediction import (
    PlanSite,
    ShadowConstraints,
    plan_shadows,
    shadow_length_m,
)
from firstrung.methods.shadows.reduction import reduce_shadows
from firstrung.methods.shadows.rehearsal import (
    ShadowErrors,
    reading_times_utc,
    simulate_shadow_readings,
)

ARCSEC = 1.0 / 3600.0
SECOND = 1.0
MM = 0.001

REFERENCE = os.path.join(os.path.dirname(os.path.dirname(__file__)), "reference", "sun_astropy_de421.csv")


def plan_site(id_, lat, lon, elev=0.0, edge="umbra", h=1.0, tz=None):
    return PlanSite(id_, id_.title(), lat, lon, elev, tz, h, 0.001, 0.002, edge)


def test_transits_and_airless_altitudes_match_astropy_de421():
    # Reference: astropy 8 on DE421 (tests/reference/make_sun_astropy.py): transit by the
    # topocentric apparent hour angle, airless AltAz altitude at that instant; five sites in
    # both hemispheres, the tropics and the equator, every 5th day of 2024.
    with open(REFERENCE) as f:
        rows = [r for r in csv.DictReader(f) if r["kind"] == "transit"]
    by_site = {}
    for r in rows:
        by_site.setdefault(r["site"], []).append(r)
    sites = tuple(
        plan_site(name, float(v[0]["latitude_deg"]), float(v[0]["longitude_deg"]), float(v[0]["elevation_m"]))
        for name, v in by_site.items()
    )
    plan = plan_shadows(sites, "2024-01-01", "2024-12-31", ShadowConstraints(min_altitude_deg=-90))
    for j, s in enumerate(sites):
        for r in by_site[s.id]:
            k = int((np.datetime64(r["date"]) - plan.dates[0]).astype(int))
            t_ref = np.datetime64(r["time_utc"].rstrip("Z"), "us")
            assert abs((plan.transit_utc[k, j] - t_ref).astype(float)) / 1e6 < 1.0 * SECOND
            assert plan.altitude_airless_deg[k, j] == pytest.approx(float(r["altitude_deg"]), abs=1.0 * ARCSEC)


def test_refracted_altitude_and_shadow_length_follow_bennett():
    # Meeus (1998) eq. 16.3 (Bennett): at an apparent 20 deg, R = 2.70' at 10 C, 1010 hPa
    # (reference-values section 3). A 1 m gnomon's middle-of-penumbra tip at apparent 45 deg
    # falls 1 m from its foot.
    assert float(shadow_length_m(1.0, 45.0 - 0.995 / 60.0, 0.0, "middle")) == pytest.approx(1.0, abs=0.05 * MM)
    sites = (plan_site("a", 41.0, 7.0), plan_site("b", 46.4, 7.0))
    plan = plan_shadows(sites, "2027-12-21", "2027-12-21", ShadowConstraints(min_altitude_deg=0))
    refraction_arcmin = (plan.altitude_deg - plan.altitude_airless_deg) * 60.0
    # at ~20-25 deg apparent, Bennett gives 2.1-2.7'
    assert np.all((refraction_arcmin > 2.0) & (refraction_arcmin < 2.8))
    # umbra edge: the upper limb, so the shadow is shorter than the centre's
    centre = shadow_length_m(1.0, plan.altitude_airless_deg, 0.0, "middle")
    assert np.all(plan.shadow_m < centre)
    assert np.all(plan.shadow_direction == "north")


def test_expected_radius_is_the_geodesic_meridian_arc_per_radian():
    # GeographicLib (Karney 2013): WGS84 meridian arc from 41 to 46.4 deg per radian of latitude
    sites = (plan_site("a", 41.0, 7.0), plan_site("b", 46.4, 7.0))
    plan = plan_shadows(sites, "2027-03-01", "2027-03-05")
    arc_km = Geodesic.WGS84.Inverse(41.0, 0.0, 46.4, 0.0)["s12"] / 1000.0
    assert plan.expected_radius_km == pytest.approx(arc_km / np.radians(5.4), rel=1e-6)


def test_constraints_rule_days_out_with_reasons_and_special_days_are_marked():
    sites = (plan_site("a", 41.0, 7.0), plan_site("b", 58.9, 10.0), plan_site("t", 20.0, 7.0))
    c = ShadowConstraints(min_altitude_deg=20.0, max_shadow_m=3.0, weekdays=(0, 1, 2, 3, 4),
                          excluded_dates=("2027-06-02",))
    plan = plan_shadows(sites, "2027-01-01", "2027-12-31", c)
    dates = list(plan.dates)
    dec21 = dates.index(np.datetime64("2027-12-21"))  # a Tuesday; Sun 7.6 deg high at 58.9 N
    assert plan.rank[dec21] == 0
    assert any("Sun only" in r and "at b" in r for r in plan.excluded[dec21])
    assert any("longer than the board" in r for r in plan.excluded[dec21])
    sat = dates.index(np.datetime64("2027-06-05"))  # a Saturday
    assert plan.excluded[sat] == ("not a chosen weekday (Saturday)",)
    assert plan.excluded[dates.index(np.datetime64("2027-06-02"))] == ("date excluded by the coordinator",)
    # equinoxes and solstices of 2027 (skyfield almanac on DE421; common knowledge for the dates)
    assert "March equinox" in plan.special[dates.index(np.datetime64("2027-03-20"))]
    assert "June solstice" in plan.special[dates.index(np.datetime64("2027-06-21"))]
    # at 20 N the noon Sun passes the zenith when its declination is 20 deg: about May 21 and July 23
    zenith_days = [str(plan.dates[k]) for k, s in enumerate(plan.special) if any("zenith" in x for x in s)]
    assert len(zenith_days) == 2
    assert abs((np.datetime64(zenith_days[0]) - np.datetime64("2027-05-21")).astype(int)) <= 1
    assert abs((np.datetime64(zenith_days[1]) - np.datetime64("2027-07-23")).astype(int)) <= 1
    # ranks are 1..n over the allowed days, best (smallest sigma) first
    allowed = plan.rank > 0
    assert sorted(plan.rank[allowed]) == list(range(1, int(allowed.sum()) + 1))
    best = int(np.argmax(plan.rank == 1))
    assert plan.sigma_radius_km[best] == pytest.approx(plan.sigma_radius_km[allowed].min())


def test_predicted_sigma_matches_the_scatter_of_simulated_campaigns():
    # The plan's sigma of the radius against the spread of radii reduced from 220 campaigns
    # simulated on that day with the same stated errors (within 20 %, the bar).
    lats, lons = [41.0, 47.5], [7.0, 9.0]
    sites = tuple(plan_site(f"s{i}", la, lo, 200.0) for i, (la, lo) in enumerate(zip(lats, lons, strict=True)))
    plan = plan_shadows(sites, "2027-10-10", "2027-10-10")
    predicted = plan.sigma_radius_km[0]
    rng = np.random.default_rng(11)
    lat, lon, elev = np.array(lats), np.array(lons), np.full(2, 200.0)
    times, pair = reading_times_utc(["2027-10-10"], lat, lon, elev)
    idx = pair % 2
    inputs = tuple(SiteInput(s.id, s.name, s.latitude_deg, s.longitude_deg, s.elevation_m) for s in sites)
    radii = []
    for _ in range(220):
        syn = simulate_shadow_readings(idx, times, lat, lon, elev, np.ones(2), np.array(["umbra"] * 2, dtype=object),
                                       ShadowErrors.stated(0.002, 0.001, clock_sigma_s=30.0), rng)
        k = len(idx)
        readings = ShadowReadings(idx, syn.time_utc, syn.shadow_m, syn.gnomon_m, syn.edge, np.full(k, 0.002),
                                  np.full(k, 0.001), np.full(k, np.nan), np.full(k, np.nan))
        radii.append(reduce_shadows(inputs, readings).earth_radius_km.value)
    assert np.std(radii, ddof=1) == pytest.approx(predicted, rel=0.20)


def test_bad_ranges_and_too_few_sites():
    sites = (plan_site("a", 41.0, 7.0), plan_site("b", 46.4, 7.0))
    with pytest.raises(InputError, match="before --from"):
        plan_shadows(sites, "2027-03-05", "2027-03-01")
    with pytest.raises(InputError, match="two or more sites"):
        plan_shadows(sites[:1], "2027-03-01", "2027-03-05")
