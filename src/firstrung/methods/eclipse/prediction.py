"""Lunar eclipses from DE421: the shadow's geometry, greatest eclipse, contacts, visibility.

The Earth's shadow is described as seen from the Earth's centre: its axis
points to the antisolar point (the apparent Sun's direction reversed), and
the umbra and penumbra are circles about it whose radii follow a published
enlargement convention (:mod:`firstrung.methods.eclipse.reduction`; Danjon by
default, as in the NASA Five Millennium Canon). The Moon's position is its
apparent geocentric place; the method reproduces the NASA catalogue's
greatest eclipse to 0.4 s and its magnitudes to 0.0006 (reference-values
4.3).

- Candidate full moons come from the mean lunation (Meeus 1998, eq. 49.1);
  each is moved to the Moon's closest approach to the shadow's axis by a few
  vectorised Newton steps on the tangent-plane track.
- Contacts are roots of ``separation - (radius +/- Moon radius)``: P1/P4 with
  the penumbra, U1/U4 and U2/U3 with the umbra. A straight-line first guess
  is polished by Newton steps on the ephemeris, all contacts of all eclipses
  at once.
- Contacts are the same instant for every observer: the shadow falls on the
  Moon itself (the apparent limb shifts by under 0.3 km on the Moon with the
  observer's place, far below a second of time). Each site's Moon and Sun
  altitudes at each contact tell whether it can be timed in darkness.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from firstrung.constants import (
    ASTRONOMICAL_UNIT_KM,
    MOON_MEAN_RADIUS_KM,
    SHADOW_EARTH_RADIUS_KM,
    SUN_SEMIDIAMETER_AT_1AU_ARCSEC,
)
from firstrung.ephemeris._core import (
    apparent_moon_and_sun_of_date_km,
    as_utc_datetime64,
    check_in_span,
    ephemeris_span_utc,
)
from firstrung.errors import InputError
from firstrung.methods.eclipse.umbra import CONVENTIONS, penumbra_radius_deg, umbra_radius_deg

#: Names of the events of a lunar eclipse, in time order (greatest eclipse between U2 and U3).
EVENTS = ("P1", "U1", "U2", "greatest", "U3", "U4", "P4")
#: Eclipse kinds, from the least to the most complete.
KINDS = ("penumbral", "partial", "total")
#: Mean synodic month [d] (Meeus 1998, eq. 49.1).
SYNODIC_MONTH_D = 29.530588861
#: JDE of the mean new moon of lunation k = 0 (2000 January 6; Meeus 1998, eq. 49.1).
_MEAN_NEW_MOON_JDE = 2451550.09766
#: Unix epoch as a Julian date [d].
_UNIX_EPOCH_JD = 2440587.5
#: Step of the central differences giving the Moon's rate across the shadow [s].
_RATE_STEP_S = 60.0
#: Newton steps to closest approach (from the mean full moon, up to 14 h off) and on each contact.
_APPROACH_STEPS = 5
_CONTACT_STEPS = 3
#: Sun altitude below which a site counts as dark for timing [deg]: the end of nautical
#: twilight, when the eclipsed Moon's faint parts and the umbra's edge are easy to judge
#: (common practice).
DARK_SUN_ALTITUDE_DEG = -12.0
#: Twilight boundaries of the Sun's centre [deg] (civil, nautical, astronomical; common
#: practice; -0.833 deg is the almanac sunset: refraction 34' plus the semi-diameter 16').
_SKY_LIMITS_DEG = ((-0.833, "day"), (-6.0, "civil twilight"), (-12.0, "nautical twilight"),
                   (-18.0, "astronomical twilight"))


# --- the shadow's geometry ----------------------------------------------------------


@dataclass(frozen=True)
class ShadowGeometry:
    """The Moon relative to the Earth's shadow, seen from the Earth's centre, at each time.

    ``moon_east_deg`` / ``moon_north_deg`` place the Moon's centre relative to
    the shadow's axis (azimuthal-equidistant offsets about the antisolar
    point, towards the sky's east and north; true equator of date).
    Parallaxes are equatorial horizontal parallaxes, ``asin(6378.137 km / d)``.
    """

    moon_east_deg: np.ndarray
    moon_north_deg: np.ndarray
    separation_deg: np.ndarray
    moon_semidiameter_deg: np.ndarray
    moon_parallax_deg: np.ndarray
    sun_parallax_deg: np.ndarray
    sun_semidiameter_deg: np.ndarray
    moon_distance_km: np.ndarray
    axis_declination_deg: np.ndarray

    def umbra_deg(self, convention: str = "danjon") -> np.ndarray:
        """Umbra radius by a convention [deg]."""
        return umbra_radius_deg(self.moon_parallax_deg, self.sun_parallax_deg, self.sun_semidiameter_deg, convention)

    def penumbra_deg(self, convention: str = "danjon") -> np.ndarray:
        """Penumbra radius by a convention [deg]."""
        return penumbra_radius_deg(
            self.moon_parallax_deg, self.sun_parallax_deg, self.sun_semidiameter_deg, convention
        )


def _geometry(time_utc: np.ndarray) -> ShadowGeometry:
    """ShadowGeometry for a flat datetime64 array (no checks)."""
    m, s = apparent_moon_and_sun_of_date_km(time_utc)
    dm = np.sqrt(np.sum(m * m, axis=0))
    ds = np.sqrt(np.sum(s * s, axis=0))
    u = m / dm
    a = -s / ds
    ra = np.arctan2(a[1], a[0])
    dec = np.arcsin(np.clip(a[2], -1.0, 1.0))
    east_axis = np.stack([-np.sin(ra), np.cos(ra), np.zeros_like(ra)])
    north_axis = np.stack([-np.sin(dec) * np.cos(ra), -np.sin(dec) * np.sin(ra), np.cos(dec)])
    x = np.sum(u * east_axis, axis=0)
    y = np.sum(u * north_axis, axis=0)
    along = np.sum(u * a, axis=0)
    sep = np.arctan2(np.hypot(x, y), along)
    scale = np.where(np.hypot(x, y) > 0, sep / np.maximum(np.hypot(x, y), 1e-300), 1.0)
    return ShadowGeometry(
        moon_east_deg=np.degrees(x * scale),
        moon_north_deg=np.degrees(y * scale),
        separation_deg=np.degrees(sep),
        moon_semidiameter_deg=np.degrees(np.arcsin(MOON_MEAN_RADIUS_KM / dm)),
        moon_parallax_deg=np.degrees(np.arcsin(SHADOW_EARTH_RADIUS_KM / dm)),
        sun_parallax_deg=np.degrees(np.arcsin(SHADOW_EARTH_RADIUS_KM / ds)),
        sun_semidiameter_deg=SUN_SEMIDIAMETER_AT_1AU_ARCSEC / 3600.0 / (ds / ASTRONOMICAL_UNIT_KM),
        moon_distance_km=dm,
        axis_declination_deg=np.degrees(dec),
    )


def shadow_geometry(time_utc) -> ShadowGeometry:
    """The Moon's place relative to the Earth's shadow, and the shadow's ingredients.

    Parameters
    ----------
    time_utc : datetime64 array or aware datetimes / ISO strings with offset
        Instants [UTC].

    Returns
    -------
    ShadowGeometry
        Arrays of the shape of ``time_utc``.

    Examples
    --------
    Greatest eclipse of 2025-09-07 (NASA: 18:12:58 TD, i.e. 18:11:49 UTC): the
    Moon's centre passes 16.3' from the axis (reference-values 4.5).

    >>> g = shadow_geometry("2025-09-07T18:11:49Z")
    >>> round(float(g.separation_deg) * 60, 1)
    16.3
    """
    t = as_utc_datetime64(time_utc)
    shape = np.shape(t)
    flat = np.atleast_1d(t).ravel()
    check_in_span(flat)
    g = _geometry(flat)
    return ShadowGeometry(*(np.asarray(getattr(g, f)).reshape(shape) for f in ShadowGeometry.__dataclass_fields__))


def _shift(t: np.ndarray, seconds) -> np.ndarray:
    return t + np.round(np.asarray(seconds) * 1e6).astype(np.int64).astype("timedelta64[us]")


def _track(t: np.ndarray):
    """Offsets at t and the rate vector from a central difference [deg, deg/s]."""
    stacked = np.concatenate([_shift(t, -_RATE_STEP_S), t, _shift(t, _RATE_STEP_S)])
    g = _geometry(stacked)
    n = len(t)
    x, y = g.moon_east_deg, g.moon_north_deg
    vx = (x[2 * n:] - x[:n]) / (2 * _RATE_STEP_S)
    vy = (y[2 * n:] - y[:n]) / (2 * _RATE_STEP_S)
    mid = ShadowGeometry(*(np.asarray(getattr(g, f))[n:2 * n] for f in ShadowGeometry.__dataclass_fields__))
    return mid, vx, vy


# --- eclipses of a range ----------------------------------------------------------------


@dataclass(frozen=True)
class LunarEclipses:
    """The lunar eclipses of a range, one entry per eclipse (arrays of equal length).

    ``contacts_utc`` maps each of P1, U1, U2, U3, U4, P4 to a datetime64[us]
    array, NaT where the contact does not happen (no U-contacts in a
    penumbral eclipse, no U2/U3 in a partial one). ``gamma`` is the least
    distance of the Moon's centre from the shadow's axis in Earth equatorial
    radii, positive when the Moon passes north of it (as in the NASA
    catalogue). Rates and radii are at greatest eclipse.
    """

    convention: str
    greatest_utc: np.ndarray
    kind: np.ndarray
    umbral_magnitude: np.ndarray
    penumbral_magnitude: np.ndarray
    gamma: np.ndarray
    contacts_utc: dict[str, np.ndarray]
    least_separation_deg: np.ndarray
    umbra_radius_deg: np.ndarray
    penumbra_radius_deg: np.ndarray
    moon_semidiameter_deg: np.ndarray
    moon_parallax_deg: np.ndarray
    sun_parallax_deg: np.ndarray
    sun_semidiameter_deg: np.ndarray
    moon_distance_km: np.ndarray
    moon_rate_deg_per_h: np.ndarray
    track_position_angle_deg: np.ndarray

    def __len__(self) -> int:
        return len(self.greatest_utc)

    def duration_min(self, first: str, last: str) -> np.ndarray:
        """Minutes from one contact to another (NaN where either is absent)."""
        a, b = self.contacts_utc[first], self.contacts_utc[last]
        out = (b - a).astype("timedelta64[us]").astype(np.int64) / 6e7
        return np.where(np.isnat(a) | np.isnat(b), np.nan, out)

    def select(self, mask) -> LunarEclipses:
        """A copy with only the eclipses picked by ``mask``."""
        picked = np.asarray(mask)
        changes = {}
        for name in self.__dataclass_fields__:
            value = getattr(self, name)
            if isinstance(value, np.ndarray):
                changes[name] = value[picked]
            elif isinstance(value, dict):
                changes[name] = {k: v[picked] for k, v in value.items()}
            else:
                changes[name] = value
        return LunarEclipses(**changes)


def _mean_full_moons_utc(start: np.datetime64, end: np.datetime64) -> np.ndarray:
    """Mean full moons (eq. 49.1 with k + 0.5) from a day before start to a day after end."""
    to_jd = lambda t: t.astype("datetime64[us]").astype(np.int64) / 86400e6 + _UNIX_EPOCH_JD  # noqa: E731
    k0 = np.floor((to_jd(start) - 1.0 - _MEAN_NEW_MOON_JDE) / SYNODIC_MONTH_D) - 1
    k1 = np.ceil((to_jd(end) + 1.0 - _MEAN_NEW_MOON_JDE) / SYNODIC_MONTH_D) + 1
    k = np.arange(k0, k1 + 1) + 0.5
    jd = _MEAN_NEW_MOON_JDE + SYNODIC_MONTH_D * k
    us = np.round((jd - _UNIX_EPOCH_JD) * 86400e6).astype(np.int64)
    return us.astype("datetime64[us]")


def _closest_approach(t: np.ndarray) -> np.ndarray:
    """Times of the Moon's least distance from the shadow's axis near each t (Newton on the track)."""
    for _ in range(_APPROACH_STEPS):
        g, vx, vy = _track(t)
        step = -(g.moon_east_deg * vx + g.moon_north_deg * vy) / (vx * vx + vy * vy)
        t = _shift(t, step)
    return t


def _contact_times(t0: np.ndarray, target: str, sign: float, convention: str, first_guess_s: np.ndarray):
    """Roots of separation - (radius + sign * Moon radius) near t0 + first_guess_s."""
    t = _shift(t0, first_guess_s)
    for _ in range(_CONTACT_STEPS):
        both = np.concatenate([t, _shift(t, _RATE_STEP_S)])
        g = _geometry(both)
        radius = g.umbra_deg(convention) if target == "umbra" else g.penumbra_deg(convention)
        f = g.separation_deg - (radius + sign * g.moon_semidiameter_deg)
        n = len(t)
        slope = (f[n:] - f[:n]) / _RATE_STEP_S
        t = _shift(t, -f[:n] / slope)
    return t


def lunar_eclipses(start_utc, end_utc, convention: str = "danjon") -> LunarEclipses:
    """Every lunar eclipse with greatest eclipse in [start, end], with its contacts.

    Parameters
    ----------
    start_utc, end_utc : datetime64 or aware datetime / ISO string with offset
        The range [UTC]; a date string such as ``"2026-01-01"`` without a
        time is not accepted here (the CLI turns dates into UTC midnights).
    convention : {"danjon", "chauvenet", "geometric"}
        The shadows' enlargement (Danjon: the NASA canon's).

    Returns
    -------
    LunarEclipses

    Raises
    ------
    InputError
        An unknown convention or an empty range.
    EphemerisRangeError
        A range outside DE421.

    Examples
    --------
    The total eclipse of 2025-09-07 (NASA: umbral magnitude 1.3619):

    >>> e = lunar_eclipses("2025-09-01T00:00Z", "2025-09-30T00:00Z")
    >>> str(e.kind[0]), round(float(e.umbral_magnitude[0]), 3)
    ('total', 1.362)
    """
    if convention not in CONVENTIONS:
        raise InputError(f"convention: expected one of {', '.join(CONVENTIONS)}, got {convention!r}")
    start = np.asarray(as_utc_datetime64(start_utc)).reshape(())[()]
    end = np.asarray(as_utc_datetime64(end_utc)).reshape(())[()]
    if not end > start:
        raise InputError(f"range: expected the end after the start, got {start} to {end}")
    check_in_span(np.array([start, end]), "range limit")
    first, last = ephemeris_span_utc()
    t = _mean_full_moons_utc(start, end)
    t = t[(t > first + np.timedelta64(2, "D")) & (t < last - np.timedelta64(2, "D"))]
    t = _closest_approach(t)
    g, vx, vy = _track(t)
    # widest possible penumbra (Chauvenet) plus a margin: every convention's eclipses survive
    reach = penumbra_radius_deg(g.moon_parallax_deg, g.sun_parallax_deg, g.sun_semidiameter_deg, "chauvenet")
    keep = (g.separation_deg < reach + g.moon_semidiameter_deg + 0.05) & (t >= start) & (t <= end)
    t, vx, vy = t[keep], vx[keep], vy[keep]
    g = ShadowGeometry(*(np.asarray(getattr(g, f))[keep] for f in ShadowGeometry.__dataclass_fields__))
    umbra, penumbra, sm, sep = g.umbra_deg(convention), g.penumbra_deg(convention), g.moon_semidiameter_deg, g.separation_deg
    eclipse = sep < penumbra + sm
    t, vx, vy = t[eclipse], vx[eclipse], vy[eclipse]
    g = ShadowGeometry(*(np.asarray(getattr(g, f))[eclipse] for f in ShadowGeometry.__dataclass_fields__))
    umbra, penumbra, sm, sep = umbra[eclipse], penumbra[eclipse], sm[eclipse], sep[eclipse]
    rate = np.hypot(vx, vy)  # deg per s
    kind_code = (sep < umbra + sm).astype(int) + (sep < umbra - sm).astype(int)
    contacts: dict[str, np.ndarray] = {}
    for name, target, sign, radius, when in (
        ("P1", "penumbra", 1.0, penumbra, -1.0),
        ("U1", "umbra", 1.0, umbra, -1.0),
        ("U2", "umbra", -1.0, umbra, -1.0),
        ("U3", "umbra", -1.0, umbra, 1.0),
        ("U4", "umbra", 1.0, umbra, 1.0),
        ("P4", "penumbra", 1.0, penumbra, 1.0),
    ):
        reach = radius + sign * sm
        happens = sep < reach
        out = np.full(len(t), np.datetime64("NaT"), dtype="datetime64[us]")
        if np.any(happens):
            guess = when * np.sqrt(reach[happens] ** 2 - sep[happens] ** 2) / rate[happens]
            out[happens] = _contact_times(t[happens], target, sign, convention, guess)
        contacts[name] = out
    # gamma: least distance from the axis in Earth radii, signed by the Moon's side (north +)
    gamma = g.moon_distance_km * np.sin(np.radians(sep)) / SHADOW_EARTH_RADIUS_KM
    gamma = np.where(g.moon_north_deg >= 0, gamma, -gamma)
    return LunarEclipses(
        convention=convention,
        greatest_utc=t,
        kind=np.array([KINDS[k] for k in kind_code], dtype=object),
        umbral_magnitude=(umbra + sm - sep) / (2 * sm),
        penumbral_magnitude=(penumbra + sm - sep) / (2 * sm),
        gamma=gamma,
        contacts_utc=contacts,
        least_separation_deg=sep,
        umbra_radius_deg=umbra,
        penumbra_radius_deg=penumbra,
        moon_semidiameter_deg=sm,
        moon_parallax_deg=g.moon_parallax_deg,
        sun_parallax_deg=g.sun_parallax_deg,
        sun_semidiameter_deg=g.sun_semidiameter_deg,
        moon_distance_km=g.moon_distance_km,
        moon_rate_deg_per_h=rate * 3600.0,
        track_position_angle_deg=np.mod(np.degrees(np.arctan2(vx, vy)), 360.0),
    )


def eclipse_near(time_utc, convention: str = "danjon", window_days: float = 1.0) -> LunarEclipses:
    """The lunar eclipse (if any) whose greatest phase lies within a window of a time.

    Returns a LunarEclipses of length 0 or 1 (the nearest).

    >>> len(eclipse_near("2029-06-26T03:00:00Z"))
    1
    """
    t = np.asarray(as_utc_datetime64(time_utc)).reshape(())[()]
    half = np.timedelta64(int(window_days * 86400e6), "us")
    e = lunar_eclipses(t - half, t + half, convention)
    if len(e) > 1:
        e = e.select([int(np.argmin(np.abs((e.greatest_utc - t).astype(np.int64))))])
    return e


# --- what each site sees -------------------------------------------------------------


@dataclass(frozen=True)
class EclipseVisibility:
    """Each site's view of each event: arrays of shape (eclipses, events, sites).

    Events follow :data:`EVENTS` (P1, U1, U2, greatest, U3, U4, P4); where an
    event does not happen the values are NaN and the flags False.
    ``moon_altitude_deg`` is the observed altitude of the Moon's centre,
    refracted at standard conditions (10 deg C, 1010 hPa), and
    ``moon_altitude_airless_deg`` the same without refraction; both
    topocentric.
    """

    events: tuple[str, ...]
    moon_altitude_deg: np.ndarray
    moon_altitude_airless_deg: np.ndarray
    moon_azimuth_deg: np.ndarray
    sun_altitude_deg: np.ndarray
    moon_up: np.ndarray
    dark: np.ndarray

    def sky(self) -> np.ndarray:
        """The sky at each (eclipse, event, site): day, civil/nautical/astronomical twilight, night."""
        out = np.full(self.sun_altitude_deg.shape, "night", dtype=object)
        for limit, name in reversed(_SKY_LIMITS_DEG):
            out = np.where(self.sun_altitude_deg >= limit, name, out)
        return np.where(np.isnan(self.sun_altitude_deg), None, out)

    @property
    def timeable(self) -> np.ndarray:
        """Moon up and sky dark."""
        return self.moon_up & self.dark


def eclipse_visibility(eclipses: LunarEclipses, latitude_deg, longitude_deg, elevation_m) -> EclipseVisibility:
    """Moon and Sun altitudes at every event of every eclipse for every site.

    Parameters
    ----------
    eclipses : LunarEclipses
    latitude_deg, longitude_deg, elevation_m : array (sites,)
        The sites [deg, deg, m].

    Returns
    -------
    EclipseVisibility

    Examples
    --------
    >>> e = lunar_eclipses("2029-06-20T00:00Z", "2029-06-30T00:00Z")
    >>> v = eclipse_visibility(e, [46.2], [7.4], [620.0])
    >>> v.moon_altitude_deg.shape
    (1, 7, 1)
    """
    from firstrung.ephemeris.moon import moon_position
    from firstrung.ephemeris.sun import sun_position
    from firstrung.refraction import apparent_from_true_altitude_deg

    lat, lon, elev = (np.atleast_1d(np.asarray(x, dtype=float)) for x in (latitude_deg, longitude_deg, elevation_m))
    times = np.stack(
        [eclipses.greatest_utc if e == "greatest" else eclipses.contacts_utc[e] for e in EVENTS], axis=1
    )  # (n, 7)
    shape = (*times.shape, len(lat))
    missing = np.isnat(times)
    filled = np.where(missing, eclipses.greatest_utc[:, None], times) if len(times) else times
    tt = np.broadcast_to(filled[..., None], shape)
    if tt.size == 0:
        empty = np.zeros(shape)
        return EclipseVisibility(EVENTS, empty, empty, empty, empty, empty.astype(bool), empty.astype(bool))
    moon = moon_position(tt, lat, lon, elev)
    sun = sun_position(tt, lat, lon, elev)
    refracted = apparent_from_true_altitude_deg(moon.altitude_deg)
    gone = np.broadcast_to(missing[..., None], shape)
    nan = lambda a: np.where(gone, np.nan, a)  # noqa: E731
    moon_up = (refracted > 0.0) & ~gone
    dark = (sun.altitude_deg < DARK_SUN_ALTITUDE_DEG) & ~gone
    return EclipseVisibility(
        events=EVENTS,
        moon_altitude_deg=nan(refracted),
        moon_altitude_airless_deg=nan(moon.altitude_deg),
        moon_azimuth_deg=nan(moon.azimuth_deg),
        sun_altitude_deg=nan(sun.altitude_deg),
        moon_up=moon_up,
        dark=dark,
    )


# --- craters on the shadow's edge -------------------------------------------------------


@dataclass(frozen=True)
class FeaturePoints:
    """Lunar features placed relative to the shadow's axis at given times.

    ``east_deg``/``north_deg``: the feature's offset from the shadow's axis
    as seen from the Earth's centre; ``disc_east``/``disc_north``/``depth``
    its place on the disc [Moon radii]; ``edge_scale`` and ``edge_offset_deg``
    turn an umbra radius defined at the Moon's centre into the radius at the
    feature's depth: ``radius_at_feature = umbra * edge_scale + edge_offset_deg``.
    """

    east_deg: np.ndarray
    north_deg: np.ndarray
    distance_deg: np.ndarray
    disc_east: np.ndarray
    disc_north: np.ndarray
    depth: np.ndarray
    edge_scale: np.ndarray
    edge_offset_deg: np.ndarray
    geometry: ShadowGeometry


def feature_points(time_utc, latitude_deg, longitude_deg) -> FeaturePoints:
    """Where lunar features are relative to the Earth's shadow at each time.

    A feature nearer the Earth than the Moon's centre (depth ``z`` Moon radii)
    is seen from the Earth's centre at an offset larger by ``1 + z s_M`` and
    meets a shadow cone that is wider there: the umbra's radius at its depth
    is ``rho_u (1 + z s_M) + (s_S - pi_S) z s_M`` (angles in radians where
    multiplied), up to 0.3' more than at the Moon's centre.

    Parameters
    ----------
    time_utc : datetime64 array
        Instants [UTC], broadcast against the features.
    latitude_deg, longitude_deg : array
        Selenographic coordinates of the features [deg, east positive].

    Returns
    -------
    FeaturePoints

    Examples
    --------
    >>> p = feature_points("2029-06-26T03:22:00Z", 9.62, -20.08)
    >>> bool(0.85 < float(p.depth) < 0.95)
    True
    """
    from firstrung.ephemeris.libration import feature_disc_offsets, lunar_orientation

    t = as_utc_datetime64(time_utc)
    t_b, lat_b, lon_b = np.broadcast_arrays(t, np.asarray(latitude_deg, float), np.asarray(longitude_deg, float))
    shape = t_b.shape
    flat = t_b.ravel()
    check_in_span(flat)
    unique_t, inverse = np.unique(flat, return_inverse=True)
    g = _geometry(unique_t)
    o = lunar_orientation(unique_t)
    pick = lambda a: np.asarray(a)[inverse]  # noqa: E731
    de, dn, z = feature_disc_offsets(
        lat_b.ravel(), lon_b.ravel(), pick(o.libration_longitude_deg), pick(o.libration_latitude_deg),
        pick(o.axis_position_angle_deg),
    )
    sm = pick(g.moon_semidiameter_deg)
    sm_rad = np.radians(sm)
    perspective = 1.0 + z * sm_rad
    east = pick(g.moon_east_deg) + sm * perspective * de
    north = pick(g.moon_north_deg) + sm * perspective * dn
    cone = pick(g.sun_semidiameter_deg) - pick(g.sun_parallax_deg)
    geometry = ShadowGeometry(*(pick(getattr(g, f)).reshape(shape) for f in ShadowGeometry.__dataclass_fields__))
    return FeaturePoints(
        east_deg=east.reshape(shape),
        north_deg=north.reshape(shape),
        distance_deg=np.hypot(east, north).reshape(shape),
        disc_east=de.reshape(shape),
        disc_north=dn.reshape(shape),
        depth=z.reshape(shape),
        edge_scale=perspective.reshape(shape),
        edge_offset_deg=(cone * z * sm_rad).reshape(shape),
        geometry=geometry,
    )


def feature_edge_times(
    eclipse: LunarEclipses,
    latitude_deg,
    longitude_deg,
    event,
    enlargement_percent: float | None = None,
    convention: str = "geometric",
) -> np.ndarray:
    """When lunar features cross the umbra's edge during one eclipse.

    The umbra is the ``convention``'s, further enlarged by
    ``enlargement_percent`` of the geometric radius when that is given
    (``radius = geometric * (1 + enlargement / 100)``, for making synthetic
    timings with a known enlargement).

    Parameters
    ----------
    eclipse : LunarEclipses
        Exactly one eclipse (partial or total).
    latitude_deg, longitude_deg : array (k,)
        Selenographic coordinates [deg].
    event : array (k,) of {"immersion", "emersion"}
    enlargement_percent : float, optional
        Enlargement over the geometric umbra [%]; replaces ``convention``.
    convention : str
        Used when ``enlargement_percent`` is None.

    Returns
    -------
    datetime64[us] array (k,)
        NaT for a feature that never reaches the edge (it stays outside, or
        inside, the umbra).

    Examples
    --------
    >>> e = eclipse_near("2029-06-26T03:00:00Z")
    >>> t = feature_edge_times(e, [9.62, 9.62], [-20.08, -20.08], ["immersion", "emersion"], 1.5)
    >>> bool(t[0] < t[1])
    True
    """
    if len(eclipse) != 1:
        raise InputError(f"eclipse: expected exactly one eclipse, got {len(eclipse)}")
    lat = np.atleast_1d(np.asarray(latitude_deg, float))
    lon = np.atleast_1d(np.asarray(longitude_deg, float))
    ev = np.atleast_1d(np.asarray(event, dtype=object))
    start = eclipse.contacts_utc["U1"][0]
    stop = eclipse.contacts_utc["U4"][0]
    if np.isnat(start):
        raise InputError("eclipse: a penumbral eclipse has no umbra on the Moon: no feature timings")
    step = np.timedelta64(60, "s")
    grid = np.arange(start - 10 * step, stop + 11 * step, step).astype("datetime64[us]")

    def edge_function(times, la, lo):
        p = feature_points(times, la, lo)
        g = p.geometry
        if enlargement_percent is None:
            umbra = umbra_radius_deg(g.moon_parallax_deg, g.sun_parallax_deg, g.sun_semidiameter_deg, convention)
        else:
            geo = umbra_radius_deg(g.moon_parallax_deg, g.sun_parallax_deg, g.sun_semidiameter_deg, "geometric")
            umbra = geo * (1.0 + enlargement_percent / 100.0)
        return p.distance_deg - (umbra * p.edge_scale + p.edge_offset_deg)

    f = edge_function(grid[:, None], lat[None, :], lon[None, :])  # (g, k); < 0 inside the umbra
    out = np.full(len(lat), np.datetime64("NaT"), dtype="datetime64[us]")
    inside = f < 0
    for k in range(len(lat)):
        if ev[k] == "immersion":
            crossing = np.flatnonzero(~inside[:-1, k] & inside[1:, k])
        elif ev[k] == "emersion":
            crossing = np.flatnonzero(inside[:-1, k] & ~inside[1:, k])
        else:
            raise InputError(f"event: expected 'immersion' or 'emersion', got {ev[k]!r}")
        if len(crossing):
            i = crossing[0] if ev[k] == "immersion" else crossing[-1]
            frac = f[i, k] / (f[i, k] - f[i + 1, k])
            out[k] = _shift(np.array([grid[i]]), frac * 60.0)[0]
    ok = ~np.isnat(out)
    t = out[ok]
    for _ in range(2):
        if not len(t):
            break
        both = np.concatenate([t, _shift(t, 10.0)])
        ff = edge_function(both, np.tile(lat[ok], 2), np.tile(lon[ok], 2))
        n = len(t)
        t = _shift(t, -ff[:n] * 10.0 / (ff[n:] - ff[:n]))
    out[ok] = t
    return out
