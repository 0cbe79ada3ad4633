"""Transits of Mercury and Venus: the search, the geocentric contacts and each site's contacts.

The search is vectorised over decades: geometric geocentric vectors of the
planet and the Sun at daily steps give every inferior conjunction with a
small separation, and an hourly grid around each refines its minimum. For a
transit (a minimum below the sum of the two semidiameters), the apparent
geocentric vectors of both bodies and the sidereal time are fitted by
Chebyshev series over a 12-hour window (one skyfield call for all transits),
and every contact, geocentric or seen from any number of sites, is solved by
Newton's method on those series in plain numpy.

Contacts: C1 external ingress, C2 internal ingress, C3 internal egress, C4
external egress, where the angular distance between the centres equals the
sum (C1, C4) or the difference (C2, C3) of the semidiameters of the Sun and
the planet. Seen from a site, both bodies are displaced by the site's
geocentric vector (the parallax); ``parallax_scale`` multiplies that vector,
which is the same as dividing every solar-system distance of DE421 by it
while the Earth keeps its size: the lever the reduction fits (the historical
reductions scaled the solar parallax in the same way).
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass, field

import numpy as np
from numpy.polynomial import chebyshev

from firstrung.constants import ASTRONOMICAL_UNIT_KM, SUN_SEMIDIAMETER_AT_1AU_ARCSEC
from firstrung.geodesy import geodetic_to_itrs_km

PLANETS = ("mercury", "venus")
CONTACTS = ("C1", "C2", "C3", "C4")
#: Semidiameters of the planets at 1 au as seen against the Sun [arcsec]: Mercury 3.36",
#: Venus 8.41" (the cloud tops, which make the silhouette; the solid body is 8.34"). Meeus,
#: Astronomical Algorithms 2nd ed. (1998) ch. 55 (from memory). Mercury's 3.36" is its IAU
#: mean radius 2439.7 km (Archinal et al. 2011, from memory).
PLANET_SEMIDIAMETER_AT_1AU_ARCSEC = {"mercury": 3.36, "venus": 8.41}
#: The same as radii [km].
PLANET_RADIUS_KM = {name: ASTRONOMICAL_UNIT_KM * math.tan(math.radians(v / 3600.0))
                    for name, v in PLANET_SEMIDIAMETER_AT_1AU_ARCSEC.items()}
#: The Sun's radius that gives the Auwers semidiameter 959.63" at 1 au [km] (the value the
#: astronomical almanacs use for contacts; Meeus 1998 ch. 55).
SUN_RADIUS_KM = ASTRONOMICAL_UNIT_KM * math.tan(math.radians(SUN_SEMIDIAMETER_AT_1AU_ARCSEC / 3600.0))
_INTERNAL = np.array([False, True, True, False])
ARCSEC_PER_RAD = 180.0 * 3600.0 / math.pi
SECONDS_PER_DAY = 86400.0

#: Step of the search for inferior conjunctions [d]; the planet moves < 2.5 deg a day against the Sun.
_SEARCH_STEP_D = 2.0
#: Conjunctions whose least sampled separation is below this are refined [deg]: the transit
#: circle (0.27 deg) and a day of motion (< 2.5 deg) at the sample nearest the conjunction.
_CANDIDATE_DEG = 4.0
#: Conjunctions whose least separation, estimated from the 2-day samples, exceeds this are no
#: transit [deg]: the transit circle is under 0.28 deg, the estimate good to 0.002 deg over 1900-2050.
_PREFILTER_DEG = 0.5
#: A refined geometric minimum this far outside the contact circle is no transit [arcsec]
#: (light time and aberration move the apparent separation by < 30").
_MARGIN_ARCSEC = 120.0
#: Half width of the window each transit's series covers [h]: the longest transits last < 9 h.
_HALF_WINDOW_H = 6.0
#: Chebyshev nodes and degree of the series: the fit is exact to < 1e-6" (a test checks
#: the series against direct skyfield positions).
_NODES = 33
_DEGREE = 24
#: Newton iterations for a contact, and the largest residual accepted [rad] (1e-4").
_ITERATIONS = 8
_TOLERANCE_RAD = 1e-4 / ARCSEC_PER_RAD


def _angle(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Angle between vectors (3, n), stable for small angles [rad]."""
    cross = np.cross(a, b, axis=0)
    return np.arctan2(np.sqrt(np.sum(cross**2, axis=0)), np.sum(a * b, axis=0))


