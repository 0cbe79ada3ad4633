"""Tests of firstrung.geodesy against published values and independent code.

Published values come from the project's collected reference values (reference-values.md), sections 1, 6 and 9:
Karney (2013), "Algorithms for geodesics", J. Geodesy 87:43-55 (numbers from
memory there, certainty M), the GeographicLib documentation examples (V),
NIMA TR8350.2 (2000) and Moritz (2000). geographiclib (Karney's own code) and
skyfield's ``wgs84`` are independent implementations used as references.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from geographiclib.geodesic import Geodesic
from skyfield.api import wgs84

from firstrung.constants import IUGG_MEAN_RADIUS_KM
from firstrung.errors import InputError
from firstrung.geodesy import (
    baseline_north_south_km,
    geodesic_inverse,
    geodetic_to_itrs_km,
    mean_meridional_radius_km,
    meridian_arc_m,
    meridional_radius_of_curvature_km,
    north_south_distance_km,
)

#: Lengths [m] and the same in km.
METRE = 1.0
MILLIMETRE = 1e-3 * METRE
KM = 1000.0 * METRE
MILLIMETRE_KM = MILLIMETRE / KM

#: Meridian arcs: brief's 1 mm target; Helmert's series truncated after n^4 is
#: good to 1e-7 m, geographiclib to 15 nm.
ARC_TOLERANCE_M = 1.0 * MILLIMETRE
#: Published Karney (2013) azimuths are printed to 1e-6 deg (antipodal case; one
#: unit, as the recalled digits may be truncated) and 1e-5 deg (short case; half a unit).
AZIMUTH_1E6_TOLERANCE_DEG = 1e-6
AZIMUTH_1E5_TOLERANCE_DEG = 0.5e-5
#: Distances printed to 1e-6 m (Karney) or 1e-3 m (GeographicLib README): half a unit.
MICROMETRE_TOLERANCE_KM = 0.5e-6 * METRE / KM
README_DISTANCE_TOLERANCE_KM = 0.5 * MILLIMETRE_KM
#: Section 6 radii are printed to 0.1 km: half a unit.
RADIUS_PRINTED_TOLERANCE_KM = 0.05


def _geographiclib_meridian_arc_m(latitude_deg: float) -> float:
    """Signed arc from the equator along the 0 deg meridian, by Karney's inverse."""
    return math.copysign(Geodesic.WGS84.Inverse(0.0, 0.0, latitude_deg, 0.0)["s12"], latitude_deg)


# --- published values -------------------------------------------------------------------


