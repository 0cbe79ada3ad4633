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

from firstrung.constants import (
    CHAUVENET_ENLARGEMENT_FACTOR,
    CHAUVENET_PARALLAX_FACTOR,
    DANJON_PARALLAX_FACTOR,
    SUN_MEAN_RATE_DEG_PER_H,
)
from firstrung.errors import ComputationError, InputError
from firstrung.uncertainty import BudgetTerm, Measured, budget_from_contributions

#: The shadow conventions by name; Danjon is the default (the published NASA canon's).
CONVENTIONS = ("danjon", "chauvenet", "geometric")
#: The umbral contacts, in order.
CONTACTS = ("U1", "U2", "U3", "U4")
#: Default one-sigma timing error of an umbral contact [s]. Chosen for the fuzzy
#: umbra edge: the shadow's brightness falls over 1-2' at its edge and the Moon
#: crosses the shadow at about 0.5' per minute, so the "edge" is a band some
#: 2-4 min wide in time; at the limb the edge meets the Moon obliquely and the
#: limb itself fades into the penumbra, so observers scatter by about a minute
#: (common practice, not a published figure).
DEFAULT_CONTACT_SIGMA_S = 60.0
#: Default one-sigma timing error of a crater immersion or emersion [s]: the edge
#: crosses a crater roughly square on, against a contrasting background, so
#: observers do about twice as well as at the limb (common practice).
DEFAULT_CRATER_SIGMA_S = 30.0
#: A timing is rejected when it lies more than this many sigma from the median of
#: its event (with three or more timings of one event).
OUTLIER_THRESHOLD_SIGMA = 3.5
#: Scale of the median absolute deviation that estimates a normal sigma.
_MAD_TO_SIGMA = 1.4826
#: Probability below which the scatter about a fit is taken as real and the
#: errors are scaled up (a 5 % test, common practice).
SCATTER_SIGNIFICANCE = 0.05
#: Fewest crater timings for fitting the shadow's flattening as well as its radius.
MIN_POINTS_FOR_FLATTENING = 8
#: Least standard deviation of cos^2(position angle) over the points for the
#: flattening to be fitted: the points must surround the shadow, not sit on one side.
MIN_FLATTENING_SPREAD = 0.15


# --- shadow conventions -----------------------------------------------------------


def _check_convention(convention: str) -> str:
    if convention not in CONVENTIONS:
        raise InputError(f"convention: expected one of {', '.join(CONVENTIONS)}, got {convention!r}")
    return convention


def umbra_radius_deg(moon_parallax_deg, sun_parallax_deg, sun_semidiameter_deg, convention="danjon"):
    """Angular radius of the umbra at the Moon's distance, by a published convention.

    Parameters
    ----------
    moon_parallax_deg, sun_parallax_deg : float or array
        Equatorial horizontal parallaxes of the Moon and the Sun [deg].
    sun_semidiameter_deg : float or array
        The Sun's geocentric semi-diameter [deg].
    convention : {"danjon", "chauvenet", "geometric"}
        How the atmosphere's enlargement of the shadow is modelled.

    Returns
    -------
    float or ndarray
        Umbra radius [deg].

    Examples
    --------
    Reference-values 4.5, 2025-03-14 (pi_M 54.613', pi_S 8.845", s_S 16.087'):
    Danjon 39.219'.

    >>> round(float(umbra_radius_deg(54.613 / 60, 8.845 / 3600, 16.087 / 60)) * 60, 2)
    39.22
    """
    _check_convention(convention)
    pm, ps, ss = (np.asarray(x, dtype=float) for x in (moon_parallax_deg, sun_parallax_deg, sun_semidiameter_deg))
    if convention == "geometric":
        return pm + ps - ss
    if convention == "danjon":
        return DANJON_PARALLAX_FACTOR * pm + ps - ss
    return CHAUVENET_ENLARGEMENT_FACTOR * (CHAUVENET_PARALLAX_FACTOR * pm + ps - ss)


