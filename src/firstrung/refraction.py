"""Atmospheric refraction of a celestial body's altitude.

Two published low-precision formulas, side by side:

* Bennett (1982), as Meeus (1998) eq. 16.3: refraction from the *apparent*
  (observed, refracted) altitude. This is firstrung's working model: a
  shadow or a sighting gives the apparent altitude, and the true (airless)
  altitude is ``apparent - R(apparent)``.
* Saemundsson (1986), as Meeus (1998) eq. 16.4: refraction from the *true*
  altitude. Kept as an independent cross-check of the inverse.

Both are given for standard conditions (1010 hPa, 10 deg C, yellow light) and
scaled to other conditions by ``(P / 1010) * (283 / (273 + T))`` (Meeus 1998,
ch. 16).

References
----------
Bennett, G. G. (1982), "The calculation of astronomical refraction in marine
navigation", J. Navigation 35:255-259.
Saemundsson, T. (1986), Sky & Telescope 72:70.
Meeus, J. (1998), Astronomical Algorithms, 2nd ed., Willmann-Bell, ch. 16.
"""

from __future__ import annotations

import numpy as np

from firstrung.arguments import checked as _checked
from firstrung.arguments import scalar_or_array as _output
from firstrung.constants import (
    PRESSURE_SCALE_HEIGHT_M,
    STANDARD_PRESSURE_HPA,
    STANDARD_TEMPERATURE_C,
)

__all__ = [
    "apparent_from_true_altitude_deg",
    "refraction_derivative",
    "refraction_from_apparent_deg",
    "saemundsson_refraction_from_true_deg",
    "standard_pressure_hpa",
    "true_from_apparent_altitude_deg",
]

#: Below this altitude of its argument [deg] each formula is outside its
#: domain (tested 0-90 deg) and refraction is taken as zero.
LOWEST_REFRACTED_ALTITUDE_DEG = -1.0

#: Plausible air temperature range [deg C] (Earth's records: -89.2, +56.7);
#: a value outside it is most likely a unit slip (deg F, kelvin).
TEMPERATURE_RANGE_C = (-90.0, 60.0)
#: Plausible pressure range [hPa]; 0 means no air (no refraction).
PRESSURE_RANGE_HPA = (0.0, 1100.0)
#: Plausible site elevation range [m] (Dead Sea shore -430 m, Everest 8849 m).
ELEVATION_RANGE_M = (-1000.0, 10000.0)

#: Kelvin offset and reference temperature in Meeus's scaling factor
#: 283 / (273 + T) (Meeus 1998, ch. 16; rounded values, kept as printed).
_MEEUS_KELVIN_OFFSET = 273.0
_MEEUS_REFERENCE_KELVIN = 283.0

#: Zenith terms [arcmin]: minus each formula's value at 90 deg, so that
#: R(90 deg) = 0 exactly. Meeus (1998, ch. 16) prints them as +0.0013515'
#: (eq. 16.3) and +0.0019279' (eq. 16.4); computed here to full precision.
_BENNETT_ZENITH_ARCMIN = -1.0 / np.tan(np.radians(90.0 + 7.31 / (90.0 + 4.4)))
_SAEMUNDSSON_ZENITH_ARCMIN = -1.02 / np.tan(np.radians(90.0 + 10.3 / (90.0 + 5.11)))

_ARCMIN_PER_DEG = 60.0
#: Convergence of the inverse [deg]; far below 1e-10 deg, near double precision at 90 deg.
_INVERSE_STEP_TOLERANCE_DEG = 1e-13
_INVERSE_MAX_ITERATIONS = 50


# --- input checks -----------------------------------------------------------------




def _conditions_factor(temperature_c, pressure_hpa) -> np.ndarray:
    """Meeus's scaling (P / 1010) (283 / (273 + T)) [1]."""
    temperature = _checked("temperature_c", temperature_c, *TEMPERATURE_RANGE_C, "deg C")
    pressure = _checked("pressure_hpa", pressure_hpa, *PRESSURE_RANGE_HPA, "hPa")
    return (pressure / STANDARD_PRESSURE_HPA) * (
        _MEEUS_REFERENCE_KELVIN / (_MEEUS_KELVIN_OFFSET + temperature)
    )


