"""Quarters, true half moon (dichotomy) and the Sun-Moon geometry seen from a site.

Three instants are distinguished:

- **quadrature** (the almanac's first or last quarter): the Moon's apparent
  ecliptic longitude of date exceeds the Sun's by 90 or 270 deg, as seen
  from the Earth's centre; the definition skyfield's ``almanac.moon_phases``
  and the national almanacs use;
- **geocentric dichotomy**: the Sun-Moon-Earth angle (the phase angle) is
  90 deg, with the Sun where the light lighting the Moon left it (its
  apparent place: light time and aberration) and the Moon geometric. It
  comes 15-20 min before first quarter and 16-22 min after last quarter,
  because the Sun is at a finite distance (Aristarchus' triangle);
- **topocentric dichotomy**: the Sun-Moon-observer angle is 90 deg. The
  Moon's parallax (about 1 deg) moves it by up to about +/- 2 h from the
  geocentric instant, so each site has its own half moon.

Every triangle takes the Sun where its light left it (the apparent Sun,
about 20" from the geometric one along the ecliptic): the terminator is
drawn by that light, so the physical half moon comes 40-70 s before the
geometric one, and an elongation measured at the half moon includes the
same 20" (which is 4 % of the distance ratio). With that Sun the angle at
the Moon is 90 deg and ``1 / cos E`` is the ratio of the distances. Apparent
places with parallax and refraction are used for what an observer sees:
altitudes and a measured angle.

The light time from the Moon (1.3 s) is neglected in the phase angle: the
terminator an observer sees moves by far less in that time than any
judgement of half phase can resolve.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from firstrung.constants import EARTH_ROTATION_RATE_RAD_PER_S, SPEED_OF_LIGHT_KM_PER_S
from firstrung.ephemeris._core import _body, _prepared_time, as_utc_datetime64, check_in_span
from firstrung.ephemeris.moon import _angle_deg, sun_moon_geocentric
from firstrung.errors import InputError
from firstrung.geodesy import geodetic_to_itrs_km

__all__ = [
    "Quarters",
    "geocentric_dichotomy_utc",
    "quadratures_between",
    "quarters_between",
    "time_of_elongation_utc",
    "topocentric_dichotomy_utc",
    "topocentric_quadrature_utc",
]

#: Sampling step of the quadrature search [h]: the longitude difference moves
#: about 3 deg in that time, so every crossing of 90 or 270 deg is bracketed.
_QUADRATURE_STEP_H = 6.0
#: Time step of the numerical derivative in the Newton iterations [s].
_DERIVATIVE_STEP_S = 60.0
#: Newton iterations stop when every step is below this [s].
_NEWTON_TOLERANCE_S = 0.01
#: Most Newton iterations; from the starting guesses used here 3-4 suffice.
_NEWTON_ITERATIONS = 8
#: Largest Newton step [h]; the topocentric dichotomy is within about 2.5 h of the geocentric one.
_NEWTON_MAX_STEP_H = 6.0
#: Half-width of the central difference that gives the elongation rate [s].
_RATE_STEP_S = 300.0
_US_PER_S = 1_000_000


# --- small helpers --------------------------------------------------------------------------


def _us(seconds) -> np.ndarray:
    """timedelta64[us] from seconds (float array)."""
    return np.round(np.asarray(seconds, dtype=float) * _US_PER_S).astype(np.int64).astype("timedelta64[us]")


def _wrap_deg(x):
    """Angle wrapped into (-180, 180] [deg]."""
    return 180.0 - np.mod(180.0 - np.asarray(x, dtype=float), 360.0)


def _geometric_gcrs_km(time_utc: np.ndarray):
    """The geocentric Moon and the Sun of the half-moon triangle (GCRS axes) [km], and the skyfield Time.

    The Moon is geometric; the Sun is where the light that reaches the Moon
    left it: the Sun's apparent geocentric place (light time and aberration,
    about 20" from the geometric direction along the ecliptic), at its
    distance. The Earth and the Moon share the Sun's aberration to 1 km/s in
    30 (0.7"), so the light that lights the Moon comes from the same place
    as the light that reaches the observer; the eclipse code takes the
    shadow's axis from the same apparent Sun.
    """
    moon_km, _, sun_km, t = _triangle_gcrs(time_utc)
    return moon_km, sun_km, t


def _triangle_gcrs(time_utc: np.ndarray):
    """As :func:`_geometric_gcrs_km`, with the Moon's geocentric velocity [km/s] second."""
    t = _prepared_time(time_utc)
    earth, sun, moon = _body("earth"), _body("sun"), _body("moon")
    m = (moon - earth).at(t)
    moon_km = np.asarray(m.position.km).reshape(3, -1)
    moon_v = np.asarray(m.velocity.km_per_s).reshape(3, -1)
    sun_km = np.asarray(earth.at(t).observe(sun).apparent().position.km).reshape(3, -1)
    return moon_km, moon_v, sun_km, t


def _physical_phase_angle_deg(moon_km, moon_v_km_s, sun_km, observer_km, observer_v_km_s=0.0):
    """The Sun-Moon-observer angle in the Moon's own frame [deg].

    In the Earth's frame the sunlight reaching the Moon comes from the Sun's
    apparent place; the Moon moves at about 1 km/s in that frame, which
    turns the incoming light by up to 0.7" towards its motion and the light
    it sends to the observer (aimed at where the observer will be when it
    arrives) the other way (first-order aberration). Without this the half
    moon is off by about 1.5 s.
    """
    beta = np.asarray(moon_v_km_s) / SPEED_OF_LIGHT_KM_PER_S

    def unit(v):
        return v / np.sqrt(np.sum(v * v, axis=0))

    incoming = unit(sun_km - moon_km)
    incoming = incoming + beta - np.sum(incoming * beta, axis=0) * incoming
    tau = np.sqrt(np.sum((observer_km - moon_km) ** 2, axis=0)) / SPEED_OF_LIGHT_KM_PER_S
    outgoing = unit(observer_km + np.asarray(observer_v_km_s) * tau - moon_km)
    outgoing = outgoing - beta + np.sum(outgoing * beta, axis=0) * outgoing
    return _angle_deg(incoming, outgoing)


def _site_velocity_km_s(site_km):
    """A site's velocity from the Earth's turning about the GCRS z axis [km/s] (precession neglected)."""
    return EARTH_ROTATION_RATE_RAD_PER_S * np.stack([-site_km[1], site_km[0], np.zeros_like(site_km[2])])


def _site_true_of_date_km(gast_rad, latitude_deg, longitude_deg, elevation_m) -> np.ndarray:
    """Site position in the true equator and equinox of date (ITRS rotated by GAST) [km], (3, n).

    Polar motion (at most 0.3", i.e. 10 m at the Earth's surface) is neglected.
    """
    x, y, z = geodetic_to_itrs_km(latitude_deg, longitude_deg, elevation_m)
    cos_g, sin_g = np.cos(gast_rad), np.sin(gast_rad)
    x, y, z = (np.broadcast_to(np.asarray(c, dtype=float), np.shape(gast_rad)) for c in (x, y, z))
    return np.stack([x * cos_g - y * sin_g, x * sin_g + y * cos_g, z])


def _site_gcrs_km(t, latitude_deg, longitude_deg, elevation_m) -> np.ndarray:
    """Site position in GCRS axes [km], (3, n): true-of-date position rotated back by the matrix M^T."""
    gast_rad = np.asarray(t.gast).reshape(-1) * (np.pi / 12.0)
    tod = _site_true_of_date_km(gast_rad, latitude_deg, longitude_deg, elevation_m)
    matrix = np.asarray(t.M).reshape(3, 3, -1)
    return np.einsum("jin,jn->in", matrix, tod)


def _flat_inputs(time_utc, latitude_deg, longitude_deg, elevation_m):
    """Times and site coordinates broadcast together and flattened, with the common shape."""
    t = as_utc_datetime64(time_utc)
    lat, lon, elev = (np.asarray(x, dtype=float) for x in (latitude_deg, longitude_deg, elevation_m))
    t_b, lat_b, lon_b, elev_b = np.broadcast_arrays(t, lat, lon, elev)
    check_in_span(t_b)
    return t_b.ravel(), lat_b.ravel(), lon_b.ravel(), elev_b.ravel(), t_b.shape


def _newton(function, start_utc: np.ndarray, target_deg, *, wrap: bool = False) -> np.ndarray:
    """Times where ``function(t) == target``, by the secant method (one evaluation per step).

    ``function`` maps a flat datetime64[us] array to degrees; ``target_deg``
    broadcasts against ``start_utc``. With ``wrap`` the residual is taken
    modulo 360 deg. The first slope comes from a 60 s step; a slope is kept
    once its element has converged.
    """
    t0 = np.asarray(start_utc, dtype="datetime64[us]").copy()
    target = np.broadcast_to(np.asarray(target_deg, dtype=float), t0.shape)

    def residual(t):
        r = function(t) - target
        return _wrap_deg(r) if wrap else r

    t1 = t0 + _us(_DERIVATIVE_STEP_S)
    f0, f1 = residual(t0), residual(t1)
    slope = np.zeros(t0.shape)
    for _ in range(_NEWTON_ITERATIONS):
        span_s = (t1 - t0).astype(np.int64) / _US_PER_S
        change = _wrap_deg(f1 - f0) if wrap else f1 - f0
        usable = np.abs(span_s) >= 1e-3
        slope = np.where(usable, change / np.where(usable, span_s, 1.0), slope)
        dt_s = np.clip(-f1 / slope, -_NEWTON_MAX_STEP_H * 3600, _NEWTON_MAX_STEP_H * 3600)
        t0, f0 = t1, f1
        t1 = t1 + _us(dt_s)
        if np.all(np.abs(dt_s) < _NEWTON_TOLERANCE_S):
            break
        f1 = residual(t1)
    return t1


# --- quarters and the geocentric dichotomy --------------------------------------------------


def _longitude_difference_deg(time_utc: np.ndarray) -> np.ndarray:
    return sun_moon_geocentric(time_utc).longitude_difference_deg


def _geocentric_phase_angle_deg(time_utc: np.ndarray) -> np.ndarray:
    moon_km, moon_v, sun_km, _ = _triangle_gcrs(time_utc)
    return _physical_phase_angle_deg(moon_km, moon_v, sun_km, np.zeros_like(moon_km))


def quadratures_between(start_utc, stop_utc) -> tuple[np.ndarray, np.ndarray]:
    """Almanac first and last quarters from ``start_utc`` (inclusive) to ``stop_utc`` (exclusive).

    The Moon's apparent geocentric ecliptic longitude of date minus the
    Sun's crosses 90 deg (first quarter) or 270 deg (last quarter), found by
    sampling every 6 h and Newton's method to 0.01 s.

    Parameters
    ----------
    start_utc, stop_utc : datetime64, aware datetime or ISO string with offset
        The range [UTC].

    Returns
    -------
    quadrature_utc : numpy.ndarray of datetime64[us]
        In time order.
    quarter : numpy.ndarray of str
        ``"first"`` or ``"last"``.

    Raises
    ------
    InputError
        When ``stop_utc`` is not after ``start_utc``.
    EphemerisRangeError
        When the range leaves DE421's span.

    Examples
    --------
    >>> t, q = quadratures_between("2025-01-01T00:00Z", "2025-01-31T00:00Z")
    >>> [str(x.astype("datetime64[m]")) for x in t], [str(x) for x in q]
    (['2025-01-06T23:56', '2025-01-21T20:30'], ['first', 'last'])
    """
    start, stop = (np.asarray(as_utc_datetime64(x), dtype="datetime64[us]").reshape(()) for x in (start_utc, stop_utc))
    if not stop > start:
        raise InputError(f"stop_utc: {stop} is not after start_utc {start}; expected a later time")
    step = _us(_QUADRATURE_STEP_H * 3600)
    grid = np.arange(start - step, stop + 2 * step, step)
    check_in_span(grid, "quarter search time")
    difference = _longitude_difference_deg(grid)
    times, kinds = [], []
    for target, kind in ((90.0, "first"), (270.0, "last")):
        d = _wrap_deg(difference - target)
        k = np.flatnonzero((d[:-1] < 0.0) & (d[1:] >= 0.0) & (d[1:] - d[:-1] < 90.0))
        fraction = -d[k] / (d[k + 1] - d[k])
        guess = grid[k] + _us(fraction * _QUADRATURE_STEP_H * 3600)
        times.append(_newton(_longitude_difference_deg, guess, target, wrap=True) if k.size else guess)
        kinds.append(np.full(k.size, kind))
    t = np.concatenate(times)
    q = np.concatenate(kinds).astype(str)
    order = np.argsort(t, kind="stable")
    t, q = t[order], q[order]
    inside = (t >= start) & (t < stop)
    return t[inside], q[inside]


def geocentric_dichotomy_utc(near_utc) -> np.ndarray:
    """Geocentric true half moon: the Sun-Moon-Earth angle is 90 deg (the Sun where its light left it).

    Parameters
    ----------
    near_utc : datetime64 array or ISO strings with offset
        A time within a few hours of the half moon wanted, e.g. the quadrature [UTC].

    Returns
    -------
    numpy.ndarray of datetime64[us]
        Same shape as ``near_utc``.

    Examples
    --------
    >>> t = geocentric_dichotomy_utc(np.array(["2025-01-06T23:56:18"], dtype="datetime64[s]"))
    >>> str(t[0].astype("datetime64[s]"))
    '2025-01-06T23:40:20'
    """
    near = np.asarray(as_utc_datetime64(near_utc), dtype="datetime64[us]")
    check_in_span(near)
    return _newton(_geocentric_phase_angle_deg, near.ravel(), 90.0).reshape(near.shape)


@dataclass(frozen=True)
class Quarters:
    """The quarters of a range with their geocentric half-moon geometry.

    All arrays have one entry per quarter, in time order. ``dichotomy_utc``
    is the geocentric true half moon; the elongation, distances and ratio
    are those of the triangle at that instant (the Sun where its light left it), so ``distance_ratio`` equals
    ``1 / cos(elongation)`` (the right angle is at the Moon).
    """

    quarter: np.ndarray
    quadrature_utc: np.ndarray
    dichotomy_utc: np.ndarray
    elongation_deg: np.ndarray
    apparent_elongation_deg: np.ndarray
    moon_distance_km: np.ndarray
    sun_distance_km: np.ndarray

    @property
    def distance_ratio(self) -> np.ndarray:
        """Sun/Moon distance ratio at the geocentric dichotomy [1]."""
        return self.sun_distance_km / self.moon_distance_km

    @property
    def dichotomy_minus_quadrature_s(self) -> np.ndarray:
        """Geocentric dichotomy minus quadrature [s]: negative at first quarter."""
        return (self.dichotomy_utc - self.quadrature_utc).astype(np.int64) / _US_PER_S

    def __len__(self) -> int:
        return len(self.quarter)


def quarters_between(start_utc, stop_utc) -> Quarters:
    """First and last quarters in a range, with the geocentric dichotomy of each.

    Parameters
    ----------
    start_utc, stop_utc : datetime64, aware datetime or ISO string with offset
        The range of the quadratures [UTC], start inclusive, stop exclusive.

    Returns
    -------
    Quarters

    Examples
    --------
    >>> q = quarters_between("2025-01-01T00:00Z", "2025-01-15T00:00Z")
    >>> round(float(q.dichotomy_minus_quadrature_s[0]) / 60, 1), round(float(q.elongation_deg[0]), 3)
    (-16.0, 89.856)
    """
    quadrature, kind = quadratures_between(start_utc, stop_utc)
    dichotomy = geocentric_dichotomy_utc(quadrature) if len(quadrature) else quadrature
    if len(dichotomy):
        g = sun_moon_geocentric(dichotomy)
        moon_tri, sun_tri, _ = _geometric_gcrs_km(dichotomy)
        elongation, apparent = _angle_deg(moon_tri, sun_tri), g.elongation_apparent_deg
        moon_km = np.sqrt(np.sum(g.moon_geometric_km**2, axis=0))
        sun_km = np.sqrt(np.sum(g.sun_geometric_km**2, axis=0))
    else:
        elongation = apparent = moon_km = sun_km = np.zeros(0)
    return Quarters(kind, quadrature, dichotomy, elongation, apparent, moon_km, sun_km)


# --- the geometry seen from a site ------------------------------------------------------------


def _topocentric_phase_angle_deg(time_utc, lat, lon, elev) -> np.ndarray:
    moon_km, moon_v, sun_km, t = _triangle_gcrs(time_utc)
    site_km = _site_gcrs_km(t, lat, lon, elev)
    return _physical_phase_angle_deg(moon_km, moon_v, sun_km, site_km, _site_velocity_km_s(site_km))


def _topocentric_elongation_deg(time_utc, lat, lon, elev) -> np.ndarray:
    moon_km, sun_km, t = _geometric_gcrs_km(time_utc)
    site_km = _site_gcrs_km(t, lat, lon, elev)
    return _angle_deg(sun_km - site_km, moon_km - site_km)


def topocentric_dichotomy_utc(near_utc, latitude_deg, longitude_deg, elevation_m=0.0) -> np.ndarray:
    """True half moon seen from a site: the Sun-Moon-observer angle is 90 deg (the Sun where its light left it).

    Parameters
    ----------
    near_utc : datetime64 array or ISO strings with offset
        A time within a few hours of the half moon, e.g. the geocentric dichotomy [UTC].
    latitude_deg, longitude_deg, elevation_m : float or array
        Sites (WGS84), broadcast against ``near_utc`` [deg, deg, m].

    Returns
    -------
    numpy.ndarray of datetime64[us]
        The broadcast shape.

    Examples
    --------
    >>> t = topocentric_dichotomy_utc(np.datetime64("2025-01-06T23:41:00"), 46.2, 7.4, 620.0)
    >>> str(np.datetime64(t, "m"))   # 93 min after the geocentric instant: the Moon is low
    '2025-01-07T01:13'
    """
    t, lat, lon, elev, shape = _flat_inputs(near_utc, latitude_deg, longitude_deg, elevation_m)
    result = _newton(lambda x: _topocentric_phase_angle_deg(x, lat, lon, elev), t.astype("datetime64[us]"), 90.0)
    return result.reshape(shape)


def time_of_elongation_utc(near_utc, elongation_deg, latitude_deg, longitude_deg, elevation_m=0.0) -> np.ndarray:
    """When the Sun-Moon angle of the triangle seen from a site reaches a given value, near a given time.

    Parameters
    ----------
    near_utc : datetime64 array or ISO strings with offset
        A time within a few hours of it [UTC].
    elongation_deg : float or array
        The angle wanted [deg]; within about 1.5 deg of the angle at ``near_utc``.
    latitude_deg, longitude_deg, elevation_m : float or array
        Sites, broadcast [deg, deg, m].

    Returns
    -------
    numpy.ndarray of datetime64[us]

    Examples
    --------
    >>> t = time_of_elongation_utc(np.datetime64("2025-01-07T01:00"), 89.8552, 46.2, 7.4, 620.0)
    >>> str(np.datetime64(t, "m"))
    '2025-01-07T01:13'
    """
    t, lat, lon, elev, shape = _flat_inputs(near_utc, latitude_deg, longitude_deg, elevation_m)
    target = np.broadcast_to(np.asarray(elongation_deg, dtype=float), shape).ravel()
    result = _newton(lambda x: _topocentric_elongation_deg(x, lat, lon, elev), t.astype("datetime64[us]"), target)
    return result.reshape(shape)


def topocentric_quadrature_utc(near_utc, latitude_deg, longitude_deg, elevation_m=0.0) -> np.ndarray:
    """When the Sun-Moon angle of the triangle seen from a site is exactly 90 deg.

    This is where a half moon would be if the Sun were infinitely far away;
    the interval method compares half-moon timings against it.

    Parameters
    ----------
    near_utc : datetime64 array or ISO strings with offset
        A time within a few hours of it [UTC].
    latitude_deg, longitude_deg, elevation_m : float or array
        Sites, broadcast [deg, deg, m].

    Returns
    -------
    numpy.ndarray of datetime64[us]

    Examples
    --------
    >>> q = topocentric_quadrature_utc(np.datetime64("2025-01-06T23:41:00"), 46.2, 7.4, 620.0)
    >>> d = topocentric_dichotomy_utc(np.datetime64("2025-01-06T23:41:00"), 46.2, 7.4, 620.0)
    >>> bool(q > d)
    True
    """
    return time_of_elongation_utc(near_utc, 90.0, latitude_deg, longitude_deg, elevation_m)


# --- when both bodies are up -------------------------------------------------------------------


