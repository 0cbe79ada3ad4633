"""A Cepheid's period, mean magnitude and distance from its photometry (pure functions).

1. The period: a peak of the generalised Lomb-Scargle periodogram (:mod:`.periodogram`) between
   the trial periods, with its false-alarm probability: of the highest peaks (a period and its
   one-day aliases look alike to one sinusoid), the one whose whole light curve fits best.
2. The light curve: a Fourier series of a few harmonics, ``m(t) = m0 + sum_k a_k cos(2 pi k f t)
   + b_k sin(2 pi k f t)``, fitted by weighted least squares with the frequency refined (the
   classical description of Cepheid light curves, Simon & Lee 1981, ApJ 248, 291); ``m0`` is the
   mean magnitude (the magnitude-averaged mean of the fitted curve).
3. The distance: ``M`` from the period-luminosity relation chosen (:mod:`.relations`), the
   distance modulus ``mu = m0 - M - A`` with ``A`` the extinction the campaign states, and
   ``d = 10^(mu/5 + 1)`` pc. ``mu`` is Gaussian, so the distance's 68 % interval is mapped
   from ``mu +/- sigma``.

The error budget (in magnitudes of the distance modulus) names each input: photometry (what
perfectly even phases would leave), phase coverage (what the gaps add), the period, the
relation's coefficients, its scatter, and the extinction.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from firstrung.errors import ComputationError
from firstrung.methods.cepheids.periodogram import (
    false_alarm_probability,
    frequency_grid,
    lomb_scargle_power,
)
from firstrung.methods.cepheids.relations import PeriodLuminosity
from firstrung.uncertainty import (
    BudgetTerm,
    Measured,
    budget_from_contributions,
    chi2_survival,
    gaussian,
)

#: Trial periods of classical Cepheids [d] (the shortest known pulsate in about a day; few exceed 100 d).
MIN_PERIOD_D, MAX_PERIOD_D = 1.0, 100.0
#: Harmonics of the light curve when the data allow (common practice for a few dozen points).
DEFAULT_HARMONICS = 3
#: Periodogram peaks whose whole light curve is tried (the highest and its aliases).
PEAKS_TRIED = 5
#: As for the parallax: stated errors scaled only when the chi-square refuses them (common practice).
CHI2_SCALING_PROBABILITY = 0.003


@dataclass(frozen=True)
class CepheidFit:
    """One Cepheid's period, light curve and distance."""

    period_days: Measured
    mean_magnitude: Measured
    absolute_magnitude: Measured
    distance_modulus_mag: Measured
    distance_pc: Measured
    power: float
    false_alarm_probability: float
    frequencies_per_d: np.ndarray
    periodogram: np.ndarray
    harmonics: int
    coefficients: np.ndarray
    time_origin_d: float
    time_d: np.ndarray
    magnitude: np.ndarray
    sigma_mag: np.ndarray
    residual_mag: np.ndarray
    chi2: float
    dof: int
    error_scale: float
    extinction_mag: float
    extinction_sigma_mag: float
    relation: PeriodLuminosity
    budget: tuple[BudgetTerm, ...]

    def model(self, time_d):
        """The fitted light curve at instants on the fit's own time axis [mag]."""
        return design_matrix(np.asarray(time_d, dtype=float) - self.time_origin_d, 1.0 / self.period_days.value,
                       self.harmonics) @ self.coefficients


def design_matrix(t, f, harmonics):
    cols = [np.ones_like(t)]
    for k in range(1, harmonics + 1):
        cols += [np.cos(2 * np.pi * k * f * t), np.sin(2 * np.pi * k * f * t)]
    return np.column_stack(cols)


def _linear_fit(t, y, w, f, harmonics):
    a = design_matrix(t, f, harmonics)
    sw = np.sqrt(w)
    coef, *_ = np.linalg.lstsq(a * sw[:, None], y * sw, rcond=None)
    r = y - a @ coef
    return coef, float(np.sum(w * r * r))


def refined_frequency(t, y, w, frequency: float, step: float, harmonics: int) -> tuple[float, float]:
    """The frequency within two grid steps of ``frequency`` where the light curve's chi-square is least,
    and that chi-square (a bounded search of a few dozen linear fits)."""
    from scipy.optimize import minimize_scalar

    best = minimize_scalar(lambda f: _linear_fit(t, y, w, f, harmonics)[1],
                           bounds=(frequency - 2 * step, frequency + 2 * step), method="bounded",
                           options={"xatol": 1e-4 * step})
    return float(best.x), float(best.fun)