class TestPublished:
    def test_quarter_meridian(self):
        # reference-values 9: quarter meridian 10 001 965.729 m (M); geographiclib 2.1
        # gives 10 001 965.729 313 m (C). Printed to 1 mm.
        assert meridian_arc_m(90.0) == pytest.approx(10_001_965.729, abs=ARC_TOLERANCE_M)
        assert meridian_arc_m(-90.0) == pytest.approx(-10_001_965.729, abs=ARC_TOLERANCE_M)

    def test_one_degree_arc_at_45(self):
        # reference-values 9 (geographiclib 2.1, C) and 6: 1 deg centred on 45 deg
        # = 111 131.777 653 m.
        assert north_south_distance_km(44.5, 45.5) == pytest.approx(
            111.131777653, abs=ARC_TOLERANCE_M / KM
        )

    def test_meridional_radius_at_27_6(self):
        # reference-values 6: M(27.6 deg) = 6 349.1 km (C, WGS84, geographiclib).
        assert meridional_radius_of_curvature_km(27.6) == pytest.approx(
            6349.1, abs=RADIUS_PRINTED_TOLERANCE_KM
        )

    def test_meridional_radius_at_44(self):
        # reference-values 6 prints M(44 deg) = 6 366.6 km, but that row is not
        # consistent with its own source: geographiclib's meridian distance over
        # 44 +/- 0.001 deg divided by the angle gives 6 366.2625 km, and the closed
        # form a (1 - e^2) / (1 - e^2 sin^2 44)^1.5 gives the same; 6 366.6 km is
        # M(44.3 deg). Checked here against geographiclib (independent code).
        geographiclib_km = (
            Geodesic.WGS84.Inverse(43.999, 0.0, 44.001, 0.0)["s12"] / math.radians(0.002) / KM
        )
        assert geographiclib_km == pytest.approx(6366.2625, abs=0.0001)
        assert meridional_radius_of_curvature_km(44.0) == pytest.approx(
            geographiclib_km, abs=1.0 * METRE / KM
        )

    def test_iugg_mean_radius(self):
        # reference-values 1: R1 = (2a + b)/3 = 6 371 008.7714 m (Moritz 2000, number M;
        # C the same). Printed to 0.1 mm.
        assert IUGG_MEAN_RADIUS_KM == pytest.approx(6371.0087714, abs=0.05 * MILLIMETRE_KM)

    def test_pole_gives_semi_minor_axis(self):
        # NIMA TR8350.2 (2000): b = 6 356 752.3142 m, printed to 0.1 mm.
        x_km, y_km, z_km = geodetic_to_itrs_km(90.0, 0.0, 0.0)
        assert z_km == pytest.approx(6356.7523142, abs=0.05 * MILLIMETRE_KM)
        assert abs(x_km) < MILLIMETRE_KM and y_km == 0.0
        # Equator, prime meridian: x = a = 6 378 137.0 m (TR8350.2).
        assert geodetic_to_itrs_km(0.0, 0.0, 0.0) == (6378.137, 0.0, 0.0)

    def test_karney_short_inverse(self):
        # Karney (2013) short inverse (reference-values 9, M): s12 = 4.944 208 m,
        # azi1 = 77.04353 deg, azi2 = 77.04351 deg.
        distance_km, azimuth1_deg, azimuth2_deg = geodesic_inverse(
            -30.12345, 0.0, -30.12344, 0.00005
        )
        assert distance_km == pytest.approx(4.944208e-3, abs=MICROMETRE_TOLERANCE_KM)
        assert azimuth1_deg == pytest.approx(77.04353, abs=AZIMUTH_1E5_TOLERANCE_DEG)
        assert azimuth2_deg == pytest.approx(77.04351, abs=AZIMUTH_1E5_TOLERANCE_DEG)

    def test_karney_nearly_antipodal_inverse(self):
        # Karney (2013) (reference-values 9, M): s12 = 19 989 832.827 610 m,
        # azi1 = 161.890 524 deg, azi2 = 18.090 737 deg. Those azimuths are recalled
        # (M) and geographiclib 2.1 gives 161.890 524 74 deg, so the recalled digits
        # may be truncated rather than rounded: tolerance one unit, 1e-6 deg.
        distance_km, azimuth1_deg, azimuth2_deg = geodesic_inverse(-30.0, 0.0, 29.9, 179.8)
        assert distance_km == pytest.approx(19989.832827610, abs=MICROMETRE_TOLERANCE_KM)
        assert azimuth1_deg == pytest.approx(161.890524, abs=AZIMUTH_1E6_TOLERANCE_DEG)
        assert azimuth2_deg == pytest.approx(18.090737, abs=AZIMUTH_1E6_TOLERANCE_DEG)
        # geographiclib 2.1 (C, reference-values 9): 161.890 524 74, 18.090 737 25 deg.
        assert azimuth1_deg == pytest.approx(161.89052474, abs=1e-8)
        assert azimuth2_deg == pytest.approx(18.09073725, abs=1e-8)

    def test_karney_direct_example_through_the_inverse(self):
        # Karney (2013) direct (reference-values 9, M): from 40 deg, azi1 = 30 deg,
        # s12 = 10 000 km to 41.79331 deg, 137.84490 deg, azi2 = 149.09017 deg.
        # The end point is printed to 1e-5 deg (about 1 m), hence 2 m and 1e-5 deg.
        distance_km, azimuth1_deg, azimuth2_deg = geodesic_inverse(40.0, 0.0, 41.79331, 137.84490)
        assert distance_km == pytest.approx(10_000.0, abs=2.0 * METRE / KM)
        assert azimuth1_deg == pytest.approx(30.0, abs=1e-5)
        assert azimuth2_deg == pytest.approx(149.09017, abs=1e-5)

    def test_geographiclib_readme_wellington_salamanca(self):
        # GeographicLib JS/npm README (reference-values 9, V): 19 959 679.267 m.
        # (The README's Perth direct example runs 20 000 km, past the antipode, so it
        # is not a shortest geodesic and cannot be checked through the inverse.)
        distance_km, azimuth1_deg, azimuth2_deg = geodesic_inverse(-41.32, 174.81, 40.96, -5.50)
        assert distance_km == pytest.approx(19959.679267, abs=README_DISTANCE_TOLERANCE_KM)
        # geographiclib 2.1 (C): 161.067 669 99 deg, 18.825 195 12 deg.
        assert azimuth1_deg == pytest.approx(161.06766999, abs=1e-8)
        assert azimuth2_deg == pytest.approx(18.82519512, abs=1e-8)


