"""The Sun's apparent place for arrays of sites and times, from DE421, offline.

This is the only module that calls skyfield. The JPL DE421 ephemeris comes
from the ``skyfield-data`` package and the time scale is skyfield's builtin
one, so nothing is ever downloaded. Both are loaded once, on first use.

The geocentric apparent Sun (light time, gravitational deflection, annual
aberration) is computed once per distinct time by skyfield; the step to each
site (parallax and diurnal aberration) is plain numpy, so the cost grows with
the number of distinct times, not with sites times times.

Nutation uses the IAU 2000B series, which differs from the full 2000A series
by at most 0.001" and is about five times faster (McCarthy & Luzum 2003,
Celest. Mech. 85:37; DESIGN section 7). Polar motion is ignored (0.3" at most).
"""

from __future__ import annotations

import contextlib
import functools
import os
import threading
from dataclasses import dataclass

import numpy as np

from firstrung.angles import wrapped_rad
from firstrung.bounded import Bounded
from firstrung.constants import (
    ASTRONOMICAL_UNIT_KM,
    EARTH_ROTATION_RATE_RAD_PER_S,
    SPEED_OF_LIGHT_KM_PER_S,
    SUN_SEMIDIAMETER_AT_1AU_ARCSEC,
)
from firstrung.ephemeris import sun_table
from firstrung.ephemeris._core import (
    _loaded,
    _skyfield_time,
    as_utc_datetime64,
    check_in_span,
    timescale,
)
from firstrung.ephemeris.sun_table import grid_nodes as grid_table_nodes
from firstrung.errors import InputError
from firstrung.geodesy import geodetic_to_itrs_km

#: Mean rate of the Sun's hour angle [deg per s]: 360 deg per mean solar day.
_MEAN_SOLAR_RATE_DEG_PER_S = 360.0 / 86400.0
#: Step of the central difference that gives the rates of hour angle and declination [s].
_RATE_STEP_S = 30.0
#: Iterations of the transit search; the first guess is within 17 min, each
#: step shrinks the error by about 3e-4 (the equation of time changes < 30 s/day).
_TRANSIT_ITERATIONS = 3


# --- the geocentric apparent Sun ----------------------------------------------------------


#: Step of the time grid on which the geocentric Sun is interpolated [h].
#: With 4-point Lagrange interpolation the error is below 1e-6" in direction
#: and 1e-10 rad in sidereal time (a test holds this).
_GRID_STEP_H = 1.0
#: (time, site) pairs the topocentric step takes at a time: its temporary arrays stay within the
#: processor's cache (smaller slices were faster on a year of noons at thousands of sites, the same numbers).
_TOPOCENTRIC_CHUNK = 1 << 14
#: Above this many (time, site) pairs the grid serves the times where they are, without sorting out repeats.
_MANY_TIMES = 1 << 17
#: Use the grid when the Sun positions a call (or a search's repeated calls on
#: nearby times) would compute outnumber the grid nodes this many times.
_GRID_MIN_GAIN = 3.0
#: A grid read from the shipped table (sun_table) costs no Sun computation: it serves any call of at
#: least this many positions (a year's plan at a few sites), fewer are computed directly as before.
_TABLE_MIN_EVALUATIONS = 512


def _direct_geocentric_sun(t):
    """skyfield's apparent Sun at skyfield Time ``t`` (true equator of date) and GAST."""
    from skyfield.functions import mxv

    _, _, earth, sun = _loaded()
    apparent = earth.at(t).observe(sun).apparent()
    xyz_km = mxv(t.M, apparent.position.au) * ASTRONOMICAL_UNIT_KM
    gast_rad = np.asarray(t.gast) * (np.pi / 12.0)
    return np.asarray(xyz_km).reshape(3, -1), gast_rad.reshape(-1)


def _tt_jd(time_utc: np.ndarray) -> np.ndarray:
    """TT Julian dates of UTC datetime64 times, with TT-UTC looked up once per UTC day."""
    t = np.asarray(time_utc, dtype="datetime64[us]")
    days = t.astype("datetime64[D]")
    day_number = days.astype(np.int64)
    first, last = (int(day_number.min()), int(day_number.max())) if day_number.size else (0, -1)
    if day_number.size > 4 * (last - first + 1):  # many times over few days: every day of the span, no sort
        unique_days = np.arange(first, last + 1).astype("datetime64[D]")
        inverse = day_number - first
    else:
        unique_days, inverse = np.unique(days, return_inverse=True)
    offset_days = np.asarray(_skyfield_time(unique_days.astype("datetime64[us]")).tt) - (
        unique_days.astype(np.int64) + 2440587.5
    )
    utc_jd = (t - np.datetime64("1970-01-01T00:00", "us")).astype(np.int64) / 86400e6 + 2440587.5
    return utc_jd + offset_days[inverse.reshape(t.shape)]