def harmonics_for(n_points: int, wanted: int = DEFAULT_HARMONICS) -> int:
    """As many harmonics as ``n_points`` allow, at most ``wanted`` (at least 3 points per two
    coefficients beyond the mean and the period).

    >>> harmonics_for(30), harmonics_for(9), harmonics_for(6)
    (3, 2, 1)
    """
    return max(1, min(wanted, (n_points - 5) // 2))


#: The last light-curve fits made in this process, by their inputs: the check and the reduction
#: fit the same magnitudes, and the periodogram is the costly part (results are read, never changed).
_RECENT_FITS: dict[bytes, tuple] = {}
_RECENT_FITS_KEPT = 8


def fit_light_curve(time_d, magnitude, sigma_mag, *, min_period_d: float = MIN_PERIOD_D,
                    max_period_d: float = MAX_PERIOD_D, harmonics: int = DEFAULT_HARMONICS):
    """Period (periodogram peak, then refined) and the Fourier light curve.

    Returns (frequency, its sigma, coefficients, their covariance, chi2, dof, scale, power,
    fap, frequencies, periodogram, harmonics, time origin). The same inputs give the same
    tuple, computed once (its arrays are shared: read them, never change them).
    """
    import hashlib

    t_all = np.asarray(time_d, dtype=float)
    y = np.asarray(magnitude, dtype=float)
    s = np.asarray(sigma_mag, dtype=float)
    digest = hashlib.blake2b(repr((t_all.size, min_period_d, max_period_d, harmonics)).encode())
    for a in (t_all, y, s):
        digest.update(np.ascontiguousarray(a).tobytes())
    key = digest.digest()
    if key not in _RECENT_FITS:
        if len(_RECENT_FITS) >= _RECENT_FITS_KEPT:
            del _RECENT_FITS[next(iter(_RECENT_FITS))]
        _RECENT_FITS[key] = _fit_light_curve(t_all, y, s, min_period_d, max_period_d, harmonics)
    return _RECENT_FITS[key]


def _fit_light_curve(t_all, y, s, min_period_d, max_period_d, harmonics):
    n = t_all.size
    if n < 6:
        raise ComputationError(f"a Cepheid's period needs at least 6 magnitudes, got {n}")
    w = 1.0 / s**2
    origin = float(np.sum(w * t_all) / np.sum(w))
    t = t_all - origin
    if np.ptp(t) < 1.5 * min_period_d:
        raise ComputationError(f"the magnitudes span {np.ptp(t):.1f} d: too short to find a period of "
                               f"{min_period_d:g} d or more")
    max_period_d = min(max_period_d, float(np.ptp(t)))
    freqs = frequency_grid(t, min_period_d, max_period_d)
    power = lomb_scargle_power(t, y, s, freqs)
    k0 = int(np.argmax(power))
    h = harmonics_for(n, harmonics)
    step = (freqs[1] - freqs[0]) if freqs.size > 1 else 1e-3
    # the periodogram fits one sinusoid, under which a period and its one-day aliases look alike;
    # the light curve with its harmonics tells them apart: the highest peaks are each refined and the
    # one whose whole curve fits best is kept
    is_peak = np.r_[False, (power[1:-1] > power[:-2]) & (power[1:-1] >= power[2:]), False] | (np.arange(freqs.size) == k0)
    peaks = np.flatnonzero(is_peak)
    peaks = peaks[np.argsort(-power[peaks], kind="stable")][:PEAKS_TRIED]
    peaks = peaks[power[peaks] >= 0.5 * power[k0]]
    tried = [refined_frequency(t, y, w, float(freqs[k]), step, h) for k in peaks]
    f_best, _ = min(tried, key=lambda x: x[1])
    k0 = int(peaks[int(np.argmin([x[1] for x in tried]))])
    fap = false_alarm_probability(power[k0], float(freqs[-1]), t, s)
    coef, chi2 = _linear_fit(t, y, w, f_best, h)
    # covariance of (coefficients, frequency) from the Jacobian at the solution
    a = design_matrix(t, f_best, h)
    d_f = np.zeros(n)
    for k in range(1, h + 1):
        d_f += 2 * np.pi * k * t * (-coef[2 * k - 1] * np.sin(2 * np.pi * k * f_best * t)
                                    + coef[2 * k] * np.cos(2 * np.pi * k * f_best * t))
    jac = np.column_stack([a, d_f])
    cov = np.linalg.inv(jac.T @ (jac * w[:, None]))
    dof = n - (2 * h + 2)
    scale = 1.0
    if dof > 0 and float(chi2_survival(chi2, dof)) < CHI2_SCALING_PROBABILITY:
        scale = math.sqrt(chi2 / dof)
    return (f_best, math.sqrt(cov[-1, -1]) * scale, coef, cov * scale**2, chi2, dof, scale, float(power[k0]), fap,
            freqs, power, h, origin)


def cepheid_distance(time_d, magnitude, sigma_mag, relation: PeriodLuminosity, *, extinction_mag: float = 0.0,
                     extinction_sigma_mag: float = 0.0, min_period_d: float = MIN_PERIOD_D,
                     max_period_d: float = MAX_PERIOD_D, harmonics: int = DEFAULT_HARMONICS) -> CepheidFit:
    """A Cepheid's period, mean magnitude, absolute magnitude and distance.

    Parameters
    ----------
    time_d : array
        Instants [d] (any origin; e.g. Julian dates).
    magnitude, sigma_mag : array
        Magnitudes in the relation's band and their one-sigma [mag].
    relation : PeriodLuminosity
    extinction_mag, extinction_sigma_mag : float
        Interstellar extinction in that band and its one-sigma [mag].

    Returns
    -------
    CepheidFit

    Examples
    --------
    >>> from firstrung.methods.cepheids.relations import RELATIONS
    >>> t = np.linspace(0.0, 40.0, 40)
    >>> m = 4.0 + 0.4 * np.cos(2 * np.pi * t / 5.366)
    >>> fit = cepheid_distance(t, m, np.full(40, 0.01), RELATIONS["benedict2007-v"])
    >>> round(fit.period_days.value, 3), round(fit.mean_magnitude.value, 3)
    (5.366, 4.0)
    """
    f, f_sigma, coef, cov, chi2, dof, scale, power, fap, freqs, pgram, h, origin = fit_light_curve(
        time_d, magnitude, sigma_mag, min_period_d=min_period_d, max_period_d=max_period_d, harmonics=harmonics)
    period = 1.0 / f
    period_sigma = f_sigma / f**2
    s = np.asarray(sigma_mag, dtype=float)
    m0 = float(coef[0])
    m0_sigma = math.sqrt(cov[0, 0])
    even_sigma = math.sqrt(1.0 / np.sum(1.0 / s**2)) * scale
    log_p = math.log10(period)
    log_p_sigma = period_sigma / (period * math.log(10.0))
    big_m = float(relation.absolute_magnitude(period))
    terms = {
        "photometry (the magnitudes' stated errors)": even_sigma,
        "phase coverage (gaps in the light curve)": math.sqrt(max(m0_sigma**2 - even_sigma**2, 0.0)),
        "period": abs(relation.slope) * log_p_sigma,
        "relation's zero point": relation.zero_point_sigma_mag,
        "relation's slope": relation.slope_sigma * abs(log_p - 1.0),
        "relation's scatter (width of the instability strip)": relation.scatter_mag,
        "extinction": extinction_sigma_mag,
    }
    m_abs_sigma = math.sqrt(sum(terms[k] ** 2 for k in ("period", "relation's zero point", "relation's slope",
                                                          "relation's scatter (width of the instability strip)")))
    mu = m0 - big_m - extinction_mag
    mu_sigma = math.sqrt(sum(v**2 for v in terms.values()))
    distance = 10.0 ** (mu / 5.0 + 1.0)
    t = np.asarray(time_d, dtype=float)
    y = np.asarray(magnitude, dtype=float)
    residual = y - design_matrix(t - origin, f, h) @ coef
    return CepheidFit(
        period_days=gaussian(period, period_sigma, "d"),
        mean_magnitude=gaussian(m0, m0_sigma, "mag"),
        absolute_magnitude=gaussian(big_m, m_abs_sigma, "mag"),
        distance_modulus_mag=gaussian(mu, mu_sigma, "mag"),
        distance_pc=Measured(distance, distance * math.log(10.0) / 5.0 * mu_sigma,
                             10.0 ** ((mu - mu_sigma) / 5.0 + 1.0), 10.0 ** ((mu + mu_sigma) / 5.0 + 1.0), "pc"),
        power=power, false_alarm_probability=fap, frequencies_per_d=freqs, periodogram=pgram, harmonics=h,
        coefficients=coef, time_origin_d=origin, time_d=t, magnitude=y, sigma_mag=s, residual_mag=residual,
        chi2=chi2, dof=dof, error_scale=scale, extinction_mag=extinction_mag,
        extinction_sigma_mag=extinction_sigma_mag, relation=relation,
        budget=budget_from_contributions(terms, "mag"),
    )


def distance_from_mean_magnitude(mean_magnitude: float, period_days: float, relation: PeriodLuminosity,
                                 extinction_mag: float = 0.0) -> float:
    """The distance [pc] that a mean magnitude, a period and an extinction give through a relation.

    >>> from firstrung.methods.cepheids.relations import RELATIONS
    >>> round(distance_from_mean_magnitude(4.0, 10.0, RELATIONS["benedict2007-v"]), 0)
    407.0
    """
    mu = mean_magnitude - float(relation.absolute_magnitude(period_days)) - extinction_mag
    return 10.0 ** (mu / 5.0 + 1.0)
