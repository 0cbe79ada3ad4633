"""Contact and crater timings as chords of the Moon's straight, uniform track across a circular umbra:\ncombining repeated timings, and solving for the umbra's radius without assuming a central passage.\n"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from firstrung.errors import ComputationError, InputError

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


@dataclass(frozen=True)
class CombinedTimings:
    """The timings of one eclipse combined per event: one entry per (event, feature).

    ``time_s`` is the weighted mean of the accepted timings [s from the
    caller's epoch]; ``sigma_s`` its one-sigma error, the propagated error,
    scaled up when the observers' scatter is significantly larger. ``used``/``rejected`` hold the labels of the
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
    averaged with weights 1/sigma^2; the combined sigma is the propagated
    one, scaled by sqrt(chi^2 / (n - 1)) when the timings scatter more than
    their errors allow (a 5 % test).

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
        sigma = internal
        if n >= 2:
            # the observers' scatter widens the error only when it exceeds what their stated errors
            # allow (a 5 % chi^2 test, as for the fits): taking the larger of the two always made
            # the intervals wide (coverage 0.74-0.80 for a 68 % interval)
            from scipy.stats import chi2 as chi2_dist

            chi2 = float(np.sum(w * (tk[keep] - mean) ** 2))
            if chi2_dist.sf(chi2, n - 1) < SCATTER_SIGNIFICANCE:
                sigma = internal * math.sqrt(chi2 / (n - 1))
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
        from firstrung.uncertainty import chi2_survival

        if chi2_survival(chi2, dof) < SCATTER_SIGNIFICANCE:
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
