"""The check's hypotheses that move the Sun are first bounded from the logged reading's Sun, and the series
the bound proves hopeless are left out (firstrung.methods.shadows.check_hypotheses).

The bound must hold (the Sun each hypothesis puts at a row is within the stated angle of the derived
place, checked against the check's own Sun and against skyfield's full topocentric pipeline on DE421), and
leaving those series out must change nothing: the flags and diagnoses are those of the check with every
row computed. No test here times anything (speed is measured by ``benchmarks/run.py``).
"""

from __future__ import annotations

import numpy as np
import pytest
from tests.helpers import umbra_rows

from firstrung import ephemeris
from firstrung.angles import wrapped_rad
from firstrung.methods.shadows import check, check_hypotheses
from firstrung.methods.shadows.altitude import penumbra_width_m
from firstrung.methods.shadows.check import CheckSite, check_shadow_rows
from firstrung.methods.shadows.check_statistics import (
    LENGTH_FACTORS,
    _edge_sign,
    _error_terms,
    _observed,
    sun_altitude_rad,
)
from firstrung.methods.shadows.inputs import ShadowReadings
from firstrung.methods.shadows.rehearsal import ShadowErrors, simulate_shadow_readings

ARCSEC_RAD = np.radians(1.0 / 3600.0)
LATITUDES = (-66.0, -33.9, 0.0, 23.4, 46.2, 78.0)
LONGITUDES = (-170.0, -60.0, 7.4, 151.1)
#: (hours, longitude sign, latitude sign) of each single hypothesis that moves the Sun
MOVES = [(h, 1.0, 1.0) for h in (-3, -2, -1, 1, 2, 3)] + [(0, -1.0, 1.0), (0, 1.0, -1.0)]


def _site_times():
    """Every site at times 61 h apart over 2026-2028 (all hour angles, both solstices and equinoxes)."""
    times = np.arange(np.datetime64("2026-01-02T00:00", "ms"), np.datetime64("2028-12-28T00:00", "ms"),
                      np.timedelta64(61, "h")) + np.timedelta64(17, "m")
    lat, lon = (np.array(v, float).repeat(times.size) for v in zip(*[(a, b) for a in LATITUDES for b in LONGITUDES],
                                                                       strict=True))
    return np.tile(times, len(LATITUDES) * len(LONGITUDES)), lat, lon


@pytest.mark.parametrize(("hours", "lon_sign", "lat_sign"), MOVES)
def test_the_moved_sun_is_within_its_bound_of_the_check_and_of_skyfield(hours, lon_sign, lat_sign):
    t, lat, lon = _site_times()
    parts: dict = {}
    _, _, ha, _ = sun_altitude_rad(t, lat, lon, parts=parts)
    shift_s = hours * 3600.0
    hour_angle = ha + shift_s * check_hypotheses._HOUR_ANGLE_RATE_RAD_S
    if lon_sign != 1.0:
        hour_angle = hour_angle - 2.0 * np.radians(lon)
    alt, within, rate_max = check_hypotheses.moved_altitude(parts["sin_term"], parts["cos_factor"], parts["cos_lat"],
                                                            hour_angle, shift_s, lat_sign)
    moved_t = t + np.timedelta64(int(shift_s * 1000), "ms")
    exact, rate, _, _ = sun_altitude_rad(moved_t, lat * lat_sign, lon * lon_sign)
    error = np.abs(exact - alt)
    # the bound holds at every row and is a few arcminutes at most (3 h: 6.5'); for a shift with room (for a
    # sign the bound is the Sun's greatest parallax, which the derived place leaves out)
    assert np.all(error <= within)
    assert hours == 0 or error.max() < 0.9 * np.max(within)
    assert np.max(within) < np.radians(7.0 / 60.0)
    assert np.all(np.abs(rate) <= rate_max)
    # Reference: skyfield's own topocentric apparent altitude (DE421, IAU 2000A nutation, airless), which
    # sun_altitude_rad meets to 2" (it leaves out diurnal aberration, 0.3")
    from skyfield.api import wgs84

    _, _, earth, sun = ephemeris._loaded()
    reference = np.empty(t.size)
    for site_lat, site_lon in {(a, b) for a, b in zip(lat * lat_sign, lon * lon_sign, strict=True)}:
        at = (lat * lat_sign == site_lat) & (lon * lon_sign == site_lon)
        place = earth + wgs84.latlon(site_lat, site_lon)
        reference[at] = place.at(ephemeris._skyfield_time(moved_t[at])).observe(sun).apparent().altaz()[0].radians
    assert np.all(np.abs(reference - alt) <= within + 2.0 * ARCSEC_RAD)