# --- independent implementations -----------------------------------------------------------


class TestAgainstGeographiclib:
    def test_meridian_arc_over_many_latitudes(self):
        latitude_deg = np.linspace(-90.0, 90.0, 721)
        reference_m = np.array([_geographiclib_meridian_arc_m(p) for p in latitude_deg])
        assert np.max(np.abs(meridian_arc_m(latitude_deg) - reference_m)) < ARC_TOLERANCE_M

    def test_north_south_distance_over_many_pairs(self):
        rng = np.random.default_rng(7)
        latitude1_deg = rng.uniform(-90.0, 90.0, 300)
        latitude2_deg = rng.uniform(-90.0, 90.0, 300)
        reference_km = np.array(
            [
                math.copysign(Geodesic.WGS84.Inverse(p1, 0.0, p2, 0.0)["s12"], p2 - p1) / KM
                for p1, p2 in zip(latitude1_deg, latitude2_deg, strict=True)
            ]
        )
        got_km = north_south_distance_km(latitude1_deg, latitude2_deg)
        assert np.max(np.abs(got_km - reference_km)) < ARC_TOLERANCE_M / KM

    def test_radius_of_curvature_is_the_arc_slope(self):
        # M = dm/dphi: geographiclib over +/- 1e-4 deg; the second-order error
        # M'' d^2 / 6 is below 1e-9 m, geographiclib's 15 nm over 22 m gives 5 mm.
        latitude_deg = np.linspace(-89.9, 89.9, 181)
        half_deg = 1e-4
        reference_km = np.array(
            [
                Geodesic.WGS84.Inverse(p - half_deg, 0.0, p + half_deg, 0.0)["s12"]
                / math.radians(2.0 * half_deg)
                / KM
                for p in latitude_deg
            ]
        )
        got_km = meridional_radius_of_curvature_km(latitude_deg)
        assert np.max(np.abs(got_km - reference_km)) < 1e-2 * METRE / KM

    def test_geodesic_inverse_jfk_lhr(self):
        # GeographicLib C++ example (reference-values 9, V for the case; values C):
        # 5 551 759.400 319 m, 51.198 882 85 deg, 107.821 776 74 deg.
        distance_km, azimuth1_deg, azimuth2_deg = geodesic_inverse(40.6, -73.8, 51.6, -0.5)
        assert distance_km == pytest.approx(5551.759400319, abs=MILLIMETRE_KM)
        assert azimuth1_deg == pytest.approx(51.19888285, abs=1e-8)
        assert azimuth2_deg == pytest.approx(107.82177674, abs=1e-8)