def _lagrange4(x, x0, step, values):
    """4-point Lagrange interpolation on a uniform grid; ``values`` (..., m), ``x`` (n,)."""
    u = (x - x0) / step
    i = np.clip(np.floor(u).astype(np.int64), 1, values.shape[-1] - 3)
    f = u - i
    w0 = -f * (f - 1) * (f - 2) / 6.0
    w1 = (f + 1) * (f - 1) * (f - 2) / 2.0
    w2 = -(f + 1) * f * (f - 2) / 2.0
    w3 = (f + 1) * f * (f - 1) / 6.0
    return (
        values[..., i - 1] * w0 + values[..., i] * w1 + values[..., i + 1] * w2 + values[..., i + 2] * w3
    )


#: Threads within :func:`grid_preferred` (their ``on`` attribute set).
_PREFER_GRID = threading.local()


@contextlib.contextmanager
def grid_preferred():
    """Within this block, this thread's geocentric Sun comes from hourly grids however few the times.

    For a long-running caller that asks again and again for a few times within
    the same days (the collection point checks each new reading with its site's
    stored ones): each day's grid (:func:`_day_grids_sun`) is computed once and
    kept, and each call is an interpolation instead of a skyfield call. The grid
    agrees with the direct computation to 1e-6" (see :data:`_GRID_STEP_H`).
    """
    before = getattr(_PREFER_GRID, "on", False)
    _PREFER_GRID.on = True
    try:
        yield
    finally:
        _PREFER_GRID.on = before


#: Grids of this many nodes or more are computed in two halves at once (a year of hours: 8,800 nodes,
#: a fifth of a second on one core). Each node's numbers are its own: the same with or without halves
#: (skyfield's light-time iteration stops for the whole array at once, within 1e-12 day, 1e-16 of a value).
_GRID_SPLIT_NODES = 2_048


def _grid_nodes(tt: np.ndarray):
    """skyfield's geocentric apparent Sun and GAST at TT Julian dates ``tt`` (IAU 2000B nutation)."""
    from skyfield.nutationlib import iau2000b_radians

    grid = timescale().tt_jd(tt)
    grid._nutation_angles_radians = iau2000b_radians(grid)
    return _direct_geocentric_sun(grid)


@functools.lru_cache(maxsize=4)
def _sun_grid(start_tt_jd: float, nodes: int, step_days: float):
    """Geocentric apparent Sun and unwrapped GAST on a uniform TT grid (cached: searches reuse it)."""
    tt = start_tt_jd + step_days * np.arange(nodes)
    from_table = grid_table_nodes(tt, step_days)  # 2026-2035: the same nodes, computed once (sun_table)
    if from_table is not None:
        xyz, gast = from_table
    elif nodes < _GRID_SPLIT_NODES or (os.cpu_count() or 1) < 2:
        xyz, gast = _grid_nodes(tt)
    else:  # two halves at once: numpy computes outside the interpreter's lock, on a second core
        half = nodes // 2
        later: list = []
        helper = threading.Thread(target=lambda: later.append(_grid_nodes(tt[half:])), daemon=True)
        helper.start()
        first = _grid_nodes(tt[:half])
        helper.join()
        if not later:  # pragma: no cover - the helper failed: the same work here, with its error
            later.append(_grid_nodes(tt[half:]))
        xyz, gast = np.hstack([first[0], later[0][0]]), np.concatenate([first[1], later[0][1]])
    xyz.setflags(write=False)
    gast = np.unwrap(gast)
    gast.setflags(write=False)
    return xyz, gast


@functools.lru_cache(maxsize=4)
def _sun_grid_stacked(start_tt_jd: float, nodes: int, step_days: float) -> np.ndarray:
    """The grid's x, y, z and unwrapped GAST as one (4, nodes) array: one interpolation serves all four."""
    xyz, gast = _sun_grid(start_tt_jd, nodes, step_days)
    stacked = np.vstack([xyz, gast[None, :]])
    stacked.setflags(write=False)
    return stacked