def _campaign_with_mistakes():
    """Sites over both hemispheres, a morning and a noon series at each; half the series with a clock
    shifted, a longitude's or a latitude's sign wrong (as logged) or lengths in another unit, the others clean."""
    rng = np.random.default_rng(11)
    real, logged, parts = [], [], []
    mistakes = [None, (1, 1, 1, 1), None, (-2, 1, 1, 1), None, (0, -1, 1, 1), (0, 1, 1, 100), (3, 1, 1, 1),
                (0, 1, -1, 1), None, (-1, 1, 1, 1), (0, 1, 1, 0.1)]
    for k in range(24):
        lat, lon = -50.0 + 5.1 * k, -160.0 + 13.7 * k
        hours, lon_sign, lat_sign, factor = mistakes[k % len(mistakes)] or (0, 1, 1, 1)
        real.append(CheckSite(f"s{k}", lat, lon, 100.0))
        logged.append(CheckSite(f"s{k}", lat * lat_sign, lon * lon_sign, 100.0))
        for day, offset_min in (("2027-03-20", -150), ("2027-06-21", 0)):
            noon = ephemeris.solar_transit(day, lat, lon).time_utc.astype("datetime64[ms]")
            t = noon + (offset_min + np.arange(-6, 6) * 4) * np.timedelta64(1, "m")
            syn = simulate_shadow_readings(np.zeros(t.size, int), t, [lat], [lon], [100.0], [1.0],
                                           np.array(["umbra"], dtype=object), ShadowErrors(), rng)
            parts.append((np.full(t.size, k), t + np.timedelta64(hours, "h"), syn.shadow_m * factor))
    index, t, shadow = (np.concatenate(p) for p in zip(*parts, strict=True))
    return tuple(logged), umbra_rows(index, t, shadow)


def test_the_unit_bounds_hold_for_every_length_factor():
    # the observed altitude less refraction from 0 to its greatest, the random variance to rounding, and the
    # systematic variance at most its bound, for shadows of every length and each edge and weather
    sites, rows = _campaign_with_mistakes()
    n = len(rows)
    rng = np.random.default_rng(5)
    edge = rng.choice(np.array(["umbra", "middle", "outer"], dtype=object), n)
    measured = rng.random(n) < 0.5
    temperature, pressure = rng.uniform(-30.0, 40.0, n), np.where(measured, rng.uniform(700.0, 1050.0, n), 1013.0)
    sd = np.full(n, 0.267)
    sign = _edge_sign(edge)
    rows = ShadowReadings(rows.site_index, rows.time_utc, rows.shadow_m, rows.gnomon_m * rng.uniform(0.5, 3.0, n),
                          edge, rows.shadow_sigma_m, rows.gnomon_sigma_m, temperature, pressure, file=rows.file,
                          row=rows.row, time_column=rows.time_column, shadow_column=rows.shadow_column,
                          observer=rows.observer)
    pred = np.radians(rng.uniform(5.0, 85.0, n))
    width = penumbra_width_m(rows.gnomon_m, np.clip(np.degrees(pred), 1.0, 89.0), sd)
    systematic_bound = check_hypotheses.unit_systematic_bound(rows, width)
    for factor in LENGTH_FACTORS:
        length = rows.shadow_m / factor
        obs, refraction = _observed(rows, length, sign, sd, temperature, pressure)
        random, systematic = _error_terms(rows, length, np.degrees(pred), sd, refraction, measured, width_m=width)
        residual, within, variance = check_hypotheses.unit_bounds(rows, factor, sign, sd, pred, 1e-8)
        assert np.all(np.abs(obs - pred - residual) <= within)
        assert np.allclose(variance, random + 1e-8, rtol=1e-12, atol=0.0)
        assert np.all(systematic <= systematic_bound)
    # the greatest refraction: Bennett's formula at -1 deg (cot 1.15 deg = 49.8') at -90 C and 1100 hPa
    # (Meeus 1998, eq. 16.3 and 16.4's scaling): 49.8' x 1.684 = 1.398 deg
    assert check_hypotheses._refraction_max_deg() == pytest.approx(1.398, abs=0.001)


