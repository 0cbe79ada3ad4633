"""Measured quantities with uncertainties, intervals and error budgets.

A :class:`Measured` value is what every reduction returns: the value, its
one-sigma uncertainty, and the central 68 % interval, which may be
asymmetric (a quantity that is the reciprocal of a Gaussian one) or open on
the high side (only a lower bound exists).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

#: Probability inside +/- 1 sigma of a normal distribution (68.27 %).
ONE_SIGMA_PROBABILITY = 0.682689492137


@dataclass(frozen=True)
class Measured:
    """A measured quantity with its one-sigma uncertainty and 68 % interval.

    Parameters
    ----------
    value : float
        Best estimate [unit].
    sigma : float or None
        One-sigma uncertainty by linear propagation [unit]; None when unknown.
    low, high : float or None
        Central 68 % interval [unit]; ``high`` is None when only a lower bound exists.
    unit : str
        Unit of every number above.
    """

    value: float
    sigma: float | None
    low: float | None
    high: float | None
    unit: str

    def to_json(self, digits: int | None = None) -> dict:
        """The contract form ``{"value", "sigma", "low", "high", "unit"}``."""

        def clean(x: float | None) -> float | None:
            if x is None or not math.isfinite(x):
                return None
            x = float(x)
            return round(x, digits) if digits is not None else x

        return {
            "value": clean(self.value),
            "sigma": clean(self.sigma),
            "low": clean(self.low),
            "high": clean(self.high),
            "unit": self.unit,
        }

    def scaled(self, factor: float, unit: str) -> Measured:
        """The same quantity times a positive exact factor, in another unit."""
        return Measured(
            self.value * factor,
            None if self.sigma is None else self.sigma * factor,
            None if self.low is None else self.low * factor,
            None if self.high is None else self.high * factor,
            unit,
        )


def gaussian(value: float, sigma: float, unit: str) -> Measured:
    """A symmetric measured quantity: interval value +/- sigma.

    >>> gaussian(2.0, 0.5, "m").low
    1.5
    """
    return Measured(float(value), float(sigma), float(value - sigma), float(value + sigma), unit)


def reciprocal_of_gaussian(scale: float, x: float, sigma_x: float, unit: str) -> Measured:
    """``scale / x`` for a Gaussian ``x > 0``: the 68 % interval is mapped, not mirrored.

    The interval of ``x`` is ``x +/- sigma_x``; ``scale / x`` is monotonic, so
    its central 68 % interval is ``[scale/(x + sigma_x), scale/(x - sigma_x)]``.
    When ``x - sigma_x <= 0`` the data allow any large value: ``high`` is None.

    >>> q = reciprocal_of_gaussian(1.0, 2.0, 1.0, "m")
    >>> (q.value, q.low, q.high)
    (0.5, 0.3333333333333333, 1.0)
    """
    value = scale / x
    sigma = abs(scale) * sigma_x / x**2
    low = scale / (x + sigma_x)
    high = scale / (x - sigma_x) if x - sigma_x > 0 else None
    return Measured(float(value), float(sigma), float(low), None if high is None else float(high), unit)


def interval_from_samples(samples: np.ndarray, unit: str, value: float | None = None) -> Measured:
    """Median (or the given value), standard deviation and central 68 % interval of samples."""
    samples = np.asarray(samples, dtype=float)
    samples = samples[np.isfinite(samples)]
    lo, mid, hi = np.quantile(samples, [0.5 - ONE_SIGMA_PROBABILITY / 2, 0.5, 0.5 + ONE_SIGMA_PROBABILITY / 2])
    return Measured(
        float(mid if value is None else value), float(np.std(samples, ddof=1)), float(lo), float(hi), unit
    )


@dataclass(frozen=True)
class BudgetTerm:
    """One line of an error budget: how much one input contributes to the result's sigma."""

    source: str
    sigma: float
    unit: str

    def share(self, total_variance: float) -> float:
        """Fraction of the total variance this term explains [1]."""
        return self.sigma**2 / total_variance if total_variance > 0 else 0.0


def budget_from_contributions(contributions: dict[str, float], unit: str) -> tuple[BudgetTerm, ...]:
    """Error budget from independent one-sigma contributions, largest first."""
    terms = [BudgetTerm(k, float(abs(v)), unit) for k, v in contributions.items()]
    return tuple(sorted(terms, key=lambda t: (-t.sigma, t.source)))


