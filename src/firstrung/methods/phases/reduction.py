"""The half moon: the Sun/Moon distance ratio from Aristarchus' right triangle.

The classical method (Aristarchus of Samos, *On the Sizes and Distances of
the Sun and Moon*, c. 270 BC): when the Moon is exactly half lit, the angle
Sun-Moon-observer is a right angle, so the Sun-Moon elongation E seen by the
observer satisfies ``cos E = d_moon / d_sun`` and

    D_sun / D_moon = 1 / cos E = 1 / sin(90 deg - E).

Aristarchus took E = 87 deg and found the Sun 18 to 20 times farther than the
Moon; the true E is about 89.85 deg (ratio about 390). The problem is
ill-conditioned: with delta = 90 deg - E of only 0.15 deg, an error of 1' in
E changes the ratio by 11 %, and 0.15 deg of error allows any distance at
all. Results are therefore given as a 68 % interval mapped from the
(Gaussian) distribution of E, which is strongly skewed, and with ``high``
missing when E may reach 90 deg: then only a lower bound exists.

What each kind of observation gives (one small step per function):

1. a **measured elongation** (the observer measures the Sun-Moon angle at the
   moment they judge the Moon half lit): the instrument sees refracted,
   aberrated directions; the Moon is lit by the same aberrated Sun (its light
   left the Sun where the observer sees it), so the aberration belongs to the
   triangle and stays; :func:`corrected_elongation_deg` removes refraction
   (up to a few arcminutes near the horizon) and the sub-arcsecond rest with
   the ephemeris's *directions*; its error combines the instrument's and
   the judgement's (the elongation moves about 0.5 deg/h);
2. a **timing** of the half moon: E comes from the ephemeris's directions of
   the Sun and the Moon at the observed time, seen from the site (no
   ephemeris distance enters); sigma_E = rate x sigma_t
   (:func:`elongation_sigma_from_timing_deg`);
3. an **illuminated-fraction series** (photographs around the half moon): the
   fraction k gives the phase angle, ``90 deg - i = asin(2k - 1)``; since
   i + E + (the tiny angle at the Sun) = 180 deg, every image gives
   ``E_half = E(t_k) - asin(2k_k - 1)``: :func:`fit_half_phase` fits that
   line (slope free with three or more images), giving the elongation and
   the time of half phase with its sigma, which is then used as a timing.

Estimates from many observers are combined in delta = 90 deg - E, where the
errors are Gaussian, by a weighted mean (:func:`~firstrung.methods.phases.combine.combine_elongations`), never
by averaging ratios. :func:`interval_method` implements the other classical
route (the time from first to last quarter is longer than from last to first
by 4 delta / 360 of a month), with the Moon's uneven motion either ignored
or removed with the ephemeris.

References
----------
Heath, T. L. (1913), *Aristarchus of Samos, the Ancient Copernicus*, Oxford:
text and translation of *On the Sizes and Distances*, Hypothesis 4 and
Proposition 7 (E = 87 deg; ratio between 18 and 20).
Berry, A. (1898), *A Short History of Astronomy*, sections 31-32 (the Sun
"about 400 times as distant as the moon").
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from firstrung.arguments import checked
from firstrung.errors import InputError
from firstrung.uncertainty import Measured

__all__ = [
    "HalfPhaseFit",
    "Precision",
    "corrected_elongation_deg",
    "distance_ratio_from_elongation",
    "elongation_from_distance_ratio",
    "elongation_sigma_deg",
    "elongation_sigma_from_timing_deg",
    "fit_half_phase",
    "lower_bound_95",
    "precision_needed",
    "precision_sentence",
    "ratio_figure",
    "ratio_from_elongation",
]

#: One-sided 95 % point of a normal distribution (for the 95 % lower bound).
_Z_95_ONE_SIDED = 1.6448536269514722
#: Smallest time spread of an illuminated-fraction series for a free slope [deg of elongation]
#: (about 30 min of the Moon's motion): below it the slope is fixed at 1.
_MIN_SERIES_SPREAD_DEG = 0.25
#: Largest relative error of a fitted series slope; a less determined slope is fixed at 1 [1].
_MAX_SLOPE_SIGMA = 0.10
#: A fraction this close to 0 or 1 is refused by the series fit (asin has no slope there) [1].
_FRACTION_EDGE = 1e-6


# --- the triangle -------------------------------------------------------------------------


def distance_ratio_from_elongation(elongation_deg):
    """D_sun / D_moon = 1 / cos E for a right angle at the Moon.

    Parameters
    ----------
    elongation_deg : float or array_like
        Sun-Moon angle seen by the observer at true half moon, 0 to 180 [deg].

    Returns
    -------
    float or numpy.ndarray
        The ratio [1]; ``inf`` for E >= 90 deg (no Sun at a finite distance fits).

    Examples
    --------
    Aristarchus' 87 deg gives 19.1 (his Proposition 7: more than 18, less than 20):

    >>> round(distance_ratio_from_elongation(87.0), 2)
    19.11
    >>> distance_ratio_from_elongation([89.852, 90.0]).round(1)
    array([387.1,   inf])
    """
    e = checked("elongation_deg", elongation_deg, 0.0, 180.0, "deg")
    delta_rad = np.radians(90.0 - e)
    with np.errstate(divide="ignore"):
        ratio = np.where(delta_rad > 0, 1.0 / np.sin(np.where(delta_rad > 0, delta_rad, 1.0)), np.inf)
    return float(ratio) if np.ndim(elongation_deg) == 0 else ratio


def elongation_from_distance_ratio(ratio):
    """The elongation at half moon for a given D_sun / D_moon: E = acos(1 / ratio).

    Parameters
    ----------
    ratio : float or array_like
        Sun/Moon distance ratio, at least 1 [1].

    Returns
    -------
    float or numpy.ndarray
        Elongation [deg].

    Examples
    --------
    >>> round(elongation_from_distance_ratio(389.0), 4)
    89.8527
    """
    r = checked("ratio", ratio, 1.0, np.inf, "1")
    e = np.degrees(np.arccos(1.0 / r))
    return float(e) if np.ndim(ratio) == 0 else e


def ratio_from_elongation(elongation_deg: float, sigma_deg: float) -> Measured:
    """D_sun / D_moon with its 68 % interval, from a Gaussian elongation.

    The ratio is a monotonic function of E below 90 deg, so the central 68 %
    interval of E, ``E +/- sigma``, maps onto the ratio's: it is strongly
    skewed. When ``E + sigma`` reaches 90 deg the data allow any distance:
    ``high`` is None and only the lower bound holds. ``value`` is the ratio at
    E (the median), infinite when E >= 90 deg; ``sigma`` is the linear
    propagation, given only when an upper bound exists.

    Parameters
    ----------
    elongation_deg : float
        Best estimate of the elongation at half moon [deg].
    sigma_deg : float
        Its one-sigma error [deg], > 0.

    Returns
    -------
    Measured
        Unit ``"1"``.

    Examples
    --------
    >>> q = ratio_from_elongation(89.85, 0.01)
    >>> round(q.value), round(q.low), round(q.high)
    (382, 358, 409)
    >>> ratio_from_elongation(89.85, 0.5).high is None
    True
    """
    e = float(checked("elongation_deg", elongation_deg, 0.0, 180.0, "deg"))
    s = float(checked("sigma_deg", sigma_deg, 0.0, 180.0, "deg"))
    if not s > 0:
        raise InputError(f"sigma_deg: received {sigma_deg!r}; expected a positive uncertainty [deg]")
    delta = 90.0 - e
    value = 1.0 / math.sin(math.radians(delta)) if delta > 0 else math.inf
    upper_delta = min(delta + s, 90.0)
    low = 1.0 / math.sin(math.radians(upper_delta)) if upper_delta > 0 else None
    high = 1.0 / math.sin(math.radians(delta - s)) if delta - s > 0 else None
    sigma = None
    if high is not None:
        d = math.radians(delta)
        sigma = math.cos(d) / math.sin(d) ** 2 * math.radians(s)
    return Measured(value, sigma, low, high, "1")


def lower_bound_95(elongation_deg: float, sigma_deg: float) -> float | None:
    """One-sided 95 % lower bound of D_sun / D_moon [1]; None when even that allows E >= 90 deg.

    >>> round(lower_bound_95(89.85, 0.5))
    59
    """
    delta = min(90.0 - float(elongation_deg) + _Z_95_ONE_SIDED * float(sigma_deg), 90.0)
    return 1.0 / math.sin(math.radians(delta)) if delta > 0 else None


# --- what each observation gives ------------------------------------------------------------


def corrected_elongation_deg(measured_deg, seen_minus_geometric_deg):
    """A measured Sun-Moon angle reduced to the geometric one of the triangle.

    Parameters
    ----------
    measured_deg : float or array_like
        The angle the instrument gave [deg].
    seen_minus_geometric_deg : float or array_like
        What refraction and aberration add to the angle at that site and time,
        from the ephemeris's directions (observed minus geometric
        elongation) [deg].

    Returns
    -------
    float or numpy.ndarray
        Geometric elongation [deg].

    Examples
    --------
    >>> round(corrected_elongation_deg(89.9, 0.0055), 4)
    89.8945
    """
    m = checked("measured_deg", measured_deg, 0.0, 180.0, "deg")
    c = checked("seen_minus_geometric_deg", seen_minus_geometric_deg, -5.0, 5.0, "deg")
    out = m - c
    return float(out) if np.ndim(measured_deg) == 0 and np.ndim(seen_minus_geometric_deg) == 0 else out


def elongation_sigma_from_timing_deg(time_sigma_s, rate_deg_per_h):
    """One-sigma error of E from a timing error: |dE/dt| x sigma_t.

    Parameters
    ----------
    time_sigma_s : float or array_like
        Timing error [s], >= 0.
    rate_deg_per_h : float or array_like
        Rate of the elongation at that time [deg/h] (about 0.5).

    Returns
    -------
    float or numpy.ndarray
        [deg]

    Examples
    --------
    >>> round(elongation_sigma_from_timing_deg(3600.0, 0.508), 3)
    0.508
    """
    t = checked("time_sigma_s", time_sigma_s, 0.0, np.inf, "s")
    r = checked("rate_deg_per_h", rate_deg_per_h, -10.0, 10.0, "deg/h")
    out = np.abs(r) * t / 3600.0
    return float(out) if np.ndim(time_sigma_s) == 0 and np.ndim(rate_deg_per_h) == 0 else out


def elongation_sigma_deg(instrument_sigma_deg, judgement_sigma_s, rate_deg_per_h):
    """One-sigma error of a measured elongation: the instrument's and the judgement's, in quadrature.

    The observer measures E when they judge the Moon half lit; a judgement
    off by dt gives E(t_half + dt), off by rate x dt.

    >>> round(elongation_sigma_deg(0.1, 1800.0, 0.5), 4)
    0.2693
    """
    i = checked("instrument_sigma_deg", instrument_sigma_deg, 0.0, 90.0, "deg")
    j = elongation_sigma_from_timing_deg(judgement_sigma_s, rate_deg_per_h)
    out = np.hypot(i, j)
    return float(out) if np.ndim(out) == 0 else out


@dataclass(frozen=True)
class HalfPhaseFit:
    """The elongation at half phase fitted from an illuminated-fraction series.

    Attributes
    ----------
    elongation_deg, sigma_deg : float
        Elongation at half phase and its one-sigma error [deg].
    slope : float
        Fitted d(90 deg - i)/dE (1 when the ephemeris shape is exact) [1].
    slope_free : bool
        Whether the slope was fitted (three or more images that fix it to
        10 %) or fixed at 1.
    images : int
        Images used.
    chi2_per_dof : float or None
        Goodness of fit; the sigma is scaled up by sqrt(chi2/dof) when above 1.
    """

    elongation_deg: float
    sigma_deg: float
    slope: float
    slope_free: bool
    images: int
    chi2_per_dof: float | None


def fit_half_phase(elongation_deg, illuminated_fraction, fraction_sigma, elongation_sigma_deg=0.0,
                   fraction_zero_point_sigma: float = 0.0) -> HalfPhaseFit:
    """Elongation at half phase from images of the Moon around it.

    Each image gives ``y = asin(2k - 1) = 90 deg - i`` (Meeus 1998, eq. 48.1
    inverted) and, from the ephemeris's directions at its time, the
    elongation ``E``. Because ``i + E + s = 180 deg`` with ``s`` the angle at
    the Sun (0.15 deg, constant to 1e-6 deg over hours), ``y = b (E - E_half)``
    with ``b = 1``; the weighted straight-line fit gives ``E_half = -a/b``.
    The slope ``b`` is fitted only when three or more images spread over at
    least 30 min determine it to 10 % (e.g. to absorb a scale error of the
    measured fractions); otherwise it is fixed at 1 and ``E_half`` is the
    weighted mean of ``E - y``.

    Parameters
    ----------
    elongation_deg : array_like
        E at each image [deg], from the ephemeris's directions.
    illuminated_fraction : array_like
        Measured fraction k of each image, strictly between 0 and 1 [1].
    fraction_sigma : float or array_like
        One-sigma error of k [1], > 0.
    elongation_sigma_deg : float or array_like, optional
        Error of E from each image's clock [deg].
    fraction_zero_point_sigma : float, optional
        Error shared by every fraction of the series (a photometric zero
        point: the same exposure, processing and threshold) [1]. It moves
        all ``y`` alike, so it shifts ``E_half`` by ``2 dk / (b cos y)`` and
        no scatter about the fit reveals it: it is added after the fit
        (0.005 of zero point is 0.57 deg of E, four times 90 deg - E).

    Returns
    -------
    HalfPhaseFit

    Raises
    ------
    InputError
        A fraction at 0 or 1, or an empty series.

    Examples
    --------
    >>> e = np.array([89.35, 89.60, 89.85, 90.10])
    >>> k = (1 + np.sin(np.radians(e - 89.85))) / 2
    >>> f = fit_half_phase(e, k, 0.0001)
    >>> round(f.elongation_deg, 6), f.slope_free
    (89.85, True)
    >>> fit_half_phase(e, k, 0.01).slope_free   # 0.01 in k is 1.1 deg: the slope stays 1
    False
    """
    e = np.atleast_1d(checked("elongation_deg", elongation_deg, 0.0, 180.0, "deg"))
    k = np.atleast_1d(checked("illuminated_fraction", illuminated_fraction, 0.0, 1.0, "1"))
    if e.size == 0 or e.shape != k.shape:
        raise InputError("illuminated_fraction: expected one fraction per elongation, at least one")
    if np.any((k < _FRACTION_EDGE) | (k > 1 - _FRACTION_EDGE)):
        raise InputError("illuminated_fraction: a fraction of exactly 0 or 1 carries no timing; expected 0 < k < 1")
    sk = np.broadcast_to(checked("fraction_sigma", fraction_sigma, 0.0, 1.0, "1"), k.shape)
    if np.any(sk <= 0):
        raise InputError("fraction_sigma: expected a positive error of the illuminated fraction")
    se = np.broadcast_to(checked("elongation_sigma_deg", elongation_sigma_deg, 0.0, 90.0, "deg"), k.shape)
    x = 2.0 * k - 1.0
    y = np.degrees(np.arcsin(x))
    sy = np.degrees(2.0 * sk / np.sqrt(1.0 - x**2))
    w = 1.0 / (sy**2 + se**2)
    n = e.size
    # the slope is fixed at 1 by the geometry (i + E + s = 180 deg); it is fitted only when
    # the series determines it to 10 %, e.g. to absorb a scale error of the measured fractions
    free = False
    if n >= 3 and float(np.ptp(e)) >= _MIN_SERIES_SPREAD_DEG:
        sw, sx, sxx = w.sum(), (w * e).sum(), (w * e * e).sum()
        sy_, sxy = (w * y).sum(), (w * e * y).sum()
        det = sw * sxx - sx**2
        b = (sw * sxy - sx * sy_) / det
        a = (sxx * sy_ - sx * sxy) / det
        cov = np.array([[sxx, -sx], [-sx, sw]]) / det  # of (a, b)
        free = bool(b > 0 and math.sqrt(cov[1, 1]) <= _MAX_SLOPE_SIGMA * b)
    if free:
        half = -a / b
        grad = np.array([-1.0 / b, a / b**2])
        var_half = float(grad @ cov @ grad)
        residual = y - (a + b * e)
        dof = n - 2
    else:
        b = 1.0
        estimates = e - y
        half = float((w * estimates).sum() / w.sum())
        var_half = float(1.0 / w.sum())
        residual = estimates - half
        dof = n - 1
    chi2 = float((w * residual**2).sum())
    chi2_dof = chi2 / dof if dof > 0 else None
    if chi2_dof is not None and chi2_dof > 1.0:
        var_half *= chi2_dof
    zp = float(checked("fraction_zero_point_sigma", fraction_zero_point_sigma, 0.0, 1.0, "1"))
    if zp > 0:
        var_half += (math.degrees(2.0 * zp) / b) ** 2  # dy/dk = 2 / cos y, y = 0 at half phase
    return HalfPhaseFit(float(half), math.sqrt(var_half), float(b), bool(free), int(n), chi2_dof)


# --- many observers ------------------------------------------------------------------------------


# CombinedElongation and combine_elongations live in combine.py (which errors are shared, the scale factor)


# --- how good it must be --------------------------------------------------------------------------


@dataclass(frozen=True)
class Precision:
    """The errors of E and of the timing that pin the ratio to within a given fraction."""

    within: float
    elongation_sigma_deg: float
    time_sigma_s: float

    @property
    def elongation_sigma_arcmin(self) -> float:
        return self.elongation_sigma_deg * 60.0


def precision_needed(true_elongation_deg, rate_deg_per_h, within: float = 0.10) -> Precision:
    """The one-sigma errors of E and of the timing that keep the 68 % interval's top within ``within``.

    With delta = 90 deg - E, the interval's top is ``1/sin(delta - sigma)``;
    it stays below (1 + within) times the ratio when
    ``sigma <= delta (1 - 1/(1 + within))`` (small-angle form, exact to 1e-6
    here). The timing error is that divided by the elongation's rate.

    Parameters
    ----------
    true_elongation_deg : float
        The elongation at half moon [deg] (the ephemeris's, about 89.85).
    rate_deg_per_h : float
        The elongation's rate [deg/h] (about 0.5).
    within : float
        Allowed fractional excess of the interval's top, > 0 (0.10: 10 %; 1.0: a factor 2).

    Returns
    -------
    Precision

    Examples
    --------
    DESIGN section 7: within 10 %, E to 0.8' or the timing to 1.6 min; within a factor 2, 4.4' or 9 min:

    >>> p = precision_needed(89.852, 0.508, 0.10)
    >>> round(p.elongation_sigma_arcmin, 2), round(p.time_sigma_s / 60, 1)
    (0.81, 1.6)
    >>> p = precision_needed(89.852, 0.508, 1.0)
    >>> round(p.elongation_sigma_arcmin, 1), round(p.time_sigma_s / 60, 1)
    (4.4, 8.7)
    """
    delta = 90.0 - float(checked("true_elongation_deg", true_elongation_deg, 0.0, 90.0, "deg"))
    rate = abs(float(checked("rate_deg_per_h", rate_deg_per_h, -10.0, 10.0, "deg/h")))
    if not within > 0 or rate == 0:
        raise InputError(f"within: received {within!r}; expected a positive fraction and a non-zero rate")
    sigma = delta * (1.0 - 1.0 / (1.0 + within))
    return Precision(float(within), sigma, sigma / rate * 3600.0)


def precision_sentence(needed: Precision, achieved_sigma_deg: float | None, rate_deg_per_h: float) -> str:
    """The plain statement of how much better the angle or the timing must be.

    >>> print(precision_sentence(precision_needed(89.852, 0.508), 0.25, 0.508))
    to know the ratio within 10 % you would need E to ±0.81′ (0.0135°) or the timing to ±1.6 min; your combined E is ±15.0′ (as a timing ±30 min), 19 times too coarse
    """
    pct = f"{needed.within * 100:.0f} %" if needed.within < 1 else f"a factor {1 + needed.within:g}"
    text = (
        f"to know the ratio within {pct} you would need E to ±{needed.elongation_sigma_arcmin:.2f}′ "
        f"({needed.elongation_sigma_deg:.4f}°) or the timing to ±{needed.time_sigma_s / 60:.1f} min"
    )
    if achieved_sigma_deg is not None and rate_deg_per_h:
        factor = achieved_sigma_deg / needed.elongation_sigma_deg
        minutes = achieved_sigma_deg / abs(rate_deg_per_h) * 60.0
        text += f"; your combined E is ±{achieved_sigma_deg * 60:.1f}′ (as a timing ±{minutes:.0f} min)"
        text += f", {factor:.0f} times too coarse" if factor > 1 else ", good enough"
    return text


# --- the interval method ---------------------------------------------------------------------------


# --- the figure ----------------------------------------------------------------------------------


def ratio_figure(elongation_deg: float, sigma_deg: float, *, true_ratio: float | None = None, title: str | None = None):
    """D_sun/D_moon against E, with the measured E and its 68 % interval.

    matplotlib is imported here, not with the module; the figure is returned,
    never shown or saved.

    Parameters
    ----------
    elongation_deg, sigma_deg : float
        The measured (combined) elongation and its one-sigma error [deg].
    true_ratio : float, optional
        The modern value to mark [1].
    title : str, optional

    Returns
    -------
    matplotlib.figure.Figure

    Examples
    --------
    >>> fig = ratio_figure(89.8, 0.1, true_ratio=389.0)
    >>> len(fig.axes)
    1
    """
    from matplotlib.figure import Figure

    e, s = float(elongation_deg), float(sigma_deg)
    top = 89.999
    low_e = max(0.0, min(e - 3 * s, 89.0))
    grid = np.linspace(low_e, top, 600)
    fig = Figure(figsize=(6.4, 4.0), layout="constrained")
    ax = fig.add_subplot()
    ax.plot(grid, distance_ratio_from_elongation(grid), color="0.2", lw=1.2, label="1 / cos E")
    ax.set_yscale("log")
    ax.set_xlabel("Sun-Moon elongation at half moon E (deg)")
    ax.set_ylabel("Sun's distance / Moon's distance (log scale)")
    ax.axvspan(max(e - s, low_e), min(e + s, top), color="tab:blue", alpha=0.2, label="measured E ± 1σ")
    if e < 90:
        ax.axvline(e, color="tab:blue", lw=1.5, label=f"measured E = {e:.3f}°")
    m = ratio_from_elongation(float(np.clip(e, 0.0, 180.0)), s)
    if m.low is not None:
        ax.axhline(m.low, color="tab:blue", ls=":", lw=1, label="ratio's 68 % interval")
    if m.high is not None:
        ax.axhline(m.high, color="tab:blue", ls=":", lw=1)
    else:
        ax.annotate("no upper bound: E may reach 90°", xy=(0.02, 0.55), xycoords="axes fraction", color="tab:blue")
    if true_ratio is not None:
        ax.axhline(true_ratio, color="tab:red", lw=1, ls="--", label=f"modern value at these half moons: {true_ratio:.0f}")
    ax.set_xlim(low_e, 90.0)
    ax.legend(loc="upper left", fontsize=8)
    if title:
        ax.set_title(title)
    return fig