def penumbra_radius_deg(moon_parallax_deg, sun_parallax_deg, sun_semidiameter_deg, convention="danjon"):
    """Angular radius of the penumbra at the Moon's distance [deg] (same conventions).

    >>> round(float(penumbra_radius_deg(54.613 / 60, 8.845 / 3600, 16.087 / 60, "geometric")) * 60, 3)
    70.847
    """
    _check_convention(convention)
    pm, ps, ss = (np.asarray(x, dtype=float) for x in (moon_parallax_deg, sun_parallax_deg, sun_semidiameter_deg))
    if convention == "geometric":
        return pm + ps + ss
    if convention == "danjon":
        return DANJON_PARALLAX_FACTOR * pm + ps + ss
    return CHAUVENET_ENLARGEMENT_FACTOR * (CHAUVENET_PARALLAX_FACTOR * pm + ps + ss)


def moon_parallax_from_umbra_deg(umbra_deg, sun_parallax_deg, sun_semidiameter_deg, convention="danjon"):
    """The Moon's horizontal parallax from the umbra's radius: the convention inverted.

    Parameters
    ----------
    umbra_deg : float or array
        Umbra radius at the Moon [deg].
    sun_parallax_deg, sun_semidiameter_deg : float or array
        The Sun's parallax and semi-diameter [deg].
    convention : {"danjon", "chauvenet", "geometric"}

    Returns
    -------
    float or ndarray
        pi_M [deg].

    Examples
    --------
    Reference-values 4.5, 2025-03-14: n = 2.636 with s_M = 14.876' (Danjon)
    gives pi_M = 54.61'.

    >>> round(float(moon_parallax_from_umbra_deg(2.636 * 14.876 / 60, 8.845 / 3600, 16.087 / 60)) * 60, 2)
    54.61
    """
    _check_convention(convention)
    ru, ps, ss = (np.asarray(x, dtype=float) for x in (umbra_deg, sun_parallax_deg, sun_semidiameter_deg))
    if convention == "geometric":
        return ru + ss - ps
    if convention == "danjon":
        return (ru + ss - ps) / DANJON_PARALLAX_FACTOR
    return (ru / CHAUVENET_ENLARGEMENT_FACTOR + ss - ps) / CHAUVENET_PARALLAX_FACTOR


def shadow_rate_from_sky_rate_deg_per_h(moon_sky_rate_deg_per_h):
    """The Moon's rate across the shadow from its rate against the stars [deg/h].

    The shadow moves with the Sun, about 0.041 deg/h eastward along the
    ecliptic, nearly along the Moon's own path (5 deg apart), so its rate is
    simply subtracted.

    >>> round(float(shadow_rate_from_sky_rate_deg_per_h(0.533)), 4)
    0.4919
    """
    return np.asarray(moon_sky_rate_deg_per_h, dtype=float) - SUN_MEAN_RATE_DEG_PER_H


# --- several observers per event ---------------------------------------------------------


@dataclass(frozen=True)
class CombinedTimings:
    """The timings of one eclipse combined per event: one entry per (event, feature).

    ``time_s`` is the weighted mean of the accepted timings [s from the
    caller's epoch]; ``sigma_s`` its one-sigma error, the larger of the
    propagated error and the observers' scatter (``std / sqrt(n)``) when
    there are several timings. ``used``/``rejected`` hold the labels of the
    timings behind each entry.
    """

    event: np.ndarray
    feature: np.ndarray
    time_s: np.ndarray
    sigma_s: np.ndarray
    count: np.ndarray
    scatter_s: np.ndarray
    used: tuple[tuple[str, ...], ...]
    rejected: tuple[tuple[str, ...], ...]

    def __len__(self) -> int:
        return len(self.event)

    def select(self, mask) -> CombinedTimings:
        """A copy with only the entries picked by a boolean mask."""
        idx = np.flatnonzero(np.asarray(mask))
        return CombinedTimings(
            self.event[idx], self.feature[idx], self.time_s[idx], self.sigma_s[idx], self.count[idx],
            self.scatter_s[idx], tuple(self.used[i] for i in idx), tuple(self.rejected[i] for i in idx),
        )

    @property
    def rejected_labels(self) -> tuple[str, ...]:
        return tuple(label for group in self.rejected for label in group)


