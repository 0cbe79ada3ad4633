"""The solar parallax from timed contacts of a transit: one free scale of DE421's distances.

Model (the contact-time expansion in the observer's coordinates, as in the
reductions of the transits of Venus of 1761-1882 and of 2004 and 2012): each
timed contact, minus its prediction for that site at DE421's distances, is

    r_i = A_i (f - f0) + tau_(transit, contact) + c_(site, transit) + e_i

- ``f`` scales every site's geocentric vector, which is the same as dividing
  every solar-system distance by ``f`` while the Earth keeps its size: the
  solar parallax is ``f`` times DE421's 8.794 143", the Sun's mean distance
  1 au / f. ``A_i`` is the rate of the site's contact with ``f`` [s].
- ``tau`` is one free offset per contact of each transit, common to every
  site: it takes up the Sun's and the planet's radii (published solar radii
  differ by about 0.3", seconds of contact time), the mean black drop and any
  error of the planet's place along its track. The parallax therefore rests
  on the differences between sites alone.
- ``c`` is one free clock offset per site and transit where the site timed
  two or more different contacts (Halley's method of durations then holds it).
- ``e_i`` has the stated timing error, plus the black drop's scatter from
  instrument to instrument on internal contacts (C2, C3) as a stated systematic.
  One instrument's drop is shared by its C2 (late) and its C3 (early): the two
  errors are modelled as one draw with opposite signs, so a site's duration
  C3 - C2 carries twice the drop (a covariance, whitened in closed form).

The fit is weighted least squares, linearised at the current ``f`` and
iterated; a contact whose normalised residual exceeds a threshold (a wrong
label, a typing error) is rejected, the worst first, one at a time.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from firstrung.constants import ASTRONOMICAL_UNIT_KM
from firstrung.errors import ComputationError
from firstrung.uncertainty import (
    BudgetTerm,
    Measured,
    budget_from_contributions,
    gaussian,
    reciprocal_of_gaussian,
)

#: DE421's solar parallax [arcsec]: asin(a / 1 au) with a = 6378.1366 km; the IERS/IAU value
#: is 8.794 143" (IERS Conventions 2010, Table 1.1).
SOLAR_PARALLAX_DE421_ARCSEC = 8.794143
#: A contact whose residual exceeds this many of its sigmas is rejected (common practice: 4 sigma
#: rejects a one-in-16,000 honest timing).
REJECT_SIGMA = 4.0
#: At most this share of the contacts is rejected [1].
MAX_REJECTED_FRACTION = 0.25
#: Linearisations of the fit.
ITERATIONS = 3
#: Default timing error of one contact with a projection screen and a time signal [s] (common practice).
DEFAULT_TIME_SIGMA_S = 5.0
#: Default scatter of the black drop between instruments, on internal contacts [s]: Mercury's
#: small disc shows a short drop; Venus's atmosphere and drop spread its internal contacts by
#: tens of seconds (the 2004 and 2012 timings; common practice).
DEFAULT_BLACK_DROP_SIGMA_S = {"mercury": 3.0, "venus": 15.0}
#: Default error of a site's position from a map or a phone [km] (common practice).
DEFAULT_SITE_SIGMA_KM = 0.05
#: Default error of a clock set by a time signal, where no offset is fitted [s] (common practice).
DEFAULT_CLOCK_SIGMA_S = 0.5


@dataclass(frozen=True)
class TransitReduction:
    """The solar parallax from a campaign's contacts.

    Attributes
    ----------
    parallax_scale : Measured
        The fitted f (1 at DE421's distances) [1].
    solar_parallax_arcsec, sun_distance_km, sun_distance_au : Measured
        The results; the distances' intervals are the parallax's, mapped.
    used : numpy.ndarray of bool
        Each row used (False: rejected as wild).
    residual_s : numpy.ndarray
        Each row's residual after the fit [s].
    normalised_residual : numpy.ndarray
        Residual over its sigma, leverage removed [1].
    contact_offsets_s : dict
        ``(transit, contact)`` -> the fitted common offset [s].
    clock_offsets_s : dict
        ``(site, transit)`` -> the fitted clock offset [s].
    chi2, dof : float, int
    budget : tuple of BudgetTerm
        One-sigma contributions to the solar parallax [arcsec].
    assumptions : tuple of str
    """

    parallax_scale: Measured
    solar_parallax_arcsec: Measured
    sun_distance_km: Measured
    sun_distance_au: Measured
    used: np.ndarray
    residual_s: np.ndarray
    normalised_residual: np.ndarray
    contact_offsets_s: dict
    clock_offsets_s: dict
    chi2: float
    dof: int
    budget: tuple[BudgetTerm, ...]
    assumptions: tuple[str, ...]


def _groups(keys: list) -> tuple[np.ndarray, list]:
    """Index of each row's group and the groups' keys, in first-seen order."""
    order: dict = {}
    idx = np.array([order.setdefault(k, len(order)) for k in keys], dtype=int)
    return idx, list(order)


def _design(transit, contact, site, used, fit_clocks=True, groups=None):
    """Nuisance columns: contact offsets per (transit, contact), clock offsets per (site, transit).

    ``groups`` is ``_row_groups(transit, contact, site)``, computed once per reduction.
    """
    (tc_idx, tc_keys), (st_idx, st_keys) = groups or _row_groups(transit, contact, site)
    m = transit.size
    u = used.astype(float)
    contact_cols = np.zeros((m, len(tc_keys)))
    contact_cols[np.arange(m), tc_idx] = u
    keep_c = contact_cols.any(axis=0)
    names = [("contact", k) for k, ok in zip(tc_keys, keep_c, strict=True) if ok]
    columns = [contact_cols[:, keep_c]]
    if fit_clocks and len(st_keys):
        # a clock column for each (site, transit) with two or more different contacts used
        seen = np.zeros((len(st_keys), 4), dtype=bool)
        seen[st_idx[used], contact[used]] = True
        keep_s = seen.sum(axis=1) >= 2
        clock_cols = np.zeros((m, len(st_keys)))
        clock_cols[np.arange(m), st_idx] = u
        columns.append(clock_cols[:, keep_s])
        names += [("clock", k) for k, ok in zip(st_keys, keep_s, strict=True) if ok]
    return np.concatenate(columns, axis=1), names


def _row_groups(transit, contact, site):
    """Each row's (transit, contact) and (site, transit) group, with the groups' keys."""
    return (_groups(list(zip(transit.tolist(), contact.tolist(), strict=True))),
            _groups(list(zip(site.tolist(), transit.tolist(), strict=True))))


class _Noise:
    """The timings' covariance: the stated timing errors on the diagonal, and one shared black
    drop per instrument, +1 on its C2 and -1 on its C3 (a rank-one block per instrument).

    ``whiten`` applies W with W^T W = C^-1 (closed form for a diagonal plus disjoint rank-one
    blocks: W = (I - sum c_g y_g y_g^T / |y_g|^2) D^-1/2, y_g = D^-1/2 v_g, c_g = 1 - 1/sqrt(1 + |y_g|^2));
    rows not used carry no weight.
    """

    def __init__(self, time_sigma_s, drop_s, sign, group, used):
        self.scale = np.where(used, 1.0 / np.maximum(time_sigma_s, 1e-6), 0.0)
        self.group = group
        y = sign * drop_s * self.scale
        norm2 = np.bincount(group, weights=y**2, minlength=int(group.max()) + 1 if group.size else 0)
        c = np.where(norm2 > 0, 1.0 - 1.0 / np.sqrt(1.0 + norm2), 0.0)
        self.y_hat = np.where(norm2[group] > 0, y / np.sqrt(np.where(norm2 > 0, norm2, 1.0))[group], 0.0)
        self.c = c
        self._order = np.argsort(group, kind="stable")
        sorted_group = group[self._order]
        self._starts = np.flatnonzero(np.r_[True, sorted_group[1:] != sorted_group[:-1]]) if group.size else group
        self._present = sorted_group[self._starts] if group.size else group

    def _project(self, z):
        """(I - sum c_g y_hat_g y_hat_g^T) z, for z of shape (m,) or (m, k)."""
        flat = z.reshape(z.shape[0], -1)
        sums = np.zeros((self.c.size, flat.shape[1]))
        if self.group.size:
            weighted = (self.y_hat[:, None] * flat)[self._order]
            sums[self._present] = np.add.reduceat(weighted, self._starts, axis=0)
        out = flat - (self.c[self.group] * self.y_hat)[:, None] * sums[self.group]
        return out.reshape(z.shape)

    def whiten(self, x):
        """W x."""
        x = np.asarray(x, dtype=float)
        return self._project(x * (self.scale if x.ndim == 1 else self.scale[:, None]))

    def whiten_transpose(self, x):
        """W^T x."""
        return self._project(np.asarray(x, dtype=float)) * self.scale


def _fit(r, a, nuisance, noise, used):
    """Weighted fit of r = a x + N b: x, its variance, the estimator's row weights, whitened residuals, leverage."""
    rw, aw, nw = noise.whiten(r), noise.whiten(a), noise.whiten(nuisance)
    if nw.shape[1]:
        u, s, _ = np.linalg.svd(nw, full_matrices=False)
        u = u[:, s > s.max() * 1e-10]
        a_perp = aw - u @ (u.T @ aw)
        r_perp = rw - u @ (u.T @ rw)
    else:
        u = np.zeros((r.size, 0))
        a_perp, r_perp = aw, rw
    info = float(a_perp @ a_perp)
    if not info > 1e-12 * max(float(aw @ aw), 1e-300):
        raise ComputationError(
            "the timings cannot separate the parallax from the clocks and the contact offsets: "
            "time contacts from sites far apart in latitude, or several contacts per site"
        )
    x = float(a_perp @ r_perp) / info
    estimator = np.where(used, noise.whiten_transpose(a_perp) / info, 0.0)  # x = sum(estimator * r)
    b = np.linalg.lstsq(nw, rw - aw * x, rcond=None)[0] if nw.shape[1] else np.zeros(0)
    resid = np.where(used, r - a * x - nuisance @ b, 0.0)
    q = np.concatenate([u, (a_perp / math.sqrt(info))[:, None]], axis=1)
    leverage = np.sum(q**2, axis=1)
    return x, 1.0 / info, estimator, resid, noise.whiten(resid), leverage


def reduce_transit_contacts(
    predict: Callable[[float], tuple[np.ndarray, np.ndarray]],
    observed_s: np.ndarray,
    transit: np.ndarray,
    contact: np.ndarray,
    site: np.ndarray,
    time_sigma_s: np.ndarray,
    black_drop_sigma_s: np.ndarray,
    *,
    site_sigma_km: float = DEFAULT_SITE_SIGMA_KM,
    clock_sigma_s: float = DEFAULT_CLOCK_SIGMA_S,
    reject_sigma: float = REJECT_SIGMA,
    fit_clocks: bool = True,
    instrument: np.ndarray | None = None,
) -> TransitReduction:
    """Fit the solar parallax to timed contacts.

    Parameters
    ----------
    predict : callable
        ``predict(f)`` gives each row's predicted contact time at parallax scale ``f``
        [s, on the same origin as ``observed_s``] and its rate with ``f`` [s per unit f].
    observed_s : numpy.ndarray, shape (m,)
        The timed contacts [s, TT from any fixed origin].
    transit, contact, site : numpy.ndarray, shape (m,)
        Each row's transit (int), contact (0-3 for C1-C4) and site (any hashable id).
    time_sigma_s : numpy.ndarray, shape (m,)
        Stated timing errors [s].
    black_drop_sigma_s : numpy.ndarray, shape (m,)
        The black drop's scatter for each row's planet [s]; applied to internal contacts.
    site_sigma_km : float
        Error of each site's position [km].
    clock_sigma_s : float
        Error of a clock where no offset is fitted (a site that timed one contact) [s].
    reject_sigma : float
        Rejection threshold on normalised residuals [1].
    fit_clocks : bool
        A free clock offset per site and transit where the site timed two or more different
        contacts. Without it every clock carries ``clock_sigma_s``, shared by that site's
        contacts of a transit (the budget adds it as one error per site, not per contact).
    instrument : numpy.ndarray, shape (m,), optional
        Each row's instrument (e.g. site and observer): one black drop is shared by an
        instrument's C2 and C3 in a transit. Default: one instrument per site.

    Returns
    -------
    TransitReduction

    Raises
    ------
    ComputationError
        When the timings cannot constrain the parallax.
    """
    observed_s = np.asarray(observed_s, dtype=float)
    transit, contact = np.asarray(transit, dtype=int), np.asarray(contact, dtype=int)
    site = np.asarray(site, dtype=object)
    sign = np.select([contact == 1, contact == 2], [1.0, -1.0], 0.0)  # the drop: C2 late, C3 early
    drop = np.abs(sign) * np.asarray(black_drop_sigma_s, dtype=float)
    time_sigma_s = np.asarray(time_sigma_s, dtype=float)
    keys = site if instrument is None else np.asarray(instrument, dtype=object)
    group, _ = _groups(list(zip(keys.tolist(), transit.tolist(), strict=True)))
    row_groups = _row_groups(transit, contact, site)
    m = observed_s.size
    if m < 3:
        raise ComputationError(f"the parallax needs contacts from at least two sites; got {m} timing(s)")
    used = np.ones(m, dtype=bool)
    f = 1.0
    max_rejected = int(MAX_REJECTED_FRACTION * m)
    while True:
        for _ in range(ITERATIONS):
            predicted, rate = predict(f)
            ok = np.isfinite(predicted) & np.isfinite(rate)
            used &= ok
            nuisance, names = _design(transit, contact, site, used, fit_clocks, row_groups)
            noise = _Noise(time_sigma_s, drop, sign, group, used)
            x, var, estimator, resid, white, leverage = _fit(observed_s - np.where(ok, predicted, 0.0),
                                                             np.where(ok, rate, 0.0), nuisance, noise, used)
            f += x
            if abs(x) < 1e-7:
                break
        z = np.where(used, white / np.sqrt(np.clip(1.0 - leverage, 1e-6, None)), 0.0)
        worst = int(np.argmax(np.abs(z)))
        if abs(z[worst]) <= reject_sigma or (~used).sum() >= max_rejected:
            break
        used[worst] = False
    dof = int(used.sum()) - 1 - nuisance.shape[1]
    chi2 = float(np.sum(white[used] ** 2))
    if dof < 1:
        raise ComputationError("too few timings for the contact offsets, the clocks and the parallax "
                               f"({int(used.sum())} used); time more contacts or more sites")
    offsets = _offsets(observed_s - predicted, nuisance, names, noise)
    contributions = _budget(estimator, time_sigma_s, sign * drop, group, rate, site, transit, names,
                            site_sigma_km, clock_sigma_s, used)
    # the fit's variance holds the timing and the black drop; the clocks and the site positions add
    sigma_f = math.sqrt(var + sum(v**2 for k, v in contributions.items() if k.startswith(("clocks", "site"))))
    scale = SOLAR_PARALLAX_DE421_ARCSEC
    budget = budget_from_contributions({k: v * scale for k, v in contributions.items()}, "arcsec")
    assumptions = (
        "the planet and the Earth at DE421's directions, every solar-system distance scaled by one factor",
        "one free offset per contact (the Sun's and the planet's radii, the mean black drop): the parallax "
        "rests on differences between sites",
        "one free clock offset per site that timed two or more different contacts" if fit_clocks else
        f"clocks not fitted: each site's clock off by {clock_sigma_s:g} s (one sigma), shared by its contacts",
        f"contacts rejected beyond {reject_sigma:g} sigma: {int((~used).sum())}",
        f"chi2 {chi2:.1f} for {dof} degrees of freedom",
    )
    parallax = Measured(f * scale, sigma_f * scale, (f - sigma_f) * scale, (f + sigma_f) * scale, "arcsec")
    return TransitReduction(
        parallax_scale=gaussian(f, sigma_f, "1"),
        solar_parallax_arcsec=parallax,
        sun_distance_km=reciprocal_of_gaussian(ASTRONOMICAL_UNIT_KM, f, sigma_f, "km"),
        sun_distance_au=reciprocal_of_gaussian(1.0, f, sigma_f, "au"),
        used=used,
        residual_s=np.where(used, resid, observed_s - predicted),
        normalised_residual=z,
        contact_offsets_s=offsets["contact"],
        clock_offsets_s=offsets["clock"],
        chi2=chi2,
        dof=dof,
        budget=budget,
        assumptions=assumptions,
    )


def _offsets(r, nuisance, names, noise):
    """The fitted nuisance offsets [s] (for the report; the parallax does not need them)."""
    out = {"contact": {}, "clock": {}}
    if not names:
        return out
    b = np.linalg.lstsq(noise.whiten(nuisance), noise.whiten(r), rcond=None)[0]
    for (kind, key), value in zip(names, b, strict=True):
        out[kind][key] = float(value)
    return out


def _budget(estimator, time_sigma_s, signed_drop, group, rate, site, transit, names, site_sigma_km,
            clock_sigma_s, used):
    """One-sigma contributions to f of each error source (the estimator is linear in the timings)."""
    from firstrung.constants import IUGG_MEAN_RADIUS_KM

    timing = math.sqrt(float(np.sum(estimator**2 * np.asarray(time_sigma_s, dtype=float) ** 2)))
    # one drop per instrument, shared by its C2 and C3 with opposite signs
    black = math.sqrt(float(np.sum(np.bincount(group, weights=estimator * signed_drop) ** 2)))
    # a site moved by site_sigma_km changes its contacts by about rate * (shift / Earth radius)
    position = math.sqrt(float(np.sum((estimator * rate * site_sigma_km / IUGG_MEAN_RADIUS_KM) ** 2)))
    fitted = {key for kind, key in names if kind == "clock"}
    clock_var = 0.0
    for key in {(s, t) for s, t in zip(site[used].tolist(), transit[used].tolist(), strict=True)} - fitted:
        rows = (site == key[0]) & (transit == key[1]) & used
        clock_var += float(np.sum(estimator[rows])) ** 2 * clock_sigma_s**2
    return {
        "timing (stated errors)": timing,
        "black drop (internal contacts)": black,
        "clocks whose offset is not fitted (one error per site)": math.sqrt(clock_var),
        "site positions": position,
        "Sun's and planet's radii (fitted offsets)": 0.0,
    }


__all__ = [
    "DEFAULT_BLACK_DROP_SIGMA_S",
    "DEFAULT_TIME_SIGMA_S",
    "SOLAR_PARALLAX_DE421_ARCSEC",
    "TransitReduction",
    "reduce_transit_contacts",
]