# --- Bennett (1982), Meeus eq. 16.3 ------------------------------------------------


def _bennett_argument_deg(apparent_deg: np.ndarray) -> np.ndarray:
    """h0 + 7.31 / (h0 + 4.4) [deg], the argument of the cotangent in eq. 16.3."""
    return apparent_deg + 7.31 / (apparent_deg + 4.4)


def _bennett_standard_arcmin(apparent_deg: np.ndarray) -> np.ndarray:
    """Eq. 16.3 with the zenith term, at standard conditions, zero below -1 deg [arcmin]."""
    inside = apparent_deg >= LOWEST_REFRACTED_ALTITUDE_DEG
    safe_deg = np.where(inside, apparent_deg, 0.0)
    value = 1.0 / np.tan(np.radians(_bennett_argument_deg(safe_deg))) + _BENNETT_ZENITH_ARCMIN
    return np.where(inside, value, 0.0)


def _bennett_standard_slope_arcmin_per_deg(apparent_deg: np.ndarray) -> np.ndarray:
    """d(eq. 16.3)/dh0 at standard conditions [arcmin per deg]; zero below -1 deg."""
    inside = apparent_deg >= LOWEST_REFRACTED_ALTITUDE_DEG
    safe_deg = np.where(inside, apparent_deg, 0.0)
    argument_rad = np.radians(_bennett_argument_deg(safe_deg))
    argument_slope = 1.0 - 7.31 / (safe_deg + 4.4) ** 2
    value = -(np.pi / 180.0) * argument_slope / np.sin(argument_rad) ** 2
    return np.where(inside, value, 0.0)


def refraction_from_apparent_deg(
    apparent_altitude_deg,
    temperature_c=STANDARD_TEMPERATURE_C,
    pressure_hpa=STANDARD_PRESSURE_HPA,
):
    """Refraction from the apparent altitude, Bennett (1982) = Meeus eq. 16.3.

    R = cot(h0 + 7.31 / (h0 + 4.4)) + 0.0013515 arcmin at 1010 hPa and 10 deg C,
    scaled by (P / 1010) (283 / (273 + T)).

    Parameters
    ----------
    apparent_altitude_deg : float or array_like
        Observed (refracted) altitude h0, from -90 to 90 [deg].
    temperature_c : float or array_like, optional
        Air temperature at the observer, from -90 to 60 [deg C].
    pressure_hpa : float or array_like, optional
        Air pressure at the observer, from 0 to 1100 [hPa]; see
        :func:`standard_pressure_hpa` for a site without a barometer.

    Returns
    -------
    float or numpy.ndarray
        Refraction R = apparent - true altitude, >= 0 [deg]. Inputs broadcast.

    Raises
    ------
    InputError
        A value that is not finite or is outside its range.

    Notes
    -----
    Bennett states an accuracy of 0.07' from 0 to 90 deg. The printed formula
    gives -0.0013515' (-0.08") at the zenith; the constant zenith term
    (Meeus's +0.0013515', here at full precision) makes R(90 deg) = 0
    exactly, so R decreases continuously to zero. It changes R by at most
    0.0014' (0.08"), 20 times below the formula's accuracy. Below an apparent
    altitude of -1 deg (where the formula was never tested and the Sun is
    not observable in a gnomon campaign) R is returned as 0; this leaves a
    jump at -1 deg.

    Examples
    --------
    Meeus Example 16.a, the Sun's lower limb at apparent 0 deg 30' (Meeus
    prints 28.754' without the zenith term):

    >>> round(refraction_from_apparent_deg(0.5) * 60, 3)
    28.755
    >>> refraction_from_apparent_deg(90.0)
    0.0
    """
    apparent = _checked("apparent_altitude_deg", apparent_altitude_deg, -90.0, 90.0, "deg")
    factor = _conditions_factor(temperature_c, pressure_hpa)
    refraction_deg = factor * _bennett_standard_arcmin(apparent) / _ARCMIN_PER_DEG
    return _output(refraction_deg, apparent_altitude_deg, temperature_c, pressure_hpa)