#: Nodes of a day's grid: two days from the day's start (a time ``tt`` belongs to the day starting at
#: ``floor(tt - 0.5)``, so that it has a day of nodes on each side, as :func:`_geocentric_sun`'s grid).
_DAY_NODES = int(round(2.0 / (_GRID_STEP_H / 24.0))) + 1
#: Days' grids kept for :func:`grid_preferred` callers, by the day's start (TT Julian date); 1,024 days
#: hold 1.6 MB (the oldest dropped first).
_DAY_GRIDS: dict[float, np.ndarray] = Bounded(1_024)


def _day_grids_sun(tt: np.ndarray):
    """The geocentric Sun and GAST at TT Julian dates ``tt`` from each one's day grid (the days not yet
    kept computed in one skyfield call): the same grid for a time whatever other times come with it."""
    step = _GRID_STEP_H / 24.0
    starts = np.floor(tt - 0.5)
    days, inverse = np.unique(starts, return_inverse=True)
    grid_of = {float(d): _DAY_GRIDS.get(float(d)) for d in days}  # this call's grids, whatever the cache drops
    missing = [d for d, grid in grid_of.items() if grid is None]
    if missing:
        nodes = (np.asarray(missing)[:, None] + step * np.arange(_DAY_NODES)[None, :]).reshape(-1)
        xyz, gast = _grid_nodes(nodes)
        for k, day in enumerate(missing):
            part = slice(k * _DAY_NODES, (k + 1) * _DAY_NODES)
            grid = np.vstack([xyz[:, part], np.unwrap(gast[part])[None, :]])
            grid.setflags(write=False)
            _DAY_GRIDS[day] = grid_of[day] = grid
    both = np.empty((4, tt.size))
    for k, day in enumerate(days):
        at = inverse.reshape(-1) == k
        both[:, at] = _lagrange4(tt[at], day, step, grid_of[float(day)])
    return both[:3], np.mod(both[3], 2.0 * np.pi)


def _grid_span(first_tt: float, last_tt: float) -> tuple[float, int]:
    """The grid for TT Julian dates from ``first_tt`` to ``last_tt``: its first node and its number of nodes
    (whole days with half a day of margin, so that the iterations of a search share one grid)."""
    start = float(np.floor(first_tt - 0.5))
    return start, int(round((np.ceil(last_tt + 0.5) - start) / (_GRID_STEP_H / 24.0))) + 1


def _grid_serves(evaluations: int, start: float, nodes: int) -> bool:
    """Whether ``evaluations`` Sun positions are served by the grid of ``nodes`` from ``start``: when
    they outnumber its nodes enough, or at least a few hundred when the shipped table holds the grid."""
    return evaluations >= _GRID_MIN_GAIN * nodes or (
        evaluations >= _TABLE_MIN_EVALUATIONS and sun_table.covers(start, nodes, _GRID_STEP_H / 24.0))


def _grid_pays(time_utc: np.ndarray, evaluations: int) -> bool:
    """Whether ``evaluations`` Sun positions over the span of these times are served by the grid."""
    ends = _tt_jd(np.array([time_utc.min(), time_utc.max()], dtype="datetime64[us]"))
    return _grid_serves(evaluations, *_grid_span(ends[0], ends[1]))


def _geocentric_sun(time_utc: np.ndarray, uses: int = 1, grid: bool | None = None):
    """Apparent geocentric Sun in the true equator and equinox of date, and GAST.

    Many times within a short span (a year of noons at a hundred sites) are
    served from an hourly grid of skyfield positions by 4-point Lagrange
    interpolation; a few scattered times are computed directly. ``uses``:
    how many calls on about the same times the caller makes (a search's
    iterations), all served by one cached grid. ``grid``: True or False to
    choose the grid or the direct computation outright.

    Returns
    -------
    xyz_km : ndarray, shape (3, n)
    gast_rad : ndarray, shape (n,)
    """
    time_utc = np.asarray(time_utc, dtype="datetime64[us]").reshape(-1)
    if time_utc.size == 0:  # no instant: empty results, as numpy gives for empty input
        return np.zeros((3, 0)), np.zeros(0)
    tt = _tt_jd(time_utc)
    if grid is None and getattr(_PREFER_GRID, "on", False):
        return _day_grids_sun(tt)
    start, nodes = _grid_span(tt.min(), tt.max())
    if not grid and (grid is False or not _grid_serves(time_utc.size * uses, start, nodes)):
        key = time_utc.tobytes() if time_utc.size <= _RECENT_MAX_TIMES else None
        hit = None if key is None else _RECENT_DIRECT.get(key)
        if hit is not None:  # the same few times again (a check's hypotheses, a server's batches)
            xyz, gast = hit
            return xyz.copy(), gast.copy()
        from skyfield.nutationlib import iau2000b_radians

        t = _skyfield_time(time_utc)
        t._nutation_angles_radians = iau2000b_radians(t)
        xyz, gast = _direct_geocentric_sun(t)
        if key is not None:
            _RECENT_DIRECT[key] = (xyz.copy(), gast.copy())
        return xyz, gast
    return _interpolated(tt, start, nodes)