class TestAgainstSkyfield:
    def test_itrs_many_sites(self):
        rng = np.random.default_rng(11)
        latitude_deg = rng.uniform(-90.0, 90.0, 500)
        longitude_deg = rng.uniform(-180.0, 180.0, 500)
        elevation_m = rng.uniform(-400.0, 5000.0, 500)
        reference_km = wgs84.latlon(latitude_deg, longitude_deg, elevation_m).itrs_xyz.km
        got_km = np.array(geodetic_to_itrs_km(latitude_deg, longitude_deg, elevation_m))
        assert np.max(np.abs(got_km - reference_km)) < MILLIMETRE_KM

    def test_itrs_scalar_site(self):
        reference_km = wgs84.latlon(46.2, 7.4, elevation_m=620.0).itrs_xyz.km
        got_km = geodetic_to_itrs_km(46.2, 7.4, 620.0)
        assert all(isinstance(c, float) for c in got_km)
        assert np.allclose(got_km, reference_km, rtol=0.0, atol=MILLIMETRE_KM)


# --- behaviour -----------------------------------------------------------------------------


class TestBehaviour:
    def test_mean_radius_is_distance_over_angle(self):
        latitude1_deg = np.array([10.0, -35.0, 44.5, 0.0])
        latitude2_deg = np.array([17.0, -20.0, 45.5, 80.0])
        expected_km = north_south_distance_km(latitude1_deg, latitude2_deg) / np.radians(
            latitude2_deg - latitude1_deg
        )
        got_km = mean_meridional_radius_km(latitude1_deg, latitude2_deg)
        assert np.allclose(got_km, expected_km, rtol=0.0, atol=1e-3 * MILLIMETRE_KM)

    def test_mean_radius_limit_and_smoothness(self):
        # Equal latitudes give M(phi); nearly equal ones approach it smoothly (no
        # cancellation): over 1e-9 deg the mean differs from M by far under 1 mm.
        latitude_deg = np.array([-60.0, 0.0, 30.0, 89.0])
        radius_km = meridional_radius_of_curvature_km(latitude_deg)
        assert np.allclose(
            mean_meridional_radius_km(latitude_deg, latitude_deg),
            radius_km,
            rtol=0.0,
            atol=MILLIMETRE_KM,
        )
        assert np.allclose(
            mean_meridional_radius_km(latitude_deg, latitude_deg + 1e-9),
            radius_km,
            rtol=0.0,
            atol=MILLIMETRE_KM,
        )
        # Symmetric in the two sites.
        assert mean_meridional_radius_km(30.0, 50.0) == pytest.approx(
            mean_meridional_radius_km(50.0, 30.0), rel=1e-15
        )

    def test_mean_radius_close_to_m_at_mid_latitude(self):
        # reference-values 6: a two-site measurement returns about M(phi_mid); over
        # 10 deg the difference is second order, M'' (d phi)^2 / 24: 93 m here.
        assert mean_meridional_radius_km(22.6, 32.6) == pytest.approx(
            meridional_radius_of_curvature_km(27.6), abs=0.1
        )

    def test_north_south_distance_sign_and_antisymmetry(self):
        assert north_south_distance_km(10.0, 20.0) > 0.0
        assert north_south_distance_km(20.0, 10.0) == pytest.approx(
            -north_south_distance_km(10.0, 20.0), abs=1e-6 * MILLIMETRE_KM
        )
        assert north_south_distance_km(33.0, 33.0) == 0.0
        assert meridian_arc_m(0.0) == 0.0

    def test_azimuths_run_from_north_through_east(self):
        # Westward along the equator: 270 deg, not -90 deg.
        _, azimuth1_deg, azimuth2_deg = geodesic_inverse(0.0, 10.0, 0.0, 5.0)
        assert azimuth1_deg == pytest.approx(270.0)
        assert azimuth2_deg == pytest.approx(270.0)
        # Due north along a meridian: the geodesic distance is the meridian arc.
        distance_km, azimuth1_deg, _ = geodesic_inverse(30.0, 12.0, 40.0, 12.0)
        assert azimuth1_deg == pytest.approx(0.0, abs=1e-12)
        assert distance_km == pytest.approx(north_south_distance_km(30.0, 40.0), abs=MILLIMETRE_KM)

    def test_baseline_north_south(self):
        assert baseline_north_south_km(800.0, 60.0) == pytest.approx(400.0, rel=1e-15)
        assert baseline_north_south_km(100.0, 180.0) == pytest.approx(-100.0, rel=1e-15)
        # A surveyed 20 km baseline at 30 deg near 46 deg N. With the bearing at one
        # end, the plane reduction misses the meridian convergence, about
        # (east-west part) x (d lambda sin phi) / 2 = 10 km x 0.8e-3 = 8 m; with the
        # mean of the two end bearings it is left with a millimetric second-order term.
        distance_km, azimuth1_deg, azimuth2_deg = geodesic_inverse(46.0, 7.0, 46.155, 7.129)
        meridian_km = north_south_distance_km(46.0, 46.155)
        assert baseline_north_south_km(distance_km, azimuth1_deg) == pytest.approx(
            meridian_km, abs=10.0 * METRE / KM
        )
        mean_bearing_deg = 0.5 * (azimuth1_deg + azimuth2_deg)
        assert baseline_north_south_km(distance_km, mean_bearing_deg) == pytest.approx(
            meridian_km, abs=0.1 * METRE / KM
        )


