"""The other ways of recording the noon Sun, brought to the footing of a shadow length.

- **An angle** (a quadrant, a clinometer, a theodolite) is the apparent
  altitude of the limb the instrument was set on: the index correction is
  added, refraction is removed from that limb's ray (Bennett 1982, as for a
  shadow edge), and the limb moved to the centre by the semi-diameter of the
  date. Its error terms: the instrument's reading error (one per reading), the
  judgement of the limb and the index correction (common to a site's
  readings).
- **A timed shadow-tip trace** gives at each point the shadow's length (the
  distance from the point under the tip, found with a plumb line, so a
  leaning rod does) and its direction on the board. The length is a reading
  like any other; the directions against the Sun's azimuth give the board's
  orientation, and morning and afternoon orientations that disagree point to
  a tilted board.
- **A trace without times** gives the shortest shadow of the day: a smooth
  curve (a quartic along the trace's main axis: five terms, as the conic that
  the cone of the Sun's daily path cuts from the board has) is fitted through
  its points and its point nearest the plumb point found; the error comes
  from the points' own scatter about the curve. It is then one reading at
  the site's apparent noon.

Error terms of the traces: the tip reading (or the trace's scatter), the
plumb point (common to a series), and, as for lengths, the gnomon height and
the edge location.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

from firstrung.angles import wrapped_rad
from firstrung.refraction import refraction_from_apparent_deg

#: Signed multiple of the semi-diameter from the Sun's centre to the limb an instrument is set on.
LIMB_SIGN = {"upper": 1.0, "centre": 0.0, "lower": -1.0}

#: One-sigma error of setting an instrument on each part of the Sun, as a fraction of the
#: semi-diameter (common practice: a limb is a sharp edge, the centre of the disc is judged).
LIMB_JUDGEMENT_FRACTION = {"upper": 0.05, "centre": 0.15, "lower": 0.05}

#: One-sigma error of the plumb point's place on the board [m] (common practice: a plumb bob
#: marked to about a millimetre).
PLUMB_SIGMA_M = 0.001

#: Sigma of a tilted-board warning: morning and afternoon board orientations that differ by
#: more than this many sigma.
TILT_WARNING_SIGMA = 4.0

#: Each form's reading term in the error budget.
READING_SOURCE = {"length": "shadow reading", "angle": "instrument", "trace": "tip reading", "untimed": "trace scatter"}


def _per_name(names, table: dict) -> np.ndarray:
    names = np.asarray(names, dtype=object)
    labels, inverse = np.unique(names.astype(str), return_inverse=True)
    return np.array([table.get(n, np.nan) for n in labels], dtype=float)[inverse].reshape(names.shape)


def angle_centre_altitude_deg(read_deg, index_correction_deg, limb, semidiameter_deg, temperature_c, pressure_hpa):
    """True (airless) altitude of the Sun's centre from an instrument's reading of a limb [deg].

    >>> round(float(angle_centre_altitude_deg(44.7, 0.05, "lower", 0.2667, 10.0, 1010.0)), 4)
    45.0
    """
    apparent = np.asarray(read_deg, float) + np.asarray(index_correction_deg, float)
    refraction = refraction_from_apparent_deg(np.clip(apparent, 0.5, 90.0), temperature_c, pressure_hpa)
    return apparent - refraction - _per_name(limb, LIMB_SIGN) * np.asarray(semidiameter_deg, float)


def reading_sources(form, timed) -> np.ndarray:
    """The error-budget name of each reading's own error."""
    form = np.asarray(form).astype(str, copy=False)
    untimed = (form == "trace") & ~np.asarray(timed, bool)  # a trace without times: its own source
    # each name compared in place, not a text array of the kinds (a million readings: 200 MB of it)
    out = np.full(untimed.shape, np.nan)
    for i, name in enumerate(READING_SOURCE):
        out[untimed if name == "untimed" else (form == name) & ~untimed] = i
    return out.astype(int)


@dataclass(frozen=True)
class FormTerms:
    """Per-reading altitude of the centre for angle rows, and every form's own error terms [rad]."""

    altitude_deg: np.ndarray  # NaN where not an angle row
    refraction_deg: np.ndarray
    instrument_rad: np.ndarray
    common_rad: dict  # name -> per-reading one-sigma of errors common to a site's readings