def _interpolated(tt: np.ndarray, start: float, nodes: int):
    """The geocentric Sun and GAST at TT Julian dates ``tt`` from the grid of ``nodes`` from ``start``."""
    step = _GRID_STEP_H / 24.0
    grid_values = _sun_grid_stacked(float(start), nodes, step)
    both = np.empty((4, tt.size))
    for first in range(0, tt.size, _BLOCK):  # a block at a time: the interpolation's temporaries stay small
        both[:, first:first + _BLOCK] = _lagrange4(tt[first:first + _BLOCK], start, step, grid_values)
    return both[:3], np.mod(both[3], 2.0 * np.pi)


def _geocentric_sun_part(time_utc: np.ndarray, first, last, count: int):
    """:func:`_geocentric_sun` of a set of ``count`` times from ``first`` to ``last``, at some of them only.

    Each time gets the numbers a call on the whole set gives it (the same grid, interpolated per time),
    or the result is None when that call would not interpolate (a direct computation is not per time:
    the caller then computes the whole set).
    """
    time_utc = np.asarray(time_utc, dtype="datetime64[us]").reshape(-1)
    if getattr(_PREFER_GRID, "on", False):
        return _day_grids_sun(_tt_jd(time_utc))
    ends = _tt_jd(np.array([first, last], dtype="datetime64[us]"))
    start, nodes = _grid_span(ends[0], ends[1])
    if not _grid_serves(count, start, nodes):
        return None
    if time_utc.size == 0:
        return np.zeros((3, 0)), np.zeros(0)
    return _interpolated(_tt_jd(time_utc), start, nodes)


#: The last direct computations of a few times, by the times (each skyfield call costs some
#: milliseconds however few the times: a check tries several hypotheses on the same times, and the
#: collection point checks each site's stored readings again with every new one). Same numbers.
_RECENT_DIRECT: dict[bytes, tuple[np.ndarray, np.ndarray]] = Bounded(64)
_RECENT_MAX_TIMES = 2_048

#: Times interpolated at once from the grid (each costs some 200 bytes of temporaries; a block this
#: small stays within the processor's cache).
_BLOCK = 4_096


@dataclass(frozen=True)
class SunPosition:
    """Apparent topocentric place of the Sun's centre, airless (no refraction).

    All arrays share one shape: the broadcast of the times and site arrays.
    Hour angle is positive west of the meridian, in (-180, 180]; azimuth runs
    from north through east; declination and right ascension refer to the
    true equator and equinox of date.
    """

    altitude_deg: np.ndarray
    azimuth_deg: np.ndarray
    hour_angle_deg: np.ndarray
    declination_deg: np.ndarray
    right_ascension_deg: np.ndarray
    distance_au: np.ndarray
    semidiameter_deg: np.ndarray


def sun_position(time_utc, latitude_deg, longitude_deg, elevation_m=0.0) -> SunPosition:
    """Apparent topocentric position of the Sun's centre, without refraction.

    Parameters
    ----------
    time_utc : datetime64 array or aware datetimes / ISO strings with offset
        Instants [UTC]; broadcast against the site arrays.
    latitude_deg, longitude_deg : float or array
        Geodetic WGS84 latitude (+ north) and longitude (+ east) [deg].
    elevation_m : float or array
        Height above the ellipsoid [m].

    Returns
    -------
    SunPosition

    Raises
    ------
    EphemerisRangeError
        When a time lies outside DE421's span.

    Examples
    --------
    >>> p = sun_position("2027-06-21T12:00:00Z", 46.2, 7.4, 620.0)
    >>> round(float(p.altitude_deg), 1)
    66.6
    """
    return _sun_position(time_utc, latitude_deg, longitude_deg, elevation_m)


