"""Regenerate dichotomy_astropy_de421.csv: true half moons from astropy, as the independent reference.

astropy reads the same DE421 file (from the skyfield-data package) with
``solar_system_ephemeris.set(path)``; the geometric (instantaneous) barycentric
positions of the Earth, the Moon and the Sun come from
``get_body_barycentric``; the observer's position is ``EarthLocation.get_gcrs``
(ERFA: IAU 2006/2000A precession-nutation, UT1 and polar motion from astropy's
bundled IERS-B table, no download: ``iers.conf.auto_download = False``).
None of firstrung's or skyfield's code is used.

For each first and last quarter of 2025 (started from where the geocentric
Sun-Moon angle crosses 90 deg, sampled every 6 h), the time when the Sun-Moon-Earth angle (geocentric) and the
Sun-Moon-observer angle (each invented site) is 90 deg is found by the secant
method to 1 ms. The angle is the physical one, in the Moon's own frame: the
sunlight that reaches the Moon (light time from the Sun, aberration by the
Moon's barycentric velocity) against the light it sends to the observer
(first-order special relativity, computed here in the barycentric frame).
Written: the geocentric and the per-site instants (UTC), and the triangle's
Sun-Moon angle seen from the Earth's centre / the site at that instant (the
Sun where the light reaching the Moon left it, the Moon geometric).

Run: python tests/reference/make_dichotomy_astropy.py  (about half a minute).
"""

from __future__ import annotations

import csv
import os

import numpy as np
import skyfield_data
from astropy import units as u
from astropy.coordinates import (
    EarthLocation,
    get_body_barycentric,
    get_body_barycentric_posvel,
    solar_system_ephemeris,
)
from astropy.time import Time
from astropy.utils import iers

iers.conf.auto_download = False

SITES = [  # invented sites: mid-northern, southern, tropical, high
    ("ridge", 46.2, 7.4, 620.0),
    ("harbour", -33.9, 151.1, 40.0),
    ("isle", 15.5, -61.3, 300.0),
    ("plateau", 62.4, -114.4, 200.0),
]
HERE = os.path.dirname(os.path.abspath(__file__))
OUT = os.path.join(HERE, "dichotomy_astropy_de421.csv")


def _angle_deg(a, b):
    cross = np.cross(a, b, axis=0)
    return np.degrees(np.arctan2(np.linalg.norm(cross, axis=0), np.sum(a * b, axis=0)))


def _bodies_km(t):
    earth = get_body_barycentric("earth", t).xyz.to_value(u.km)
    moon = get_body_barycentric("moon", t).xyz.to_value(u.km)
    sun = get_body_barycentric("sun", t).xyz.to_value(u.km)
    return earth, moon, sun


C_KM_S = 299_792.458  # speed of light, SI (exact)


def _unit(v):
    return v / np.linalg.norm(v, axis=0)


def _retarded_sun_km(t, receiver_km):
    """The Sun's barycentric position when the light reaching ``receiver_km`` at t left it (light time iterated)."""
    tau = np.linalg.norm(get_body_barycentric("sun", t).xyz.to_value(u.km) - receiver_km, axis=0) / C_KM_S
    for _ in range(3):
        sun = get_body_barycentric("sun", t - tau * u.s).xyz.to_value(u.km)
        tau = np.linalg.norm(sun - receiver_km, axis=0) / C_KM_S
    return sun


def _observer_km(t, location):
    earth = get_body_barycentric("earth", t).xyz.to_value(u.km)
    return earth if location is None else earth + location.get_gcrs(t).cartesian.xyz.to_value(u.km)