def refraction_derivative(
    apparent_altitude_deg,
    temperature_c=STANDARD_TEMPERATURE_C,
    pressure_hpa=STANDARD_PRESSURE_HPA,
):
    """Slope dR/dh0 of :func:`refraction_from_apparent_deg` (analytic).

    Parameters
    ----------
    apparent_altitude_deg : float or array_like
        Observed altitude h0, from -90 to 90 [deg].
    temperature_c : float or array_like, optional
        Air temperature, from -90 to 60 [deg C].
    pressure_hpa : float or array_like, optional
        Air pressure, from 0 to 1100 [hPa].

    Returns
    -------
    float or numpy.ndarray
        dR/dh0 [deg per deg], <= 0 above -1 deg and 0 below it. An error
        sigma_h0 in the apparent altitude gives (1 - dR/dh0) sigma_h0 in the
        true altitude.

    Raises
    ------
    InputError
        A value that is not finite or is outside its range.

    Notes
    -----
    d cot(g)/dh0 = -(pi/180) g'(h0) / sin^2(g) per degree of g, with
    g = h0 + 7.31 / (h0 + 4.4) and g' = 1 - 7.31 / (h0 + 4.4)^2; divided by 60
    to go from arcmin to degrees.

    Examples
    --------
    >>> round(refraction_derivative(45.0) * 3600, 2)   # arcsec of R per degree of altitude
    -2.08
    """
    apparent = _checked("apparent_altitude_deg", apparent_altitude_deg, -90.0, 90.0, "deg")
    factor = _conditions_factor(temperature_c, pressure_hpa)
    slope = factor * _bennett_standard_slope_arcmin_per_deg(apparent) / _ARCMIN_PER_DEG
    return _output(slope, apparent_altitude_deg, temperature_c, pressure_hpa)


def true_from_apparent_altitude_deg(
    apparent_deg,
    temperature_c=STANDARD_TEMPERATURE_C,
    pressure_hpa=STANDARD_PRESSURE_HPA,
):
    """True (airless) altitude from the apparent one: h = h0 - R(h0).

    Parameters
    ----------
    apparent_deg : float or array_like
        Observed altitude h0, from -90 to 90 [deg].
    temperature_c : float or array_like, optional
        Air temperature, from -90 to 60 [deg C].
    pressure_hpa : float or array_like, optional
        Air pressure, from 0 to 1100 [hPa].

    Returns
    -------
    float or numpy.ndarray
        True altitude [deg], with R from :func:`refraction_from_apparent_deg`.

    Raises
    ------
    InputError
        A value that is not finite or is outside its range.

    Examples
    --------
    Meeus Example 16.a: the true lower limb is at 0 deg 01.246':

    >>> round(true_from_apparent_altitude_deg(0.5) * 60, 3)
    1.245
    """
    apparent = _checked("apparent_deg", apparent_deg, -90.0, 90.0, "deg")
    factor = _conditions_factor(temperature_c, pressure_hpa)
    true_deg = apparent - factor * _bennett_standard_arcmin(apparent) / _ARCMIN_PER_DEG
    return _output(true_deg, apparent_deg, temperature_c, pressure_hpa)


