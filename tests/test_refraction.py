"""Tests of firstrung.refraction against published values and independent code.

Published values come from the project's collected reference values (reference-values.md), sections 2.8 and 3,
whose sources are Meeus, Astronomical Algorithms, 2nd ed. (1998), ch. 16
(read in secondary reproductions, certainty V2), Allen (1976), Astrophysical
Quantities, 3rd ed., p. 125, and Bessel's mean refraction table.
"""

from __future__ import annotations

import numpy as np
import pytest
from skyfield import earthlib

from firstrung import refraction as refraction_module
from firstrung.constants import PRESSURE_SCALE_HEIGHT_M
from firstrung.errors import InputError
from firstrung.refraction import (
    apparent_from_true_altitude_deg,
    refraction_derivative,
    refraction_from_apparent_deg,
    saemundsson_refraction_from_true_deg,
    standard_pressure_hpa,
    true_from_apparent_altitude_deg,
)

#: Angles [deg].
ARCMIN = 1.0 / 60.0
ARCSEC = 1.0 / 3600.0

#: Meeus prints Example 16.a to 0.001'; reference-values.md section 0 suggests
#: +/-0.01' when re-implementing a given formula. Our zenith term adds
#: 0.0014' (eq. 16.3) and 0.0019' (eq. 16.4), well inside it.
MEEUS_EXAMPLE_TOLERANCE = 0.01 * ARCMIN
#: Bennett's stated accuracy, 0-90 deg (Meeus 1998 ch. 16; reference-values 2.8).
BENNETT_ACCURACY = 0.07 * ARCMIN
#: Allen's table is printed to 0.1'; half its last digit is added to Bennett's accuracy.
ALLEN_ROUNDING = 0.05 * ARCMIN
#: Meeus: eq. 16.4 is consistent with eq. 16.3 to about 0.1' (4").
BENNETT_SAEMUNDSSON_CONSISTENCY = 0.1 * ARCMIN
#: Round trip of the numerical inverse (brief: far below 0.001").
ROUND_TRIP_TOLERANCE = 1e-8 * ARCSEC
#: skyfield's copy of eq. 16.3 scales by 0.016667 * 0.28 P / (273 + T) instead of
#: (1/60)(P/1010)(283/(273 + T)): 6.9e-4 relative, 0.035' at -1 deg where R = 50',
#: plus our 0.0014' zenith term and its 3e-5 deg iteration stop (0.002').
SKYFIELD_TOLERANCE = 0.04 * ARCMIN


# --- published values ---------------------------------------------------------------


