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