def form_terms(readings, semidiameter_deg, temperature_c, pressure_hpa) -> FormTerms:
    """Angles to the centre's altitude, and the error terms of angles and traces."""
    form = np.asarray(readings.form).astype(str)
    angle = form == "angle"
    n = len(form)
    altitude = np.full(n, np.nan)
    refraction = np.zeros(n)
    instrument = np.zeros(n)
    common: dict[str, np.ndarray] = {}
    if angle.any():
        read = np.asarray(readings.altitude_read_deg, float)[angle]
        index = np.asarray(readings.index_correction_deg, float)[angle]
        apparent = np.clip(read + index, 0.5, 90.0)
        t, p = np.asarray(temperature_c)[angle], np.asarray(pressure_hpa)[angle]
        refraction[angle] = refraction_from_apparent_deg(apparent, t, p)
        altitude[angle] = angle_centre_altitude_deg(read, index, np.asarray(readings.limb)[angle],
                                                    np.asarray(semidiameter_deg)[angle], t, p)
        instrument[angle] = np.radians(np.asarray(readings.angle_sigma_deg, float)[angle])
        limb_fraction = _per_name(np.asarray(readings.limb)[angle], LIMB_JUDGEMENT_FRACTION)
        common["limb judgement"] = np.zeros(n)
        common["limb judgement"][angle] = np.radians(limb_fraction * np.asarray(semidiameter_deg)[angle])
        common["index correction"] = np.where(angle, np.radians(np.asarray(readings.index_sigma_deg, float)), 0.0)
    trace = form == "trace"
    if trace.any():
        h = np.asarray(readings.gnomon_m, float)
        length = np.asarray(readings.shadow_m, float)
        common["plumb point"] = np.where(trace, h * PLUMB_SIGMA_M / (h**2 + length**2), 0.0)
    return FormTerms(altitude, refraction, instrument, common)


# --- traces without times -----------------------------------------------------------------

#: Terms of the curve fitted along a trace without times: a quartic, five terms as a conic through the
#: tip's path has; it follows the path to a few micrometres over +/- 2 h and is far steadier under noise.
TRACE_CURVE_TERMS = 5

#: Points on the fitted curve searched for the shortest shadow.
_CURVE_SAMPLES = 4001


def _trace_frame(x, y):
    """The trace's centre, its main axis and the cross axis (principal axes of its points)."""
    centre = np.array([x.mean(), y.mean()])
    _, _, vt = np.linalg.svd(np.stack([x - centre[0], y - centre[1]], axis=1), full_matrices=False)
    return centre, vt[0], vt[1]


def shortest_shadow_m(x_m, y_m):
    """The shortest distance from the plumb point to a trace's fitted curve [m], and whether it lies inside
    the trace.

    The points are taken in the trace's principal axes (``u`` along, ``v``
    across) and ``v`` fitted by a quartic in ``u`` (least squares); the
    distance from the plumb point is minimised along the curve. ``y_m`` may
    carry a leading axis of perturbed copies of the points' cross offsets
    sharing ``x_m``'s frame (see :func:`shortest_shadow_with_sigma`).

    >>> t = np.radians(np.linspace(-30, 30, 7))
    >>> x, y = np.tan(t), np.ones_like(t)  # a straight trace one metre from the plumb point
    >>> round(float(shortest_shadow_m(x, y)[0][0]), 9)
    1.0
    """
    x, y = np.atleast_2d(x_m), np.atleast_2d(y_m)
    x, y = np.broadcast_arrays(x, y)
    centre, along, across = _trace_frame(x[0], y[0])
    u = (x - centre[0]) * along[0] + (y - centre[1]) * along[1]
    v = (x - centre[0]) * across[0] + (y - centre[1]) * across[1]
    low, high = u.min(-1), u.max(-1)
    span = np.maximum(high - low, 1e-12)
    middle = 0.5 * (low + high)
    grid = np.linspace(-0.75, 0.75, _CURVE_SAMPLES)  # the trace's span widened by a quarter each side
    lengths, inside = np.empty(x.shape[0]), np.empty(x.shape[0], bool)
    for k in range(x.shape[0]):  # a handful of copies: one per point when the sigma is propagated
        scaled = (u[k] - middle[k]) / span[k]
        coefficients = np.polynomial.polynomial.polyfit(scaled, v[k], min(TRACE_CURVE_TERMS, u.shape[-1]) - 1)
        curve_v = np.polynomial.polynomial.polyval(grid, coefficients)
        curve_u = middle[k] + grid * span[k]
        r = np.hypot(centre[0] + curve_u * along[0] + curve_v * across[0],
                     centre[1] + curve_u * along[1] + curve_v * across[1])
        i = int(np.argmin(r))
        if 0 < i < grid.size - 1:  # parabola through the three nearest samples
            d1, d2 = r[i + 1] - r[i - 1], r[i + 1] - 2 * r[i] + r[i - 1]
            lengths[k] = r[i] - d1 * d1 / (8 * d2) if d2 > 0 else r[i]
        else:
            lengths[k] = r[i]
        inside[k] = abs(grid[i]) <= 0.5
    return lengths, inside