def _sun_position(time_utc, latitude_deg, longitude_deg, elevation_m=0.0, uses: int = 1,
                  hour_angle_only: bool = False, full_rows: slice | None = None):
    """:func:`sun_position`, told how many calls on about the same times the caller makes.

    ``hour_angle_only``: return only the hour angle [deg] (a search's steps need nothing else).
    ``full_rows``: the rows (of the flattened broadcast) that need every field; the others get only the
    hour angle and the declination (NaN elsewhere: a rate's neighbouring times need nothing else).
    """
    t = as_utc_datetime64(time_utc)
    lat, lon, elev = (np.asarray(x, dtype=float) for x in (latitude_deg, longitude_deg, elevation_m))
    t_b, lat_b, lon_b, elev_b = np.broadcast_arrays(t, lat, lon, elev)
    shape = t_b.shape
    if np.any(~np.isfinite(lat) | (np.abs(lat) > 90.0)):  # the sites as given, not once per time
        raise InputError(f"latitude_deg: expected -90 to 90 deg, got {lat_b[~(np.abs(lat_b) <= 90)].ravel()[0]}")
    check_in_span(t_b)
    flat_t = t_b.ravel()
    if flat_t.size > _MANY_TIMES and _grid_pays(flat_t, flat_t.size * uses):
        # many times served by the grid: interpolated where they are, without sorting out repeats
        sun_xyz_km, gast_rad = _geocentric_sun(flat_t, uses, grid=True)
        inverse = None
    else:
        unique_t, inverse = np.unique(flat_t, return_inverse=True)
        sun_xyz_km, gast_rad = _geocentric_sun(unique_t, uses)
        inverse = inverse.ravel()
    lat_f, lon_f, elev_f = lat_b.ravel(), lon_b.ravel(), elev_b.ravel()
    # each site's place on the ellipsoid once, when the sites are broadcast over times
    site_xyz = None if lat_b.size <= max(lat.size, lon.size, elev.size) else [
        np.broadcast_to(c, shape).ravel() for c in geodetic_to_itrs_km(*np.broadcast_arrays(lat, lon, elev))]
    n = lat_f.size
    fields = ("hour_angle_deg",) if hour_angle_only else tuple(SunPosition.__dataclass_fields__)
    out = {f: np.empty(n) if full_rows is None or f in _RATE_FIELDS else np.full(n, np.nan) for f in fields}
    if hour_angle_only:
        regions = [(0, n, _HOUR_ANGLE)]
    elif full_rows is None:
        regions = [(0, n, None)]
    else:
        first, last, _ = full_rows.indices(n)
        regions = [(0, first, _RATE_FIELDS), (first, last, None), (last, n, _RATE_FIELDS)]
    # the same arithmetic a slice at a time, so that the temporaries stay small
    for begin, end, wanted in regions:
        for a in range(begin, max(end, begin + (n == 0)), _TOPOCENTRIC_CHUNK):
            part = slice(a, min(a + _TOPOCENTRIC_CHUNK, end))
            k = part if inverse is None else inverse[part]
            p = _topocentric(sun_xyz_km[:, k], gast_rad[k], lat_f[part], lon_f[part], elev_f[part], wanted,
                             None if site_xyz is None else [c[part] for c in site_xyz])
            for f in p:
                out[f][part] = p[f]
    if hour_angle_only:
        return out["hour_angle_deg"].reshape(shape)
    return SunPosition(**{f: v.reshape(shape) for f, v in out.items()})


#: What :func:`_topocentric` can be asked for short of every field: the hour angle alone (a transit search's
#: steps), or with the declination (the times beside a reading, for the rates of :func:`sun_track`).
_HOUR_ANGLE = ("hour_angle_deg",)
_RATE_FIELDS = ("hour_angle_deg", "declination_deg")


