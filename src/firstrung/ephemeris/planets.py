"""Mercury and Venus beside the Sun, from DE421, for the transit rung.

Two levels, both for flat arrays of instants given as TT Julian dates:

- :func:`geometric_planet_and_sun_km`: geometric geocentric vectors (no light
  time), cheap, for the search of inferior conjunctions over decades;
- :func:`apparent_planet_and_sun_of_date_km`: apparent geocentric vectors
  (light time, deflection, annual aberration, as skyfield's ``apparent``) in
  the true equator and equinox of date, and the Greenwich apparent sidereal
  time, for the contacts.

DE421 holds the barycentres of Mercury and Venus; neither planet has a moon,
so each barycentre is the planet's centre. Nutation is the IAU 2000B series
(<= 0.001" from 2000A; McCarthy & Luzum 2003, Celest. Mech. 85:37).
"""

from __future__ import annotations

import numpy as np

from firstrung.constants import ASTRONOMICAL_UNIT_KM
from firstrung.ephemeris._core import _body, _utc_datetime64, timescale

#: DE421 targets of the inferior planets.
PLANET_TARGETS = {"mercury": "mercury barycenter", "venus": "venus barycenter"}


def _target(planet: str):
    if planet not in PLANET_TARGETS:
        raise KeyError(planet)
    return _body(PLANET_TARGETS[planet])


def tt_jd_of_utc(time_utc) -> np.ndarray:
    """TT Julian dates of UTC datetime64 instants (leap seconds honoured)."""
    from firstrung.ephemeris._core import _skyfield_time

    return np.asarray(_skyfield_time(np.asarray(time_utc, dtype="datetime64[us]").reshape(-1)).tt, dtype=float)


def utc_of_tt_jd(tt_jd) -> np.ndarray:
    """UTC datetime64[us] of TT Julian dates."""
    return _utc_datetime64(timescale().tt_jd(np.asarray(tt_jd, dtype=float).reshape(-1)))


def geometric_planets_and_sun_km(planets, tt_jd) -> tuple[dict, np.ndarray]:
    """Geometric geocentric vectors of planets and of the Sun (ICRF, no light time) [km], (3, n).

    The Earth's and the Sun's places are computed once for all the planets.
    """
    t = timescale().tt_jd(np.asarray(tt_jd, dtype=float).reshape(-1))
    earth = np.asarray(_body("earth").at(t).position.km).reshape(3, -1)
    sun_km = np.asarray(_body("sun").at(t).position.km).reshape(3, -1) - earth
    out = {p: np.asarray(_target(p).at(t).position.km).reshape(3, -1) - earth for p in planets}
    return out, sun_km


def apparent_planet_and_sun_of_date_km(planet: str, tt_jd) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Apparent geocentric planet and Sun, true equator and equinox of date, and GAST.

    Parameters
    ----------
    planet : {"mercury", "venus"}
    tt_jd : array_like
        Instants as TT Julian dates [d].

    Returns
    -------
    planet_km, sun_km : numpy.ndarray, shape (3, n)
        Position vectors [km].
    gast_rad : numpy.ndarray, shape (n,)
        Greenwich apparent sidereal time [rad].
    """
    from skyfield.functions import mxv
    from skyfield.nutationlib import iau2000b_radians

    t = timescale().tt_jd(np.asarray(tt_jd, dtype=float).reshape(-1))
    t._nutation_angles_radians = iau2000b_radians(t)
    e = _body("earth").at(t)
    planet = e.observe(_target(planet)).apparent()
    sun = e.observe(_body("sun")).apparent()
    planet_km = np.asarray(mxv(t.M, planet.position.au)).reshape(3, -1) * ASTRONOMICAL_UNIT_KM
    sun_km = np.asarray(mxv(t.M, sun.position.au)).reshape(3, -1) * ASTRONOMICAL_UNIT_KM
    gast_rad = np.asarray(t.gast, dtype=float).reshape(-1) * (np.pi / 12.0)
    return planet_km, sun_km, gast_rad


__all__ = [
    "PLANET_TARGETS",
    "apparent_planet_and_sun_of_date_km",
    "geometric_planets_and_sun_km",
    "tt_jd_of_utc",
    "utc_of_tt_jd",
]
