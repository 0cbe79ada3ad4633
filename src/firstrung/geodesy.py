"""Distances and radii on the WGS84 ellipsoid.

Eratosthenes' method compares the Sun's noon altitude at two sites on (or
reduced to) one meridian: the angle between the verticals is the latitude
difference, and the arc between the sites divided by that angle is the
radius the measurement returns. On the real Earth that radius is the
meridional radius of curvature averaged over the arc, about M at the
mid-latitude, not the mean radius; this module gives both sides of that
comparison.

* Meridian arcs: Helmert's series in the third flattening n = f / (2 - f),
  as used by Kruger (1912) for the transverse Mercator projection.
* Geodesics between arbitrary sites: Karney (2013) through geographiclib.
* Geocentric Cartesian (ITRS) coordinates of a site: the standard ellipsoidal
  formula.

References
----------
Helmert, F. R. (1880), Die mathematischen und physikalischen Theorieen der
hoheren Geodasie, vol. 1, Teubner, Leipzig (the meridian-arc series).
Karney, C. F. F. (2011), "Transverse Mercator with an accuracy of a few
nanometers", J. Geodesy 85:475-485, eq. (14) (the same series, in n).
Karney, C. F. F. (2013), "Algorithms for geodesics", J. Geodesy 87:43-55.
NIMA TR8350.2 (2000), Department of Defense World Geodetic System 1984, 3rd ed.
"""

from __future__ import annotations

import numpy as np

from firstrung.arguments import checked as _checked
from firstrung.arguments import scalar_or_array as _output
from firstrung.constants import WGS84_FLATTENING, WGS84_SEMI_MAJOR_AXIS_M

__all__ = [
    "baseline_north_south_km",
    "geodesic_inverse",
    "geodetic_to_itrs_km",
    "mean_meridional_radius_km",
    "meridian_arc_m",
    "meridional_radius_of_curvature_km",
    "north_south_distance_km",
]

#: Longitudes accepted [deg]: either convention (-180..180 or 0..360), with slack.
LONGITUDE_RANGE_DEG = (-360.0, 360.0)

_M_PER_KM = 1000.0
#: First eccentricity squared of WGS84, e^2 = f (2 - f) [1].
_E2 = WGS84_FLATTENING * (2.0 - WGS84_FLATTENING)
#: Third flattening n = f / (2 - f) = (a - b) / (a + b) [1].
_N = WGS84_FLATTENING / (2.0 - WGS84_FLATTENING)
#: Helmert's meridian-arc series (Karney 2011, eq. 14):
#: m(phi) = a / (1 + n) [B0 phi + sum_k Bk sin(2 k phi)], truncated after n^4;
#: the first neglected term is of order a n^5 = 9e-8 m.
_ARC_SCALE_M = WGS84_SEMI_MAJOR_AXIS_M / (1.0 + _N)
_B0 = 1.0 + _N**2 / 4.0 + _N**4 / 64.0
_BK = np.array(
    [
        -1.5 * (_N - _N**3 / 8.0),
        15.0 / 16.0 * (_N**2 - _N**4 / 4.0),
        -35.0 / 48.0 * _N**3,
        315.0 / 512.0 * _N**4,
    ]
)
_K = np.arange(1, _BK.size + 1)


# --- input checks -------------------------------------------------------------------




def _latitude(name: str, value) -> np.ndarray:
    return _checked(name, value, -90.0, 90.0, "deg")


# --- meridian arcs ------------------------------------------------------------------


