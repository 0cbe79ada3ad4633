"""The Sun from firstrung's ephemeris module against independent references.

Published-value checks: astropy (an independent reduction pipeline, ERFA,
reading the same DE421 file) in tests/reference/sun_astropy_de421.csv, made
by tests/reference/make_sun_astropy.py; skyfield's own full topocentric
pipeline (IAU 2000A nutation) as a second check of the numpy topocentric step.
"""

from __future__ import annotations

import csv
import datetime as dt
import os
import subprocess
import sys

import numpy as np
import pytest

from firstrung import ephemeris
from firstrung.errors import EphemerisRangeError, InputError

ARCSEC = 1.0 / 3600.0  # deg
SECOND = 1.0  # s

HERE = os.path.dirname(os.path.dirname(__file__))


def _reference_rows():
    with open(os.path.join(HERE, "reference", "sun_astropy_de421.csv")) as f:
        return list(csv.DictReader(f))


def _columns(rows, kind=None):
    rows = [r for r in rows if kind is None or r["kind"] == kind]
    lat = np.array([float(r["latitude_deg"]) for r in rows])
    lon = np.array([float(r["longitude_deg"]) for r in rows])
    elev = np.array([float(r["elevation_m"]) for r in rows])
    t = np.array([r["time_utc"].rstrip("Z") for r in rows], dtype="datetime64[us]")
    alt = np.array([float(r["altitude_deg"]) for r in rows])
    az = np.array([float(r["azimuth_deg"]) for r in rows])
    dates = np.array([r["date"] for r in rows], dtype="datetime64[D]")
    return lat, lon, elev, t, alt, az, dates


def test_airless_altitude_matches_astropy_de421():
    # Reference: astropy 8 AltAz(pressure=0) on DE421, five sites in both hemispheres,
    # the tropics and at the equator, every 5th day of 2024, at transit and 2 h before.
    # DESIGN section 7: the two pipelines agree to 0.3" median without polar motion;
    # astropy applies light deflection by the Sun to the Sun itself on some dates (up to 5").
    lat, lon, elev, t, alt, az, _ = _columns(_reference_rows())
    p = ephemeris.sun_position(t, lat, lon, elev)
    diff = np.abs(p.altitude_deg - alt)
    assert np.median(diff) < 1.0 * ARCSEC
    assert diff.max() < 6.0 * ARCSEC
    daz = np.abs((p.azimuth_deg - az + 180.0) % 360.0 - 180.0) * np.cos(np.radians(alt))
    assert np.median(daz) < 1.0 * ARCSEC


def test_transit_matches_astropy_de421():
    # Reference: astropy topocentric apparent hour angle (TETE) brought to zero, 2024.
    lat, lon, elev, t, _, _, dates = _columns(_reference_rows(), "transit")
    tr = ephemeris.solar_transit(dates, lat, lon, elev)
    dt_s = np.abs((tr.time_utc - t).astype("timedelta64[us]").astype(float)) / 1e6
    assert np.median(dt_s) < 1.0 * SECOND
    assert dt_s.max() < 1.0 * SECOND


def test_topocentric_step_matches_skyfield_full_pipeline():
    # Reference: skyfield's own topocentric apparent alt/az (IAU 2000A nutation,
    # observer-centred light time and aberration), a general-purpose library.
    from skyfield.api import wgs84

    ts, eph, earth, sun = ephemeris._loaded()
    times = np.arange(np.datetime64("2026-01-01T00:00"), np.datetime64("2026-12-31T00:00"), np.timedelta64(97, "h"))
    site = wgs84.latlon(-33.9, 151.1, elevation_m=40.0)
    t = ephemeris._skyfield_time(times)
    alt_ref, az_ref, _ = (earth + site).at(t).observe(sun).apparent().altaz()
    p = ephemeris.sun_position(times, -33.9, 151.1, 40.0)
    assert np.max(np.abs(p.altitude_deg - alt_ref.degrees)) < 0.5 * ARCSEC