def _robust_keep(t: np.ndarray, sigma: np.ndarray) -> np.ndarray:
    """Mask of timings kept after iterative rejection about the median."""
    keep = np.ones(len(t), bool)
    while keep.sum() >= 3:
        tk, sk = t[keep], sigma[keep]
        med = np.median(tk)
        scale = np.maximum(sk, _MAD_TO_SIGMA * np.median(np.abs(tk - med)))
        z = np.abs(tk - med) / scale
        worst = int(np.argmax(z))
        if z[worst] <= OUTLIER_THRESHOLD_SIGMA:
            break
        keep[np.flatnonzero(keep)[worst]] = False
    return keep


def combine_timings(event, feature, time_s, sigma_s, label=None) -> CombinedTimings:
    """Combine several observers' timings of each event, rejecting outliers.

    With three or more timings of one event, the timing farthest from their
    median is rejected while it lies more than ``OUTLIER_THRESHOLD_SIGMA``
    times the larger of its own sigma and the robust scatter (1.4826 times
    the median absolute deviation) away, one at a time. The rest are
    averaged with weights 1/sigma^2; the combined sigma is the larger of the
    propagated one and the scatter of the timings divided by sqrt(n).

    Parameters
    ----------
    event : array of str
        U1-U4, immersion or emersion.
    feature : array of str
        The crater of an immersion/emersion; ``""`` for contacts.
    time_s, sigma_s : array of float
        Timings and their one-sigma errors [s].
    label : array of str, optional
        Where each timing came from (``file:row``), for the report.

    Returns
    -------
    CombinedTimings
        Ordered U1, U2, U3, U4, then crater timings by time.

    Examples
    --------
    Four observers of U1, one 5 minutes late:

    >>> c = combine_timings(["U1"] * 4, [""] * 4, [0.0, 20.0, -10.0, 300.0], [30.0] * 4)
    >>> float(c.time_s[0]), int(c.count[0]), len(c.rejected[0])
    (3.3333333333333335, 3, 1)
    """
    ev = np.asarray(event, dtype=object)
    fe = np.asarray(feature, dtype=object)
    t = np.asarray(time_s, dtype=float)
    s = np.asarray(sigma_s, dtype=float)
    lab = np.asarray(label if label is not None else [str(i + 1) for i in range(len(t))], dtype=object)
    if not (len(ev) == len(fe) == len(t) == len(s) == len(lab)):
        raise InputError("timings: event, feature, time_s, sigma_s and label must have the same length")
    if np.any(~np.isfinite(t)) or np.any(~(s > 0)):
        raise InputError("timings: expected finite times and positive sigmas [s]")
    keys = sorted({(str(e), str(f)) for e, f in zip(ev, fe, strict=True)})
    rows = []
    for e_, f_ in keys:
        m = (ev == e_) & (fe == f_)
        tk, sk, lk = t[m], s[m], lab[m]
        keep = _robust_keep(tk, sk)
        w = 1.0 / sk[keep] ** 2
        mean = float(np.sum(w * tk[keep]) / np.sum(w))
        internal = float(1.0 / math.sqrt(np.sum(w)))
        n = int(keep.sum())
        scatter = float(np.std(tk[keep], ddof=1)) if n >= 2 else float("nan")
        sigma = max(internal, scatter / math.sqrt(n)) if n >= 2 else internal
        rows.append((e_, f_, mean, sigma, n, scatter, tuple(lk[keep]), tuple(lk[~keep])))
    order = sorted(
        range(len(rows)),
        key=lambda i: (0, CONTACTS.index(rows[i][0]), 0.0) if rows[i][0] in CONTACTS else (1, 0, rows[i][2]),
    )
    rows = [rows[i] for i in order]
    col = lambda k, dt: np.array([r[k] for r in rows], dtype=dt)  # noqa: E731
    return CombinedTimings(
        event=col(0, object), feature=col(1, object), time_s=col(2, float), sigma_s=col(3, float),
        count=col(4, int), scatter_s=col(5, float), used=tuple(r[6] for r in rows),
        rejected=tuple(r[7] for r in rows),
    )


# --- chords of the Moon's track across the umbra ---------------------------------------------


