"""Lunar-eclipse timings: the umbra's size, the Moon's distance and the shadow's enlargement.

The classical method (Aristarchus, c. 270 BC, refined by Hipparchus): the
Earth's shadow at the Moon's distance is a circle whose angular radius
depends on the Moon's parallax, so the ratio of the shadow to the Moon gives
the Moon's distance in Earth radii. Timings of the umbra's contacts with the
Moon's limb (U1-U4) and of the immersion and emersion of craters turn into
that ratio as chords of the Moon's straight, uniform track across a circular
umbra.

The reduction, one small step per function:

1. several observers' timings of one event are combined with outlier
   rejection (:func:`combine_timings`);
2. the contacts (and crater timings, and an observed greatest magnitude) are
   solved for the track's time of closest approach, its closest distance from
   the shadow's axis and the umbra's radius, with the Moon's angular radius
   and its rate across the shadow as measured by the observers (or taken
   from the ephemeris) (:func:`solve_chords`); central passage is not
   assumed;
3. the ratio n = umbra radius / Moon radius, then the Moon's horizontal
   parallax by inverting a published enlargement convention
   (:func:`moon_parallax_from_umbra_deg`) and the distance 1/sin(pi_M)
   in Earth radii (:func:`reduce_eclipse_timings`);
4. with the ephemeris's shadow geometry, crater timings alone give the
   umbra's enlargement over the geometric shadow and, with enough points,
   its flattening (:func:`fit_umbra_enlargement`).

The conventions for the umbra's radius (DESIGN section 5; Espenak & Meeus
2009, "Enlargement of Earth's Shadows"):

- geometric: ``rho_u = pi_M + pi_S - s_S``;
- Danjon (1951), the NASA canon's: ``rho_u = 1.01 pi_M + pi_S - s_S``;
- Chauvenet (1891), the Astronomical Almanac's: ``rho_u = 1.02 (0.99834 pi_M + pi_S - s_S)``.

Everything here is pure: numbers and arrays in, frozen results out; no
ephemeris is called. Times are seconds from an epoch the caller chooses.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from firstrung.errors import ComputationError, InputError
from firstrung.methods.eclipse.chords import (
    _MAD_TO_SIGMA,
    CONTACTS,
    OUTLIER_THRESHOLD_SIGMA,
    SCATTER_SIGNIFICANCE,
    ChordSolution,
    CombinedTimings,
    FeatureOffsets,
    solve_chords,
)
from firstrung.methods.eclipse.umbra import _check_convention, moon_parallax_from_umbra_deg
from firstrung.uncertainty import BudgetTerm, Measured, budget_from_contributions

#: Fewest crater timings for fitting the shadow's flattening as well as its radius.
MIN_POINTS_FOR_FLATTENING = 8
#: Least standard deviation of cos^2(position angle) over the points for the
#: flattening to be fitted: the points must surround the shadow, not sit on one side.
MIN_FLATTENING_SPREAD = 0.15


# --- shadow conventions -----------------------------------------------------------


# --- several observers per event ---------------------------------------------------------


# --- chords of the Moon's track across the umbra ---------------------------------------------


# --- from the umbra to the Moon's distance ------------------------------------------------


@dataclass(frozen=True)
class EclipseReduction:
    """The Moon's distance from one eclipse's timings.

    ``shadow_moon_ratio`` n = rho_u / s_M [1]; ``moon_parallax_deg`` pi_M by
    the convention inverted; ``moon_distance_earth_radii`` 1/sin(pi_M), in
    Earth equatorial radii (the conventions' parallax is the equatorial
    one). ``budget`` splits the distance's sigma [Earth radii].
    """

    convention: str
    shadow_moon_ratio: Measured
    umbra_radius_arcmin: Measured
    moon_parallax_arcmin: Measured
    moon_distance_earth_radii: Measured
    least_distance_arcmin: Measured
    greatest_magnitude: Measured
    closest_approach_s: Measured
    solution: ChordSolution
    budget: tuple[BudgetTerm, ...]
    moon_semidiameter_deg: float
    moon_rate_deg_per_h: float
    assumptions: tuple[str, ...] = field(default_factory=tuple)
    propagation: str = ""


def _distance_interval(parallax_deg: float, sigma_deg: float) -> Measured:
    """1/sin(pi) with the 68 % interval of a Gaussian pi mapped through it."""
    value = 1.0 / math.sin(math.radians(parallax_deg))
    sigma = math.cos(math.radians(parallax_deg)) / math.sin(math.radians(parallax_deg)) ** 2 * math.radians(sigma_deg)
    low = 1.0 / math.sin(math.radians(parallax_deg + sigma_deg))
    high = 1.0 / math.sin(math.radians(parallax_deg - sigma_deg)) if parallax_deg - sigma_deg > 0 else None
    return Measured(value, sigma, low, high, "earth radii")


def _gauss(value: float, sigma: float, unit: str) -> Measured:
    return Measured(float(value), float(sigma), float(value - sigma), float(value + sigma), unit)


def reduce_eclipse_timings(
    timings: CombinedTimings,
    moon_semidiameter_deg: float,
    moon_semidiameter_sigma_deg: float,
    moon_rate_deg_per_h: float,
    moon_rate_sigma_deg_per_h: float,
    sun_semidiameter_deg: float,
    sun_parallax_deg: float,
    *,
    convention: str = "danjon",
    track_position_angle_deg: float = 90.0,
    offsets: FeatureOffsets | None = None,
    greatest_magnitude: float | None = None,
    greatest_magnitude_sigma: float | None = None,
    assumptions: tuple[str, ...] = (),
) -> EclipseReduction:
    """The Moon's distance in Earth radii from one eclipse's timings (no ephemeris inside).

    Parameters
    ----------
    timings : CombinedTimings
    moon_semidiameter_deg, moon_semidiameter_sigma_deg : float
        The Moon's angular radius and its error [deg].
    moon_rate_deg_per_h, moon_rate_sigma_deg_per_h : float
        Its rate relative to the shadow and its error [deg/h].
    sun_semidiameter_deg, sun_parallax_deg : float
        The Sun's semi-diameter and parallax of the date [deg] (almanac values;
        the result depends on the first one nearly as on the umbra itself).
    convention : {"danjon", "chauvenet", "geometric"}
        The enlargement convention inverted for the parallax.
    track_position_angle_deg, offsets, greatest_magnitude, greatest_magnitude_sigma
        As in :func:`solve_chords`.
    assumptions : tuple of str
        Statements the caller adds (where the Moon's data came from).

    Returns
    -------
    EclipseReduction

    Notes
    -----
    Linear propagation: the timings' part comes from the fit's covariance;
    the Moon's radius and rate by re-solving with each moved by a small step
    (the result goes roughly as rate^-1.45 and radius^+0.72, DESIGN 7); the
    convention term is half the spread between Danjon's and Chauvenet's
    parallax for the same umbra (the enlargement differs from eclipse to
    eclipse). Crater timings do not replace it: they fix the umbra's radius,
    ``(1 + k) pi_M + pi_S - s_S``, so the enlargement k and the parallax
    only together (:func:`~firstrung.methods.eclipse.umbra.distance_enlargement`).

    Examples
    --------
    >>> import math
    >>> v, sm, ru, d = 29.53 / 60 / 3600, 15.289 / 60, 40.697 / 60, 14.426 / 60
    >>> half = lambda r: math.sqrt(r * r - d * d) / v
    >>> t = [-half(ru + sm), -half(ru - sm), half(ru - sm), half(ru + sm)]
    >>> from firstrung.methods.eclipse.chords import combine_timings
    >>> c = combine_timings(["U1", "U2", "U3", "U4"], [""] * 4, t, [30.0] * 4)
    >>> r = reduce_eclipse_timings(c, sm, 0.001, 29.53 / 60, 0.001, 16.142 / 60, 8.876 / 3600)
    >>> round(r.moon_distance_earth_radii.value, 1)
    61.2
    """
    _check_convention(convention)
    kwargs = dict(
        track_position_angle_deg=track_position_angle_deg, offsets=offsets,
        sun_cone_deg=sun_semidiameter_deg - sun_parallax_deg,
        greatest_magnitude=greatest_magnitude, greatest_magnitude_sigma=greatest_magnitude_sigma,
    )
    sol = solve_chords(timings, moon_semidiameter_deg, moon_rate_deg_per_h, **kwargs)
    sm, v = float(moon_semidiameter_deg), float(moon_rate_deg_per_h)

    def derived(ru, sm_):
        pm = float(moon_parallax_from_umbra_deg(ru, sun_parallax_deg, sun_semidiameter_deg, convention))
        return ru / sm_, pm, 1.0 / math.sin(math.radians(pm))

    n0, pm0, d0 = derived(sol.umbra_radius_deg, sm)
    sig_ru_timing = math.sqrt(max(sol.covariance[2, 2], 0.0))
    # sensitivities to the Moon's radius and rate by re-solving
    h_sm, h_v = sm * 1e-4, v * 1e-4
    ru_sm = solve_chords(timings, sm + h_sm, v, **kwargs).umbra_radius_deg
    ru_v = solve_chords(timings, sm, v + h_v, **kwargs).umbra_radius_deg
    dn_sm, dpm_sm, dd_sm = (np.array(derived(ru_sm, sm + h_sm)) - (n0, pm0, d0)) / h_sm
    dn_v, dpm_v, dd_v = (np.array(derived(ru_v, sm)) - (n0, pm0, d0)) / h_v
    dn_ru, dpm_ru, dd_ru = (np.array(derived(sol.umbra_radius_deg + 1e-6, sm)) - (n0, pm0, d0)) / 1e-6
    pm_alt = [
        float(moon_parallax_from_umbra_deg(sol.umbra_radius_deg, sun_parallax_deg, sun_semidiameter_deg, c))
        for c in ("danjon", "chauvenet")
    ]
    sig_pm_conv = abs(pm_alt[0] - pm_alt[1]) / 2
    s_sm, s_v = float(moon_semidiameter_sigma_deg), float(moon_rate_sigma_deg_per_h)
    label_t = f"timings ({int(np.sum(timings.count))} used in {len(timings)} events)"
    if greatest_magnitude is not None:
        label_t += " and the observed magnitude"
    contributions_pm = {
        label_t: dpm_ru * sig_ru_timing,
        "Moon's angular diameter": dpm_sm * s_sm,
        "Moon's rate across the shadow": dpm_v * s_v,
        "umbra's enlargement (half the Danjon-Chauvenet spread)": sig_pm_conv,
    }
    sig_pm = math.sqrt(sum(x * x for x in contributions_pm.values()))
    to_d = abs(math.cos(math.radians(pm0)) / math.sin(math.radians(pm0)) ** 2 * math.radians(1.0))
    budget = budget_from_contributions({k: to_d * x for k, x in contributions_pm.items()}, "earth radii")
    sig_n = math.sqrt((dn_ru * sig_ru_timing) ** 2 + (dn_sm * s_sm) ** 2 + (dn_v * s_v) ** 2)
    ru_total = math.sqrt(sig_ru_timing**2 + ((ru_sm - sol.umbra_radius_deg) / h_sm * s_sm) ** 2
                         + ((ru_v - sol.umbra_radius_deg) / h_v * s_v) ** 2)
    d_abs = abs(sol.least_distance_deg)
    mag = (sol.umbra_radius_deg + sm - d_abs) / (2 * sm)
    var_mag = (sol.covariance[2, 2] + sol.covariance[1, 1] - 2 * np.sign(sol.least_distance_deg) * sol.covariance[1, 2]) / (2 * sm) ** 2
    notes = list(assumptions) + [
        f"umbra radius inverted with the {convention} convention, crater timings or not; this eclipse's own "
        "departure from it is an error of half the Danjon-Chauvenet spread: the timings fix the umbra's radius, "
        "the enlargement and the Moon's parallax only together",
        "the Moon's track is straight and uniform across a circular umbra; central passage not assumed",
        "distance in Earth equatorial radii (the conventions' parallax is asin(a / d))",
    ]
    if np.any([e not in CONTACTS for e in timings.event]):
        notes.append(
            "crater timings enter as points on the umbra's edge; their places on the disc come from the "
            "Moon's orientation (Meeus ch. 53), the track's direction from the ephemeris (angles only)"
        )
    if sol.scale > 1.0:
        notes.append(f"timing errors scaled by {sol.scale:.2f}: the scatter about the fit is significant")
    return EclipseReduction(
        convention=convention,
        shadow_moon_ratio=_gauss(n0, sig_n, "1"),
        umbra_radius_arcmin=_gauss(sol.umbra_radius_deg * 60, ru_total * 60, "arcmin"),
        moon_parallax_arcmin=_gauss(pm0 * 60, sig_pm * 60, "arcmin"),
        moon_distance_earth_radii=_distance_interval(pm0, sig_pm),
        least_distance_arcmin=_gauss(d_abs * 60, math.sqrt(max(sol.covariance[1, 1], 0.0)) * 60, "arcmin"),
        greatest_magnitude=_gauss(mag, math.sqrt(max(var_mag, 0.0)), "1"),
        closest_approach_s=_gauss(sol.closest_approach_s, math.sqrt(max(sol.covariance[0, 0], 0.0)), "s"),
        solution=sol,
        budget=budget,
        moon_semidiameter_deg=sm,
        moon_rate_deg_per_h=v,
        assumptions=tuple(notes),
        propagation="linear: fit covariance for the timings, re-solved steps for the Moon's radius and rate",
    )


def distance_in_km(distance_earth_radii: Measured, earth_radius_km: float, earth_radius_sigma_km: float) -> Measured:
    """The Moon's distance in km from Earth radii and a measured Earth radius.

    Relative errors add in quadrature; the 68 % interval widens each side of
    the Earth-radii interval by the radius's share.

    >>> round(distance_in_km(Measured(60.0, 0.6, 59.4, 60.6, "earth radii"), 6400.0, 64.0).sigma)
    5431
    """
    d, r = distance_earth_radii, float(earth_radius_km)
    value = d.value * r
    rel_r = earth_radius_sigma_km / r
    sigma = value * math.hypot(d.sigma / d.value, rel_r)
    low = value - math.hypot((d.value - d.low) * r, value * rel_r)
    high = None if d.high is None else value + math.hypot((d.high - d.value) * r, value * rel_r)
    return Measured(value, sigma, low, high, "km")


# --- the umbra's enlargement from crater timings (with the ephemeris's geometry) ---------


@dataclass(frozen=True)
class EnlargementFit:
    """The umbra's enlargement over the geometric shadow, from crater timings.

    ``enlargement_percent``: 100 (rho_observed / rho_geometric - 1) for the
    mean radius; ``flattening`` of the fitted shadow (radius ``a (1 - f
    cos^2 theta)``, theta the point's position angle about the axis from
    north) with the equatorial enlargement, when enough points surround the
    shadow. ``residual_s``: each point's observed minus fitted time.
    """

    enlargement_percent: Measured
    flattening: Measured | None
    equatorial_enlargement_percent: Measured | None
    residual_s: np.ndarray
    used: np.ndarray
    chi2: float
    dof: int
    scale: float
    points: int


def fit_umbra_enlargement(
    distance_deg,
    edge_scale,
    edge_offset_deg,
    geometric_umbra_deg,
    radial_rate_deg_per_s,
    sigma_s,
    position_angle_deg,
    *,
    fit_flattening: bool | None = None,
) -> EnlargementFit:
    """Fit the umbra's radius to crater points on its edge: the enlargement in percent.

    Each timing puts a crater (seen from the Earth's centre at
    ``distance_deg`` from the shadow's axis) on the edge, whose radius at the
    crater's depth is ``rho (edge_scale) + edge_offset``; so each gives
    ``1 + e = (distance - offset) / (scale * rho_geometric)``, with a sigma
    of ``|radial rate| * sigma_t`` over the same scale. The points are
    averaged with weights (outliers beyond ``OUTLIER_THRESHOLD_SIGMA`` of the
    robust scatter rejected one at a time); with at least
    ``MIN_POINTS_FOR_FLATTENING`` points spread around the shadow the
    flattening is fitted as well.

    Parameters
    ----------
    distance_deg, edge_scale, edge_offset_deg, geometric_umbra_deg : array
        Per timing: the crater's distance from the axis [deg], the edge's
        depth terms [1, deg], the geometric umbra's radius [deg].
    radial_rate_deg_per_s : array
        Rate of the crater's distance from the axis [deg/s].
    sigma_s : array
        Timing errors [s].
    position_angle_deg : array
        Position angle of each point about the axis, from north through east [deg].
    fit_flattening : bool, optional
        Force or forbid the flattening fit (default: when the points allow it).

    Returns
    -------
    EnlargementFit

    Examples
    --------
    Points exactly 1.5 % outside a 0.7 deg geometric umbra:

    >>> import numpy as np
    >>> f = fit_umbra_enlargement(np.full(4, 0.7105), np.ones(4), np.zeros(4), np.full(4, 0.7),
    ...                           np.full(4, 1e-4), np.full(4, 10.0), [0, 90, 180, 270])
    >>> round(f.enlargement_percent.value, 3)
    1.5
    """
    dist, scale_, off, geo, rate, sig, pa = (
        np.asarray(x, dtype=float) for x in
        (distance_deg, edge_scale, edge_offset_deg, geometric_umbra_deg, radial_rate_deg_per_s, sigma_s, position_angle_deg)
    )
    n = len(dist)
    if n < 1:
        raise ComputationError("no crater timings to fit the umbra's enlargement")
    y = (dist - off) / (scale_ * geo)
    sy = np.abs(rate) * sig / (scale_ * geo)
    if np.any(~(sy > 0)):
        raise InputError("crater timings: a point moves along the edge (no radial rate); cannot weight it")
    c2 = np.cos(np.radians(pa)) ** 2
    used = np.ones(n, bool)

    def mean_fit(mask):
        w = 1 / sy[mask] ** 2
        a = float(np.sum(w * y[mask]) / np.sum(w))
        return a, float(1 / math.sqrt(np.sum(w)))

    while used.sum() >= 4:
        a, _ = mean_fit(used)
        z = (y - a) / sy
        robust = _MAD_TO_SIGMA * np.median(np.abs(z[used]))
        z_scaled = np.abs(z) / max(1.0, robust)
        z_scaled[~used] = -1
        worst = int(np.argmax(z_scaled))
        if z_scaled[worst] <= OUTLIER_THRESHOLD_SIGMA:
            break
        used[worst] = False
    a, sa = mean_fit(used)
    k = int(used.sum())
    chi2 = float(np.sum(((y[used] - a) / sy[used]) ** 2))
    dof = k - 1
    factor = 1.0
    if dof > 0:
        from firstrung.uncertainty import chi2_survival

        if chi2_survival(chi2, dof) < SCATTER_SIGNIFICANCE:
            factor = math.sqrt(chi2 / dof)
    enlargement = _gauss(100 * (a - 1), 100 * sa * factor, "%")
    flat = equatorial = None
    spread = float(np.std(c2[used])) if k > 1 else 0.0
    want = fit_flattening if fit_flattening is not None else (k >= MIN_POINTS_FOR_FLATTENING and spread >= MIN_FLATTENING_SPREAD)
    if want:
        if k < 3 or spread <= 0:
            raise ComputationError("too few crater points around the shadow to fit its flattening")
        w = 1 / sy[used] ** 2
        design = np.stack([np.ones(k), -c2[used]], axis=1)
        normal_m = design.T @ (design * w[:, None])
        cov = np.linalg.inv(normal_m)
        coef = cov @ (design.T @ (w * y[used]))
        res = y[used] - design @ coef
        chi2_f = float(np.sum(w * res**2))
        f2 = 1.0
        if k > 2:
            from firstrung.uncertainty import chi2_survival

            if chi2_survival(chi2_f, k - 2) < SCATTER_SIGNIFICANCE:
                f2 = math.sqrt(chi2_f / (k - 2))
        cov = cov * f2**2
        aa, bb = coef
        fl = bb / aa
        j = np.array([-bb / aa**2, 1 / aa])
        flat = _gauss(fl, math.sqrt(float(j @ cov @ j)), "1")
        equatorial = _gauss(100 * (aa - 1), 100 * math.sqrt(cov[0, 0]), "%")
    residual_s = -(y - a) * (scale_ * geo) / rate
    return EnlargementFit(
        enlargement_percent=enlargement,
        flattening=flat,
        equatorial_enlargement_percent=equatorial,
        residual_s=residual_s,
        used=used,
        chi2=chi2,
        dof=dof,
        scale=factor,
        points=n,
    )