def test_scalar_array_and_broadcast_shapes():
    p = ephemeris.sun_position("2027-03-20T11:40:00Z", 46.2, 7.4, 620.0)
    assert np.shape(p.altitude_deg) == ()
    times = np.array(["2027-03-20T11:00", "2027-03-20T12:00"], dtype="datetime64[s]")
    q = ephemeris.sun_position(times[:, None], np.array([46.2, -33.9, 0.0])[None, :], 7.4)
    assert q.altitude_deg.shape == (2, 3)
    # the same instant and site as a scalar call gives the same value
    r = ephemeris.sun_position(times[0], -33.9, 7.4)
    assert q.altitude_deg[0, 1] == pytest.approx(float(r.altitude_deg), abs=1e-9)


def test_semidiameter_follows_distance():
    # Meeus (1998) ch. 55 / reference-values section 1: 959.63" at 1 au (Auwers).
    p = ephemeris.sun_position(np.array(["2027-01-03T12:00", "2027-07-05T12:00"], dtype="datetime64[s]"), 0.0, 0.0)
    assert p.semidiameter_deg * 3600 * p.distance_au == pytest.approx([959.63, 959.63], abs=1e-9)
    # perihelion in early January, aphelion in early July (common knowledge)
    assert p.semidiameter_deg[0] * 3600 == pytest.approx(975.9, abs=0.5)
    assert p.semidiameter_deg[1] * 3600 == pytest.approx(943.8, abs=0.5)


def test_times_outside_the_ephemeris_are_refused():
    with pytest.raises(EphemerisRangeError, match="outside the ephemeris: DE421 covers 1899-07-29 to 2053-10-08"):
        ephemeris.sun_position(np.array(["2060-06-01T12:00"], dtype="datetime64[s]"), 10.0, 10.0)
    with pytest.raises(EphemerisRangeError):
        ephemeris.solar_transit("1850-06-01", 10.0, 10.0)


def test_naive_times_are_refused_aware_times_accepted():
    with pytest.raises(InputError, match="naive"):
        ephemeris.sun_position(dt.datetime(2027, 3, 20, 12, 0), 46.2, 7.4)
    with pytest.raises(InputError):
        ephemeris.as_utc_datetime64("2027-03-20T12:00:00")
    aware = dt.datetime(2027, 3, 20, 13, 0, tzinfo=dt.timezone(dt.timedelta(hours=1)))
    assert str(ephemeris.as_utc_datetime64(aware)) == "2027-03-20T12:00:00.000000"


def test_bad_latitude_refused():
    with pytest.raises(InputError, match="latitude_deg"):
        ephemeris.sun_position("2027-03-20T12:00:00Z", 95.0, 7.4)


def test_transit_iteration_handles_date_line_and_polar_summer():
    # Sites near +/-180 deg longitude: the transit falls on the site's own civil date.
    tr = ephemeris.solar_transit(np.array(["2027-06-21"], dtype="datetime64[D]"), [-41.3, 64.0], [179.5, -179.5])
    local = tr.time_utc + (np.array([179.5, -179.5]) / 15 * 3600e6).astype("timedelta64[us]")
    assert np.all(local.astype("datetime64[D]") == np.datetime64("2027-06-21"))
    p = ephemeris.sun_position(tr.time_utc, [-41.3, 64.0], [179.5, -179.5])
    assert np.all(np.abs(p.hour_angle_deg) < 0.01 * ARCSEC * 15)


def test_expiry_warning_of_the_data_package_never_reaches_the_user():
    # skyfield-data warns that its bundled finals file has expired; firstrung must silence it.
    code = (
        "import warnings, numpy as np\n"
        "warnings.simplefilter('error')\n"
        "from firstrung import ephemeris\n"
        "ephemeris.solar_transit('2027-03-20', 46.2, 7.4)\n"
        "print('ok')\n"
    )
    out = subprocess.run([sys.executable, "-W", "error", "-c", code], capture_output=True, text=True, timeout=120)
    assert out.returncode == 0, out.stderr
    assert "expired" not in out.stderr
    assert out.stdout.strip() == "ok"


