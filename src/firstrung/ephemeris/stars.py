"""Stars seen from the Earth: parallax factors from DE421's Earth, astrometric places, altitudes.

- :func:`earth_barycentric_au`: the Earth's position from the solar system's barycentre
  (ICRS) [au], which drives every star's yearly parallax;
- :func:`parallax_factors`: how far a star of 1 mas parallax is displaced in right
  ascension (along the parallel) and in declination at each instant;
- :func:`star_astrometric_radec_deg`: a star's astrometric ICRS place from the Earth,
  by skyfield's own ``Star`` (proper motion and parallax), for rehearsals and checks;
- :func:`star_altitude_deg`: a star's airless altitude at sites and times, for planning.

References
----------
Green, R. M. 1985, *Spherical Astronomy*, CUP, sec. 11.4 (the annual parallax in right
ascension and declination from the Earth's barycentric coordinates); ESA 1997, *The
Hipparcos and Tycho Catalogues* vol. 1 sec. 1.2.8 (the same factors, used to fit
Hipparcos's parallaxes).
"""

from __future__ import annotations

import numpy as np

from firstrung.ephemeris._core import _body, _prepared_time, _skyfield_time, timescale

#: Days per Julian year [d] (IAU).
JULIAN_YEAR_D = 365.25
#: The Julian date of J2000.0 [d, TT].
J2000_JD = 2451545.0


def julian_year_tt(time_utc) -> np.ndarray:
    """Julian epochs (e.g. 2027.5) of UTC instants, on the TT scale [yr]."""
    t = _skyfield_time(np.asarray(time_utc, dtype="datetime64[us]").reshape(-1))
    return 2000.0 + (np.asarray(t.tt, dtype=float) - J2000_JD) / JULIAN_YEAR_D


def earth_barycentric_au(time_utc) -> np.ndarray:
    """The Earth's position from the solar system barycentre, ICRS, from DE421 [au], shape (3, n).

    >>> x = earth_barycentric_au(np.array(["2027-03-20T12:00"], dtype="datetime64[ms]"))
    >>> bool(0.98 < float(np.hypot.reduce(x[:, 0])) < 1.0)
    True
    """
    t = _skyfield_time(np.asarray(time_utc, dtype="datetime64[us]").reshape(-1))
    return np.asarray(_body("earth").at(t).position.au, dtype=float).reshape(3, -1)


def parallax_factors(ra_deg, dec_deg, time_utc) -> tuple[np.ndarray, np.ndarray]:
    """Parallax factors in right ascension (times cos dec) and declination [1].

    A star of parallax p [mas] is displaced by ``p * f_ra`` along the parallel and
    ``p * f_dec`` in declination, from the place the barycentre sees:
    ``f_ra = x sin(a) - y cos(a)``, ``f_dec = (x cos(a) + y sin(a)) sin(d) - z cos(d)``,
    (x, y, z) the Earth's barycentric position in au (Green 1985, sec. 11.4).

    Parameters
    ----------
    ra_deg, dec_deg : float or array
        The star's place [deg].
    time_utc : array of datetime64
        The instants.

    >>> f_ra, f_dec = parallax_factors(316.7, 38.7, np.array(["2027-01-01", "2027-07-01"], dtype="datetime64[ms]"))
    >>> bool(np.all(np.abs(f_ra) <= 1.02) and np.all(np.abs(f_dec) <= 1.02))
    True
    """
    return factors_from_earth(ra_deg, dec_deg, earth_barycentric_au(time_utc))


def factors_from_earth(ra_deg, dec_deg, earth_au) -> tuple[np.ndarray, np.ndarray]:
    """:func:`parallax_factors` from the Earth's barycentric positions already at hand [au], (3, n)."""
    x, y, z = earth_au
    a, d = np.radians(ra_deg), np.radians(dec_deg)
    f_ra = x * np.sin(a) - y * np.cos(a)
    f_dec = (x * np.cos(a) + y * np.sin(a)) * np.sin(d) - z * np.cos(d)
    return f_ra, f_dec


def star_astrometric_radec_deg(ra_deg: float, dec_deg: float, pm_ra_mas_per_yr: float, pm_dec_mas_per_yr: float,
                               parallax_mas: float, epoch_jyear: float, time_utc) -> tuple[np.ndarray, np.ndarray]:
    """A star's astrometric ICRS place seen from the Earth's centre (skyfield's ``Star``) [deg].

    Parameters
    ----------
    ra_deg, dec_deg : float
        ICRS place at ``epoch_jyear`` [deg].
    pm_ra_mas_per_yr, pm_dec_mas_per_yr : float
        Proper motion, along the parallel and in declination [mas/yr].
    parallax_mas : float
        [mas]
    epoch_jyear : float
        Epoch of the place (Julian year, TT) [yr].
    time_utc : array of datetime64

    Returns
    -------
    ra_deg, dec_deg : numpy.ndarray
    """
    from skyfield.api import Star

    ts = timescale()
    star = Star(ra_hours=ra_deg / 15.0, dec_degrees=dec_deg, ra_mas_per_year=pm_ra_mas_per_yr,
                dec_mas_per_year=pm_dec_mas_per_yr, parallax_mas=parallax_mas, epoch=ts.J(epoch_jyear))
    t = _skyfield_time(np.asarray(time_utc, dtype="datetime64[us]").reshape(-1))
    ra, dec, _ = _body("earth").at(t).observe(star).radec()
    return np.asarray(ra._degrees, dtype=float).reshape(-1), np.asarray(dec.degrees, dtype=float).reshape(-1)


def star_altitude_deg(ra_deg: float, dec_deg: float, time_utc, latitude_deg, longitude_deg) -> np.ndarray:
    """A star's airless altitude [deg]; times and site coordinates broadcast together.

    The ICRS place is carried to the true equator and equinox of the middle instant
    (precession and nutation, skyfield), then the hour angle comes from each instant's
    apparent sidereal time; over a year the place of date moves by under 1', far below
    what planning needs.

    >>> alt = star_altitude_deg(0.0, 90.0, np.array(["2027-01-01"], dtype="datetime64[ms]"), 45.0, 7.0)
    >>> round(float(alt[0]), 1)   # the pole stands at the latitude
    45.0
    """
    from skyfield.api import Star

    t_all, lat, lon = np.broadcast_arrays(np.asarray(time_utc, dtype="datetime64[us]"),
                                          np.asarray(latitude_deg, dtype=float), np.asarray(longitude_deg, dtype=float))
    if t_all.size == 0:
        return np.zeros(t_all.shape)
    flat = t_all.reshape(-1)
    middle = _skyfield_time(np.sort(flat)[[flat.size // 2]])
    star = Star(ra_hours=ra_deg / 15.0, dec_degrees=dec_deg)
    ra, dec, _ = _body("earth").at(middle).observe(star).radec(epoch="date")
    ra_rad, dec_rad = float(np.radians(ra._degrees).ravel()[0]), float(dec.radians.ravel()[0])
    unique, inverse = np.unique(flat, return_inverse=True)
    # apparent sidereal time with the IAU 2000B nutation (<= 0.001" from 2000A, five times faster)
    gast_h = np.asarray(_prepared_time(unique).gast, dtype=float).reshape(-1)[inverse].reshape(t_all.shape)
    hour_angle = np.radians(gast_h * 15.0 + lon) - ra_rad
    lat_rad = np.radians(lat)
    sin_alt = np.sin(lat_rad) * np.sin(dec_rad) + np.cos(lat_rad) * np.cos(dec_rad) * np.cos(hour_angle)
    return np.degrees(np.arcsin(np.clip(sin_alt, -1.0, 1.0)))
