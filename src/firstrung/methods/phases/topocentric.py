"""The Sun and the Moon seen from a site: topocentric half moon and quadrature, and the windows\nwhen both are high enough to measure the angle between them.\n"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from firstrung.constants import STANDARD_PRESSURE_HPA, STANDARD_TEMPERATURE_C
from firstrung.ephemeris._core import (
    _prepared_time,
    apparent_moon_and_sun_at,
    as_utc_datetime64,
    check_in_span,
)
from firstrung.ephemeris.moon import _angle_deg
from firstrung.errors import InputError
from firstrung.geodesy import geodetic_to_itrs_km
from firstrung.methods.phases.prediction import (
    _RATE_STEP_S,
    _US_PER_S,
    _flat_inputs,
    _physical_phase_angle_deg,
    _site_gcrs_km,
    _site_true_of_date_km,
    _site_velocity_km_s,
    _triangle_gcrs,
    _us,
)
from firstrung.refraction import apparent_from_true_altitude_deg, true_from_apparent_altitude_deg


@dataclass(frozen=True)
class SunMoonTopocentric:
    """The Sun and the Moon seen from a site at given instants.

    Attributes
    ----------
    elongation_deg : ndarray
        Sun-Moon angle at the observer, the Sun where its light left it
        (apparent, airless, without the site's parallax of the Sun) and the
        Moon geometric [deg]: the angle of Aristarchus' triangle.
    elongation_rate_deg_per_h : ndarray
        Its rate of change [deg/h] (central difference over +/- 5 min).
    phase_angle_deg : ndarray
        Sun-Moon-observer angle, the same Sun [deg]; 90 at the site's (physical) half moon.
    illuminated_fraction : ndarray
        ``(1 + cos i) / 2`` for that phase angle [1].
    apparent_elongation_deg : ndarray
        Sun-Moon angle between the apparent, airless directions (aberration,
        parallax) [deg].
    observed_elongation_deg : ndarray
        The same with both bodies raised by standard refraction (10 deg C,
        1010 hPa): what an instrument at the site measures [deg].
    sun_altitude_deg, moon_altitude_deg : ndarray
        Apparent airless altitudes of the centres [deg].
    sun_distance_km, moon_distance_km : ndarray
        Geometric distances from the observer [km].
    """

    elongation_deg: np.ndarray
    elongation_rate_deg_per_h: np.ndarray
    phase_angle_deg: np.ndarray
    illuminated_fraction: np.ndarray
    apparent_elongation_deg: np.ndarray
    observed_elongation_deg: np.ndarray
    sun_altitude_deg: np.ndarray
    moon_altitude_deg: np.ndarray
    sun_distance_km: np.ndarray
    moon_distance_km: np.ndarray


def _local_frame(gast_rad, latitude_deg, longitude_deg):
    """East, north and up unit vectors of a site in the true equator of date, each (3, n)."""
    theta = gast_rad + np.radians(longitude_deg)
    phi = np.radians(latitude_deg)
    cos_t, sin_t = np.cos(theta), np.sin(theta)
    cos_p, sin_p = np.cos(phi) + 0 * theta, np.sin(phi) + 0 * theta
    east = np.stack([-sin_t, cos_t, np.zeros_like(theta)])
    north = np.stack([-sin_p * cos_t, -sin_p * sin_t, cos_p])
    up = np.stack([cos_p * cos_t, cos_p * sin_t, sin_p])
    return east, north, up


def _horizontal(vector_km, east, north, up):
    """Unit vector components (east, north, up) of a direction, and its altitude [deg]."""
    u = vector_km / np.sqrt(np.sum(vector_km**2, axis=0))
    e, n, z = (np.sum(u * axis, axis=0) for axis in (east, north, up))
    return e, n, z, np.degrees(np.arcsin(np.clip(z, -1.0, 1.0)))


def _refracted(e, n, altitude_deg):
    """(east, north, up) of a direction raised from its true to its apparent altitude."""
    apparent = np.radians(apparent_from_true_altitude_deg(altitude_deg))
    horizontal = np.hypot(e, n)
    scale = np.cos(apparent) / np.where(horizontal > 0, horizontal, 1.0)
    return np.stack([e * scale, n * scale, np.sin(apparent)])


def sun_moon_topocentric(time_utc, latitude_deg, longitude_deg, elevation_m=0.0, *, rates: bool = True) -> SunMoonTopocentric:
    """The Sun-Moon angle, the phase and the altitudes seen from sites at given times.

    Parameters
    ----------
    time_utc : datetime64 array or aware datetimes / ISO strings with offset
        Instants [UTC], broadcast against the sites.
    latitude_deg, longitude_deg, elevation_m : float or array
        Sites (WGS84) [deg, deg, m].
    rates : bool, optional
        Compute ``elongation_rate_deg_per_h`` (NaN otherwise; saves two thirds
        of the geometric work).

    Returns
    -------
    SunMoonTopocentric
        Every array has the broadcast shape.

    Notes
    -----
    Diurnal aberration (at most 0.3") is left out of the apparent directions;
    it moves the Sun and the Moon almost alike. Refraction is Bennett's at
    standard conditions, applied to each body's altitude.

    Examples
    --------
    >>> g = sun_moon_topocentric("2025-01-07T01:13:37.97Z", 46.2, 7.4, 620.0)
    >>> round(float(g.phase_angle_deg), 4), round(float(g.elongation_deg), 4)
    (90.0, 89.855)
    """
    t_flat, lat, lon, elev, shape = _flat_inputs(time_utc, latitude_deg, longitude_deg, elevation_m)
    t_flat = t_flat.astype("datetime64[us]")
    n = t_flat.size
    step = _us(_RATE_STEP_S)
    copies = 3 if rates else 1
    times = np.concatenate([t_flat, t_flat - step, t_flat + step][:copies])
    lat3, lon3, elev3 = (np.concatenate([x] * copies) for x in (lat, lon, elev))
    moon_km, moon_v, sun_km, t = _triangle_gcrs(times)
    site_km = _site_gcrs_km(t, lat3, lon3, elev3)
    to_sun, to_moon = sun_km - site_km, moon_km - site_km
    elongation3 = _angle_deg(to_sun, to_moon)
    elongation = elongation3[:n]
    if rates:
        rate = (elongation3[2 * n :] - elongation3[n : 2 * n]) / (2 * _RATE_STEP_S / 3600.0)
    else:
        rate = np.full(n, np.nan)
    phase = _physical_phase_angle_deg(moon_km[:, :n], moon_v[:, :n], sun_km[:, :n], site_km[:, :n],
                                      _site_velocity_km_s(site_km[:, :n]))

    t_now = _prepared_time(t_flat)
    moon_app, sun_app = apparent_moon_and_sun_at(t_now)
    gast = np.asarray(t_now.gast).reshape(-1) * (np.pi / 12.0)
    site_tod = _site_true_of_date_km(gast, lat, lon, elev)
    east, north, up = _local_frame(gast, lat, lon)
    se, sn, sz, sun_alt = _horizontal(sun_app - site_tod, east, north, up)
    me, mn, mz, moon_alt = _horizontal(moon_app - site_tod, east, north, up)
    apparent = _angle_deg(np.stack([se, sn, sz]), np.stack([me, mn, mz]))
    observed = _angle_deg(_refracted(se, sn, sun_alt), _refracted(me, mn, moon_alt))
    return SunMoonTopocentric(
        elongation_deg=elongation.reshape(shape),
        elongation_rate_deg_per_h=rate.reshape(shape),
        phase_angle_deg=phase.reshape(shape),
        illuminated_fraction=((1.0 + np.cos(np.radians(phase))) / 2.0).reshape(shape),
        apparent_elongation_deg=apparent.reshape(shape),
        observed_elongation_deg=observed.reshape(shape),
        sun_altitude_deg=sun_alt.reshape(shape),
        moon_altitude_deg=moon_alt.reshape(shape),
        sun_distance_km=np.sqrt(np.sum(to_sun[:, :n] ** 2, axis=0)).reshape(shape),
        moon_distance_km=np.sqrt(np.sum(to_moon[:, :n] ** 2, axis=0)).reshape(shape),
    )


@dataclass(frozen=True)
class HalfMoonWindows:
    """Intervals when the Sun and the Moon are both high enough, around each half moon.

    One entry per window, flat arrays: ``event`` and ``site`` index the
    inputs; ``start_utc``/``end_utc`` bound it (cut at the ends of the
    searched span: ``cut`` is True then); ``closest_utc`` is the instant in
    the window nearest to the site's half moon (the target) and
    ``minutes_from_target`` its offset (0 when the window holds it).
    """

    event: np.ndarray
    site: np.ndarray
    start_utc: np.ndarray
    end_utc: np.ndarray
    closest_utc: np.ndarray
    minutes_from_target: np.ndarray
    cut: np.ndarray

    @property
    def contains_target(self) -> np.ndarray:
        """Whether the site's half moon falls inside the window."""
        return self.minutes_from_target == 0.0

    def __len__(self) -> int:
        return len(self.event)


def both_up_windows(
    center_utc,
    target_utc,
    latitude_deg,
    longitude_deg,
    elevation_m,
    *,
    half_span_h: float = 24.0,
    step_min: float = 10.0,
    min_altitude_deg: float = 10.0,
    min_sun_elongation_deg: float = 30.0,
) -> HalfMoonWindows:
    """Windows when the Sun and the Moon are both above a minimum observed altitude.

    For each event (a half moon) a grid of times ``center +/- half_span_h``
    is searched at every site; a window is where the Sun's and the Moon's
    centres are at least ``min_altitude_deg`` above the horizon (observed,
    with standard refraction) and the Moon is at least
    ``min_sun_elongation_deg`` from the Sun. Window edges are interpolated
    linearly between grid points (error well below a minute at a 10 min step).

    Parameters
    ----------
    center_utc : datetime64 array, shape (q,)
        Middle of each searched span, e.g. the geocentric dichotomies [UTC].
    target_utc : datetime64 array, shape (q, s)
        Each site's own half moon for each event [UTC].
    latitude_deg, longitude_deg, elevation_m : array, shape (s,)
        Sites [deg, deg, m].
    half_span_h, step_min : float
        Half-width of the span [h] and grid step [min].
    min_altitude_deg : float
        Lowest observed altitude of both centres [deg].
    min_sun_elongation_deg : float
        Smallest Sun-Moon angle allowed for the instrument [deg].

    Returns
    -------
    HalfMoonWindows

    Examples
    --------
    >>> c = np.array(["2025-03-06T16:17"], dtype="datetime64[us]")
    >>> w = both_up_windows(c, c[:, None], [46.2], [7.4], [620.0], half_span_h=6)
    >>> len(w) >= 1
    True
    """
    center = np.atleast_1d(np.asarray(as_utc_datetime64(center_utc), dtype="datetime64[us]"))
    lat, lon, elev = (np.atleast_1d(np.asarray(x, dtype=float)) for x in (latitude_deg, longitude_deg, elevation_m))
    target = np.asarray(as_utc_datetime64(target_utc), dtype="datetime64[us]").reshape(center.size, lat.size)
    for name, value, low, high in (
        ("min_altitude_deg", min_altitude_deg, -1.0, 89.0),
        ("min_sun_elongation_deg", min_sun_elongation_deg, 0.0, 180.0),
        ("half_span_h", half_span_h, 0.5, 240.0),
        ("step_min", step_min, 0.5, 60.0),
    ):
        if not (np.isfinite(value) and low <= value <= high):
            raise InputError(f"{name}: received {value!r}; expected {low:g} to {high:g}")
    q, s = center.size, lat.size
    step_s = step_min * 60.0
    offsets_s = np.arange(-half_span_h * 3600.0, half_span_h * 3600.0 + 0.5 * step_s, step_s)
    grid = center[:, None] + _us(offsets_s)[None, :]  # (q, m)
    m = offsets_s.size
    flat = grid.ravel()
    check_in_span(flat, "window search time")
    if q == 0 or s == 0:
        empty = np.zeros(0, int)
        no_time = np.zeros(0, "datetime64[us]")
        return HalfMoonWindows(empty, empty, no_time, no_time, no_time, np.zeros(0), np.zeros(0, bool))

    t = _prepared_time(flat)
    moon_app, sun_app = apparent_moon_and_sun_at(t)
    gast = np.asarray(t.gast).reshape(-1) * (np.pi / 12.0)
    threshold = float(true_from_apparent_altitude_deg(min_altitude_deg, STANDARD_TEMPERATURE_C, STANDARD_PRESSURE_HPA))
    x, y, z = geodetic_to_itrs_km(lat, lon, elev)
    g = gast[None, :]
    cos_g, sin_g = np.cos(g), np.sin(g)
    theta = g + np.radians(lon)[:, None]
    phi = np.radians(lat)[:, None]
    up = (np.cos(phi) * np.cos(theta), np.cos(phi) * np.sin(theta), np.sin(phi) + 0 * theta)
    site = (x[:, None] * cos_g - y[:, None] * sin_g, x[:, None] * sin_g + y[:, None] * cos_g, z[:, None] + 0 * g)

    def direction(body_km):
        v = [body_km[k][None, :] - site[k] for k in range(3)]
        norm = np.sqrt(v[0] ** 2 + v[1] ** 2 + v[2] ** 2)
        return [c / norm for c in v]

    su, mu = direction(sun_app), direction(moon_app)
    sun_alt = np.degrees(np.arcsin(np.clip(su[0] * up[0] + su[1] * up[1] + su[2] * up[2], -1, 1)))
    moon_alt = np.degrees(np.arcsin(np.clip(mu[0] * up[0] + mu[1] * up[1] + mu[2] * up[2], -1, 1)))
    elongation = np.degrees(np.arccos(np.clip(su[0] * mu[0] + su[1] * mu[1] + su[2] * mu[2], -1, 1)))
    margin = np.minimum(np.minimum(sun_alt - threshold, moon_alt - threshold), elongation - min_sun_elongation_deg)
    margin = margin.reshape(s, q, m).transpose(1, 0, 2)  # (q, s, m)

    ok = margin > 0
    padded = np.concatenate([np.zeros((q, s, 1), bool), ok, np.zeros((q, s, 1), bool)], axis=2)
    change = np.diff(padded.astype(np.int8), axis=2)
    ev_s, site_s, k_start = np.nonzero(change == 1)
    _, _, k_end = np.nonzero(change == -1)  # k_end: first index after the run
    grid_s = grid[ev_s]  # (w, m)

    def crossing(k_before, k_after, ev, st):
        """Time where the margin crosses zero between grid points k_before and k_after."""
        a = margin[ev, st, k_before]
        b = margin[ev, st, k_after]
        denominator = np.where(a != b, a - b, 1.0)
        frac = np.clip(np.where(a != b, a / denominator, 0.0), 0.0, 1.0)
        return grid[ev, k_before] + _us(frac * step_s)

    rows = np.arange(len(ev_s))
    first, last = k_start, k_end - 1
    cut_start = first == 0
    cut_end = last == m - 1
    start = np.where(cut_start, grid_s[rows, first], crossing(np.maximum(first - 1, 0), first, ev_s, site_s))
    end = np.where(cut_end, grid_s[rows, last], crossing(last, np.minimum(last + 1, m - 1), ev_s, site_s))
    goal = target[ev_s, site_s]
    closest = np.minimum(np.maximum(goal, start), end)
    minutes = (closest - goal).astype(np.int64) / (60 * _US_PER_S)
    return HalfMoonWindows(
        event=ev_s, site=site_s, start_utc=start, end_utc=end, closest_utc=closest,
        minutes_from_target=minutes.astype(float), cut=cut_start | cut_end,
    )