def _arc_per_radian_m(latitude1_rad: np.ndarray, latitude2_rad: np.ndarray) -> np.ndarray:
    """(m(phi2) - m(phi1)) / (phi2 - phi1) [m per rad], smooth through phi1 = phi2.

    Uses sin(2k phi2) - sin(2k phi1) = 2 cos(k S) sin(k D), S = phi1 + phi2,
    D = phi2 - phi1, so no difference of two large arcs is ever taken.
    """
    total = (latitude1_rad + latitude2_rad)[..., np.newaxis]
    difference = (latitude2_rad - latitude1_rad)[..., np.newaxis]
    # sin(k D) / D = k sinc(k D / pi) with numpy's normalised sinc.
    terms = 2.0 * _K * _BK * np.cos(_K * total) * np.sinc(_K * difference / np.pi)
    return _ARC_SCALE_M * (_B0 + terms.sum(axis=-1))


def meridian_arc_m(latitude_deg):
    """Distance along a meridian of WGS84 from the equator to a latitude.

    Parameters
    ----------
    latitude_deg : float or array_like
        Geodetic latitude, from -90 to 90 [deg].

    Returns
    -------
    float or numpy.ndarray
        Signed meridian arc, negative south of the equator [m]. The series
        is accurate to better than 0.001 mm.

    Raises
    ------
    InputError
        A latitude that is not finite or outside -90 to 90 deg.

    Notes
    -----
    m(phi) = a / (1 + n) [(1 + n^2/4 + n^4/64) phi - 3/2 (n - n^3/8) sin 2phi
    + 15/16 (n^2 - n^4/4) sin 4phi - 35/48 n^3 sin 6phi + 315/512 n^4 sin 8phi],
    n = f / (2 - f) (Helmert 1880; Karney 2011, eq. 14).

    Examples
    --------
    The quarter meridian of WGS84:

    >>> round(meridian_arc_m(90.0), 3)
    10001965.729
    """
    latitude_rad = np.radians(_latitude("latitude_deg", latitude_deg))
    arc_m = _arc_per_radian_m(np.zeros_like(latitude_rad), latitude_rad) * latitude_rad
    return _output(arc_m, latitude_deg)


def north_south_distance_km(latitude1_deg, latitude2_deg):
    """Signed meridian distance from latitude 1 to latitude 2 on WGS84.

    Parameters
    ----------
    latitude1_deg, latitude2_deg : float or array_like
        Geodetic latitudes, from -90 to 90 [deg]; they broadcast.

    Returns
    -------
    float or numpy.ndarray
        m(phi2) - m(phi1), positive when site 2 is north of site 1 [km].

    Raises
    ------
    InputError
        A latitude that is not finite or outside -90 to 90 deg.

    Examples
    --------
    One degree of latitude centred on 45 deg N:

    >>> round(north_south_distance_km(44.5, 45.5), 6)
    111.131778
    """
    latitude1_rad = np.radians(_latitude("latitude1_deg", latitude1_deg))
    latitude2_rad = np.radians(_latitude("latitude2_deg", latitude2_deg))
    distance_m = _arc_per_radian_m(latitude1_rad, latitude2_rad) * (latitude2_rad - latitude1_rad)
    return _output(distance_m / _M_PER_KM, latitude1_deg, latitude2_deg)


def meridional_radius_of_curvature_km(latitude_deg):
    """Meridional radius of curvature of WGS84 at a latitude.

    Parameters
    ----------
    latitude_deg : float or array_like
        Geodetic latitude, from -90 to 90 [deg].

    Returns
    -------
    float or numpy.ndarray
        M(phi) = a (1 - e^2) / (1 - e^2 sin^2 phi)^(3/2) [km].

    Raises
    ------
    InputError
        A latitude that is not finite or outside -90 to 90 deg.

    Examples
    --------
    >>> round(meridional_radius_of_curvature_km(44.0), 1)
    6366.3
    """
    latitude_rad = np.radians(_latitude("latitude_deg", latitude_deg))
    radius_m = (
        WGS84_SEMI_MAJOR_AXIS_M * (1.0 - _E2) / (1.0 - _E2 * np.sin(latitude_rad) ** 2) ** 1.5
    )
    return _output(radius_m / _M_PER_KM, latitude_deg)