@dataclass(frozen=True)
class FeatureOffsets:
    """Where each crater of the combined timings lies on the Moon's disc, at its timing.

    Offsets towards the sky's east and north and the depth towards the
    Earth, in Moon radii (from the Moon's orientation: librations and the
    axis's position angle; angles, independent of the Moon's distance).
    Contacts have zeros.
    """

    east: np.ndarray
    north: np.ndarray
    depth: np.ndarray


@dataclass(frozen=True)
class ChordSolution:
    """The Moon's track across the umbra fitted to the timings.

    ``closest_approach_s``: time of least distance from the axis [s from the
    epoch]; ``least_distance_deg``: that distance, signed (positive on the
    side the track's normal points to); ``umbra_radius_deg``: at the Moon's
    centre distance. ``covariance`` is for (closest_approach_s,
    least_distance_deg, umbra_radius_deg), scaled by ``scale`` (the square
    root of chi^2 per degree of freedom when the scatter is significant,
    else 1). ``residual_s``: each combined timing's observed minus fitted
    time [s].
    """

    closest_approach_s: float
    least_distance_deg: float
    umbra_radius_deg: float
    covariance: np.ndarray
    chi2: float
    dof: int
    scale: float
    residual_s: np.ndarray
    magnitude_residual: float | None


def _unit_vectors(track_position_angle_deg: float):
    pa = math.radians(track_position_angle_deg)
    along = np.array([math.sin(pa), math.cos(pa)])  # (east, north)
    normal = np.array([math.cos(pa), -math.sin(pa)])
    return along, normal


def _points(params, t_s, sm_deg, rate_deg_per_s, along, normal, offsets: FeatureOffsets):
    tg, d, _ = params
    sm_rad = math.radians(sm_deg)
    k = 1.0 + offsets.depth * sm_rad
    x = d * normal[0] + rate_deg_per_s * (t_s - tg) * along[0] + sm_deg * k * offsets.east
    y = d * normal[1] + rate_deg_per_s * (t_s - tg) * along[1] + sm_deg * k * offsets.north
    return x, y, k


def _targets(params, event, sm_deg, offsets: FeatureOffsets, cone_deg):
    ru = params[2]
    sm_rad = math.radians(sm_deg)
    sign = np.array([1.0 if e in ("U1", "U4") else -1.0 if e in ("U2", "U3") else 0.0 for e in event])
    crater = sign == 0.0
    k = 1.0 + offsets.depth * sm_rad
    return np.where(crater, ru * k + cone_deg * offsets.depth * sm_rad, ru + sign * sm_deg)


def _time_residuals(params, timings, sm_deg, rate_deg_per_s, along, normal, offsets, cone_deg):
    x, y, _ = _points(params, timings.time_s, sm_deg, rate_deg_per_s, along, normal, offsets)
    dist = np.hypot(x, y)
    radial_rate = rate_deg_per_s * (x * along[0] + y * along[1]) / np.maximum(dist, 1e-12)
    floor = 0.1 * rate_deg_per_s
    radial_rate = np.where(np.abs(radial_rate) < floor, np.copysign(floor, radial_rate + 1e-300), radial_rate)
    target = _targets(params, timings.event, sm_deg, offsets, cone_deg)
    return (dist - target) / radial_rate  # [s]; positive: the point reached the edge earlier than observed


def _first_guess(timings, sm_deg, rate_deg_per_s, magnitude):
    t = dict(zip(timings.event, timings.time_s, strict=False))
    v = rate_deg_per_s
    if "U1" in t and "U4" in t:
        tg = (t["U1"] + t["U4"]) / 2
    elif "U2" in t and "U3" in t:
        tg = (t["U2"] + t["U3"]) / 2
    else:
        tg = float(np.mean(timings.time_s))
    ru = 2.65 * sm_deg
    if all(k in t for k in CONTACTS):
        t1, t2 = (t["U4"] - t["U1"]) / 2, (t["U3"] - t["U2"]) / 2
        ru = max(v * v * (t1 * t1 - t2 * t2) / (4 * sm_deg), sm_deg * 1.2)
        d = math.sqrt(max((ru + sm_deg) ** 2 - (v * t1) ** 2, 0.0))
    elif "U1" in t and "U4" in t and magnitude is not None:
        t1, m = (t["U4"] - t["U1"]) / 2, magnitude
        a = ((v * t1) ** 2 + 4 * sm_deg**2 * m**2) / (4 * sm_deg * m)
        ru = max(a - sm_deg, 0.5 * sm_deg)
        d = abs(ru + sm_deg - 2 * sm_deg * m)
    elif "U1" in t and "U4" in t:
        t1 = (t["U4"] - t["U1"]) / 2
        d = math.sqrt(max((ru + sm_deg) ** 2 - (v * t1) ** 2, 0.0))
    else:
        d = 0.3 * ru
    return np.array([tg, d, ru])