def _phase_angle_deg(t, location):
    """The Sun-Moon-observer angle in the Moon's own frame: the sunlight arriving there (light time from
    the Sun, aberration by the Moon's barycentric velocity) against the light leaving for the observer
    (aimed at where the observer will be 1.3 s later, aberrated by the same velocity the other way)."""
    moon_pv = get_body_barycentric_posvel("moon", t)
    moon = moon_pv[0].xyz.to_value(u.km)
    beta = moon_pv[1].xyz.to_value(u.km / u.s) / C_KM_S
    to_sun = _unit(_retarded_sun_km(t, moon) - moon)
    to_sun = _unit(to_sun + beta - np.sum(to_sun * beta, axis=0) * to_sun)
    tau = np.linalg.norm(_observer_km(t, location) - moon, axis=0) / C_KM_S
    out = _unit(_observer_km(t + tau * u.s, location) - moon)
    out = _unit(out - beta + np.sum(out * beta, axis=0) * out)
    return _angle_deg(to_sun, out)


def _elongation_deg(t, location):
    """The triangle's angle at the observer: the Sun where the light reaching the Moon left it, in the
    Earth's frame (the geocentric Sun at the retarded time), and the Moon's geometric place."""
    earth, moon, _ = _bodies_km(t)
    sun = _retarded_sun_km(t, moon)
    tau = np.linalg.norm(sun - moon, axis=0) / C_KM_S
    sun_geocentric = sun - get_body_barycentric("earth", t - tau * u.s).xyz.to_value(u.km)
    observer = _observer_km(t, location) - earth
    return _angle_deg(sun_geocentric - observer, moon - earth - observer)


def _solve(guess, location):
    """Secant iterations on the phase angle - 90 deg, all quarters at once."""
    t0 = guess
    t1 = guess + 600 * u.s
    f0 = _phase_angle_deg(t0, location) - 90.0
    for _ in range(30):
        f1 = _phase_angle_deg(t1, location) - 90.0
        with np.errstate(divide="ignore", invalid="ignore"):
            step = -f1 * (t1 - t0).to_value(u.s) / (f1 - f0)
        step = np.where(np.isfinite(step), step, 0.0)
        t0, f0 = t1, f1
        t1 = t1 + step * u.s
        if np.max(np.abs(step)) < 1e-3:
            break
    return t1


def main() -> None:
    path = os.path.join(os.path.dirname(skyfield_data.__file__), "data", "de421.bsp")
    solar_system_ephemeris.set(path)
    quarters = []
    start = Time("2025-01-01T00:00:00", scale="utc")
    grid = start + np.arange(0, 366 * 4) * 6 * u.hour
    earth, moon, sun = _bodies_km(grid)
    # starting guesses: the geocentric Sun-Moon angle crosses 90 deg (first quarter while it
    # grows, last while it shrinks), sampled every 6 h
    elong = _angle_deg(sun - earth, moon - earth)
    crossing = np.flatnonzero((elong[:-1] - 90.0) * (elong[1:] - 90.0) < 0)
    for k in crossing:
        kind = "first" if elong[k + 1] > elong[k] else "last"
        quarters.append((kind, grid[k] + 3 * u.hour))
    kinds = [q[0] for q in quarters]
    guess = Time([q[1] for q in quarters])
    rows = []
    geo = _solve(guess, None)
    geo_e = _elongation_deg(geo, None)
    for name, lat, lon, elev in [("geocentre", None, None, None), *SITES]:
        if name == "geocentre":
            times, elongation = geo, geo_e
        else:
            loc = EarthLocation.from_geodetic(lon * u.deg, lat * u.deg, elev * u.m)
            times = _solve(geo, loc)
            elongation = _elongation_deg(times, loc)
        for k in range(len(kinds)):
            rows.append({
                "site": name,
                "latitude_deg": "" if lat is None else lat,
                "longitude_deg": "" if lon is None else lon,
                "elevation_m": "" if elev is None else elev,
                "quarter": kinds[k],
                "dichotomy_utc": times[k].utc.isot + "Z",
                "elongation_deg": f"{elongation[k]:.8f}",
            })
    with open(OUT, "w", newline="") as f:
        w = csv.DictWriter(f, fieldnames=list(rows[0]))
        w.writeheader()
        w.writerows(rows)
    print(f"wrote {len(rows)} rows to {OUT}")


if __name__ == "__main__":
    main()