def trace_scatter_m(x_m, y_m) -> float:
    """RMS distance of a trace's points across its fitted curve [m] (NaN with fewer than 7 points).

    >>> t = np.radians(np.linspace(-40, 40, 9))
    >>> round(trace_scatter_m(np.tan(t), np.ones_like(t) + 0.001 * (-1) ** np.arange(9)), 4)
    0.0013
    """
    x, y = np.asarray(x_m, float), np.asarray(y_m, float)
    return float(_trace_fits(x[None, :], y[None, :])["scatter_m"][0])


#: Traces fitted at once (each a row of a few thousand curve samples: a few megabytes a batch).
_TRACES_PER_BATCH = 256


def _trace_fits(x, y) -> dict:
    """The fitted curves of ``T`` traces of ``n`` points each (``x``, ``y``: (T, n) [m]), all at once.

    Each trace in its principal axes (``u`` along, ``v`` across), ``v`` a
    quartic in ``u`` scaled to the trace's span, by least squares through the
    pseudo-inverse of its Vandermonde matrix (the same for every copy of the
    trace whose points move across it). Returns the frame, the scaled
    positions, the pseudo-inverse ``(T, terms, n)``, the coefficients and the
    RMS scatter across the curve (NaN below 7 points).
    """
    t, n = x.shape
    centre = np.stack([x.mean(1), y.mean(1)], axis=1)
    dx, dy = x - centre[:, :1], y - centre[:, 1:]
    cov = np.stack([np.stack([(dx * dx).sum(1), (dx * dy).sum(1)], -1),
                    np.stack([(dx * dy).sum(1), (dy * dy).sum(1)], -1)], axis=1)
    _, vectors = np.linalg.eigh(cov)  # ascending: the main axis last
    along, across = vectors[:, :, 1], vectors[:, :, 0]
    u = dx * along[:, :1] + dy * along[:, 1:]
    v = dx * across[:, :1] + dy * across[:, 1:]
    low, high = u.min(1), u.max(1)
    span = np.maximum(high - low, 1e-12)
    middle = 0.5 * (low + high)
    scaled = (u - middle[:, None]) / span[:, None]
    terms = min(TRACE_CURVE_TERMS, n)
    vander = scaled[:, :, None] ** np.arange(terms)
    pinv = np.linalg.pinv(vander)
    coefficients = np.einsum("tkn,tn->tk", pinv, v)
    residual = v - np.einsum("tnk,tk->tn", vander, coefficients)
    dof = n - TRACE_CURVE_TERMS
    scatter = np.sqrt((residual**2).sum(1) / dof) if n >= TRACE_CURVE_TERMS + 2 else np.full(t, np.nan)
    return {"centre": centre, "along": along, "across": across, "middle": middle, "span": span,
            "pinv": pinv, "coefficients": coefficients, "scatter_m": scatter}