@dataclass(frozen=True)
class TransitGeometry:
    """One transit's apparent geocentric geometry as Chebyshev series over a window.

    Times are TT Julian dates; vectors are in the true equator and equinox of date [km].
    """

    planet: str
    centre_tt_jd: float
    half_window_d: float
    planet_coefficients: np.ndarray = field(repr=False)  # (degree + 1, 3)
    sun_coefficients: np.ndarray = field(repr=False)
    gast_coefficients: np.ndarray = field(repr=False)  # (degree + 1,)

    @property
    def planet_radius_km(self) -> float:
        return PLANET_RADIUS_KM[self.planet]

    def _x(self, tt_jd):
        return (np.asarray(tt_jd, dtype=float) - self.centre_tt_jd) / self.half_window_d

    @functools.cached_property
    def _all_coefficients(self) -> np.ndarray:
        """The seven series side by side (planet, Sun, GAST), evaluated in one pass."""
        return np.concatenate([self.planet_coefficients, self.sun_coefficients, self.gast_coefficients[:, None]],
                              axis=1)

    def vectors(self, tt_jd) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """Apparent geocentric planet and Sun [km], (3, n), and GAST [rad], (n,)."""
        x = self._x(tt_jd).reshape(-1)
        values = chebyshev.chebval(x, self._all_coefficients)  # (7, n)
        return values[0:3], values[3:6], values[6]

    def topocentric(self, tt_jd, site_itrs_km: np.ndarray | None, parallax_scale: float = 1.0):
        """Planet and Sun seen from sites (geocentric when ``site_itrs_km`` is None) [km], and GAST."""
        planet, sun, gast = self.vectors(tt_jd)
        if site_itrs_km is None:
            return planet, sun, gast
        site = observer_of_date_km(site_itrs_km, gast) * parallax_scale
        return planet - site, sun - site, gast


def observer_of_date_km(site_itrs_km: np.ndarray, gast_rad: np.ndarray) -> np.ndarray:
    """Sites' geocentric vectors in the true equator and equinox of date [km], (3, n).

    Polar motion (< 0.3") is neglected.
    """
    x, y, z = site_itrs_km
    c, s = np.cos(gast_rad), np.sin(gast_rad)
    return np.stack([x * c - y * s, x * s + y * c, np.broadcast_to(z, np.shape(c))])


def _contact_offset_rad(geometry, tt_jd, site_itrs_km, parallax_scale, internal, radii_km=None):
    """Separation of the centres minus the contact's separation [rad]; zero at the contact."""
    planet, sun, _ = geometry.topocentric(tt_jd, site_itrs_km, parallax_scale)
    sep = _angle(planet, sun)
    sun_radius_km, planet_radius_km = radii_km or (SUN_RADIUS_KM, geometry.planet_radius_km)
    s_sun = np.arcsin(sun_radius_km / np.sqrt(np.sum(sun**2, axis=0)))
    s_planet = np.arcsin(planet_radius_km / np.sqrt(np.sum(planet**2, axis=0)))
    return sep - s_sun - np.where(internal, -s_planet, s_planet)