def mean_meridional_radius_km(latitude1_deg, latitude2_deg):
    """Radius a perfect two-site meridian measurement returns: arc / angle.

    Parameters
    ----------
    latitude1_deg, latitude2_deg : float or array_like
        Geodetic latitudes of the two sites, from -90 to 90 [deg]; they broadcast.

    Returns
    -------
    float or numpy.ndarray
        North-south distance divided by the latitude difference in radians
        [km], i.e. M averaged over the arc; for equal latitudes the limit,
        M(phi) (equal to :func:`meridional_radius_of_curvature_km` within the
        series' 1 micrometre). Computed without cancellation, so it is smooth as the two
        latitudes approach each other.

    Raises
    ------
    InputError
        A latitude that is not finite or outside -90 to 90 deg.

    Examples
    --------
    >>> round(mean_meridional_radius_km(44.5, 45.5), 3)
    6367.382
    >>> abs(mean_meridional_radius_km(30.0, 30.0) - meridional_radius_of_curvature_km(30.0)) < 1e-9
    True
    """
    latitude1_rad = np.radians(_latitude("latitude1_deg", latitude1_deg))
    latitude2_rad = np.radians(_latitude("latitude2_deg", latitude2_deg))
    radius_m = _arc_per_radian_m(latitude1_rad, latitude2_rad)
    return _output(radius_m / _M_PER_KM, latitude1_deg, latitude2_deg)


# --- geodesics and baselines --------------------------------------------------------


def geodesic_inverse(latitude1_deg, longitude1_deg, latitude2_deg, longitude2_deg):
    """Shortest distance and azimuths between two sites on WGS84 (Karney 2013).

    Parameters
    ----------
    latitude1_deg, longitude1_deg : float or array_like
        Site 1: geodetic latitude (-90 to 90) and longitude, east positive
        (-360 to 360) [deg].
    latitude2_deg, longitude2_deg : float or array_like
        Site 2, likewise [deg]. All four broadcast.

    Returns
    -------
    distance_km : float or numpy.ndarray
        Geodesic distance [km].
    azimuth1_deg : float or numpy.ndarray
        Azimuth of the geodesic at site 1, from north through east, 0 to 360 [deg].
    azimuth2_deg : float or numpy.ndarray
        Forward azimuth of the geodesic on arrival at site 2, 0 to 360 [deg].

    Raises
    ------
    InputError
        A coordinate that is not finite or is outside its range.

    Notes
    -----
    geographiclib solves one pair at a time; arrays are looped over here.

    Examples
    --------
    >>> distance_km, azimuth1_deg, azimuth2_deg = geodesic_inverse(40.6, -73.8, 51.6, -0.5)
    >>> round(distance_km, 3), round(azimuth1_deg, 3)
    (5551.759, 51.199)
    """
    latitude1 = _latitude("latitude1_deg", latitude1_deg)
    longitude1 = _checked("longitude1_deg", longitude1_deg, *LONGITUDE_RANGE_DEG, "deg")
    latitude2 = _latitude("latitude2_deg", latitude2_deg)
    longitude2 = _checked("longitude2_deg", longitude2_deg, *LONGITUDE_RANGE_DEG, "deg")
    arrays = np.broadcast_arrays(latitude1, longitude1, latitude2, longitude2)
    from geographiclib.geodesic import Geodesic  # only here: most commands solve no geodesic

    geodesic = Geodesic(WGS84_SEMI_MAJOR_AXIS_M, WGS84_FLATTENING)
    mask = Geodesic.DISTANCE | Geodesic.AZIMUTH
    solutions = [
        geodesic.Inverse(float(p1), float(l1), float(p2), float(l2), mask)
        for p1, l1, p2, l2 in zip(*(a.ravel() for a in arrays), strict=True)
    ]
    shape = arrays[0].shape
    distance_km = np.array([s["s12"] for s in solutions]).reshape(shape) / _M_PER_KM
    azimuth1_deg = np.mod(np.array([s["azi1"] for s in solutions]).reshape(shape), 360.0)
    azimuth2_deg = np.mod(np.array([s["azi2"] for s in solutions]).reshape(shape), 360.0)
    inputs = (latitude1_deg, longitude1_deg, latitude2_deg, longitude2_deg)
    return (
        _output(distance_km, *inputs),
        _output(azimuth1_deg, *inputs),
        _output(azimuth2_deg, *inputs),
    )