def chi2_survival(chi2, dof):
    """P(X >= chi2) for a chi-square variable X with ``dof`` (whole) degrees of freedom.

    The closed forms for whole degrees of freedom (Abramowitz & Stegun 1964,
    section 26.4, from memory): with y = chi2 / 2,
    even dof: exp(-y) sum_{i<dof/2} y^i / i!;
    odd dof: erfc(sqrt(y)) + exp(-y) sum_{i=1}^{(dof-1)/2} y^(i-1/2) / Gamma(i+1/2);
    each term summed in logarithms, so no term overflows. Arrays broadcast.
    Equal to ``scipy.stats.chi2.sf`` to about 1e-14 relative (a test holds
    this), without importing scipy.

    >>> round(float(chi2_survival(3.841458820694124, 1)), 6)   # the 5 % point of one degree of freedom
    0.05
    """
    x, k = np.broadcast_arrays(np.asarray(chi2, float), np.asarray(dof, np.int64))
    if np.any(k < 1):
        raise ValueError("chi2_survival: degrees of freedom must be whole numbers >= 1")
    y = np.maximum(x, 0.0) / 2.0
    log_y = np.log(np.where(y > 0, y, 1.0))
    odd = k % 2 == 1
    total = np.where(odd, np.vectorize(math.erfc, otypes=[float])(np.sqrt(y)) if x.size else 0.0, 0.0)
    top = int(k.max()) // 2 if k.size else 0
    for i in range(top + 1):  # even: i = 0 .. dof/2 - 1; odd: i = 1 .. (dof-1)/2, power i - 1/2
        even_term = (~odd) & (i < k // 2)
        odd_term = odd & (i >= 1) & (i <= (k - 1) // 2)
        if not (even_term.any() or odd_term.any()):
            continue
        power = np.where(odd, i - 0.5, float(i))
        log_gamma = np.where(odd, math.lgamma(i + 0.5) if i >= 1 else 0.0, math.lgamma(i + 1.0))
        with np.errstate(over="ignore", under="ignore"):
            term = np.exp(-y + power * log_y - log_gamma)
        term = np.where(y > 0, term, np.where((i == 0) & ~odd, 1.0, 0.0))
        total = total + np.where(even_term | odd_term, term, 0.0)
    out = np.minimum(total, 1.0)
    return out if out.ndim else float(out)


@dataclass(frozen=True)
class Draw:
    """How to draw a rung's result: a Gaussian variable and the function of it the result is.

    kinds: ``gaussian`` (x), ``reciprocal`` (scale / x), ``reciprocal_sine``
    (scale / sin x, x in rad: distance from a parallax), ``secant`` (scale / cos x,
    x in rad: the half-moon ratio; cos x <= 0 gives +inf, i.e. no upper bound).
    """

    kind: str
    mean: float
    sigma: float
    scale: float = 1.0

    def sample(self, rng: np.random.Generator, n: int) -> np.ndarray:
        """``n`` draws of the result.

        >>> d = Draw("reciprocal", 2.0, 0.0, 1.0)
        >>> d.sample(np.random.default_rng(1), 2).tolist()
        [0.5, 0.5]
        """
        x = rng.normal(self.mean, self.sigma, n) if self.sigma > 0 else np.full(n, self.mean)
        with np.errstate(divide="ignore", invalid="ignore"):
            if self.kind == "gaussian":
                return self.scale * x
            if self.kind == "reciprocal":
                return np.where(x > 0, self.scale / x, np.inf)
            if self.kind == "reciprocal_sine":
                return np.where(x > 0, self.scale / np.sin(x), np.inf)
            if self.kind == "secant":
                c = np.cos(x)
                return np.where(c > 0, self.scale / c, np.inf)
        raise ValueError(f"unknown draw kind {self.kind!r}")


def earth_radius_draw(radius: Measured) -> Draw:
    """The shadow rung: the fitted slope k = 1/R is Gaussian."""
    k = 1.0 / radius.value
    sigma_k = (radius.sigma or 0.0) * k**2
    return Draw("reciprocal", k, sigma_k, 1.0)
