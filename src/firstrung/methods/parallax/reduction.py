"""Parallax, proper motion and place of a star from its measured positions (pure functions).

Each epoch's measured place is turned into offsets from a reference place on the
tangent plane, ``x = (ra - ra_ref) cos(dec_ref)`` and ``y = dec - dec_ref`` [mas], and the
five astrometric parameters are fitted together by weighted least squares::

    x_i = x0 + mu_ra  (t_i - t_ref) + p f_ra(t_i)
    y_i = y0 + mu_dec (t_i - t_ref) + p f_dec(t_i)

with ``f_ra``, ``f_dec`` the parallax factors from DE421's Earth
(:func:`firstrung.ephemeris.stars.parallax_factors`). This is the model by which
Hipparcos's parallaxes were fitted (ESA 1997, vol. 1 sec. 1.2.8); over a campaign of
a year or two, curvature of the proper motion and perspective acceleration stay far
below a small telescope's 0.05" (they reach 0.1 mas/yr^2 only for the nearest stars).

The parallax is Gaussian; the distance ``1000 / p`` [pc] is its reciprocal, so its
68 % interval is mapped from the parallax's (open above when the parallax's interval
reaches zero).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from firstrung.uncertainty import (
    BudgetTerm,
    Measured,
    budget_from_contributions,
    chi2_survival,
    gaussian,
    reciprocal_of_gaussian,
)

#: Milliarcseconds per degree.
MAS_PER_DEG = 3.6e6
#: Light years per parsec (IAU 2015 Resolution B2: pc = au / tan 1"; ly = c x 365.25 d) [ly/pc].
LIGHT_YEARS_PER_PARSEC = 3.261563777
#: Below this probability of the chi-square the stated errors are judged too small and are
#: scaled by sqrt(chi2/dof) (common practice).
CHI2_SCALING_PROBABILITY = 0.003


@dataclass(frozen=True)
class ParallaxFit:
    """One star's astrometric solution.

    Attributes
    ----------
    parallax_mas : Measured
        The parallax [mas].
    distance_pc, distance_ly : Measured
        1000 / p and its light-year equivalent, intervals mapped from the parallax's.
    proper_motion_ra_mas_per_yr, proper_motion_dec_mas_per_yr : Measured
        Along the parallel (mu_alpha cos delta) and in declination [mas/yr].
    reference_ra_deg, reference_dec_deg, reference_epoch_jyear : float
        The fitted place at the reference epoch (the weighted mean epoch).
    x_mas, y_mas : numpy.ndarray
        Each epoch's offset from the reference place [mas].
    f_ra, f_dec, years : numpy.ndarray
        Parallax factors and epochs since the reference [yr].
    residual_ra_mas, residual_dec_mas : numpy.ndarray
        Measured minus fitted [mas].
    chi2, dof : float, int
    error_scale : float
        Factor applied to the stated errors (1 unless the chi-square refused them).
    budget : tuple of BudgetTerm
        What limits the parallax [mas].
    """

    parallax_mas: Measured
    distance_pc: Measured
    distance_ly: Measured
    proper_motion_ra_mas_per_yr: Measured
    proper_motion_dec_mas_per_yr: Measured
    reference_ra_deg: float
    reference_dec_deg: float
    reference_epoch_jyear: float
    x_mas: np.ndarray
    y_mas: np.ndarray
    sigma_mas: np.ndarray
    f_ra: np.ndarray
    f_dec: np.ndarray
    years: np.ndarray
    residual_ra_mas: np.ndarray
    residual_dec_mas: np.ndarray
    chi2: float
    dof: int
    error_scale: float
    budget: tuple[BudgetTerm, ...]


def tangent_offsets_mas(ra_deg, dec_deg, ra_ref_deg: float, dec_ref_deg: float) -> tuple[np.ndarray, np.ndarray]:
    """Offsets along the parallel and in declination from a reference place [mas].

    >>> x, y = tangent_offsets_mas(np.array([359.9999]), np.array([0.0]), 0.0, 0.0)
    >>> round(float(x[0]), 3), float(y[0])
    (-360.0, 0.0)
    """
    d_ra = (np.asarray(ra_deg, dtype=float) - ra_ref_deg + 180.0) % 360.0 - 180.0
    x = d_ra * np.cos(np.radians(dec_ref_deg)) * MAS_PER_DEG
    y = (np.asarray(dec_deg, dtype=float) - dec_ref_deg) * MAS_PER_DEG
    return x, y


def _solve(design: np.ndarray, values: np.ndarray, sigma: np.ndarray):
    w = 1.0 / sigma
    a = design * w[:, None]
    b = values * w
    params, *_ = np.linalg.lstsq(a, b, rcond=None)
    covariance = np.linalg.inv(a.T @ a)
    residual = values - design @ params
    return params, covariance, float(np.sum((residual * w) ** 2)), residual


def fit_parallax(ra_deg, dec_deg, sigma_arcsec, epoch_jyear, f_ra, f_dec) -> ParallaxFit:
    """Fit place, proper motion and parallax to one star's measured positions.

    Parameters
    ----------
    ra_deg, dec_deg : array
        Measured places, ICRS [deg].
    sigma_arcsec : array
        One coordinate's one-sigma [arcsec].
    epoch_jyear : array
        The epochs as Julian years [yr].
    f_ra, f_dec : array
        Parallax factors at each epoch [1].

    Returns
    -------
    ParallaxFit

    Raises
    ------
    ComputationError
        With fewer than 3 epochs (6 coordinates for 5 unknowns) or epochs spanning less than
        a quarter of a year (the parallax cannot be told from the proper motion).

    Examples
    --------
    >>> t = np.linspace(2027.0, 2028.0, 12)
    >>> f_ra, f_dec = np.sin(2 * np.pi * t), 0.5 * np.cos(2 * np.pi * t)
    >>> ra = 10.0 + (100.0 * f_ra) / 3.6e6 / np.cos(np.radians(20.0))
    >>> dec = 20.0 + (100.0 * f_dec + 50.0 * (t - 2027.5)) / 3.6e6
    >>> fit = fit_parallax(ra, dec, np.full(12, 0.01), t, f_ra, f_dec)
    >>> round(fit.parallax_mas.value, 3), round(fit.proper_motion_dec_mas_per_yr.value, 3)
    (100.0, 50.0)
    """
    from firstrung.errors import ComputationError

    ra, dec = np.asarray(ra_deg, dtype=float), np.asarray(dec_deg, dtype=float)
    sigma = np.asarray(sigma_arcsec, dtype=float) * 1000.0
    t = np.asarray(epoch_jyear, dtype=float)
    f_ra, f_dec = np.asarray(f_ra, dtype=float), np.asarray(f_dec, dtype=float)
    n = ra.size
    if n < 3:
        raise ComputationError(f"a parallax needs at least 3 epochs (5 unknowns from 2 coordinates each), got {n}")
    if np.ptp(t) < 0.25:
        raise ComputationError(f"epochs span {np.ptp(t) * 365.25:.0f} days; a parallax needs them spread over at "
                               "least a quarter of a year (better a whole year), or it cannot be told from the proper motion")
    weight = 1.0 / sigma**2
    t_ref = float(np.sum(weight * t) / np.sum(weight))
    ra_ref = float((np.degrees(np.arctan2(np.sum(weight * np.sin(np.radians(ra))),
                                          np.sum(weight * np.cos(np.radians(ra)))))) % 360.0)
    dec_ref = float(np.sum(weight * dec) / np.sum(weight))
    x, y = tangent_offsets_mas(ra, dec, ra_ref, dec_ref)
    years = t - t_ref
    zero, one = np.zeros(n), np.ones(n)
    design = np.vstack([np.column_stack([one, zero, years, zero, f_ra]),
                        np.column_stack([zero, one, zero, years, f_dec])])
    values = np.concatenate([x, y])
    sigmas = np.concatenate([sigma, sigma])
    params, cov, chi2, residual = _solve(design, values, sigmas)
    dof = 2 * n - 5
    scale = 1.0
    if dof > 0 and float(chi2_survival(chi2, dof)) < CHI2_SCALING_PROBABILITY:
        scale = float(np.sqrt(chi2 / dof))
    cov = cov * scale**2
    # what the proper motion's freedom costs: the parallax's sigma with the motion known, beside the full one
    keep = [0, 1, 4]
    _, cov_known_motion, _, _ = _solve(design[:, keep], values, sigmas)
    sigma_p = float(np.sqrt(cov[4, 4]))
    sigma_stated_known = float(np.sqrt(cov_known_motion[2, 2]))
    sigma_stated = sigma_p / scale
    contributions = {"measured positions (stated one-sigma)": sigma_stated_known,
                     "epochs' spread (parallax entangled with the proper motion)":
                         float(np.sqrt(max(sigma_stated**2 - sigma_stated_known**2, 0.0)))}
    if scale > 1.0:
        contributions["scatter beyond the stated errors (chi-square scaling)"] = float(np.sqrt(sigma_p**2 - sigma_stated**2))
    p = float(params[4])
    parallax = gaussian(p, sigma_p, "mas")
    if p > 0:
        distance = reciprocal_of_gaussian(1000.0, p, sigma_p, "pc")
    else:
        distance = Measured(float("nan"), None, 1000.0 / (p + sigma_p) if p + sigma_p > 0 else None, None, "pc")
    return ParallaxFit(
        parallax_mas=parallax,
        distance_pc=distance,
        distance_ly=distance.scaled(LIGHT_YEARS_PER_PARSEC, "ly"),
        proper_motion_ra_mas_per_yr=gaussian(params[2], np.sqrt(cov[2, 2]), "mas/yr"),
        proper_motion_dec_mas_per_yr=gaussian(params[3], np.sqrt(cov[3, 3]), "mas/yr"),
        reference_ra_deg=float((ra_ref + params[0] / MAS_PER_DEG / np.cos(np.radians(dec_ref))) % 360.0),
        reference_dec_deg=float(dec_ref + params[1] / MAS_PER_DEG),
        reference_epoch_jyear=t_ref,
        x_mas=x, y_mas=y, sigma_mas=sigma, f_ra=f_ra, f_dec=f_dec, years=years,
        residual_ra_mas=residual[:n], residual_dec_mas=residual[n:],
        chi2=chi2, dof=dof, error_scale=scale,
        budget=budget_from_contributions(contributions, "mas"),
    )