def _identifiable(timings: CombinedTimings, magnitude: bool) -> str | None:
    """Why the timings cannot fix the track and the umbra, or None."""
    contacts = {e for e in timings.event if e in CONTACTS}
    craters = int(np.sum([e not in CONTACTS for e in timings.event]))
    n = len(contacts) + craters + int(magnitude)
    if contacts == {"U1", "U4"} and craters == 0 and not magnitude:
        return (
            "U1 and U4 alone fix the chord's length but not how far from the axis it runs: give the "
            "observed greatest umbral magnitude, or time craters too"
        )
    if n < 3:
        return (
            f"{n} independent constraint(s) (contacts {', '.join(sorted(contacts)) or 'none'}, "
            f"{craters} crater timing(s){', the magnitude' if magnitude else ''}); three are needed "
            "for the track's time, its distance from the axis and the umbra's radius"
        )
    return None


def solve_chords(
    timings: CombinedTimings,
    moon_semidiameter_deg: float,
    moon_rate_deg_per_h: float,
    *,
    track_position_angle_deg: float = 90.0,
    offsets: FeatureOffsets | None = None,
    sun_cone_deg: float = 0.0,
    greatest_magnitude: float | None = None,
    greatest_magnitude_sigma: float | None = None,
) -> ChordSolution:
    """Fit the Moon's straight, uniform track across a circular umbra to the timings.

    The Moon's centre moves at ``moon_rate`` along a straight line; at a
    contact its distance from the shadow's axis is ``rho_u + s_M`` (U1, U4)
    or ``rho_u - s_M`` (U2, U3); at a crater timing the crater itself (its
    offset on the disc from ``offsets``) lies on the umbra's edge. The
    unknowns are the time of closest approach, the closest distance
    (central passage is not assumed) and ``rho_u``; they are fitted by
    least squares on the timing residuals. An observed greatest umbral
    magnitude ``(rho_u + s_M - |d|) / (2 s_M)`` adds one more equation (it
    is what fixes a partial eclipse timed only at U1 and U4).

    Parameters
    ----------
    timings : CombinedTimings
    moon_semidiameter_deg : float
        The Moon's angular radius [deg].
    moon_rate_deg_per_h : float
        Its rate relative to the shadow [deg/h].
    track_position_angle_deg : float
        Direction of the Moon's motion relative to the shadow, from north
        through east [deg]; only matters for crater timings.
    offsets : FeatureOffsets, optional
        The craters' places on the disc (zeros for contacts); required when
        there are crater timings.
    sun_cone_deg : float
        The shadow cone's half-angle, s_S - pi_S [deg] (for the craters'
        depth; about 0.26 deg).
    greatest_magnitude, greatest_magnitude_sigma : float, optional
        Observed greatest umbral magnitude and its error [1].

    Returns
    -------
    ChordSolution

    Raises
    ------
    ComputationError
        When the timings cannot fix the three unknowns.

    Examples
    --------
    A straight-track eclipse built by hand: s_M = 0.25 deg, rate 0.5 deg/h,
    umbra 0.7 deg, closest distance 0.2 deg, greatest at t = 0.

    >>> import math
    >>> v, sm, ru, d = 0.5 / 3600, 0.25, 0.7, 0.2
    >>> half = lambda r: math.sqrt(r * r - d * d) / v
    >>> t = [-half(ru + sm), -half(ru - sm), half(ru - sm), half(ru + sm)]
    >>> c = combine_timings(["U1", "U2", "U3", "U4"], [""] * 4, t, [30.0] * 4)
    >>> s = solve_chords(c, sm, 0.5)
    >>> round(s.umbra_radius_deg, 6), round(abs(s.least_distance_deg), 6)
    (0.7, 0.2)
    """
    from scipy.optimize import least_squares

    if not (moon_semidiameter_deg > 0 and moon_rate_deg_per_h > 0):
        raise InputError(
            "moon_semidiameter_deg, moon_rate_deg_per_h: expected positive numbers, got "
            f"{moon_semidiameter_deg}, {moon_rate_deg_per_h}"
        )
    n = len(timings)
    magnitude = greatest_magnitude is not None
    why = _identifiable(timings, magnitude)
    if why:
        raise ComputationError(f"cannot solve the chords: {why}")
    is_crater = np.array([e not in CONTACTS for e in timings.event], bool)
    if offsets is None:
        if np.any(is_crater):
            raise InputError("offsets: crater timings need the craters' places on the disc")
        offsets = FeatureOffsets(np.zeros(n), np.zeros(n), np.zeros(n))
    if magnitude and not (greatest_magnitude_sigma and greatest_magnitude_sigma > 0):
        raise InputError(f"greatest_magnitude_sigma: expected a positive number, got {greatest_magnitude_sigma}")
    v = moon_rate_deg_per_h / 3600.0
    sm = float(moon_semidiameter_deg)
    along, normal = _unit_vectors(track_position_angle_deg)
    sig = timings.sigma_s

    def residuals(p):
        r = _time_residuals(p, timings, sm, v, along, normal, offsets, sun_cone_deg) / sig
        if magnitude:
            m = (p[2] + sm - abs(p[1])) / (2 * sm)
            r = np.append(r, (m - greatest_magnitude) / greatest_magnitude_sigma)
        return r

    guess = _first_guess(timings, sm, v, greatest_magnitude)
    scale = np.array([60.0, 0.01, 0.01])
    best = None
    for sign in (1.0, -1.0) if np.any(is_crater) else (1.0,):
        start = guess * np.array([1.0, sign, 1.0])
        fit = least_squares(residuals, start, x_scale=scale, method="trf", xtol=1e-12, ftol=1e-12, gtol=1e-12)
        if best is None or fit.cost < best.cost - 1e-9:
            best = fit
    p = best.x
    jac = best.jac
    if np.linalg.matrix_rank(jac / scale[None, :] * scale[None, :], tol=1e-8 * np.abs(jac).max()) < 3:
        raise ComputationError("cannot solve the chords: the timings do not fix the track and the umbra")
    cov = np.linalg.pinv(jac.T @ jac)
    m_obs = len(best.fun)
    dof = m_obs - 3
    chi2 = float(np.sum(best.fun**2))
    factor = 1.0
    if dof > 0:
        from scipy.stats import chi2 as chi2_dist

        if chi2_dist.sf(chi2, dof) < SCATTER_SIGNIFICANCE:
            factor = math.sqrt(chi2 / dof)
    time_res = -_time_residuals(p, timings, sm, v, along, normal, offsets, sun_cone_deg)
    mag_res = None
    if magnitude:
        mag_res = float(greatest_magnitude - (p[2] + sm - abs(p[1])) / (2 * sm))
    return ChordSolution(
        closest_approach_s=float(p[0]),
        least_distance_deg=float(p[1]),
        umbra_radius_deg=float(p[2]),
        covariance=cov * factor**2,
        chi2=chi2,
        dof=dof,
        scale=factor,
        residual_s=time_res,
        magnitude_residual=mag_res,
    )


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
    eclipse).

    Examples
    --------
    >>> import math
    >>> v, sm, ru, d = 29.53 / 60 / 3600, 15.289 / 60, 40.697 / 60, 14.426 / 60
    >>> half = lambda r: math.sqrt(r * r - d * d) / v
    >>> t = [-half(ru + sm), -half(ru - sm), half(ru - sm), half(ru + sm)]
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
        f"umbra radius inverted with the {convention} convention (DESIGN 5)",
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
        from scipy.stats import chi2 as chi2_dist

        if chi2_dist.sf(chi2, dof) < SCATTER_SIGNIFICANCE:
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
            from scipy.stats import chi2 as chi2_dist

            if chi2_dist.sf(chi2_f, k - 2) < SCATTER_SIGNIFICANCE:
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