def shortest_shadows(x_m, y_m, stated_sigma_m):
    """Shortest shadow of each of ``T`` traces of ``n`` points (``(T, n)`` arrays [m]), vectorised.

    Returns (length [m], one-sigma [m], passes noon, point error used [m]),
    each of shape ``(T,)``. The curve is sampled along the trace's span
    widened by a quarter each side, its point nearest the plumb point refined
    by a parabola through the three nearest samples; a minimum in the widened
    parts means the trace does not pass noon. The point error is the trace's
    own scatter about its curve (7 or more points), else the stated reading
    error; moving one point across the trace changes the shortest shadow, to
    first order, by the curve's change there along the line of sight from the
    plumb point (the minimum itself moves only to second order), and the sigma
    is the root sum of squares of those changes (linear propagation).
    """
    x, y = np.atleast_2d(np.asarray(x_m, float)), np.atleast_2d(np.asarray(y_m, float))
    t = x.shape[0]
    stated = np.broadcast_to(np.asarray(stated_sigma_m, float), (t,))
    lengths, sigmas, inside, points = np.empty(t), np.empty(t), np.empty(t, bool), np.empty(t)
    grid = np.linspace(-0.75, 0.75, _CURVE_SAMPLES)
    h = grid[1] - grid[0]
    for b in range(0, t, _TRACES_PER_BATCH):  # a batch of traces at a time: memory, not Python, per trace
        sl = slice(b, min(b + _TRACES_PER_BATCH, t))
        f = _trace_fits(x[sl], y[sl])
        c, a, e, k = f["centre"], f["along"], f["across"], f["coefficients"]
        powers = grid[:, None] ** np.arange(k.shape[1])
        curve_v = k @ powers.T
        curve_u = f["middle"][:, None] + grid * f["span"][:, None]
        r = np.hypot(c[:, :1] + curve_u * a[:, :1] + curve_v * e[:, :1],
                     c[:, 1:] + curve_u * a[:, 1:] + curve_v * e[:, 1:])
        i = np.argmin(r, axis=1)
        rows = np.arange(r.shape[0])
        interior = (i > 0) & (i < grid.size - 1)
        j = np.clip(i, 1, grid.size - 2)
        r0, rm, rp = r[rows, j], r[rows, j - 1], r[rows, j + 1]
        d1, d2 = rp - rm, rp - 2 * r0 + rm
        curved = interior & (d2 > 0)
        safe = np.where(curved, d2, 1.0)
        lengths[sl] = np.where(curved, r0 - d1 * d1 / (8 * safe), r[rows, i])
        inside[sl] = np.abs(grid[i]) <= 0.5
        at = grid[i] + np.where(curved, -h * d1 / (2 * safe), 0.0)  # the nearest point, refined
        g = at[:, None] ** np.arange(k.shape[1])
        v_at = (g * k).sum(1)
        u_at = f["middle"] + at * f["span"]
        px = c[:, 0] + u_at * a[:, 0] + v_at * e[:, 0]
        py = c[:, 1] + u_at * a[:, 1] + v_at * e[:, 1]
        toward = (px * e[:, 0] + py * e[:, 1]) / np.hypot(px, py)  # d(length) / d(curve's v) there
        change = toward[:, None] * np.einsum("tk,tkn->tn", g, f["pinv"])  # per metre a point moves across
        point = np.where(np.isfinite(f["scatter_m"]), f["scatter_m"], stated[sl])
        sigmas[sl] = point * np.sqrt((change**2).sum(1))
        points[sl] = point
    return lengths, sigmas, inside, points


def shortest_shadow_with_sigma(x_m, y_m, stated_sigma_m):
    """Shortest shadow [m], its one-sigma [m], whether the trace passes noon, and the point error used [m].

    One trace of :func:`shortest_shadows`.

    A straight trace one metre from the plumb point, five points read to 2 mm:
    the nearest point is the middle one, which alone moves the shortest shadow.

    >>> t = np.radians(np.linspace(-30, 30, 5))
    >>> length, sigma, inside, _ = shortest_shadow_with_sigma(np.tan(t), np.ones_like(t), 0.002)
    >>> round(length, 9), inside, round(sigma, 6)
    (1.0, True, 0.002)
    """
    lengths, sigmas, inside, points = shortest_shadows(np.asarray(x_m, float)[None, :],
                                                       np.asarray(y_m, float)[None, :], stated_sigma_m)
    return float(lengths[0]), float(sigmas[0]), bool(inside[0]), float(points[0])