class TestPublished:
    def test_meeus_example_16a_bennett(self):
        # Meeus (1998) Example 16.a: apparent lower limb 0 deg 30', R(16.3) = 28.754'.
        assert refraction_from_apparent_deg(0.5) == pytest.approx(
            28.754 * ARCMIN, abs=MEEUS_EXAMPLE_TOLERANCE
        )

    def test_meeus_example_16a_true_lower_limb(self):
        # Meeus (1998) Example 16.a: true lower limb 0 deg 01.246'.
        assert true_from_apparent_altitude_deg(0.5) == pytest.approx(
            1.246 * ARCMIN, abs=MEEUS_EXAMPLE_TOLERANCE
        )

    def test_meeus_example_16a_saemundsson(self):
        # Meeus (1998) Example 16.a: true upper limb 0 deg 33.246', R(16.4) = 24.618'.
        assert saemundsson_refraction_from_true_deg(33.246 * ARCMIN) == pytest.approx(
            24.618 * ARCMIN, abs=MEEUS_EXAMPLE_TOLERANCE
        )

    def test_meeus_example_16a_apparent_upper_limb(self):
        # reference-values 2.8: apparent upper limb 0 deg 57.864' (computed there from
        # Meeus's printed steps, i.e. 33.246' + 24.618'); our inverse of eq. 16.3
        # must agree within the 0.1' consistency Meeus quotes for 16.3 vs 16.4.
        assert apparent_from_true_altitude_deg(33.246 * ARCMIN) == pytest.approx(
            57.864 * ARCMIN, abs=BENNETT_SAEMUNDSSON_CONSISTENCY
        )

    @pytest.mark.parametrize(
        ("altitude_deg", "table_arcmin"),
        [
            (5.0, 9.9),  # Allen (1976) p. 125, 10 deg C / 101.3 kPa (reference-values 3, V2)
            (10.0, 5.3),  # Allen (1976) p. 125 (reference-values 3, V2)
        ],
    )
    def test_bennett_agrees_with_allen_table(self, altitude_deg, table_arcmin):
        assert refraction_from_apparent_deg(altitude_deg) == pytest.approx(
            table_arcmin * ARCMIN, abs=BENNETT_ACCURACY + ALLEN_ROUNDING
        )

    def test_bennett_at_45_deg(self):
        # Allen (1976) p. 125: below 1' at 45 deg (reference-values 3, V2).
        assert refraction_from_apparent_deg(45.0) < 1.0 * ARCMIN
        # Bessel's mean refraction table: 57.7" at 45 deg (reference-values 3, V).
        assert refraction_from_apparent_deg(45.0) == pytest.approx(
            57.7 * ARCSEC, abs=BENNETT_ACCURACY
        )

    def test_bennett_and_saemundsson_consistent_above_10_deg(self):
        # Meeus (1998) ch. 16: eqs 16.3 and 16.4 agree to about 0.1' (4").
        apparent_deg = np.linspace(10.0, 90.0, 801)
        true_deg = true_from_apparent_altitude_deg(apparent_deg)
        difference = refraction_from_apparent_deg(
            apparent_deg
        ) - saemundsson_refraction_from_true_deg(true_deg)
        assert np.max(np.abs(difference)) <= BENNETT_SAEMUNDSSON_CONSISTENCY

    def test_inverse_matches_saemundsson_above_10_deg(self):
        # Same Meeus consistency statement, through our numerical inverse.
        true_deg = np.linspace(10.0, 90.0, 801)
        refraction_deg = apparent_from_true_altitude_deg(true_deg) - true_deg
        assert np.allclose(
            refraction_deg,
            saemundsson_refraction_from_true_deg(true_deg),
            rtol=0.0,
            atol=BENNETT_SAEMUNDSSON_CONSISTENCY,
        )

    def test_zenith_terms_are_meeus_constants(self):
        # Meeus (1998) ch. 16 (reference-values 2.8): add +0.0013515' to eq. 16.3 and
        # +0.0019279' to eq. 16.4 for exact zero at the zenith; printed to 1e-7'.
        assert refraction_module._BENNETT_ZENITH_ARCMIN == pytest.approx(0.0013515, abs=1e-7)
        assert refraction_module._SAEMUNDSSON_ZENITH_ARCMIN == pytest.approx(0.0019279, abs=1e-7)

    def test_standard_conditions_scaling(self):
        # Meeus (1998) ch. 16: multiply by (P / 1010) (283 / (273 + T)) (reference-values 2.8, V).
        altitude_deg = np.array([2.0, 15.0, 60.0])
        temperature_c, pressure_hpa = -15.0, 940.0
        expected = (
            refraction_from_apparent_deg(altitude_deg)
            * (pressure_hpa / 1010.0)
            * (283.0 / (273.0 + temperature_c))
        )
        got = refraction_from_apparent_deg(altitude_deg, temperature_c, pressure_hpa)
        assert np.allclose(got, expected, rtol=1e-14, atol=0.0)
        got_16_4 = saemundsson_refraction_from_true_deg(altitude_deg, temperature_c, pressure_hpa)
        expected_16_4 = (
            saemundsson_refraction_from_true_deg(altitude_deg)
            * (pressure_hpa / 1010.0)
            * (283.0 / (273.0 + temperature_c))
        )
        assert np.allclose(got_16_4, expected_16_4, rtol=1e-14, atol=0.0)

    def test_defaults_are_standard_conditions(self):
        # Meeus (1998) ch. 16: 1010 mbar, 10 deg C.
        assert refraction_from_apparent_deg(20.0) == refraction_from_apparent_deg(
            20.0, 10.0, 1010.0
        )