def apparent_from_true_altitude_deg(
    true_deg,
    temperature_c=STANDARD_TEMPERATURE_C,
    pressure_hpa=STANDARD_PRESSURE_HPA,
):
    """Apparent altitude from the true one: the exact inverse of Bennett's formula.

    Solves h0 - R(h0) = h for h0 by Newton's method, vectorised over the
    elements, to double precision (steps below 1e-13 deg).

    Parameters
    ----------
    true_deg : float or array_like
        True (airless) altitude h, from -90 to 90 [deg].
    temperature_c : float or array_like, optional
        Air temperature, from -90 to 60 [deg C].
    pressure_hpa : float or array_like, optional
        Air pressure, from 0 to 1100 [hPa].

    Returns
    -------
    float or numpy.ndarray
        Apparent altitude h0 [deg] with
        ``true_from_apparent_altitude_deg(h0, T, P) == h`` to about 1e-14 deg.

    Raises
    ------
    InputError
        A value that is not finite or is outside its range.

    Notes
    -----
    f(h0) = h0 - R(h0) is increasing (f' = 1 - dR/dh0 >= 1) and concave on
    -1 to 90 deg, so Newton's iterates from any start are, after one step,
    below the root and rise monotonically to it. True altitudes below
    f(-1 deg) (about -1.83 deg at standard conditions) are returned
    unchanged, as R is zero there. Between f(-1 deg) and -1 deg two apparent
    altitudes map to the same true altitude (the jump at -1 deg, see
    :func:`refraction_from_apparent_deg`); the refracted one (>= -1 deg) is
    returned.

    Examples
    --------
    Meeus Example 16.a: the true upper limb 0 deg 33.246' is seen at about 0 deg 57.86':

    >>> round(apparent_from_true_altitude_deg(33.246 / 60) * 60, 2)
    57.86
    """
    true = _checked("true_deg", true_deg, -90.0, 90.0, "deg")
    factor = _conditions_factor(temperature_c, pressure_hpa)
    true, factor = np.broadcast_arrays(true, factor)
    lowest = LOWEST_REFRACTED_ALTITUDE_DEG
    lowest_true = lowest - factor * _bennett_standard_arcmin(np.float64(lowest)) / _ARCMIN_PER_DEG
    refracted = true >= lowest_true

    apparent = _newton(true.ravel(), factor.ravel(), refracted.ravel(), lowest).reshape(true.shape)
    apparent = np.where(refracted, apparent, true)
    return _output(apparent, true_deg, temperature_c, pressure_hpa)


#: Elements Newton's steps take at a time (their temporaries stay within the processor's cache).
_NEWTON_CHUNK = 1 << 14


def _newton(true, factor, refracted, lowest):
    """Newton's steps of :func:`apparent_from_true_altitude_deg` on flat arrays, a slice at a time.

    Every element takes as many steps as in one pass over all of them: steps continue until a step
    leaves every element within the tolerance (or the limit), and a slice that got there sooner
    takes the others' extra steps too.
    """
    apparent = np.clip(true, lowest, 90.0)
    slices = [slice(a, a + _NEWTON_CHUNK) for a in range(0, true.size, _NEWTON_CHUNK)] or [slice(0, 0)]
    taken = [0] * len(slices)

    def step(k: int) -> bool:
        """One step on slice ``k``; whether each of its elements moved within the tolerance."""
        part = slices[k]
        a, f = apparent[part], factor[part]
        residual = a - f * _bennett_standard_arcmin(a) / _ARCMIN_PER_DEG - true[part]
        slope = 1.0 - f * _bennett_standard_slope_arcmin_per_deg(a) / _ARCMIN_PER_DEG
        change = np.where(refracted[part], residual / slope, 0.0)
        apparent[part] = np.clip(a - change, lowest, 90.0)
        taken[k] += 1
        return bool(np.all(np.abs(change) <= _INVERSE_STEP_TOLERANCE_DEG))

    for k in range(len(slices)):  # each slice to its own first step within the tolerance (or the limit)
        while taken[k] < _INVERSE_MAX_ITERATIONS and not step(k):
            pass
    # then every slice to the same number of steps: one pass over all elements stops at the first
    # step within the tolerance everywhere, which no slice reached before the slowest one did
    steps = max(taken)
    within = [True] * len(slices)
    for k in range(len(slices)):
        while taken[k] < steps:
            within[k] = step(k)
    while steps < _INVERSE_MAX_ITERATIONS and not all(within):
        steps += 1
        within = [step(k) for k in range(len(slices))]
    return apparent