def collapse_untimed_traces(sites, readings):
    """Each trace without times (one site, one day) as one reading of its shortest shadow at apparent noon.

    Returns the readings (the others unchanged, in their order, the new ones
    after them) and the number of traces that do not pass noon (left out).
    Traces with the same number of points are fitted together.
    """
    from firstrung import ephemeris

    untimed = (np.asarray(readings.form).astype(str) == "trace") & ~np.asarray(readings.timed, bool)
    if not untimed.any():
        return readings, 0
    idx = np.asarray(readings.site_index, int)
    lon = np.array([s.longitude_deg for s in sites])[idx]
    local = (readings.time_utc.astype("datetime64[ms]")
             + np.round(lon / 15.0 * 3600e3).astype(np.int64).astype("timedelta64[ms]")).astype("datetime64[D]")
    keys = idx.astype(np.int64) * 10**6 + local.astype(np.int64)
    rows = np.flatnonzero(untimed)
    groups, inverse, counts = np.unique(keys[rows], return_inverse=True, return_counts=True)
    by_trace = rows[np.argsort(inverse, kind="stable")]  # each trace's rows together, in the log's order
    starts = np.concatenate([[0], np.cumsum(counts)[:-1]])
    lengths, sigmas, inside = np.empty(groups.size), np.empty(groups.size), np.empty(groups.size, bool)
    tip_x, tip_y = np.asarray(readings.tip_x_m, float), np.asarray(readings.tip_y_m, float)
    for n in np.unique(counts):  # one batch per number of points
        traces = np.flatnonzero(counts == n)
        members = by_trace[starts[traces][:, None] + np.arange(n)]
        lengths[traces], sigmas[traces], inside[traces], _ = shortest_shadows(
            tip_x[members], tip_y[members], np.asarray(readings.shadow_sigma_m, float)[members[:, 0]])
    missed = int((~inside).sum())
    first = by_trace[starts[inside]]
    lengths, sigmas = lengths[inside], sigmas[inside]
    site_of = idx[first]
    lat = np.array([s.latitude_deg for s in sites])[site_of]
    lon_g = np.array([s.longitude_deg for s in sites])[site_of]
    elev = np.array([s.elevation_m for s in sites])[site_of]
    transit = ephemeris.solar_transit(local[first], lat, lon_g, elev)
    keep = np.flatnonzero(~untimed)
    order = np.concatenate([keep, first])
    changes = {}
    for name, values in readings.__dict__.items():
        if isinstance(values, np.ndarray) and values.shape == (len(readings.form),):
            changes[name] = values[order]
    changes["time_utc"] = np.concatenate([readings.time_utc[keep], transit.time_utc.astype(readings.time_utc.dtype)])
    changes["shadow_m"] = np.concatenate([readings.shadow_m[keep], np.asarray(lengths, float)])
    changes["shadow_sigma_m"] = np.concatenate([readings.shadow_sigma_m[keep], np.asarray(sigmas, float)])
    return replace(readings, **changes), missed


# --- timed traces: the board ---------------------------------------------------------------


@dataclass(frozen=True)
class Board:
    """How a timed trace's board lay: the azimuth of its x axis, its axes' handedness, and where its shadows'
    directions put noon against where their lengths put it (a tilted board makes them disagree)."""

    orientation_deg: float
    orientation_sigma_deg: float
    mirrored: bool
    clock_from_directions_s: float
    clock_from_directions_sigma_s: float
    directions_minus_lengths_s: float | None
    warning: str | None