# --- independent implementation ----------------------------------------------------------


class TestAgainstSkyfield:
    """skyfield's earthlib carries its own copy of eq. 16.3 (reference-values 3 notes)."""

    def test_forward(self):
        altitude_deg = np.linspace(-1.0, 89.0, 901)
        for temperature_c, pressure_hpa in [(10.0, 1010.0), (15.0, 1013.25), (-5.0, 850.0)]:
            ours = refraction_from_apparent_deg(altitude_deg, temperature_c, pressure_hpa)
            theirs = earthlib.refraction(altitude_deg, temperature_c, pressure_hpa)
            assert np.max(np.abs(ours - theirs)) <= SKYFIELD_TOLERANCE

    def test_inverse(self):
        true_deg = np.linspace(-0.5, 85.0, 500)
        ours = apparent_from_true_altitude_deg(true_deg, 15.0, 1013.25)
        theirs = earthlib.refract(true_deg, 15.0, 1013.25)
        assert np.max(np.abs(ours - theirs)) <= SKYFIELD_TOLERANCE


# --- behaviour -------------------------------------------------------------------------


class TestBehaviour:
    def test_zero_at_zenith_and_continuous(self):
        assert refraction_from_apparent_deg(90.0) == 0.0
        assert saemundsson_refraction_from_true_deg(90.0) == 0.0
        near_deg = np.array([89.9, 89.99, 89.999999])
        refraction_deg = refraction_from_apparent_deg(near_deg)
        # Near the zenith eq. 16.3 falls by about (pi/180)' = 0.0175' per degree.
        assert np.all(refraction_deg >= 0.0)
        assert np.all(refraction_deg <= 0.02 * ARCMIN * (90.0 - near_deg))

    def test_non_negative_and_decreasing(self):
        altitude_deg = np.linspace(-1.0, 90.0, 9101)
        refraction_deg = refraction_from_apparent_deg(altitude_deg)
        assert np.all(refraction_deg >= 0.0)
        assert np.all(np.diff(refraction_deg) < 0.0)

    def test_zero_below_minus_one_degree(self):
        altitude_deg = np.array([-90.0, -5.0, -1.0001])
        assert np.all(refraction_from_apparent_deg(altitude_deg) == 0.0)
        assert np.all(saemundsson_refraction_from_true_deg(altitude_deg) == 0.0)
        assert np.all(true_from_apparent_altitude_deg(altitude_deg) == altitude_deg)
        assert refraction_from_apparent_deg(-1.0) > 40.0 * ARCMIN

    def test_no_air_no_refraction(self):
        assert refraction_from_apparent_deg(5.0, 10.0, 0.0) == 0.0
        assert apparent_from_true_altitude_deg(5.0, 10.0, 0.0) == 5.0

    def test_true_is_apparent_minus_refraction(self):
        altitude_deg = np.array([0.0, 3.0, 30.0, 75.0])
        assert np.array_equal(
            true_from_apparent_altitude_deg(altitude_deg, 20.0, 990.0),
            altitude_deg - refraction_from_apparent_deg(altitude_deg, 20.0, 990.0),
        )

    def test_round_trip_true_apparent_true(self):
        rng = np.random.default_rng(20240601)
        true_deg = np.concatenate([np.linspace(-90.0, 90.0, 20001), rng.uniform(-2, 5, 5000)])
        temperature_c = rng.uniform(-30.0, 40.0, true_deg.size)
        pressure_hpa = rng.uniform(600.0, 1050.0, true_deg.size)
        apparent_deg = apparent_from_true_altitude_deg(true_deg, temperature_c, pressure_hpa)
        back_deg = true_from_apparent_altitude_deg(apparent_deg, temperature_c, pressure_hpa)
        assert np.max(np.abs(back_deg - true_deg)) <= ROUND_TRIP_TOLERANCE

    def test_round_trip_apparent_true_apparent(self):
        apparent_deg = np.linspace(-1.0, 90.0, 20001)
        true_deg = true_from_apparent_altitude_deg(apparent_deg, 0.0, 1000.0)
        back_deg = apparent_from_true_altitude_deg(true_deg, 0.0, 1000.0)
        assert np.max(np.abs(back_deg - apparent_deg)) <= ROUND_TRIP_TOLERANCE

    def test_derivative_matches_central_difference(self):
        altitude_deg = np.linspace(-0.9, 89.9, 500)
        step_deg = 1e-5
        numeric = (
            refraction_from_apparent_deg(altitude_deg + step_deg, 25.0, 960.0)
            - refraction_from_apparent_deg(altitude_deg - step_deg, 25.0, 960.0)
        ) / (2.0 * step_deg)
        analytic = refraction_derivative(altitude_deg, 25.0, 960.0)
        # Central-difference error ~ R''' h^2 / 6 plus rounding 1e-16 / 1e-5: < 1e-9 deg/deg.
        assert np.allclose(analytic, numeric, rtol=0.0, atol=1e-9)
        assert np.all(analytic <= 0.0)
        assert refraction_derivative(-5.0) == 0.0

    def test_standard_pressure(self):
        assert standard_pressure_hpa(0.0) == 1010.0
        assert standard_pressure_hpa(PRESSURE_SCALE_HEIGHT_M) == pytest.approx(1010.0 / np.e)
        elevation_m = np.array([-400.0, 0.0, 500.0, 3000.0])
        pressure_hpa = standard_pressure_hpa(elevation_m)
        assert isinstance(pressure_hpa, np.ndarray) and pressure_hpa.shape == (4,)
        assert np.all(np.diff(pressure_hpa) < 0.0)
        # Usable directly as the refraction pressure.
        assert refraction_from_apparent_deg(10.0, 10.0, standard_pressure_hpa(3000.0)) < (
            refraction_from_apparent_deg(10.0)
        )


