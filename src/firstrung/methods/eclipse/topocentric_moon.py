"""An observer's Moon reduced to the Earth's centre: the measured rate and diameter are topocentric.

Seen from a site, the Moon is nearer than from the Earth's centre (by up to
one Earth radius in sixty), so it looks up to 1.7 % larger (augmentation);
and the site turns with the Earth, so the Moon's rate against the stars seen
from it is 25-45 % lower than the geocentric rate during a night-time
eclipse. The eclipse reduction needs the geocentric values. Both
corrections depend on the Moon's distance in Earth radii, which is what the
reduction measures; the caller iterates (the distance found gives the
corrections, which give the distance) until it settles.

Only *directions* and the site's place enter from the ephemeris: the Moon's
direction and the direction of its motion, the Sun's motion (the shadow's),
and the ratio of the Moon's distances at the two ends of the interval (it
changes by under 0.5 % in hours); the size of the geocentric motion and the
distance are unknowns solved for.

Vectors are (3, n) arrays in one frame (the true equator of date), sites in
Earth equatorial radii. Pure functions: no ephemeris is called here.
"""

from __future__ import annotations

import math

import numpy as np

from firstrung.errors import ComputationError


def _unit(v):
    v = np.asarray(v, dtype=float)
    return v / np.sqrt(np.sum(v * v, axis=0))


def _rotate(u, axis, angle_rad):
    """Rodrigues' rotation of the unit vector u about the unit axis (perpendicular to u)."""
    return u * math.cos(angle_rad) + np.cross(axis, u) * math.sin(angle_rad)


def topocentric_arc_rad(distance_earth_radii, geocentric_arc_rad, moon_direction, site_earth_radii, distance_ratio):
    """The angle a site sees the Moon move through between two instants [rad].

    Parameters
    ----------
    distance_earth_radii : float
        The Moon's geocentric distance at the middle of the interval [Earth radii].
    geocentric_arc_rad : float
        The angle the Moon moves through seen from the Earth's centre [rad].
    moon_direction : (3, 2) array
        The Moon's geocentric directions at the two instants (only the middle
        direction and the plane of the motion are used).
    site_earth_radii : (3, 2) array
        The site's position at the two instants [Earth radii].
    distance_ratio : (2,) array
        The Moon's distance at each instant over that at the middle [1].

    Examples
    --------
    A site at the Earth's centre sees the geocentric arc:

    >>> u = np.array([[1.0, 0.999], [0.0, 0.0447], [0.0, 0.0]])
    >>> round(topocentric_arc_rad(60.0, 0.01, u, np.zeros((3, 2)), np.ones(2)), 6)
    0.01
    """
    u = _unit(moon_direction)
    mid = _unit(u[:, 0] + u[:, 1])
    axis = _unit(np.cross(u[:, 0], u[:, 1]))
    a = distance_earth_radii * distance_ratio[0] * _rotate(mid, axis, -geocentric_arc_rad / 2) - site_earth_radii[:, 0]
    b = distance_earth_radii * distance_ratio[1] * _rotate(mid, axis, geocentric_arc_rad / 2) - site_earth_radii[:, 1]
    return math.atan2(float(np.linalg.norm(np.cross(a, b))), float(np.dot(a, b)))


def geocentric_rate_from_sky_rate(sky_rate_deg_per_h, distance_earth_radii, moon_direction, sun_direction,
                                  site_earth_radii, interval_h, distance_ratio):
    """The Moon's geocentric rates from the rate against the stars a site measured over an interval.

    Solves for the geocentric arc whose topocentric image over the
    observer's interval is the measured one, then takes away the shadow's
    own motion (the antisolar point's, of the date, as a vector on the sky).

    Parameters
    ----------
    sky_rate_deg_per_h : float
        The rate the observers measured against the stars [deg/h].
    distance_earth_radii : float
        The Moon's geocentric distance (the current estimate) [Earth radii].
    moon_direction, sun_direction : (3, 2) array
        Geocentric directions of the Moon and the Sun at the interval's ends.
    site_earth_radii : (3, 2) array
        The site at the interval's ends [Earth radii].
    interval_h : float
        Length of the interval [h].
    distance_ratio : (2,) array
        The Moon's distance at each end over that at the middle [1].

    Returns
    -------
    (float, float)
        The geocentric rate against the stars and the rate relative to the
        Earth's shadow [deg/h].

    Examples
    --------
    From the Earth's centre, the sky rate less the Sun's 0.04 deg/h (motions parallel):

    >>> u = np.array([[1.0, math.cos(0.0087)], [0.0, math.sin(0.0087)], [0.0, 0.0]])
    >>> s = np.array([[-1.0, -math.cos(0.0007)], [0.0, -math.sin(0.0007)], [0.0, 0.0]])
    >>> g, v = geocentric_rate_from_sky_rate(0.4985, 60.0, u, s, np.zeros((3, 2)), 1.0, np.ones(2))
    >>> round(g, 4), round(v, 4)
    (0.4985, 0.4584)
    """
    from scipy.optimize import brentq

    target = math.radians(float(sky_rate_deg_per_h) * float(interval_h))
    if not target > 0:
        raise ComputationError("the Moon's sky rate must be positive")

    def miss(arc):
        return topocentric_arc_rad(distance_earth_radii, arc, moon_direction, site_earth_radii, distance_ratio) - target

    hi = 4.0 * target
    while miss(hi) < 0:
        hi *= 2.0
        if hi > 1.0:
            raise ComputationError("the Moon's sky rate cannot be reduced to the Earth's centre from this site")
    arc = brentq(miss, 0.0, hi, xtol=1e-13, rtol=1e-12)
    u = _unit(moon_direction)
    mid = _unit(u[:, 0] + u[:, 1])
    axis = _unit(np.cross(u[:, 0], u[:, 1]))
    moon_velocity = np.cross(axis, mid) * arc / interval_h  # rad/h, tangent at the Moon
    anti = -_unit(sun_direction)
    shadow_velocity = (anti[:, 1] - anti[:, 0]) / interval_h
    shadow_velocity -= mid * np.dot(shadow_velocity, mid)  # its part on the sky at the Moon
    relative = moon_velocity - shadow_velocity
    return math.degrees(arc / interval_h), math.degrees(float(np.linalg.norm(relative)))


def geocentric_over_topocentric(distance_earth_radii, moon_direction, site_earth_radii):
    """The Moon's distance from a site over its geocentric distance, rho / D [1].

    A measured angular size (or an angular rate relative to the shadow, which
    lies at the Moon's distance) times this is the geocentric one.

    >>> round(float(geocentric_over_topocentric(60.0, np.array([0.0, 0.0, 1.0]), np.array([0.0, 0.0, 1.0]))), 5)
    0.98333
    """
    u = _unit(np.asarray(moon_direction, dtype=float).reshape(3, -1))
    s = np.asarray(site_earth_radii, dtype=float).reshape(3, -1)
    rho = np.sqrt(np.sum((distance_earth_radii * u - s) ** 2, axis=0))
    out = rho / distance_earth_radii
    return float(out[0]) if out.size == 1 else out