def test_interpolated_geocentric_sun_matches_direct_skyfield():
    # The hourly grid with 4-point Lagrange interpolation against skyfield at each time
    # (regression-style check of our own shortcut; tolerance far below the 1" product need).
    from firstrung.ephemeris import sun as sun_module

    rng = np.random.default_rng(7)
    year = np.datetime64("2027-01-01T00:00", "us") + (rng.uniform(0, 200 * 86400, 20000) * 1e6).astype("timedelta64[us]")
    # and a dense set across the leap second at the end of 2016 (TT-UTC changes by 1 s)
    leap = np.datetime64("2016-12-30T00:00", "us") + (rng.uniform(0, 4 * 86400, 2000) * 1e6).astype("timedelta64[us]")
    for t in (year, leap):
        nodes = (t.max() - t.min()).astype("timedelta64[h]").astype(int) + 48
        assert t.size > sun_module._GRID_MIN_GAIN * nodes  # the grid path is the one tested
        _compare_with_direct(sun_module, t)


def _compare_with_direct(sun_module, t):
    xyz, gast = sun_module._geocentric_sun(t)
    tt = ephemeris._core._prepared_time(t)
    xyz_ref, gast_ref = sun_module._direct_geocentric_sun(tt)
    u, v = xyz / np.linalg.norm(xyz, axis=0), xyz_ref / np.linalg.norm(xyz_ref, axis=0)
    angle = np.degrees(np.arccos(np.clip(np.sum(u * v, axis=0), -1.0, 1.0)))
    assert angle.max() < 0.02 * ARCSEC
    assert np.max(np.abs(np.angle(np.exp(1j * (gast - gast_ref))))) < np.radians(0.01 * ARCSEC)


def test_a_few_times_asked_again_are_computed_once_with_the_same_numbers(monkeypatch):
    """A check's hypotheses and the collection point's batches ask for the Sun at the same few times
    again: skyfield is called once for them, and the answer is the same to the bit (and a copy, so a
    caller that changes it changes nothing for the next)."""
    from firstrung.ephemeris import sun as sun_module

    monkeypatch.setattr(sun_module, "_RECENT_DIRECT", {})
    calls = []
    direct = sun_module._direct_geocentric_sun

    def counted(t):
        calls.append(1)
        return direct(t)

    monkeypatch.setattr(sun_module, "_direct_geocentric_sun", counted)
    t = np.array(["2027-03-20T11:38", "2027-03-20T12:05", "2027-06-21T10:00"], dtype="datetime64[us]")
    xyz1, gast1 = sun_module._geocentric_sun(t)
    xyz1[:] = 0.0  # the caller's copy
    xyz2, gast2 = sun_module._geocentric_sun(t.copy())
    xyz3, gast3 = sun_module._geocentric_sun(t + np.timedelta64(1, "s"))
    assert len(calls) == 2
    ref_xyz, ref_gast = direct(ephemeris._core._prepared_time(t))
    assert np.array_equal(xyz2, ref_xyz) and np.array_equal(gast2, gast1) and not np.array_equal(xyz3, xyz2)


def test_grid_preferred_serves_a_few_times_from_kept_day_grids(monkeypatch):
    """Within grid_preferred (the collection point's writer), a few times over several days come from
    one grid per day, computed once: the direct place to 0.02" (our own shortcut, as above), and a later
    call with other times on the same days calls skyfield no more."""
    from firstrung.ephemeris import sun as sun_module

    monkeypatch.setattr(sun_module, "_DAY_GRIDS", {})
    calls = []
    nodes = sun_module._grid_nodes

    def counted(tt):
        calls.append(len(tt))
        return nodes(tt)

    monkeypatch.setattr(sun_module, "_grid_nodes", counted)
    rng = np.random.default_rng(11)
    t = np.datetime64("2027-03-18T00:00", "us") + (rng.uniform(0, 5 * 86400, 12) * 1e6).astype("timedelta64[us]")
    with sun_module.grid_preferred():
        _compare_with_direct(sun_module, t)
        assert len(calls) == 1 and calls[0] % sun_module._DAY_NODES == 0
        _compare_with_direct(sun_module, t[:5] + np.timedelta64(600, "s"))
    assert len(calls) == 1
    assert not getattr(sun_module._PREFER_GRID, "on", False)  # only within the block
