"""The interval method: the Sun/Moon distance ratio from the unequal intervals between the quarters,\nwith the Moon's motion modelled from the ephemeris (and why it is swamped without it).\n"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from firstrung.methods.phases.reduction import ratio_from_elongation
from firstrung.uncertainty import Measured

#: Mean synodic month [d]: coefficient of k in Meeus (1998), Astronomical Algorithms, eq. 49.1.
SYNODIC_MONTH_D = 29.530588861


@dataclass(frozen=True)
class IntervalMethod:
    """The Sun/Moon ratio from the unequal intervals between half moons.

    Attributes
    ----------
    first_to_last, last_to_first : int
        Intervals of each kind used.
    uncorrected_elongation_deg : Measured
        delta from uniform lunar motion, as E [deg]; sigma from the timings only.
    uncorrected_ratio : Measured
        The ratio from it.
    uncorrected_perfect_ratio : float or None
        What the uncorrected method gives for *perfect* timings of the same half
        moons (the ephemeris's): the error of ignoring the Moon's uneven motion.
    interval_spread_h : float or None
        Standard deviation of the single intervals about their uniform-motion
        value, for perfect timings [h]: the size of the lunar inequalities.
    corrected_elongation_deg, corrected_ratio : Measured or None
        The same with each interval referred to the ephemeris's quadratures
        (where the Sun-Moon angle is 90 deg) and rates; None without them.
    """

    first_to_last: int
    last_to_first: int
    uncorrected_elongation_deg: Measured
    uncorrected_ratio: Measured
    uncorrected_perfect_ratio: float | None
    interval_spread_h: float | None
    corrected_elongation_deg: Measured | None
    corrected_ratio: Measured | None


def _gls_delta(y, coefficient, design, variance):
    """Generalised least squares for one unknown: y = coefficient * delta, y = A t, cov(t) = diag(variance)."""
    cov = design @ np.diag(variance) @ design.T
    inv = np.linalg.inv(cov)
    info = float(coefficient @ inv @ coefficient)
    delta = float(coefficient @ inv @ y) / info
    return delta, math.sqrt(1.0 / info)


def _intervals(site, order_index):
    """Consecutive half moons of one site, one apart in the quarter sequence: (start, end) pairs."""
    pairs = []
    for s in np.unique(site):
        idx = np.flatnonzero(site == s)
        idx = idx[np.argsort(order_index[idx], kind="stable")]
        for a, b in zip(idx[:-1], idx[1:], strict=True):
            if order_index[b] - order_index[a] == 1:
                pairs.append((a, b))
    return pairs


def interval_method(
    site,
    quarter,
    quarter_index,
    time_h,
    time_sigma_h,
    *,
    perfect_time_h=None,
    quadrature_h=None,
    rate_deg_per_h=None,
    synodic_month_d: float = SYNODIC_MONTH_D,
) -> IntervalMethod | None:
    """The classical interval method: first-to-last quarter is longer than last-to-first.

    With the Moon moving uniformly against the Sun, the half moon comes delta
    before first quarter and delta after last quarter (in elongation), so
    ``T(first->last) - T(last->first) = (4 delta / 360 deg) P`` with P the
    synodic month. Each interval ``T_k`` between consecutive half moons of one
    site gives ``s_k (T_k - P/2) = (P / 180 deg) delta`` (s = +1 first->last,
    -1 last->first); delta comes from generalised least squares, the
    intervals sharing endpoints being correlated.

    Corrected from the ephemeris: each half moon's time is referred to the
    site's quadrature (geometric Sun-Moon angle 90 deg, directions only),
    ``s_k [(t_end - q_end) - (t_start - q_start)] = delta (1/w_start + 1/w_end)``
    with w the elongation's rate; the Moon's uneven motion cancels.

    Parameters
    ----------
    site : array_like of str
        Site of each half moon (one entry per half moon and site; several
        observers of one half moon are merged beforehand).
    quarter : array_like of str
        ``"first"`` or ``"last"``.
    quarter_index : array_like of int
        Running number of the quarter in the sequence of all quarters
        (consecutive half moons differ by 1).
    time_h, time_sigma_h : array_like
        Observed half-moon times (hours from any origin) and their errors [h].
    perfect_time_h : array_like, optional
        The ephemeris's half moons for the same site and quarter [h].
    quadrature_h, rate_deg_per_h : array_like, optional
        The site's quadratures [h] and the elongation's rate there [deg/h].
    synodic_month_d : float
        Mean synodic month [d].

    Returns
    -------
    IntervalMethod or None
        None when no two consecutive half moons of one site were timed.

    Examples
    --------
    >>> p = 24 * 29.530588861
    >>> d = 0.148 / 360 * p   # delta in time at the mean rate [h]
    >>> r = interval_method(["a"] * 3, ["first", "last", "first"], [0, 1, 2],
    ...                     [-d, p / 2 + d, p - d], [0.1, 0.1, 0.1])
    >>> round(r.uncorrected_elongation_deg.value, 3)
    89.852
    """
    site = np.asarray(site, dtype=object)
    quarter = np.asarray(quarter, dtype=object)
    order = np.asarray(quarter_index, dtype=int)
    t = np.asarray(time_h, dtype=float)
    sig = np.asarray(time_sigma_h, dtype=float)
    pairs = _intervals(site, order)
    if not pairs:
        return None
    n = t.size
    sign = np.array([1.0 if quarter[a] == "first" else -1.0 for a, _ in pairs])
    design = np.zeros((len(pairs), n))
    for k, (a, b) in enumerate(pairs):
        design[k, a], design[k, b] = -sign[k], sign[k]
    half_month_h = synodic_month_d * 24.0 / 2.0
    coefficient = np.full(len(pairs), synodic_month_d * 24.0 / 180.0)
    offset = sign * half_month_h

    def uncorrected(times):
        return _gls_delta(design @ times - offset, coefficient, design, sig**2)

    delta, sigma = uncorrected(t)
    unc_e = Measured(90.0 - delta, sigma, 90.0 - delta - sigma, 90.0 - delta + sigma, "deg")
    perfect_ratio = spread = None
    if perfect_time_h is not None:
        pt = np.asarray(perfect_time_h, dtype=float)
        pd, _ = uncorrected(pt)
        perfect_ratio = 1.0 / math.sin(math.radians(pd)) if pd > 0 else math.inf
        single = design @ pt - offset - coefficient * pd
        spread = float(np.std(single, ddof=1)) if single.size > 1 else float(abs(single[0]))
    corr_e = corr_r = None
    if quadrature_h is not None and rate_deg_per_h is not None:
        q = np.asarray(quadrature_h, dtype=float)
        w = np.abs(np.asarray(rate_deg_per_h, dtype=float))
        coefficient_c = np.array([1.0 / w[a] + 1.0 / w[b] for a, b in pairs])
        cd, cs = _gls_delta(design @ (t - q), coefficient_c, design, sig**2)
        corr_e = Measured(90.0 - cd, cs, 90.0 - cd - cs, 90.0 - cd + cs, "deg")
        corr_r = ratio_from_elongation(float(np.clip(90.0 - cd, 0.0, 180.0)), cs)
    first_to_last = int((sign > 0).sum())
    return IntervalMethod(
        first_to_last=first_to_last,
        last_to_first=len(pairs) - first_to_last,
        uncorrected_elongation_deg=unc_e,
        uncorrected_ratio=ratio_from_elongation(float(np.clip(90.0 - delta, 0.0, 180.0)), sigma),
        uncorrected_perfect_ratio=perfect_ratio,
        interval_spread_h=spread,
        corrected_elongation_deg=corr_e,
        corrected_ratio=corr_r,
    )
