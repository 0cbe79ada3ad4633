"""The Moon's apparent place, and the Sun-Moon geometry that phases and eclipses need.

As for the Sun, the geocentric apparent Moon (light time, deflection, annual
aberration) comes from skyfield once per distinct time; parallax (about 1 deg)
and diurnal aberration are applied per site in numpy. Geometric positions
(no light time, no aberration) are given separately: the phase angle and the
Sun-Earth-Moon triangle of the half-moon method use them (reference-values
section 5: apparent positions bias the implied distance ratio by +/- 4 %).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from firstrung.constants import ASTRONOMICAL_UNIT_KM, MOON_MEAN_RADIUS_KM
from firstrung.ephemeris._core import _body, _prepared_time, as_utc_datetime64, check_in_span
from firstrung.ephemeris.sun import SunPosition, _topocentric


@dataclass(frozen=True)
class MoonPosition:
    """Apparent topocentric place of the Moon's centre, airless."""

    altitude_deg: np.ndarray
    azimuth_deg: np.ndarray
    hour_angle_deg: np.ndarray
    declination_deg: np.ndarray
    right_ascension_deg: np.ndarray
    distance_km: np.ndarray
    semidiameter_deg: np.ndarray


@dataclass(frozen=True)
class SunMoonGeocentric:
    """Geocentric Sun and Moon at each time.

    ``*_apparent_km`` are apparent places in the true equator and equinox of
    date (3, n); ``*_geometric_km`` are instantaneous geometric positions in
    the GCRS (3, n). Angles in degrees.
    """

    moon_apparent_km: np.ndarray
    sun_apparent_km: np.ndarray
    moon_geometric_km: np.ndarray
    sun_geometric_km: np.ndarray
    gast_rad: np.ndarray
    elongation_apparent_deg: np.ndarray
    elongation_geometric_deg: np.ndarray
    phase_angle_deg: np.ndarray
    illuminated_fraction: np.ndarray
    longitude_difference_deg: np.ndarray


def _angle_deg(a, b):
    """Angle between vectors along axis 0 [deg] (atan2 form, accurate at all angles)."""
    cross = np.cross(a, b, axis=0)
    return np.degrees(np.arctan2(np.sqrt(np.sum(cross**2, axis=0)), np.sum(a * b, axis=0)))


def sun_moon_geocentric(time_utc) -> SunMoonGeocentric:
    """Geocentric Sun-Moon geometry for an array of times.

    The phase angle is the Sun-Moon-Earth angle from geometric positions;
    the illuminated fraction is ``(1 + cos i) / 2`` (Meeus 1998, eq. 48.1);
    ``longitude_difference_deg`` is the Moon's apparent ecliptic longitude of
    date minus the Sun's, in [0, 360): 90 at first quarter, 270 at last.

    >>> g = sun_moon_geocentric(np.array(["2027-01-15T12:00"], dtype="datetime64[s]"))
    >>> 0.0 <= float(g.illuminated_fraction[0]) <= 1.0
    True
    """
    from skyfield.functions import mxv

    t_utc = np.atleast_1d(as_utc_datetime64(time_utc))
    check_in_span(t_utc)
    t = _prepared_time(t_utc)
    earth, sun, moon = _body("earth"), _body("sun"), _body("moon")
    e = earth.at(t)
    moon_app = e.observe(moon).apparent()
    sun_app = e.observe(sun).apparent()
    moon_app_km = np.asarray(mxv(t.M, moon_app.position.au)).reshape(3, -1) * ASTRONOMICAL_UNIT_KM
    sun_app_km = np.asarray(mxv(t.M, sun_app.position.au)).reshape(3, -1) * ASTRONOMICAL_UNIT_KM
    moon_geo = np.asarray((moon - earth).at(t).position.km).reshape(3, -1)
    sun_geo = np.asarray((sun - earth).at(t).position.km).reshape(3, -1)
    phase = _angle_deg(sun_geo - moon_geo, -moon_geo)
    lon_moon = np.degrees(np.asarray(moon_app.frame_latlon(_ecliptic_of_date())[1].radians)).reshape(-1)
    lon_sun = np.degrees(np.asarray(sun_app.frame_latlon(_ecliptic_of_date())[1].radians)).reshape(-1)
    return SunMoonGeocentric(
        moon_apparent_km=moon_app_km,
        sun_apparent_km=sun_app_km,
        moon_geometric_km=moon_geo,
        sun_geometric_km=sun_geo,
        gast_rad=np.asarray(t.gast).reshape(-1) * (np.pi / 12.0),
        elongation_apparent_deg=_angle_deg(moon_app_km, sun_app_km),
        elongation_geometric_deg=_angle_deg(moon_geo, sun_geo),
        phase_angle_deg=phase,
        illuminated_fraction=(1.0 + np.cos(np.radians(phase))) / 2.0,
        longitude_difference_deg=np.mod(lon_moon - lon_sun, 360.0),
    )


def _ecliptic_of_date():
    from skyfield.framelib import ecliptic_frame

    return ecliptic_frame


def moon_position(time_utc, latitude_deg, longitude_deg, elevation_m=0.0) -> MoonPosition:
    """Apparent topocentric position of the Moon's centre, without refraction.

    Parameters
    ----------
    time_utc : datetime64 array or aware datetimes / ISO strings with offset
        Instants [UTC], broadcast against the sites.
    latitude_deg, longitude_deg, elevation_m : float or array
        Sites [deg, deg, m].

    >>> p = moon_position("2027-01-15T18:40:00Z", 46.2, 7.4, 620.0)
    >>> bool(-90 <= float(p.altitude_deg) <= 90)
    True
    """
    from skyfield.functions import mxv

    t = as_utc_datetime64(time_utc)
    lat, lon, elev = (np.asarray(x, dtype=float) for x in (latitude_deg, longitude_deg, elevation_m))
    t_b, lat_b, lon_b, elev_b = np.broadcast_arrays(t, lat, lon, elev)
    shape = t_b.shape
    check_in_span(t_b)
    unique_t, inverse = np.unique(t_b.ravel(), return_inverse=True)
    ts = _prepared_time(unique_t)
    app = _body("earth").at(ts).observe(_body("moon")).apparent()
    xyz_km = np.asarray(mxv(ts.M, app.position.au)).reshape(3, -1) * ASTRONOMICAL_UNIT_KM
    gast = np.asarray(ts.gast).reshape(-1) * (np.pi / 12.0)
    p = SunPosition(**{k: v.reshape(shape) for k, v in _topocentric(
        xyz_km[:, inverse], gast[inverse], lat_b.ravel(), lon_b.ravel(), elev_b.ravel()).items()})
    distance_km = p.distance_au * ASTRONOMICAL_UNIT_KM
    return MoonPosition(
        altitude_deg=p.altitude_deg,
        azimuth_deg=p.azimuth_deg,
        hour_angle_deg=p.hour_angle_deg,
        declination_deg=p.declination_deg,
        right_ascension_deg=p.right_ascension_deg,
        distance_km=distance_km,
        semidiameter_deg=np.degrees(np.arcsin(MOON_MEAN_RADIUS_KM / distance_km)),
    )