def solve_contact(geometry, first_guess_tt_jd, site_itrs_km=None, parallax_scale=1.0, internal=False,
                  radii_km=None):
    """The contact nearest each first guess, by Newton's method [TT JD]; NaN where none converges.

    Parameters
    ----------
    geometry : TransitGeometry
    first_guess_tt_jd : array_like, shape (n,)
        Starting instants, e.g. the geocentric contact [TT JD].
    site_itrs_km : numpy.ndarray, shape (3, n), optional
        Sites' ITRS vectors [km]; None for the geocentre.
    parallax_scale : float
        Multiplies the sites' vectors (1 for DE421's distances) [1].
    internal : bool or array of bool
        C2/C3 (difference of the semidiameters) rather than C1/C4 (sum).
    radii_km : (float, float), optional
        The Sun's and the planet's radii [km] (default: the almanac values above).
    """
    t = np.array(first_guess_tt_jd, dtype=float).reshape(-1)
    internal = np.broadcast_to(np.asarray(internal, dtype=bool), t.shape)
    step_d = 5.0 / SECONDS_PER_DAY
    sites = None if site_itrs_km is None else np.concatenate([site_itrs_km, site_itrs_km], axis=1)
    twice = np.concatenate([internal, internal])
    for _ in range(_ITERATIONS):
        g = _contact_offset_rad(geometry, np.concatenate([t, t + step_d]), sites, parallax_scale, twice, radii_km)
        g0, g1 = g[: t.size], g[t.size:]
        slope = (g1 - g0) / step_d
        with np.errstate(divide="ignore", invalid="ignore"):
            move = np.clip(g0 / slope, -0.05, 0.05)
        t = t - np.where(np.isfinite(move), move, 0.0)
        if np.all(np.abs(move[np.isfinite(move)]) < 1e-4 / SECONDS_PER_DAY):
            break
    g = _contact_offset_rad(geometry, t, site_itrs_km, parallax_scale, internal, radii_km)
    inside = np.abs(t - geometry.centre_tt_jd) < geometry.half_window_d
    return np.where((np.abs(g) < _TOLERANCE_RAD) & inside, t, np.nan)


def _greatest(geometry):
    """Instant of least geocentric separation [TT JD] and that separation [rad].

    The least of a one-minute grid over the window, then Newton's method on the rate.
    """
    grid = geometry.centre_tt_jd + np.linspace(-1, 1, 721) * geometry.half_window_d
    planet, sun, _ = geometry.vectors(grid)
    t = grid[int(np.argmin(_angle(planet, sun)))]
    h = 20.0 / SECONDS_PER_DAY
    for _ in range(3):
        planet, sun, _ = geometry.vectors(np.array([t - h, t, t + h]))
        s = _angle(planet, sun)
        t = t - float(np.clip((s[2] - s[0]) / (2 * h) / ((s[2] - 2 * s[1] + s[0]) / h**2), -h * 3, h * 3))
    planet, sun, _ = geometry.vectors(np.array([t]))
    return float(t), float(_angle(planet, sun)[0])


@dataclass(frozen=True)
class Transits:
    """Transits of a range, geocentric.

    Attributes
    ----------
    planet : tuple of str
    greatest_utc : numpy.ndarray of datetime64[us]
        Instant of least separation of the centres [UTC].
    contacts_tt_jd : dict
        ``C1``-``C4`` to arrays of TT Julian dates (NaN for a contact the transit lacks).
    contacts_utc : dict
        The same as UTC datetime64[us] (NaT where absent).
    least_separation_arcsec, sun_semidiameter_arcsec, planet_semidiameter_arcsec : numpy.ndarray
        At greatest transit [arcsec].
    geometries : tuple of TransitGeometry
    """

    planet: tuple[str, ...]
    greatest_tt_jd: np.ndarray
    greatest_utc: np.ndarray
    contacts_tt_jd: dict
    contacts_utc: dict
    least_separation_arcsec: np.ndarray
    sun_semidiameter_arcsec: np.ndarray
    planet_semidiameter_arcsec: np.ndarray
    geometries: tuple

    def __len__(self) -> int:
        return len(self.planet)