class TestScalarsArraysAndBadInput:
    @pytest.mark.parametrize(
        ("function", "args"),
        [
            (meridian_arc_m, (40.0,)),
            (north_south_distance_km, (40.0, 41.0)),
            (meridional_radius_of_curvature_km, (40.0,)),
            (mean_meridional_radius_km, (40.0, 41.0)),
            (baseline_north_south_km, (40.0, 41.0)),
        ],
    )
    def test_scalar_and_array(self, function, args):
        scalar = function(*args)
        assert isinstance(scalar, float)
        array = function(*(np.full((2, 3), a) for a in args))
        assert isinstance(array, np.ndarray) and array.shape == (2, 3)
        assert np.all(array == scalar)

    def test_geodesic_inverse_arrays_broadcast(self):
        distance_km, azimuth1_deg, azimuth2_deg = geodesic_inverse(
            np.array([40.6, 0.0]), np.array([-73.8, 10.0]), np.array([51.6, 0.0]), -0.5
        )
        assert distance_km.shape == azimuth1_deg.shape == azimuth2_deg.shape == (2,)
        assert distance_km[0] == geodesic_inverse(40.6, -73.8, 51.6, -0.5)[0]
        assert isinstance(geodesic_inverse(1.0, 2.0, 3.0, 4.0)[0], float)

    @pytest.mark.parametrize(
        ("call", "parameter"),
        [
            (lambda: meridian_arc_m(90.5), r"latitude_deg: received 90\.5"),
            (lambda: meridian_arc_m(np.array([0.0, np.nan])), "latitude_deg"),
            (lambda: north_south_distance_km(10.0, -91.0), "latitude2_deg"),
            (lambda: meridional_radius_of_curvature_km("north"), "latitude_deg"),
            (lambda: mean_meridional_radius_km(100.0, 10.0), "latitude1_deg"),
            (lambda: geodesic_inverse(10.0, 400.0, 11.0, 0.0), "longitude1_deg"),
            (lambda: geodesic_inverse(10.0, 0.0, 11.0, np.inf), "longitude2_deg"),
            (lambda: baseline_north_south_km(-1.0, 0.0), "distance_km"),
            (lambda: baseline_north_south_km(1.0, np.nan), "bearing_deg"),
            (lambda: geodetic_to_itrs_km(10.0, 0.0, np.nan), "elevation_m"),
            (lambda: geodetic_to_itrs_km(95.0, 0.0, 0.0), "latitude_deg"),
        ],
    )
    def test_bad_input(self, call, parameter):
        with pytest.raises(InputError, match=parameter) as caught:
            call()
        assert isinstance(caught.value, ValueError)
        assert "expected" in str(caught.value)