def baseline_north_south_km(distance_km, bearing_deg):
    """North-south component of a surveyed baseline: distance cos(bearing).

    Parameters
    ----------
    distance_km : float or array_like
        Length of the baseline, >= 0 [km].
    bearing_deg : float or array_like
        Its azimuth from north through east [deg]; any finite value.

    Returns
    -------
    float or numpy.ndarray
        Signed north-south component, positive northward [km].

    Raises
    ------
    InputError
        A negative or non-finite distance, or a non-finite bearing.

    Notes
    -----
    A plane-survey reduction, as an outreach team does it with a map and a
    protractor: it neglects the convergence of the meridians, which is a
    fraction of order (distance / R) tan(phi) of the east-west part; use
    :func:`north_south_distance_km` from the latitudes when they are known.

    Examples
    --------
    >>> round(baseline_north_south_km(800.0, 60.0), 6)
    400.0
    """
    distance = _checked("distance_km", distance_km, 0.0, np.inf, "km")
    bearing_rad = np.radians(_checked("bearing_deg", bearing_deg, -np.inf, np.inf, "deg"))
    return _output(distance * np.cos(bearing_rad), distance_km, bearing_deg)


# --- Cartesian coordinates ---------------------------------------------------------------


def geodetic_to_itrs_km(latitude_deg, longitude_deg, elevation_m):
    """Geocentric Cartesian (ITRS) coordinates of a site on WGS84.

    Parameters
    ----------
    latitude_deg : float or array_like
        Geodetic latitude, from -90 to 90 [deg].
    longitude_deg : float or array_like
        Longitude, east positive, from -360 to 360 [deg].
    elevation_m : float or array_like
        Height above the ellipsoid, any finite value [m]. All three broadcast.

    Returns
    -------
    x_km, y_km, z_km : float or numpy.ndarray
        x = (N + h) cos phi cos lambda, y = (N + h) cos phi sin lambda,
        z = (N (1 - e^2) + h) sin phi, with N = a / sqrt(1 - e^2 sin^2 phi) [km].

    Raises
    ------
    InputError
        A coordinate that is not finite or is outside its range.

    Examples
    --------
    >>> x_km, y_km, z_km = geodetic_to_itrs_km(90.0, 0.0, 0.0)
    >>> round(z_km, 4)   # the semi-minor axis b of WGS84
    6356.7523
    """
    latitude_rad = np.radians(_latitude("latitude_deg", latitude_deg))
    longitude_rad = np.radians(
        _checked("longitude_deg", longitude_deg, *LONGITUDE_RANGE_DEG, "deg")
    )
    height_m = _checked("elevation_m", elevation_m, -np.inf, np.inf, "m")
    sin_latitude = np.sin(latitude_rad)
    normal_radius_m = WGS84_SEMI_MAJOR_AXIS_M / np.sqrt(1.0 - _E2 * sin_latitude**2)
    horizontal_m = (normal_radius_m + height_m) * np.cos(latitude_rad)
    x_m = horizontal_m * np.cos(longitude_rad)
    y_m = horizontal_m * np.sin(longitude_rad)
    z_m = (normal_radius_m * (1.0 - _E2) + height_m) * sin_latitude
    x_m, y_m, z_m = np.broadcast_arrays(x_m, y_m, z_m)
    inputs = (latitude_deg, longitude_deg, elevation_m)
    return (
        _output(x_m / _M_PER_KM, *inputs),
        _output(y_m / _M_PER_KM, *inputs),
        _output(z_m / _M_PER_KM, *inputs),
    )