def _conjunction_minima(planets, first_tt_jd: float, last_tt_jd: float) -> list[tuple[float, str]]:
    """(TT JD, planet) of each inferior conjunction whose least geometric separation falls
    inside the transit circle plus a margin."""
    from firstrung.ephemeris.planets import geometric_planets_and_sun_km

    days = np.arange(first_tt_jd - 2 * _SEARCH_STEP_D, last_tt_jd + 3 * _SEARCH_STEP_D, _SEARCH_STEP_D)
    vectors, sun = geometric_planets_and_sun_km(planets, days)
    hours = np.arange(-36, 37) / 24.0
    grids, names = [], []
    for name in planets:
        p = vectors[name]
        sep = np.degrees(_angle(p, sun))
        inferior = np.sum(p**2, axis=0) < np.sum(sun**2, axis=0)  # a superior conjunction passes behind the Sun
        i = np.flatnonzero((sep[1:-1] <= sep[:-2]) & (sep[1:-1] < sep[2:]) & (sep[1:-1] < _CANDIDATE_DEG)
                           & inferior[1:-1]) + 1
        i = i[_near_miss_at_most(p, sun, i) < _PREFILTER_DEG]
        grids.append(days[i][:, None] + hours[None, :])
        names += [name] * i.size
    if not names:
        return []
    grid = np.concatenate(grids)
    vectors, sun = geometric_planets_and_sun_km(sorted(set(names)), grid.ravel())
    found = []
    for name in sorted(set(names)):
        rows = np.array([n == name for n in names])
        p = vectors[name].reshape(3, *grid.shape)[:, rows]
        s = sun.reshape(3, *grid.shape)[:, rows]
        g = grid[rows]
        sep = _angle(p, s) * ARCSEC_PER_RAD
        r = np.arange(g.shape[0])
        k = np.clip(np.argmin(sep, axis=1), 1, hours.size - 2)
        a, b, c = sep[r, k - 1], sep[r, k], sep[r, k + 1]
        curvature = np.where(a - 2 * b + c == 0, 1.0, a - 2 * b + c)
        shift = 0.5 * (a - c) / curvature
        least = b - 0.25 * (a - c) * shift
        when = g[r, k] + shift / 24.0
        distance_km = np.sqrt(np.sum(p[:, r, k] ** 2, axis=0))
        limit = SUN_SEMIDIAMETER_AT_1AU_ARCSEC / 0.98 + PLANET_RADIUS_KM[name] / distance_km * ARCSEC_PER_RAD
        keep = (least < limit + _MARGIN_ARCSEC) & (when >= first_tt_jd) & (when <= last_tt_jd)
        found += [(float(t), name) for t in when[keep]]
    return sorted(found)


def _near_miss_at_most(planet_km: np.ndarray, sun_km: np.ndarray, i: np.ndarray) -> np.ndarray:
    """Least separation near each sample ``i`` from a quadratic through its neighbours [deg].

    The direction from the Sun to the planet, as a vector of unit-vector differences, is
    fitted by a quadratic in time through the samples before, at and after ``i`` and its
    least length found on a fine grid; a cheap estimate that spares the hourly search the
    conjunctions far from the disc (within 0.002 deg of a fine search for every inferior
    conjunction of Mercury and Venus 1900-2050 at 2-day steps).
    """
    if i.size == 0:
        return np.zeros(0)
    u = planet_km / np.sqrt(np.sum(planet_km**2, axis=0))
    v = sun_km / np.sqrt(np.sum(sun_km**2, axis=0))
    d = u - v  # (3, n)
    a, b, c = d[:, i - 1], d[:, i], d[:, i + 1]
    x = np.linspace(-1.0, 1.0, 201)[:, None, None]  # in steps
    curve = b + 0.5 * (c - a) * x + 0.5 * (a - 2 * b + c) * x**2  # (201, 3, m)
    return np.degrees(np.min(np.sqrt(np.sum(curve**2, axis=1)), axis=0))