def test_series_left_out_by_the_bound_change_no_flag_or_diagnosis(monkeypatch):
    sites, rows = _campaign_with_mistakes()
    left_out = []
    bounded = check_hypotheses._Screen.hopeless

    def counted(self, *args, **kwargs):
        hopeless = bounded(self, *args, **kwargs)
        left_out.append(int(hopeless.sum()))
        return hopeless

    parts = []  # the hypotheses computed on part of the rows
    exact = check_hypotheses._exact_rows

    def exact_rows(*args):
        parts.append(exact(*args))
        return parts[-1]

    tried = []

    def kept(*args, **kwargs):
        tried.append(single(*args, **kwargs))
        return tried[-1]

    single = check._single_hypotheses
    monkeypatch.setattr(check, "_single_hypotheses", kept)
    monkeypatch.setattr(check_hypotheses._Screen, "hopeless", counted)
    monkeypatch.setattr(check_hypotheses, "_exact_rows", exact_rows)
    screened = check_shadow_rows(sites, rows)
    assert sum(left_out) > 0 and parts  # the bound did leave series out, and some hypotheses ran on a part
    monkeypatch.setattr(check_hypotheses._Screen, "hopeless",
                        lambda self, *args, **kwargs: np.zeros(self.count.size, bool))
    every = check_shadow_rows(sites, rows)
    assert screened.flags == every.flags
    assert screened.series == every.series
    # each hypothesis' statistic, separation and fit, series by series, are the same numbers to the last bit
    (stats, fits, separations), (stats_all, fits_all, separations_all) = tried
    for k in range(len(stats)):
        assert (stats[k] is None) == (stats_all[k] is None)
        assert np.array_equal(separations[k], separations_all[k])
        if stats[k] is not None:
            assert np.array_equal(stats[k], stats_all[k])
            for name in ("level_rad", "level_sigma_rad", "clock_s", "mean_square"):
                assert np.array_equal(getattr(fits[k], name), getattr(fits_all[k], name), equal_nan=True)
    # the mistakes are found (the comparison covers explained series, not only clean ones)
    codes = {f.code for f in screened.flags}
    assert {"time-shift-hours", "longitude-sign", "latitude-sign", "length-unit"} <= codes


def test_the_hour_angle_is_wrapped_as_by_the_complex_exponential():
    # sun_altitude_rad wraps the hour angle with arctan2(sin, cos): the same numbers as np.angle(np.exp(1j x)),
    # whose complex exponential is that cosine and sine (numpy's own identity, held here on this platform);
    # the check's hour angles run from -2 pi to 4 pi before the wrap
    x = np.concatenate([np.linspace(-2.0 * np.pi, 4.0 * np.pi, 200_001),
                        np.random.default_rng(3).uniform(-2.0 * np.pi, 4.0 * np.pi, 200_000)])
    assert np.array_equal(np.arctan2(np.sin(x), np.cos(x)), np.angle(np.exp(1j * x)))
    assert np.array_equal(wrapped_rad(x), np.angle(np.exp(1j * x)))  # the project's one wrap
    t, lat, lon = _site_times()
    _, _, ha, _ = sun_altitude_rad(t, lat, lon)
    assert np.all((-np.pi <= ha) & (ha <= np.pi))