def _topocentric(sun_xyz_km, gast_rad, lat_deg, lon_deg, elev_m, wanted: tuple | None = None,
                 site_xyz=None) -> dict:
    """Parallax and diurnal aberration for each (site, time), then alt/az and hour angle (flat arrays).

    ``wanted``: :data:`_HOUR_ANGLE` or :data:`_RATE_FIELDS` for only those fields (the same numbers), None
    for every field. ``site_xyz``: the sites' ITRS coordinates [km] when already known.
    """
    x, y, z = geodetic_to_itrs_km(lat_deg, lon_deg, elev_m) if site_xyz is None else site_xyz
    cos_g, sin_g = np.cos(gast_rad), np.sin(gast_rad)
    site = np.stack([x * cos_g - y * sin_g, x * sin_g + y * cos_g, z])
    velocity_km_s = EARTH_ROTATION_RATE_RAD_PER_S * np.stack([-site[1], site[0], np.zeros_like(site[0])])
    topo = sun_xyz_km - site
    distance_km = np.sqrt(np.sum(topo**2, axis=0))
    u = topo / distance_km
    beta = velocity_km_s / SPEED_OF_LIGHT_KM_PER_S
    u = u + beta - np.sum(u * beta, axis=0) * u
    u = u / np.sqrt(np.sum(u**2, axis=0))
    ra_rad = np.arctan2(u[1], u[0])
    ha_rad = gast_rad + np.radians(lon_deg) - ra_rad
    ha_rad = wrapped_rad(ha_rad)
    if wanted == _HOUR_ANGLE:
        return {"hour_angle_deg": np.degrees(ha_rad)}
    dec_rad = np.arcsin(np.clip(u[2], -1.0, 1.0))
    if wanted == _RATE_FIELDS:
        return {"hour_angle_deg": np.degrees(ha_rad), "declination_deg": np.degrees(dec_rad)}
    lat_rad = np.radians(lat_deg)
    sin_alt = np.sin(lat_rad) * np.sin(dec_rad) + np.cos(lat_rad) * np.cos(dec_rad) * np.cos(ha_rad)
    alt_rad = np.arcsin(np.clip(sin_alt, -1.0, 1.0))
    az_rad = np.arctan2(
        -np.cos(dec_rad) * np.sin(ha_rad),
        np.sin(dec_rad) * np.cos(lat_rad) - np.cos(dec_rad) * np.sin(lat_rad) * np.cos(ha_rad),
    )
    distance_au = distance_km / ASTRONOMICAL_UNIT_KM
    return {
        "altitude_deg": np.degrees(alt_rad),
        "azimuth_deg": np.mod(np.degrees(az_rad), 360.0),
        "hour_angle_deg": np.degrees(ha_rad),
        "declination_deg": np.degrees(dec_rad),
        "right_ascension_deg": np.mod(np.degrees(ra_rad), 360.0),
        "distance_au": distance_au,
        "semidiameter_deg": SUN_SEMIDIAMETER_AT_1AU_ARCSEC / 3600.0 / distance_au,
    }


@dataclass(frozen=True)
class SunTrack:
    """The Sun's place at each reading, with the rates a clock-offset fit needs."""

    position: SunPosition
    hour_angle_rate_deg_per_s: np.ndarray
    declination_rate_deg_per_s: np.ndarray


def sun_track(time_utc, latitude_deg, longitude_deg, elevation_m=0.0) -> SunTrack:
    """Sun position at each time plus d(hour angle)/dt and d(declination)/dt.

    The rates come from a central difference over +/- 30 s; both are smooth
    on that scale (the hour-angle rate changes by < 1e-7 relative in a minute).

    >>> tr = sun_track("2027-03-20T11:38:00Z", 46.2, 7.4)
    >>> round(float(tr.hour_angle_rate_deg_per_s) * 3600, 2)
    15.0
    """
    t = as_utc_datetime64(time_utc)
    step = np.timedelta64(int(_RATE_STEP_S * 1e6), "us")
    lat, lon, elev = (np.asarray(x, dtype=float) for x in (latitude_deg, longitude_deg, elevation_m))
    t_b, lat_b, lon_b, elev_b = np.broadcast_arrays(t, lat, lon, elev)
    stacked_t = np.stack([t_b - step, t_b, t_b + step])
    # every field at the readings' times, the hour angle and declination alone beside them
    p = _sun_position(stacked_t, lat_b[None], lon_b[None], elev_b[None], full_rows=slice(t_b.size, 2 * t_b.size))
    dha = wrapped_rad(np.radians(p.hour_angle_deg[2] - p.hour_angle_deg[0]))
    mid = SunPosition(*(getattr(p, f)[1] for f in SunPosition.__dataclass_fields__))
    return SunTrack(
        position=mid,
        hour_angle_rate_deg_per_s=np.degrees(dha) / (2 * _RATE_STEP_S),
        declination_rate_deg_per_s=(p.declination_deg[2] - p.declination_deg[0]) / (2 * _RATE_STEP_S),
    )