def _geometries(planets: list[str], centres_tt_jd: np.ndarray) -> list[TransitGeometry]:
    """Chebyshev series of each transit's apparent geometry (one skyfield call per planet)."""
    from firstrung.ephemeris.planets import apparent_planet_and_sun_of_date_km

    half_d = _HALF_WINDOW_H / 24.0
    nodes_x = np.sort(np.cos(np.pi * (np.arange(_NODES) + 0.5) / _NODES))
    out: list[TransitGeometry | None] = [None] * len(planets)
    for name in sorted(set(planets)):
        idx = [j for j, p in enumerate(planets) if p == name]
        times = (centres_tt_jd[idx][:, None] + half_d * nodes_x[None, :]).ravel()
        p, s, gast = apparent_planet_and_sun_of_date_km(name, times)
        p, s, gast = (a.reshape(*a.shape[:-1], len(idx), _NODES) for a in (p, s, gast))
        for m, j in enumerate(idx):
            out[j] = TransitGeometry(
                planet=name,
                centre_tt_jd=float(centres_tt_jd[j]),
                half_window_d=half_d,
                planet_coefficients=chebyshev.chebfit(nodes_x, p[:, m, :].T, _DEGREE),
                sun_coefficients=chebyshev.chebfit(nodes_x, s[:, m, :].T, _DEGREE),
                gast_coefficients=chebyshev.chebfit(nodes_x, np.unwrap(gast[m]), _DEGREE),
            )
    return out  # type: ignore[return-value]


def _first_guesses(geometry: TransitGeometry, greatest_tt_jd: float):
    """Approximate geocentric C1-C4 from a one-minute grid (NaN where the transit lacks one)."""
    grid = geometry.centre_tt_jd + np.linspace(-1, 1, 721) * geometry.half_window_d
    guesses = {}
    both = _contact_offset_rad(geometry, np.concatenate([grid, grid]), None, 1.0,
                               np.repeat([False, True], grid.size)).reshape(2, -1)
    for g, (ingress, egress) in zip(both, (("C1", "C4"), ("C2", "C3")), strict=True):
        before = grid <= greatest_tt_jd
        down = np.flatnonzero(before[1:] & (g[:-1] > 0) & (g[1:] <= 0))
        up = np.flatnonzero(~before[:-1] & (g[:-1] <= 0) & (g[1:] > 0))
        guesses[ingress] = grid[down[-1]] if down.size else np.nan
        guesses[egress] = grid[up[0]] if up.size else np.nan
    return guesses


def inferior_planet_transits(first_utc, last_utc, planets=PLANETS) -> Transits:
    """Every transit of Mercury and Venus whose greatest phase falls in a range, with its contacts.

    Parameters
    ----------
    first_utc, last_utc : datetime64 or ISO string with offset
        The range [UTC]; both inside DE421's span.
    planets : iterable of {"mercury", "venus"}

    Returns
    -------
    Transits
        Sorted by time; geocentric contacts and greatest transit.

    Examples
    --------
    >>> t = inferior_planet_transits("2032-01-01T00:00Z", "2040-12-31T00:00Z")
    >>> [str(x)[:10] for x in t.greatest_utc]
    ['2032-11-13', '2039-11-07']
    """
    from firstrung.ephemeris import as_utc_datetime64, check_in_span
    from firstrung.ephemeris.planets import tt_jd_of_utc

    first, last = (np.asarray(as_utc_datetime64(x), dtype="datetime64[us]").reshape(-1) for x in (first_utc, last_utc))
    check_in_span(np.concatenate([first, last]).astype("datetime64[ms]"), "transit search")
    first_jd, last_jd = tt_jd_of_utc(np.concatenate([first, last]))
    for name in planets:
        if name not in PLANETS:
            from firstrung.errors import InputError

            raise InputError(f"planet: expected mercury or venus, got {name!r}")
    found = _conjunction_minima(list(planets), first_jd, last_jd)
    names = [n for _, n in found]
    geometries = _geometries(names, np.array([t for t, _ in found]))
    keep, greatest, least, contacts, s_sun, s_planet = [], [], [], {c: [] for c in CONTACTS}, [], []
    for g in geometries:
        tg, sep = _greatest(g)
        planet, sun, _ = g.vectors(np.array([tg]))
        ss = float(np.arcsin(SUN_RADIUS_KM / np.linalg.norm(sun)))
        sp = float(np.arcsin(g.planet_radius_km / np.linalg.norm(planet)))
        if sep >= ss + sp:
            continue  # a near miss: the planet passes outside the disc
        guesses = _first_guesses(g, tg)
        guess = np.array([guesses[c] for c in CONTACTS])
        solved = solve_contact(g, np.where(np.isfinite(guess), guess, g.centre_tt_jd), internal=_INTERNAL)
        for c, value in zip(CONTACTS, np.where(np.isfinite(guess), solved, np.nan), strict=True):
            contacts[c].append(value)
        keep.append(g)
        greatest.append(tg)
        least.append(sep * ARCSEC_PER_RAD)
        s_sun.append(ss * ARCSEC_PER_RAD)
        s_planet.append(sp * ARCSEC_PER_RAD)
    greatest_jd = np.array(greatest, dtype=float)
    contacts_jd = {c: np.array(v, dtype=float) for c, v in contacts.items()}
    contacts_utc = {c: _utc_or_nat(v) for c, v in contacts_jd.items()}
    return Transits(
        planet=tuple(g.planet for g in keep),
        greatest_tt_jd=greatest_jd,
        greatest_utc=_utc_or_nat(greatest_jd),
        contacts_tt_jd=contacts_jd,
        contacts_utc=contacts_utc,
        least_separation_arcsec=np.array(least),
        sun_semidiameter_arcsec=np.array(s_sun),
        planet_semidiameter_arcsec=np.array(s_planet),
        geometries=tuple(keep),
    )


