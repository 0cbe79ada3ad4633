"""The Moon, the Sun and a site as vectors, for reducing an observer's Moon to the Earth's centre.

The eclipse reduction uses only the *directions* (and the ratio of the
Moon's distances over a few hours) from these; see
:mod:`firstrung.methods.topocentric_moon`.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from firstrung.constants import ASTRONOMICAL_UNIT_KM, SHADOW_EARTH_RADIUS_KM
from firstrung.ephemeris._core import _body, _prepared_time, as_utc_datetime64, check_in_span
from firstrung.geodesy import geodetic_to_itrs_km


@dataclass(frozen=True)
class ObserverMoon:
    """At each instant: geocentric apparent directions of the Moon and the Sun (true equator of
    date, unit vectors, (3, n)), the Moon's geocentric distance [km] and the site's position
    [Earth equatorial radii, (3, n)]."""

    moon_direction: np.ndarray
    sun_direction: np.ndarray
    moon_distance_km: np.ndarray
    site_earth_radii: np.ndarray


def observer_moon(time_utc, latitude_deg, longitude_deg, elevation_m=0.0) -> ObserverMoon:
    """Directions of the Moon and the Sun and a site's place, at the given instants.

    >>> g = observer_moon(np.array(["2029-06-26T03:22"], "datetime64[s]"), 20.0, -75.5)
    >>> round(float(np.linalg.norm(g.site_earth_radii[:, 0])), 4)
    0.9996
    """
    from skyfield.functions import mxv

    t_utc = np.atleast_1d(as_utc_datetime64(time_utc)).ravel()
    check_in_span(t_utc)
    t = _prepared_time(t_utc)
    e = _body("earth").at(t)
    moon = np.asarray(mxv(t.M, e.observe(_body("moon")).apparent().position.au)).reshape(3, -1) * ASTRONOMICAL_UNIT_KM
    sun = np.asarray(mxv(t.M, e.observe(_body("sun")).apparent().position.au)).reshape(3, -1) * ASTRONOMICAL_UNIT_KM
    gast = np.asarray(t.gast).reshape(-1) * (np.pi / 12.0)
    x, y, z = (np.broadcast_to(np.asarray(c, dtype=float), gast.shape)
               for c in geodetic_to_itrs_km(latitude_deg, longitude_deg, elevation_m))
    # the site in the true equator and equinox of date (ITRS turned by GAST; polar motion, 10 m, left out)
    site = np.stack([x * np.cos(gast) - y * np.sin(gast), x * np.sin(gast) + y * np.cos(gast), z]) / SHADOW_EARTH_RADIUS_KM
    dm = np.sqrt(np.sum(moon**2, axis=0))
    return ObserverMoon(moon / dm, sun / np.sqrt(np.sum(sun**2, axis=0)), dm, site)
