"""The Moon's orientation seen from the Earth's centre: librations and the axis's position angle.

Crater timings during a lunar eclipse need to know where each crater lies on
the Moon's disc. That follows from the selenographic position of the
sub-Earth point (the librations in longitude and latitude) and the position
angle of the Moon's north pole on the sky. Both are computed here with
Meeus, *Astronomical Algorithms*, 2nd ed. (1998), chapter 53 ("Ephemeris for
physical observations of the Moon"): the optical librations from the Moon's
apparent ecliptic place and Cassini's laws (inclination of the mean lunar
equator I = 1.54242 deg), plus the physical librations (the rho, sigma, tau
series, amplitude about 0.03 deg).

The IAU-recommended Mean Earth/Polar Axis frame of the Gazetteer's crater
coordinates is realised by JPL from the DE421 libration angles (Archinal et
al. 2011, CMDA 109:101), which skyfield-data does not ship; Meeus's model
departs from it by a few hundredths of a degree of selenographic arc (under
1 km on the Moon, under a second of time for a crater timing).

The pure functions take the Moon's apparent geocentric place as input, so
they can be checked against Meeus's Example 53.a; :func:`lunar_orientation`
feeds them from DE421.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from firstrung.ephemeris._core import _body, _prepared_time, as_utc_datetime64, check_in_span

#: Inclination of the mean lunar equator to the ecliptic [deg] (Meeus 1998, ch. 53, "I").
LUNAR_EQUATOR_INCLINATION_DEG = 1.54242
#: Julian date of J2000.0 [d].
_J2000_JD = 2451545.0
#: Days in a Julian century [d].
_DAYS_PER_CENTURY = 36525.0


@dataclass(frozen=True)
class LunarOrientation:
    """Librations and position angle of the Moon's axis, geocentric [deg].

    ``libration_longitude_deg`` / ``libration_latitude_deg`` are the total
    librations l, b: the selenographic longitude (east positive) and latitude
    of the point at the centre of the disc. ``axis_position_angle_deg`` is P,
    the position angle of the Moon's north pole from the north celestial
    pole's direction through east.
    """

    optical_longitude_deg: np.ndarray
    optical_latitude_deg: np.ndarray
    physical_longitude_deg: np.ndarray
    physical_latitude_deg: np.ndarray
    libration_longitude_deg: np.ndarray
    libration_latitude_deg: np.ndarray
    axis_position_angle_deg: np.ndarray


def _wrap180(x_deg):
    return (np.asarray(x_deg) + 180.0) % 360.0 - 180.0


def fundamental_arguments_deg(centuries_tt) -> dict[str, np.ndarray]:
    """The Moon's mean elements (Meeus 1998, eqs. 47.2-47.7 and 47.6 for E).

    Parameters
    ----------
    centuries_tt : float or array
        Julian centuries of TT from J2000.0 [century].

    Returns
    -------
    dict
        ``D``, ``M``, ``Mp`` (M'), ``F``, ``Omega`` [deg] and ``E`` [1].

    Examples
    --------
    Meeus Example 47.a (T = -0.077221081451): F = 219.889721 deg.

    >>> round(float(fundamental_arguments_deg(-0.077221081451)["F"]), 6)
    219.889721
    """
    t = np.asarray(centuries_tt, dtype=float)
    t2, t3, t4 = t * t, t**3, t**4
    d = 297.8501921 + 445267.1114034 * t - 0.0018819 * t2 + t3 / 545868.0 - t4 / 113065000.0
    m = 357.5291092 + 35999.0502909 * t - 0.0001536 * t2 + t3 / 24490000.0
    mp = 134.9633964 + 477198.8675055 * t + 0.0087414 * t2 + t3 / 69699.0 - t4 / 14712000.0
    f = 93.2720950 + 483202.0175233 * t - 0.0036539 * t2 - t3 / 3526000.0 + t4 / 863310000.0
    omega = 125.0445479 - 1934.1362891 * t + 0.0020754 * t2 + t3 / 467441.0 - t4 / 60616000.0
    e = 1.0 - 0.002516 * t - 0.0000074 * t2
    return {
        "D": np.mod(d, 360.0),
        "M": np.mod(m, 360.0),
        "Mp": np.mod(mp, 360.0),
        "F": np.mod(f, 360.0),
        "Omega": np.mod(omega, 360.0),
        "E": e,
    }


def _physical_series_deg(t, a):
    """rho, sigma, tau of Meeus ch. 53 [deg].

    The coefficients are Meeus's (1998, p. 373), written here from memory and
    checked through Example 53.a (l'' = -0.025 deg, b'' = +0.006 deg, P = 15.08 deg;
    see tests/ephemeris/test_eclipses.py). Their total effect is below 0.04 deg.
    """
    r = np.radians
    d, m, mp, f, om, e = (r(a["D"]), r(a["M"]), r(a["Mp"]), r(a["F"]), r(a["Omega"]), a["E"])
    k1 = r(119.75 + 131.849 * t)
    k2 = r(72.56 + 20.186 * t)
    s, c = np.sin, np.cos
    rho = (
        -0.02752 * c(mp) - 0.02245 * s(f) + 0.00684 * c(mp - 2 * f) - 0.00293 * c(2 * f)
        - 0.00085 * c(2 * f - 2 * d) - 0.00054 * c(mp - 2 * d) - 0.00020 * s(mp + f)
        - 0.00020 * c(mp + 2 * f) - 0.00020 * c(mp - f) + 0.00014 * c(mp + 2 * f - 2 * d)
    )
    sigma = (
        -0.02816 * s(mp) + 0.02244 * c(f) - 0.00682 * s(mp - 2 * f) - 0.00279 * s(2 * f)
        - 0.00083 * s(2 * f - 2 * d) + 0.00069 * s(mp - 2 * d) + 0.00040 * c(mp + f)
        - 0.00025 * s(2 * mp) - 0.00023 * s(mp + 2 * f) + 0.00020 * c(mp - f)
        + 0.00019 * s(mp - f) + 0.00013 * s(mp + 2 * f - 2 * d) - 0.00010 * c(mp - 3 * f)
    )
    tau = (
        0.02520 * e * s(m) + 0.00473 * s(2 * mp - 2 * f) - 0.00467 * s(mp) + 0.00396 * s(k1)
        + 0.00276 * s(2 * mp - 2 * d) + 0.00196 * s(om) - 0.00183 * c(mp - f)
        + 0.00115 * s(mp - 2 * d) - 0.00096 * s(mp - d) + 0.00046 * s(2 * f - 2 * d)
        - 0.00039 * s(mp - f) - 0.00032 * s(mp - m - d) + 0.00027 * s(2 * mp - m - 2 * d)
        + 0.00023 * s(k2) - 0.00014 * s(2 * d) + 0.00014 * c(2 * mp - 2 * f)
        - 0.00012 * s(mp - 2 * f) - 0.00012 * s(2 * mp) + 0.00011 * s(2 * mp - 2 * m - 2 * d)
    )
    return rho, sigma, tau


def orientation_from_apparent_place(
    centuries_tt,
    apparent_longitude_deg,
    latitude_deg,
    right_ascension_deg,
    nutation_longitude_deg,
    obliquity_deg,
) -> LunarOrientation:
    """Librations and axis position angle from the Moon's apparent place (Meeus ch. 53).

    Parameters
    ----------
    centuries_tt : float or array
        Julian centuries of TT from J2000.0 [century].
    apparent_longitude_deg, latitude_deg : float or array
        The Moon's apparent geocentric ecliptic longitude (with nutation) and
        latitude, of date [deg].
    right_ascension_deg : float or array
        The Moon's apparent geocentric right ascension [deg].
    nutation_longitude_deg : float or array
        Nutation in longitude, delta psi [deg].
    obliquity_deg : float or array
        True obliquity of the ecliptic [deg].

    Returns
    -------
    LunarOrientation

    Examples
    --------
    Meeus Example 53.a (1992 April 12, 0h TD): l = -1.23 deg, b = +4.20 deg, P = 15.08 deg.

    >>> o = orientation_from_apparent_place(-0.077221081451, 133.167265, -3.229126,
    ...                                     134.688470, 0.004610, 23.440636)
    >>> [round(float(x), 2) for x in (o.libration_longitude_deg, o.libration_latitude_deg,
    ...                                o.axis_position_angle_deg)]
    [-1.23, 4.2, 15.08]
    """
    t = np.asarray(centuries_tt, dtype=float)
    a = fundamental_arguments_deg(t)
    inc = np.radians(LUNAR_EQUATOR_INCLINATION_DEG)
    lam = np.radians(apparent_longitude_deg)
    beta = np.radians(latitude_deg)
    dpsi = np.radians(nutation_longitude_deg)
    om = np.radians(a["Omega"])
    w = lam - dpsi - om
    a_rad = np.arctan2(
        np.sin(w) * np.cos(beta) * np.cos(inc) - np.sin(beta) * np.sin(inc), np.cos(w) * np.cos(beta)
    )
    l_opt = _wrap180(np.degrees(a_rad) - a["F"])
    b_opt_rad = np.arcsin(-np.sin(w) * np.cos(beta) * np.sin(inc) - np.sin(beta) * np.cos(inc))
    rho, sigma, tau = _physical_series_deg(t, a)
    l_phys = -tau + (rho * np.cos(a_rad) + sigma * np.sin(a_rad)) * np.tan(b_opt_rad)
    b_phys = sigma * np.cos(a_rad) - rho * np.sin(a_rad)
    l_tot = l_opt + l_phys
    b_tot = np.degrees(b_opt_rad) + b_phys
    # position angle of the axis (Meeus 1998, ch. 53, after the librations)
    eps = np.radians(obliquity_deg)
    v = om + dpsi + np.radians(sigma) / np.sin(inc)
    x = np.sin(inc + np.radians(rho)) * np.sin(v)
    y = np.sin(inc + np.radians(rho)) * np.cos(v) * np.cos(eps) - np.cos(inc + np.radians(rho)) * np.sin(eps)
    omega = np.arctan2(x, y)
    sin_p = np.sqrt(x * x + y * y) * np.cos(np.radians(right_ascension_deg) - omega) / np.cos(np.radians(b_tot))
    p = np.degrees(np.arcsin(np.clip(sin_p, -1.0, 1.0)))
    return LunarOrientation(
        optical_longitude_deg=l_opt,
        optical_latitude_deg=np.degrees(b_opt_rad),
        physical_longitude_deg=l_phys,
        physical_latitude_deg=b_phys,
        libration_longitude_deg=l_tot,
        libration_latitude_deg=b_tot,
        axis_position_angle_deg=p,
    )


def feature_disc_offsets(
    feature_latitude_deg, feature_longitude_deg, libration_longitude_deg, libration_latitude_deg,
    axis_position_angle_deg,
):
    """Where a lunar feature lies on the disc, in units of the Moon's radius.

    Orthographic projection of the selenographic point onto the plane of the
    sky, then turned by the axis's position angle. Selenographic east (towards
    Mare Crisium) appears towards the sky's west.

    Parameters
    ----------
    feature_latitude_deg, feature_longitude_deg : float or array
        Selenographic latitude and east longitude of the feature [deg].
    libration_longitude_deg, libration_latitude_deg : float or array
        Total librations l, b [deg].
    axis_position_angle_deg : float or array
        Position angle P of the Moon's north pole [deg].

    Returns
    -------
    east, north, toward_earth : ndarray
        Offsets from the disc's centre towards the sky's east and north, and
        the depth towards the observer [Moon radii]; ``toward_earth > 0`` on
        the visible hemisphere.

    Examples
    --------
    A feature at the centre of the disc has no offset; one at selenographic
    longitude +90 deg (no libration, axis upright) is on the western limb:

    >>> [round(float(v), 6) + 0.0 for v in feature_disc_offsets(0.0, 90.0, 0.0, 0.0, 0.0)]
    [-1.0, 0.0, 0.0]
    """
    lat = np.radians(feature_latitude_deg)
    dlon = np.radians(np.asarray(feature_longitude_deg) - np.asarray(libration_longitude_deg))
    b = np.radians(libration_latitude_deg)
    p = np.radians(axis_position_angle_deg)
    xi = np.cos(lat) * np.sin(dlon)  # towards selenographic east, on the disc
    eta = np.sin(lat) * np.cos(b) - np.cos(lat) * np.sin(b) * np.cos(dlon)  # towards the Moon's north
    zeta = np.sin(lat) * np.sin(b) + np.cos(lat) * np.cos(b) * np.cos(dlon)
    north = eta * np.cos(p) + xi * np.sin(p)
    east = eta * np.sin(p) - xi * np.cos(p)
    return east, north, zeta


def lunar_orientation(time_utc) -> LunarOrientation:
    """The Moon's geocentric librations and axis position angle at each time, from DE421.

    The Moon's apparent ecliptic place of date, the nutation and the true
    obliquity come from skyfield (IAU 2000B nutation); Meeus's chapter 53
    turns them into the orientation.

    Parameters
    ----------
    time_utc : datetime64 array or aware datetimes / ISO strings with offset
        Instants [UTC].

    Returns
    -------
    LunarOrientation

    Examples
    --------
    >>> o = lunar_orientation("2029-06-26T03:22:00Z")
    >>> bool(abs(float(o.libration_longitude_deg)) < 8.5 and abs(float(o.axis_position_angle_deg)) < 25)
    True
    """
    from skyfield.framelib import ecliptic_frame
    from skyfield.functions import mxv

    t_utc = as_utc_datetime64(time_utc)
    shape = np.shape(t_utc)
    flat = np.atleast_1d(t_utc).ravel()
    check_in_span(flat)
    t = _prepared_time(flat)
    app = _body("earth").at(t).observe(_body("moon")).apparent()
    lat, lon, _ = app.frame_latlon(ecliptic_frame)
    xyz = np.asarray(mxv(t.M, app.position.au)).reshape(3, -1)
    ra_deg = np.degrees(np.arctan2(xyz[1], xyz[0]))
    dpsi_rad, _deps = t._nutation_angles_radians
    obliquity_deg = np.degrees(np.asarray(t._mean_obliquity_radians) + np.asarray(_deps))
    centuries = (np.asarray(t.tt) - _J2000_JD) / _DAYS_PER_CENTURY
    o = orientation_from_apparent_place(
        centuries,
        np.asarray(lon.degrees).reshape(-1),
        np.asarray(lat.degrees).reshape(-1),
        ra_deg,
        np.degrees(np.asarray(dpsi_rad)).reshape(-1),
        obliquity_deg.reshape(-1),
    )
    return LunarOrientation(*(np.asarray(getattr(o, f)).reshape(shape) for f in LunarOrientation.__dataclass_fields__))