class TestScalarsArraysAndBadInput:
    @pytest.mark.parametrize(
        "function",
        [
            refraction_from_apparent_deg,
            true_from_apparent_altitude_deg,
            apparent_from_true_altitude_deg,
            saemundsson_refraction_from_true_deg,
            refraction_derivative,
        ],
    )
    def test_scalar_array_broadcast(self, function):
        assert isinstance(function(30.0), float)
        values = function(np.array([[5.0, 30.0], [60.0, 89.0]]))
        assert isinstance(values, np.ndarray) and values.shape == (2, 2)
        assert values[0, 1] == function(30.0)
        broadcast = function(30.0, np.array([0.0, 10.0, 20.0]), 1010.0)
        assert broadcast.shape == (3,)
        assert broadcast[1] == function(30.0)

    @pytest.mark.parametrize(
        "function",
        [
            refraction_from_apparent_deg,
            true_from_apparent_altitude_deg,
            apparent_from_true_altitude_deg,
            saemundsson_refraction_from_true_deg,
            refraction_derivative,
        ],
    )
    @pytest.mark.parametrize(
        ("args", "parameter"),
        [
            ((91.0,), "deg"),
            ((np.array([10.0, np.nan]),), "nan"),
            (("high",), "high"),
            ((10.0, 283.15), "temperature_c"),  # kelvin typed as deg C
            ((10.0, 10.0, -1.0), "pressure_hpa"),
            ((10.0, 10.0, 29.9 * 1000), "pressure_hpa"),
        ],
    )
    def test_bad_input(self, function, args, parameter):
        with pytest.raises(InputError, match=parameter) as caught:
            function(*args)
        assert isinstance(caught.value, ValueError)
        assert "expected" in str(caught.value)

    def test_bad_elevation(self):
        with pytest.raises(InputError, match=r"elevation_m: received 20000\.0"):
            standard_pressure_hpa(np.array([100.0, 20000.0]))