@dataclass(frozen=True)
class SolarTransit:
    """Upper transit of the Sun's centre across a site's meridian (topocentric hour angle 0)."""

    time_utc: np.ndarray
    altitude_deg: np.ndarray
    declination_deg: np.ndarray
    semidiameter_deg: np.ndarray
    distance_au: np.ndarray


def solar_transit(date, latitude_deg, longitude_deg, elevation_m=0.0) -> SolarTransit:
    """Local apparent noon: the Sun's upper transit on each civil date at each site.

    The transit sought is the one nearest to 12:00 local mean time of the
    date at the site's longitude. It is found by a vectorised fixed-point
    iteration on the apparent topocentric hour angle H: ``t <- t - H / rate``
    with the mean solar rate, three steps for every (date, site) at once.

    Parameters
    ----------
    date : datetime64[D] array or ISO date strings
        Civil dates.
    latitude_deg, longitude_deg, elevation_m : float or array
        Sites, broadcast against the dates [deg, deg, m].

    Returns
    -------
    SolarTransit
        ``time_utc`` (datetime64[us]), airless ``altitude_deg`` of the centre,
        apparent topocentric ``declination_deg`` at that instant.

    Examples
    --------
    >>> tr = solar_transit("2027-03-20", 46.2, 7.4)
    >>> str(tr.time_utc.astype("datetime64[s]"))
    '2027-03-20T11:37:55'
    """
    day = np.asarray(date, dtype="datetime64[D]")
    lat, lon, elev = (np.asarray(x, dtype=float) for x in (latitude_deg, longitude_deg, elevation_m))
    day_b, lat_b, lon_b, elev_b = np.broadcast_arrays(day, lat, lon, elev)
    offset_us = np.round((12.0 - lon_b / 15.0) * 3600e6).astype(np.int64)
    t = day_b.astype("datetime64[us]") + offset_us.astype("timedelta64[us]")
    uses = _TRANSIT_ITERATIONS + 1  # every step of the search shares one grid when it pays
    for _ in range(_TRANSIT_ITERATIONS):  # the sites as given: broadcast over the dates inside, placed once
        hour_angle_deg = _sun_position(t, lat, lon, elev, uses, hour_angle_only=True)
        step_us = np.round(hour_angle_deg / _MEAN_SOLAR_RATE_DEG_PER_S * 1e6).astype(np.int64)
        t = t - step_us.astype("timedelta64[us]")
    p = _sun_position(t, lat, lon, elev, uses)
    return SolarTransit(
        time_utc=t,
        altitude_deg=p.altitude_deg,
        declination_deg=p.declination_deg,
        semidiameter_deg=p.semidiameter_deg,
        distance_au=p.distance_au,
    )


def sun_greenwich_hour_angle_deg(time_utc) -> np.ndarray:
    """Geocentric apparent Greenwich hour angle of the Sun [deg], in (-180, 180].

    The longitude at which the Sun is on the meridian at ``time_utc`` is
    minus this value (east positive).

    >>> round(float(sun_greenwich_hour_angle_deg("2027-03-20T12:00:00Z")), 1)
    -1.9
    """
    t = as_utc_datetime64(time_utc)
    shape = t.shape
    check_in_span(t)
    unique_t, inverse = np.unique(t.ravel(), return_inverse=True)
    xyz, gast = _geocentric_sun(unique_t)
    ra = np.arctan2(xyz[1], xyz[0])
    gha = wrapped_rad(gast - ra)
    return np.degrees(gha)[inverse].reshape(shape)


def write_table(path: str = sun_table.FILE) -> None:
    """Compute every node of :mod:`firstrung.ephemeris.sun_table` with the grid's own function (a year
    at a time) and write the table (``python -m firstrung.ephemeris.sun``)."""
    step = _GRID_STEP_H / 24.0
    count = sun_table.DAYS * sun_table.PER_DAY + 1
    table = np.empty((4, count))
    for first in range(0, count, 366 * sun_table.PER_DAY):
        n = min(366 * sun_table.PER_DAY, count - first)
        xyz, gast = _grid_nodes(sun_table.node_times(first, n, step))
        table[:3, first:first + n] = xyz
        table[3, first:first + n] = gast
    np.save(path, table)


if __name__ == "__main__":
    write_table()
