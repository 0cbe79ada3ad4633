"""The Lomb-Scargle periodogram with a floating mean, and its false-alarm probability (pure numpy).

For each trial frequency the periodogram is the fraction of the data's weighted variance that a
sinusoid plus a constant explains (the "generalised" periodogram of Zechmeister & Kuerster 2009,
A&A 496, 577, eq. 4-20; astropy's ``LombScargle`` with ``fit_mean=True`` and the "standard"
normalisation gives the same numbers, which a test checks). The false-alarm probability of the
highest peak is Baluev's alias-free approximation (Baluev 2008, MNRAS 385, 1279, eq. 6 and
Table 1), as astropy's ``false_alarm_probability(method="baluev")``.

Vectorised over frequencies in blocks (memory grows with the block, never with their product).
"""

from __future__ import annotations

import math

import numpy as np

#: Trial frequencies per block (rows x frequencies of work arrays stay below ~16 MB).
_BLOCK = 2048


def frequency_grid(time_d, min_period_d: float, max_period_d: float, oversampling: int = 10) -> np.ndarray:
    """Trial frequencies [1/d]: from 1/max_period to 1/min_period, ``oversampling`` per peak width (1/baseline).

    >>> f = frequency_grid(np.array([0.0, 10.0]), 1.0, 10.0, 5)
    >>> float(f[0]), round(float(f[1] - f[0]), 6)
    (0.1, 0.02)
    """
    t = np.asarray(time_d, dtype=float)
    step = 1.0 / (oversampling * max(float(np.ptp(t)), 1e-9))
    return np.arange(1.0 / max_period_d, 1.0 / min_period_d + step / 2, step)


def lomb_scargle_power(time_d, magnitude, sigma, frequency_per_d) -> np.ndarray:
    """Generalised Lomb-Scargle power (0 to 1) at each frequency.

    Parameters
    ----------
    time_d : array
        Instants [d] (any origin).
    magnitude, sigma : array
        Measurements and their one-sigma [mag].
    frequency_per_d : array
        Trial frequencies [1/d].

    >>> t = np.linspace(0.0, 30.0, 60)
    >>> y = np.sin(2 * np.pi * t / 5.0)
    >>> p = lomb_scargle_power(t, y, np.ones(60), np.array([0.2, 0.33]))
    >>> round(float(p[0]), 6), bool(p[1] < 0.1)
    (1.0, True)
    """
    t = np.asarray(time_d, dtype=float)
    y = np.asarray(magnitude, dtype=float)
    w = 1.0 / np.asarray(sigma, dtype=float) ** 2
    w = w / w.sum()
    y = y - np.dot(w, y)
    yy = np.dot(w, y * y)
    f = np.asarray(frequency_per_d, dtype=float)
    out = np.empty(f.size)
    for start in range(0, f.size, _BLOCK):
        arg = 2.0 * np.pi * f[start:start + _BLOCK, None] * t[None, :]
        c, s = np.cos(arg), np.sin(arg)
        cw, sw = c @ w, s @ w
        yc, ys = c @ (w * y), s @ (w * y)
        cc = (c * c) @ w - cw * cw
        ss = (s * s) @ w - sw * sw
        cs = (c * s) @ w - cw * sw
        d = cc * ss - cs * cs
        out[start:start + _BLOCK] = (ss * yc * yc + cc * ys * ys - 2.0 * cs * yc * ys) / (yy * d)
    return out


def false_alarm_probability(power: float, max_frequency_per_d: float, time_d, sigma) -> float:
    """Probability that noise alone gives a peak this high somewhere below ``max_frequency_per_d``.

    Baluev (2008) eq. 6 with Table 1's "standard" normalisation (one constant and one sinusoid).
    """
    t = np.asarray(time_d, dtype=float)
    w = 1.0 / np.asarray(sigma, dtype=float) ** 2
    n = t.size
    nh, nk = n - 1, n - 3
    z = min(max(float(power), 0.0), 1.0)
    single = (1.0 - z) ** (0.5 * nk)
    variance_t = float(np.sum(w * t * t) / w.sum() - (np.sum(w * t) / w.sum()) ** 2)
    gamma = math.sqrt(2.0 / nh) * math.exp(math.lgamma(nh / 2.0) - math.lgamma((nh - 1) / 2.0))
    tau = gamma * max_frequency_per_d * math.sqrt(4.0 * math.pi * variance_t) * (1.0 - z) ** (0.5 * (nk - 1)) \
        * math.sqrt(0.5 * nh * z)
    return float(-math.expm1(-tau) + single * math.exp(-tau))