def _utc_or_nat(tt_jd: np.ndarray) -> np.ndarray:
    from firstrung.ephemeris.planets import utc_of_tt_jd

    tt_jd = np.asarray(tt_jd, dtype=float).reshape(-1)
    out = np.full(tt_jd.size, np.datetime64("NaT", "us"))
    ok = np.isfinite(tt_jd)
    if np.any(ok):
        out[ok] = utc_of_tt_jd(tt_jd[ok])
    return out


@dataclass(frozen=True)
class SiteContacts:
    """One transit's contacts seen from each site (arrays of shape (n_sites,) per contact).

    ``tt_jd`` and ``time_utc`` are NaN/NaT where the contact does not occur at a site
    (a grazing transit); ``sun_altitude_deg`` is the airless altitude of the Sun's centre;
    ``position_angle_deg`` the planet's position angle on the disc, from the north
    point of the disc (true equator of date) through east.
    """

    tt_jd: dict
    time_utc: dict
    sun_altitude_deg: dict
    position_angle_deg: dict


def site_itrs_km(latitude_deg, longitude_deg, elevation_m) -> np.ndarray:
    """ITRS vectors of sites [km], (3, n)."""
    lat, lon, elev = np.broadcast_arrays(*(np.asarray(v, dtype=float).reshape(-1) for v in
                                           (latitude_deg, longitude_deg, elevation_m)))
    return np.stack(geodetic_to_itrs_km(lat, lon, elev))


def contacts_at_sites(transits: Transits, k: int, latitude_deg, longitude_deg, elevation_m=0.0,
                      parallax_scale: float = 1.0) -> SiteContacts:
    """Topocentric C1-C4 of transit ``k`` for arrays of sites, with the Sun's altitude and the position angle.

    Parameters
    ----------
    transits : Transits
    k : int
        Which transit.
    latitude_deg, longitude_deg : array_like
        Geodetic WGS84 latitude (+ north), longitude (+ east) [deg].
    elevation_m : array_like
        Height above the ellipsoid [m].
    parallax_scale : float
        Multiplies the sites' geocentric vectors (1: DE421's solar parallax) [1].
    """
    itrs = site_itrs_km(latitude_deg, longitude_deg, elevation_m)
    lat = np.radians(np.broadcast_to(np.asarray(latitude_deg, dtype=float).reshape(-1), itrs.shape[1:]))
    lon = np.radians(np.broadcast_to(np.asarray(longitude_deg, dtype=float).reshape(-1), itrs.shape[1:]))
    geometry = transits.geometries[k]
    out = {"tt": {}, "utc": {}, "alt": {}, "pa": {}}
    for c in CONTACTS:
        geo = transits.contacts_tt_jd[c][k]
        if not np.isfinite(geo):
            nan = np.full(itrs.shape[1], np.nan)
            out["tt"][c], out["utc"][c], out["alt"][c], out["pa"][c] = nan, _utc_or_nat(nan), nan, nan
            continue
        t = solve_contact(geometry, np.full(itrs.shape[1], geo), itrs, parallax_scale, internal=c in ("C2", "C3"))
        alt, pa = sun_altitude_and_position_angle(geometry, np.where(np.isfinite(t), t, geo), itrs, lat, lon)
        out["tt"][c] = t
        out["utc"][c] = _utc_or_nat(t)
        out["alt"][c] = np.where(np.isfinite(t), alt, np.nan)
        out["pa"][c] = np.where(np.isfinite(t), pa, np.nan)
    return SiteContacts(out["tt"], out["utc"], out["alt"], out["pa"])