# --- Saemundsson (1986), Meeus eq. 16.4 ---------------------------------------------


def saemundsson_refraction_from_true_deg(
    true_altitude_deg,
    temperature_c=STANDARD_TEMPERATURE_C,
    pressure_hpa=STANDARD_PRESSURE_HPA,
):
    """Refraction from the true altitude, Saemundsson (1986) = Meeus eq. 16.4.

    R = 1.02 cot(h + 10.3 / (h + 5.11)) + 0.0019279 arcmin at 1010 hPa and
    10 deg C, scaled by (P / 1010) (283 / (273 + T)).

    Parameters
    ----------
    true_altitude_deg : float or array_like
        True (airless) altitude h, from -90 to 90 [deg].
    temperature_c : float or array_like, optional
        Air temperature, from -90 to 60 [deg C].
    pressure_hpa : float or array_like, optional
        Air pressure, from 0 to 1100 [hPa].

    Returns
    -------
    float or numpy.ndarray
        Refraction R >= 0 [deg], so that the apparent altitude is h + R.

    Raises
    ------
    InputError
        A value that is not finite or is outside its range.

    Notes
    -----
    Meeus (1998, ch. 16) gives it as consistent with eq. 16.3 to about 0.1'
    (4"). As for Bennett's formula, the zenith term (Meeus's +0.0019279') makes
    R(90 deg) = 0 exactly, and R is 0 below a true altitude of -1 deg.

    Examples
    --------
    Meeus Example 16.a, the Sun's true upper limb at 0 deg 33.246' (Meeus
    prints 24.618' without the zenith term):

    >>> round(saemundsson_refraction_from_true_deg(33.246 / 60) * 60, 3)
    24.62
    """
    true = _checked("true_altitude_deg", true_altitude_deg, -90.0, 90.0, "deg")
    factor = _conditions_factor(temperature_c, pressure_hpa)
    inside = true >= LOWEST_REFRACTED_ALTITUDE_DEG
    safe_deg = np.where(inside, true, 0.0)
    argument_rad = np.radians(safe_deg + 10.3 / (safe_deg + 5.11))
    standard_arcmin = np.where(
        inside, 1.02 / np.tan(argument_rad) + _SAEMUNDSSON_ZENITH_ARCMIN, 0.0
    )
    refraction_deg = factor * standard_arcmin / _ARCMIN_PER_DEG
    return _output(refraction_deg, true_altitude_deg, temperature_c, pressure_hpa)


# --- pressure at a site --------------------------------------------------------------


def standard_pressure_hpa(elevation_m):
    """Standard pressure reduced to a site's elevation (isothermal barometric law).

    P = 1010 hPa * exp(-elevation / H), with H = ``PRESSURE_SCALE_HEIGHT_M``
    (8288 m, an isothermal atmosphere at 10 deg C).

    Parameters
    ----------
    elevation_m : float or array_like
        Site elevation above sea level, from -1000 to 10000 [m].

    Returns
    -------
    float or numpy.ndarray
        Pressure [hPa] to pass to the refraction functions when no barometer
        reading is logged.

    Raises
    ------
    InputError
        An elevation that is not finite or is outside the range.

    Notes
    -----
    The isothermal law differs from the ICAO standard atmosphere by under
    1 % below 3000 m (from memory: ICAO 701 hPa at 3000 m, against 706 hPa
    from this law scaled to 1013.25 hPa), i.e. under 0.06' in R even at the
    horizon and under 0.01' above 10 deg.

    Examples
    --------
    >>> standard_pressure_hpa(0.0)
    1010.0
    >>> round(standard_pressure_hpa(1500.0), 1)
    842.8
    """
    elevation = _checked("elevation_m", elevation_m, *ELEVATION_RANGE_M, "m")
    pressure = STANDARD_PRESSURE_HPA * np.exp(-elevation / PRESSURE_SCALE_HEIGHT_M)
    return _output(pressure, elevation_m)