def board_orientation(tip_x_m, tip_y_m, sun_azimuth_deg, azimuth_rate_deg_per_s, point_sigma_m,
                      clock_from_lengths_s=None, clock_from_lengths_sigma_s=None) -> Board:
    """The board's orientation and the clock from the directions of a timed trace's shadows.

    The shadow points away from the Sun (azimuth + 180 deg). With board axes
    x, y turned so that x points to azimuth ``o``: a right-handed board (y 90
    deg anticlockwise from x seen from above) has shadow azimuth ``o -
    atan2(y, x)``; a mirrored one ``o + atan2(y, x)``; the handedness is the
    one whose orientations agree best. ``o`` and the clock's correction
    ``u`` (seconds to add to the logged times) are fitted together, by
    weighted least squares: the Sun's azimuth runs fastest at noon, which
    tells a clock error from a turned board. On a level board the lengths'
    clock (``clock_from_lengths_s``, from the series fit) agrees with it; a
    board tilted east-west shortens the shadows on one side of noon and moves
    the lengths' noon, and a disagreement of more than
    :data:`TILT_WARNING_SIGMA` sigma is named.

    >>> az = np.array([150.0, 170.0, 190.0, 210.0])
    >>> s = np.radians(az + 180.0 - 30.0)   # x axis to azimuth 30 deg, right-handed
    >>> b = board_orientation(np.cos(-s), np.sin(-s), az, np.array([0.004, 0.006, 0.006, 0.004]), 0.001)
    >>> round(b.orientation_deg, 6), b.mirrored, abs(round(b.clock_from_directions_s, 6))
    (30.0, False, 0.0)
    """
    x, y = np.asarray(tip_x_m, float), np.asarray(tip_y_m, float)
    board_angle = np.degrees(np.arctan2(y, x))
    shadow_azimuth = np.asarray(sun_azimuth_deg, float) + 180.0
    rate = np.asarray(azimuth_rate_deg_per_s, float)
    sigma_deg = np.degrees(point_sigma_m / np.maximum(np.hypot(x, y), 1e-9))
    best = None
    for mirrored, sign in ((False, 1.0), (True, -1.0)):
        orientation = shadow_azimuth + sign * board_angle
        mean = np.angle(np.mean(np.exp(1j * np.radians(orientation))))
        spread = np.degrees(wrapped_rad(np.radians(orientation) - mean))
        rms = float(np.sqrt(np.mean(spread**2)))
        if best is None or rms < best[0]:
            best = (rms, mirrored, np.degrees(mean), spread)
    _, mirrored, mean_deg, spread = best
    # spread_i = o' - rate_i u, with o' the orientation's offset from the mean
    w = 1.0 / sigma_deg**2
    design = np.stack([np.ones_like(rate), -rate], axis=1)
    normal = design.T @ (w[:, None] * design)
    covariance = np.linalg.pinv(normal)
    offset, clock = covariance @ (design.T @ (w * spread))
    clock_sigma = float(np.sqrt(max(covariance[1, 1], 0.0)))
    difference, warning = None, None
    if clock_from_lengths_s is not None:
        difference = float(clock - clock_from_lengths_s)
        combined = float(np.hypot(clock_sigma, clock_from_lengths_sigma_s or 0.0))
        if abs(difference) > TILT_WARNING_SIGMA * combined and abs(difference) > 1.0:
            warning = (f"the shadows' directions put noon {abs(difference) / 60:.1f} min "
                       f"{'later' if difference > 0 else 'earlier'} than their lengths do (more than "
                       f"{TILT_WARNING_SIGMA:g} sigma): the board is probably tilted east-west; level it")
    return Board(float((mean_deg + offset) % 360.0), float(np.sqrt(max(covariance[0, 0], 0.0))), bool(mirrored),
                 float(clock), clock_sigma, difference, warning)


def azimuth_rate_deg_per_s(latitude_rad, declination_rad, hour_angle_rad, hour_angle_rate_rad_s):
    """The Sun's rate in azimuth [deg/s], by a central difference of the spherical formula over +/- 30 s.

    At noon on the equator of the sky it is the hour-angle rate over sin(latitude)
    (15.0 deg/h / sin 46.2 deg = 0.346 deg/min):

    >>> round(float(azimuth_rate_deg_per_s(np.radians(46.2), 0.0, 0.0, 7.27e-5)) * 60, 3)
    0.346
    """
    def azimuth(h):
        return np.arctan2(-np.cos(declination_rad) * np.sin(h), np.sin(declination_rad) * np.cos(latitude_rad)
                          - np.cos(declination_rad) * np.sin(latitude_rad) * np.cos(h))

    step = hour_angle_rate_rad_s * 30.0
    change = wrapped_rad(azimuth(hour_angle_rad + step) - azimuth(hour_angle_rad - step))
    return np.degrees(change) / 60.0


def series_boards(prep, clock_s, clock_sigma_s) -> dict:
    """The board of every series holding a timed trace (three or more points): series index -> Board."""
    readings = prep.readings
    timed_trace = (np.asarray(readings.form).astype(str) == "trace") & np.asarray(readings.timed, bool)
    timed_trace = timed_trace[prep.keep]
    boards = {}
    if not timed_trace.any():
        return boards
    x, y = np.asarray(readings.tip_x_m)[prep.keep], np.asarray(readings.tip_y_m)[prep.keep]
    sigma = np.asarray(readings.shadow_sigma_m, float)[prep.keep]
    latitude = np.radians(np.array([s.latitude_deg for s in prep.sites]))[prep.group_site[prep.group]]
    rate = azimuth_rate_deg_per_s(latitude, prep.declination_rad, prep.hour_angle_rad, prep.hour_angle_rate)
    groups = prep.group[timed_trace]
    order = np.flatnonzero(timed_trace)[np.argsort(groups, kind="stable")]
    bounds = np.flatnonzero(np.diff(np.sort(groups))) + 1
    for k in np.split(order, bounds):  # one per series (site and day)
        if k.size >= 3:
            g = int(prep.group[k[0]])
            boards[g] = board_orientation(x[k], y[k], prep.sun_azimuth_deg[k], rate[k], sigma[k],
                                          float(clock_s[g]), float(clock_sigma_s[g]))
    return boards