def sun_altitude_and_position_angle(geometry, tt_jd, itrs, lat_rad, lon_rad):
    """Airless altitude of the Sun's centre and the planet's position angle, seen from sites [deg]."""
    planet, sun, gast = geometry.topocentric(tt_jd, itrs)
    u_sun = sun / np.sqrt(np.sum(sun**2, axis=0))
    u_planet = planet / np.sqrt(np.sum(planet**2, axis=0))
    # the geodetic vertical, turned into the frame of date
    up = observer_of_date_km(np.stack([np.cos(lat_rad) * np.cos(lon_rad), np.cos(lat_rad) * np.sin(lon_rad),
                                       np.sin(lat_rad)]), gast)
    altitude = np.degrees(np.arcsin(np.clip(np.sum(u_sun * up, axis=0), -1, 1)))
    pole = np.array([0.0, 0.0, 1.0])[:, None]
    east = np.cross(pole, u_sun, axis=0)
    east /= np.sqrt(np.sum(east**2, axis=0))
    north = np.cross(u_sun, east, axis=0)
    d = u_planet - u_sun
    pa = np.mod(np.degrees(np.arctan2(np.sum(d * east, axis=0), np.sum(d * north, axis=0))), 360.0)
    return altitude, pa


def predicted_contacts_tt_jd(transits: Transits, transit_index, contact_index, itrs, parallax_scale=1.0,
                             radii_km=None) -> np.ndarray:
    """Each row's contact seen from its site [TT JD] (NaN where it does not occur).

    Parameters
    ----------
    transits : Transits
    transit_index, contact_index : array of int, shape (m,)
        Which transit and which contact (0-3 for C1-C4) each row is.
    itrs : numpy.ndarray, shape (3, m)
        Each row's site [km].
    parallax_scale : float
        Multiplies the sites' vectors [1].
    radii_km : (float, float), optional
        The Sun's and the planet's radii [km].
    """
    transit_index = np.asarray(transit_index, dtype=int).reshape(-1)
    contact_index = np.asarray(contact_index, dtype=int).reshape(-1)
    out = np.full(transit_index.size, np.nan)
    for k in np.unique(transit_index):  # one pass per transit; rows within it are vectorised
        rows = transit_index == k
        geo = np.array([transits.contacts_tt_jd[c][k] for c in CONTACTS])[contact_index[rows]]
        ok = np.isfinite(geo)
        picked = np.flatnonzero(rows)[ok]
        if picked.size:
            out[picked] = solve_contact(transits.geometries[k], geo[ok], itrs[:, picked], parallax_scale,
                                        _INTERNAL[contact_index[picked]], radii_km)
    return out


__all__ = [
    "CONTACTS",
    "PLANETS",
    "PLANET_RADIUS_KM",
    "SUN_RADIUS_KM",
    "SiteContacts",
    "TransitGeometry",
    "Transits",
    "contacts_at_sites",
    "inferior_planet_transits",
    "observer_of_date_km",
    "predicted_contacts_tt_jd",
    "site_itrs_km",
    "solve_contact",
]
