"""Combining half-moon estimates: which errors are shared, and the weighted mean in 90 deg - E.

Three kinds of error can be common to several estimates:

* the **judgement** of "exactly half lit" by the observers of one Moon: the
  terminator is straight at half moon and bows by only about 4" half an hour
  away, so everyone looking at the same Moon faces the same ambiguity and
  may err alike (shared), or each in their own way (independent). The logs
  cannot say which; the scatter of the quarter's estimates can: errors all
  shared leave the observers agreeing far better than their stated errors,
  independent ones scatter as stated. A quarter's judgements are taken as
  shared (the physical default) unless at least :data:`MIN_TO_DECIDE`
  estimates scatter as independent errors would (their chi-square with the
  stated errors not below its 5 % point): then as independent
  (:func:`judgement_is_shared`);
* the **zero point** of one photo series (exposure, processing, the
  threshold of "lit"), carried in the series' own fit;
* a zero point **common to every series** (one camera model, one processing
  for the whole campaign), stated by the user when it applies: it moves
  every series alike and no scatter reveals it.

Scatter beyond the stated errors scales the result up (the Particle Data
Group's sqrt(chi2/dof)) only when it is significant at 5 %: a chi-square
above its mean by chance is no evidence that the errors were understated.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from firstrung.arguments import checked
from firstrung.errors import ComputationError, InputError
from firstrung.methods.phases.reduction import ratio_from_elongation
from firstrung.uncertainty import Measured, chi2_survival

#: Significance at which scatter is taken as real: too large scales the result up, too small shows shared errors.
SCATTER_SIGNIFICANCE = 0.05

#: Fewest estimates of one quarter whose scatter decides shared or independent judgement (with two or three,
#: a shared judgement is told from an independent one less than two times in three; they stay shared).
MIN_TO_DECIDE = 4


@dataclass(frozen=True)
class CombinedElongation:
    """A weighted mean of elongations at half moon (in delta = 90 deg - E).

    ``sigma_deg`` is scaled by ``scale`` = sqrt(chi2/dof) when the scatter
    of the (independent) groups is significant at 5 % (the Particle Data
    Group's scale factor: the estimates scatter more than their stated
    errors allow). ``independent_quarters``: the quarters (named by their
    date) whose judgements scattered as independent errors and were combined
    as such.
    """

    elongation_deg: float
    sigma_deg: float
    estimates: int
    chi2_per_dof: float | None
    scale: float
    independent_quarters: tuple[str, ...] = ()

    @property
    def sun_moon_distance_ratio(self) -> Measured:
        """The ratio with its skewed 68 % interval."""
        return ratio_from_elongation(self.elongation_deg, self.sigma_deg)


def _scale(chi2: float, dof: int) -> tuple[float | None, float]:
    if dof < 1:
        return None, 1.0
    significant = float(chi2_survival(chi2, dof)) < SCATTER_SIGNIFICANCE
    return chi2 / dof, math.sqrt(chi2 / dof) if significant else 1.0


def judgement_is_shared(delta_deg, sigma_deg) -> bool:
    """Whether one quarter's judgements scatter too little to be independent.

    With the stated (total) errors, independent judgements give a chi-square
    about its degrees of freedom; judgements sharing their error agree far
    better. Shared when fewer than :data:`MIN_TO_DECIDE` estimates (too few
    to tell), or when the chi-square is below its 5 % point.

    >>> judgement_is_shared([0.10, 0.11, 0.09, 0.10], [0.2] * 4)    # agree to 0.01 with 0.2 stated
    True
    >>> judgement_is_shared([0.10, -0.15, 0.30, 0.05], [0.2] * 4)   # scatter as stated
    False
    """
    d = np.asarray(delta_deg, float)
    s = np.asarray(sigma_deg, float)
    if d.size < MIN_TO_DECIDE:
        return True
    w = 1.0 / s**2
    mean = float((w * d).sum() / w.sum())
    chi2 = float((w * (d - mean) ** 2).sum())
    below = 1.0 - float(chi2_survival(chi2, d.size - 1))
    return below < SCATTER_SIGNIFICANCE


def combine_elongations(elongation_deg, sigma_deg, shared_sigma_deg=None, group=None,
                        common_sigma_deg=None) -> CombinedElongation:
    """Combine half-moon elongations from many observers: weighted mean in delta = 90 deg - E.

    The errors are Gaussian in E, not in the ratio: averaging ratios would
    be dominated by the observers whose E came closest to 90 deg. Errors
    shared by several estimates do not average down: with
    ``shared_sigma_deg`` and ``group`` each group is averaged first
    (weights 1/sigma^2; its own errors average down, the shared part stays
    whole), then the groups as independent estimates; the scale factor comes
    from the groups' scatter. For a shared part common to the group this is
    the generalised least-squares mean (Sherman-Morrison: its weights are
    the own ones). ``common_sigma_deg`` is a part shared by every estimate
    that has it, whatever its group (a zero point common to all photo
    series): it is added whole, weighted as the estimates are.

    Parameters
    ----------
    elongation_deg, sigma_deg : array_like
        Each estimate and its total one-sigma error [deg] (the common part not included).
    shared_sigma_deg : array_like, optional
        The part of each sigma shared with the other estimates of its group [deg].
    group : array_like, optional
        Group label of each estimate (estimates of one group share that part).
    common_sigma_deg : array_like, optional
        Error shared by all estimates across groups [deg]; 0 where it does not apply.

    Returns
    -------
    CombinedElongation

    Raises
    ------
    ComputationError
        With no estimate.

    Examples
    --------
    >>> c = combine_elongations([89.80, 89.90], [0.05, 0.05])
    >>> round(c.elongation_deg, 3), round(c.sigma_deg, 4), round(c.scale, 2)   # chi2 = 2, 1 dof: not significant
    (89.85, 0.0354, 1.0)

    Two observers of one Moon sharing their whole judgement error gain nothing:

    >>> round(combine_elongations([89.85, 89.85], [0.3, 0.3], [0.3, 0.3], [1, 1]).sigma_deg, 3)
    0.3
    """
    e = np.atleast_1d(checked("elongation_deg", elongation_deg, 0.0, 180.0, "deg"))
    s = np.atleast_1d(checked("sigma_deg", sigma_deg, 0.0, 180.0, "deg"))
    if e.size == 0:
        raise ComputationError("no half-moon estimate to combine")
    if e.shape != s.shape or np.any(s <= 0):
        raise InputError("sigma_deg: expected one positive error per elongation")
    delta = 90.0 - e
    shared = np.zeros(e.shape) if shared_sigma_deg is None else np.broadcast_to(np.asarray(shared_sigma_deg, float), e.shape)
    common = np.zeros(e.shape) if common_sigma_deg is None else np.broadcast_to(np.asarray(common_sigma_deg, float), e.shape)
    labels = np.asarray(group if group is not None else np.arange(e.size), dtype=object)
    own = np.sqrt(np.maximum(s**2 - shared**2, 0.0))
    # each group first: weights 1/sigma^2, its own errors average down, the shared part does not
    keys = sorted(set(labels.tolist()), key=str)
    g_delta, g_var, g_common = [], [], []
    for key in keys:
        sel = labels == key
        w = 1.0 / s[sel] ** 2
        w = w / w.sum()
        g_delta.append(float((w * delta[sel]).sum()))
        g_var.append(float((w**2 * own[sel] ** 2).sum()) + float((w * shared[sel]).sum()) ** 2)
        g_common.append(float((w * common[sel]).sum()))
    g_delta, g_var, g_common = np.array(g_delta), np.array(g_var), np.array(g_common)
    # then the groups, independent of one another but for the common part
    w = 1.0 / g_var
    mean = float((w * g_delta).sum() / w.sum())
    chi2_dof, scale = _scale(float((w * (g_delta - mean) ** 2).sum()), len(keys) - 1)
    sigma = math.sqrt(1.0 / float(w.sum())) * scale
    sigma = math.hypot(sigma, float((w * g_common).sum() / w.sum()))
    return CombinedElongation(90.0 - mean, sigma, int(e.size), chi2_dof, scale)


def combine_half_moon(estimates, common_zero_point_sigma: float = 0.0, kinds=None) -> CombinedElongation:
    """The estimates (``HalfMoonEstimate``) combined, deciding each quarter's judgement from its scatter.

    Timings and measured angles of one quarter share the smallest judgement
    error among them (``shared_sigma_deg``) unless their scatter shows
    independent errors (:func:`judgement_is_shared`); each photo series is a
    group of its own, and ``common_zero_point_sigma`` [1] of the fractions is
    shared by every series (it moves a series' half phase by
    ``2 dk / b`` rad, b the series' slope). ``kinds`` limits the estimates
    combined (the decision is made on the quarter's estimates of those kinds).
    """
    xs = [x for x in estimates if kinds is None or x.kind in kinds]
    if not xs:
        raise ComputationError("no half-moon estimate to combine")
    e = np.clip(np.array([x.elongation_deg.value for x in xs]), 0.0, 180.0)
    s = np.array([x.elongation_deg.sigma for x in xs])
    shared = np.array([x.shared_sigma_deg for x in xs])
    series = np.array([x.kind == "fraction series" for x in xs])
    group = np.array([f"series {n}" if series[n] else f"quarter {x.quarter_index}" for n, x in enumerate(xs)],
                     dtype=object)
    independent = []
    for q in sorted({x.quarter_index for x in xs}):
        sel = (group == f"quarter {q}")
        if sel.sum() and not judgement_is_shared(90.0 - e[sel], s[sel]):
            independent.append(q)
            shared = np.where(sel, 0.0, shared)
            group = np.where(sel, np.array([f"own {n}" for n in range(len(xs))], dtype=object), group)
    slope = np.array([x.fit.slope if x.fit is not None else 1.0 for x in xs])
    common = np.where(series, np.degrees(2.0 * float(common_zero_point_sigma)) / slope, 0.0)
    c = combine_elongations(e, s, shared, group, common)
    return CombinedElongation(c.elongation_deg, c.sigma_deg, c.estimates, c.chi2_per_dof, c.scale,
                              tuple(_quarter_name(xs, q) for q in independent))


def _quarter_name(xs, q) -> str:
    """'first quarter of 2027-01-15' for a quarter's index (its index alone where the estimates carry no date)."""
    x = next(x for x in xs if x.quarter_index == q)
    when = getattr(x, "quadrature_utc", None)
    return f"{x.quarter} quarter of {np.datetime64(when, 'D')}" if when is not None else f"quarter {q}"
