"""The shadow check's single hypotheses: each one's statistic, fit and separation from the logged reading.

Every hypothesis of :data:`~firstrung.methods.shadows.check_statistics.HYPOTHESES` is tried on the rows of
the series that need one (:func:`_single_hypotheses`). Most series cannot be explained by most
hypotheses: a series whose statistic under a hypothesis is sure to stay above its statistic as logged
less one is never chosen (see :func:`_kept_z`), and such series are found before the hypothesis is
computed on their rows wherever a cheap bound shows it:

- a hypothesis that moves the Sun (a clock shifted, local time typed as UTC, a coordinate's sign) puts
  the Sun within a stated angle of a place derived from the logged reading's (:func:`moved_altitude`:
  the hour angle moved by the shift at the mean solar rate or the sign changed, the declination kept;
  the angle covers the Sun's greatest rates of declination and of hour angle over the shift, its
  parallax and the rounding), so each row's residual, its rate and its error lie within known
  intervals, and the lower bound of :func:`~firstrung.methods.shadows.series_layout.hopeless_series`
  taken over those intervals (:meth:`_Screen.hopeless`) leaves out the series it proves hopeless. The
  Sun is then computed only for the rows of the other series, each with the numbers the whole set of
  times gives it (:func:`~firstrung.methods.shadows.check_statistics.distinct_sun` with ``rows``).

The bound over intervals is never above the bound of the exact values, so a series left out is one the
exact test leaves out too: the statistics, fits and verdicts are the same numbers as with every row
computed (tests/test_check_hypotheses.py holds the angle against the ephemeris and the verdicts).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from firstrung.constants import ASTRONOMICAL_UNIT_KM, WGS84_SEMI_MAJOR_AXIS_M
from firstrung.methods.shadows.altitude import (
    BOARD_LEVEL_SIGMA_RAD,
    EDGE_LIMB_SIGN,
    EDGE_LOCATION_FRACTION,
    GNOMON_PLUMB_SIGMA_RAD,
    REFRACTION_SIGMA_FRACTION_MEASURED,
    REFRACTION_SIGMA_FRACTION_STANDARD,
    penumbra_width_m,
)
from firstrung.methods.shadows.check_statistics import (
    _HOUR_ANGLE_RATE_RAD_S,
    CHECK_CLOCK_SIGMA_S,
    HUBER_SIGMA,
    HYPOTHESES,
    READING_TIME_SIGMA_S,
    SeriesStatistic,
    _error_terms,
    _observed,
    distinct_sun,
    edge_groups,
    equivalent_length_m,
    hopeless,
    retyped_angle_deg,
    series_statistic,
    sun_altitude_rad,
)
from firstrung.methods.shadows.inputs import ShadowReadings
from firstrung.methods.shadows.series_layout import SeriesLayout
from firstrung.refraction import (
    LOWEST_REFRACTED_ALTITUDE_DEG,
    PRESSURE_RANGE_HPA,
    TEMPERATURE_RANGE_C,
    refraction_from_apparent_deg,
)

#: A hypothesis is tried only when the data it predicts would score at least
#: this under the logged reading (it changes the prediction by 4 sigma or more).
MIN_SEPARATION = 16.0
#: Decrease of the statistic an explanation must bring (likelihood ratio e^6, about 400).
DECISIVE_IMPROVEMENT = 12.0
#: The winning explanation must beat every other (not equivalent) one by this.
DISTINCT_MARGIN = 10.0


@dataclass(frozen=True)
class _Inputs:
    """The rows the hypotheses are tried on and what each needs of them."""

    rows: ShadowReadings
    group: np.ndarray
    n_groups: int
    t: np.ndarray
    lat: np.ndarray
    lon: np.ndarray
    sign: np.ndarray
    sd: np.ndarray
    temperature: np.ndarray
    pressure: np.ndarray
    measured_weather: np.ndarray
    zone_offset_h: np.ndarray
    hour_angle_rad: np.ndarray | None = None  # the logged reading's, and its sun_altitude_rad parts
    sun_parts: dict | None = None


def _single_hypotheses(x: _Inputs, residual0, pred0, rate0, obs0, refr0, rand0, sys0, distinct0=None, edges0=None,
                       *, base_statistic=None, sel=None, width0=None):
    """Each single hypothesis' statistic, fit and separation from the logged reading, per series of ``x``.

    ``distinct0``, ``edges0``, ``width0``: the geocentric Sun of ``x.t``, the rows' edge groups and the penumbra's
    width at the logged reading, when known. The
    geocentric Sun is computed once per time shift (a coordinate's sign keeps the times), the penumbra's
    width once, and a hypothesis that separates from the logged reading in no series is not fitted
    (:func:`_decide` never takes it).

    ``base_statistic`` (per series of ``x``, as logged) and ``sel`` (the log's row of each row of ``x``):
    each fit keeps its normalised residuals only for the series where :func:`_decide` could choose it
    (separated and within reach of a decisive improvement, see :func:`_kept_z`), as :class:`_RowsOf`
    indexed by the log's rows; a long log then holds a few of its rows per hypothesis, not all of them.
    """
    rows, n = x.rows, len(x.rows)
    if n == 0:  # no series needs a hypothesis (a log of one reading that fits): none is tried
        return [None] * len(HYPOTHESES), [None] * len(HYPOTHESES), [np.zeros(x.n_groups)] * len(HYPOTHESES)
    pred0_deg = np.degrees(pred0)
    distinct0 = distinct_sun(x.t) if distinct0 is None else distinct0
    edges0 = edge_groups(rows.edge) if edges0 is None else edges0
    width0 = penumbra_width_m(rows.gnomon_m, np.clip(pred0_deg, 1.0, 89.0), x.sd) if width0 is None else width0
    time_sigma0 = (rate0 * READING_TIME_SIGMA_S) ** 2
    sqrt_rand0 = np.sqrt(rand0)
    series = SeriesLayout(x.group, x.n_groups)  # every fit below is over the same series
    has_angles = bool(np.isfinite(rows.altitude_read_deg).any())
    one_edge = edges0[0][0] if len(edges0) == 1 and edges0[0][1] is None else None  # the edge of every row
    beyond = None if base_statistic is None else base_statistic - _REACHABLE_IMPROVEMENT
    screen = None if beyond is None or x.sun_parts is None else _Screen(x.group, x.n_groups, beyond)
    reading_variance, rate_size = rand0 - time_sigma0, np.abs(rate0)
    if screen is not None:
        screen.share(reading_variance, rate_size, sys0)

    def moved_sun(h, shift_ms, uniform, t_h):
        """The Sun under a hypothesis that moves it and the series it can matter for (None: every series),
        computed on their rows and on the rows that may hold the largest residual (see :func:`_exact_rows`);
        the other rows get the observed altitude (a residual of zero)."""
        lat, lon = x.lat * h.latitude_sign, x.lon * h.longitude_sign
        kept = rows_exact = None
        if screen is not None and _worth_bounding(h, screen):
            shift_s = shift_ms[0] / 1000.0 if uniform else shift_ms / 1000.0
            hour_angle = x.hour_angle_rad + shift_s * _HOUR_ANGLE_RATE_RAD_S if h.moves_time else x.hour_angle_rad
            if h.longitude_sign != 1.0:
                hour_angle = hour_angle - 2.0 * np.radians(x.lon)
            parts = x.sun_parts
            alt, within, rate_max = moved_altitude(parts["sin_term"], parts["cos_factor"], parts["cos_lat"],
                                                   hour_angle, shift_s, h.latitude_sign)
            alt -= obs0
            alt *= -1.0  # the residual obs - alt
            kept = ~screen.hopeless(alt, within, rate_max, reading_variance,
                                    reading_variance + (rate_max * READING_TIME_SIGMA_S) ** 2, sys0,
                                    key=h.hours if h.moves_time and uniform else None)
            del rate_max
            if not kept.any():
                return None, None, kept
            # most rows kept: all of them computed (the same numbers; a part costs copies for little)
            kept = None if screen.count[kept].sum() > _MOST_ROWS * n else kept
            rows_exact = None if kept is None else _exact_rows(kept[x.group], alt, within)
        same_lat = h.latitude_sign == 1.0 and x.sun_parts is not None  # the latitudes' sine and cosine are known
        terms = (x.sun_parts["sin_lat"], x.sun_parts["cos_lat"]) if same_lat else None
        pred, rate = moved_sun_rows(shift_ms, uniform, t_h, lat, lon, rows_exact, terms)
        return pred, rate, kept

    def moved_sun_rows(shift_ms, uniform, t_h, lat, lon, rows_kept, terms):
        if rows_kept is None:
            distinct = distinct_sun(None, int(shift_ms[0]), like=distinct0) if uniform else distinct_sun(t_h)
            return sun_altitude_rad(None, lat, lon, distinct=distinct, latitude_terms=terms)[:2]
        if uniform:
            distinct = distinct_sun(None, int(shift_ms[0]), like=distinct0, rows=rows_kept)
        else:
            whole = distinct_sun(t_h)
            distinct = (whole[0], whole[1], whole[2][rows_kept], whole[3])
        part_terms = None if terms is None else (terms[0][rows_kept], terms[1][rows_kept])
        part_pred, part_rate, _, _ = sun_altitude_rad(None, lat[rows_kept], lon[rows_kept], distinct=distinct,
                                                      latitude_terms=part_terms)
        pred, rate = obs0.copy(), rate0.copy()
        pred[rows_kept], rate[rows_kept] = part_pred, part_rate
        return pred, rate

    unit_systematic: list = []  # the bound of a length-unit hypothesis' systematic variance, once on first use

    def unit_rows(factor, part):
        """A length unit's observed altitude, random and systematic variance on the rows ``part``."""
        some = rows.select(part)
        length = some.shadow_m / factor
        obs_part, refr = _observed(some, length, x.sign[part], x.sd[part], x.temperature[part], x.pressure[part])
        rand_part, sys_part = _error_terms(some, length, pred0_deg[part], x.sd[part], refr,
                                           x.measured_weather[part], width_m=width0[part])
        obs, rand, sysv = pred0.copy(), rand0.copy(), sys0.copy()
        obs[part], rand[part], sysv[part] = obs_part, rand_part + time_sigma0[part], sys_part
        return obs, rand, sysv

    def one(h):  # a hypothesis, vectorised over every row
        pred, rate, obs, rand, sysv = pred0, rate0, obs0, rand0, sys0
        kept = None
        if h.moves_time or h.longitude_sign != 1.0 or h.latitude_sign != 1.0:
            shift_h = -x.zone_offset_h if h.local_as_utc else np.full(n, h.hours)
            shift_ms = np.round(shift_h * 3600e3).astype(np.int64)
            uniform = bool(np.all(shift_ms == shift_ms[0]))  # n > 0: the function returned early otherwise
            # the times moved (of one shift: the ends of the distinct times, which are sorted)
            t_h = distinct0[3][[0, -1]] + np.timedelta64(int(shift_ms[0]) * 1000, "us") if uniform else (
                x.t + shift_ms.astype("timedelta64[ms]"))
            as_logged = uniform and shift_ms[0] == 0 and h.latitude_sign == 1.0 and h.longitude_sign == 1.0
            if as_logged and h.factor == 1.0 and h.edge is None and h.angle is None or not _in_span(t_h):
                # the logged reading itself (local time typed as UTC where no site keeps a zone), or times
                # outside the ephemeris: never decisive
                return None, None, np.zeros(x.n_groups)
            pred, rate, kept = moved_sun(h, shift_ms, uniform, t_h)
            if pred is None:  # hopeless in every series
                return None, None, np.zeros(x.n_groups)
            rand = rand0 - time_sigma0 + (rate * READING_TIME_SIGMA_S) ** 2
        if h.factor != 1.0:
            if screen is not None and not has_angles:  # (an angle's systematic terms are not bounded here)
                if not unit_systematic:
                    unit_systematic.append(unit_systematic_bound(rows, width0))
                    screen.share(unit_systematic[0])
                residual_mid, within, variance = unit_bounds(rows, h.factor, x.sign, x.sd, pred0, time_sigma0)
                kept = ~screen.hopeless(residual_mid, within, rate_size, variance, variance,
                                        unit_systematic[0])
                del variance
                if not kept.any():
                    return None, None, np.zeros(x.n_groups)
            if kept is None or kept.all():
                length = rows.shadow_m / h.factor
                obs, refr = _observed(rows, length, x.sign, x.sd, x.temperature, x.pressure)
                rand, sysv = _error_terms(rows, length, pred0_deg, x.sd, refr, x.measured_weather, edge=edges0,
                                          width_m=width0)
                rand = rand + time_sigma0
            else:  # the rows of the series it can matter for and those that may hold the largest residual
                obs, rand, sysv = unit_rows(h.factor, _exact_rows(kept[x.group], residual_mid, within))
        if (h.angle is not None and not has_angles) or (h.edge is not None and one_edge == h.edge):
            return None, None, np.zeros(x.n_groups)  # no angle to retype, or the edge every row marks: as logged
        if h.angle is not None:
            angle = np.isfinite(rows.altitude_read_deg)
            retyped = retyped_angle_deg(rows.altitude_read_deg, h.angle) + rows.index_correction_deg
            length = np.where(angle, equivalent_length_m(retyped), rows.shadow_m)
            obs, refr = _observed(rows, length, x.sign, x.sd, x.temperature, x.pressure)
            rand, sysv = _error_terms(rows, length, pred0_deg, x.sd, refr, x.measured_weather, edge=edges0,
                                      width_m=width0)
            rand = rand + time_sigma0
        if h.edge is not None:
            obs = obs0 - np.radians((EDGE_LIMB_SIGN[h.edge] - x.sign) * x.sd)
            rand, sysv = _error_terms(rows, rows.shadow_m, pred0_deg, x.sd, refr0, x.measured_weather,
                                      edge=h.edge, width_m=width0)
            rand = rand + time_sigma0
        residual = obs - pred
        sigma = np.sqrt(rand)
        # a series whose statistic under h is sure to stay above its statistic as logged less one can never
        # choose h (see _kept_z): neither h's separation nor its fit is needed there
        wanted = None if beyond is None else ~hopeless(series, residual, rate, sigma, sysv, beyond)
        if kept is not None:
            wanted &= kept
        if wanted is not None and not wanted.any():
            return None, None, np.zeros(x.n_groups)
        sep = series_statistic(series, x.n_groups, residual0 - residual, rate0, sqrt_rand0, sys0,
                               robust=False, columns=wanted).statistic
        if wanted is not None:
            sep[~wanted] = 0.0
        if not (sep >= MIN_SEPARATION).any():  # the same as the logged reading everywhere: never decisive
            return None, None, sep
        fit = series_statistic(series, x.n_groups, residual, rate, sigma, sysv, columns=wanted)
        if base_statistic is not None:
            fit = _kept_z(fit, x.group, sep, base_statistic, sel)
        return fit.statistic, fit, sep

    tried = [one(h) for h in HYPOTHESES]  # one at a time: each holds some 250 bytes a row while tried
    stats, fits, separations = (list(values) for values in zip(*tried, strict=True))
    return stats, fits, separations


#: A hypothesis left out of series holding less than this fraction of the rows is computed on all of them.
_MOST_ROWS = 0.6


def _worth_bounding(h, screen: _Screen) -> bool:
    """Whether to bound a hypothesis that moves the Sun before computing it (the answer changes only the
    time taken): a clock an hour off is not bounded when the bound of two hours the same way could leave
    out less than a sixth of the rows with four times its margin (the Sun moves about half as far in one
    hour as in two, and the bound goes with the square of that)."""
    if abs(h.hours) != 1.0 or h.local_as_utc:
        return True
    ratio = screen.bound_ratio.get(2.0 * h.hours)
    return ratio is None or screen.count[ratio > 4.0].sum() >= screen.count.sum() / 6.0


def _exact_rows(kept_rows: np.ndarray, residual_rad: np.ndarray, within_rad) -> np.ndarray:
    """The rows a hypothesis is computed on when it is left out of some series: those of the other series
    (``kept_rows``), and those whose residual may be the largest in size (its bound reaches the least
    size the largest can have). The robust fit starts from medians whose rounding depends on the largest
    residual of all the rows (:func:`~firstrung.methods.shadows.series_layout.column_medians`); with the
    rows left out at zero and these computed, that largest residual is the one of every row computed.
    """
    size = np.abs(residual_rad)
    return np.flatnonzero(kept_rows | (size + within_rad >= np.max(size - within_rad)))


#: A single hypothesis :func:`_decide` chooses is within DISTINCT_MARGIN of the best, whose improvement is
#: at least DECISIVE_IMPROVEMENT: its own improvement is at least their difference (kept with a margin of 1).
_REACHABLE_IMPROVEMENT = DECISIVE_IMPROVEMENT - DISTINCT_MARGIN - 1.0


class _RowsOf:
    """Per-row values known for some rows of the log (``values`` at the sorted log rows ``rows``, NaN
    elsewhere), indexed by the log's rows: a hypothesis' residuals where they can be read, without an
    array as long as the log per hypothesis."""

    def __init__(self, values: np.ndarray, rows: np.ndarray) -> None:
        self.values, self.rows = values, rows

    def __getitem__(self, rows) -> np.ndarray:
        rows = np.asarray(rows)
        at = np.minimum(np.searchsorted(self.rows, rows), max(self.rows.size - 1, 0))
        known = (self.rows[at] == rows) if self.rows.size else np.zeros(rows.shape, bool)
        out = np.full(rows.shape, np.nan)
        out[known] = self.values[at[known]]
        return out


def _kept_z(fit: SeriesStatistic, group, sep, base_statistic, sel) -> SeriesStatistic:
    """``fit`` with its residuals kept only for the series where it could be chosen (see _RowsOf)."""
    reachable = (sep >= MIN_SEPARATION) & (base_statistic - fit.statistic >= _REACHABLE_IMPROVEMENT)
    kept = np.flatnonzero(reachable[group])
    return SeriesStatistic(fit.statistic, fit.level_rad, fit.level_sigma_rad, fit.clock_s, fit.mean_square,
                           _RowsOf(fit.z[kept], sel[kept]))


def _in_span(t) -> bool:
    from firstrung import ephemeris

    first, last = ephemeris.ephemeris_span_utc()
    return bool(np.all((t >= first) & (t <= last)))


#: Greatest rate of the Sun's declination [rad/s]: about 0.40 deg a day at the equinoxes (from memory),
#: taken as 0.5 deg a day.
_DECLINATION_RATE_MAX_RAD_S = np.radians(0.5) / 86400.0
#: Greatest departure of the apparent Sun's hour-angle rate from the mean solar rate, relative: the
#: apparent solar day differs from 24 h by at most about 30 s (from memory), taken as 86 s (1e-3).
_HOUR_ANGLE_RATE_DEVIATION = 1.0e-3
#: Greatest horizontal parallax of the Sun [rad]: the Earth's radius over 0.98 au (the least distance is 0.983 au).
_PARALLAX_MAX_RAD = WGS84_SEMI_MAJOR_AXIS_M / 1000.0 / (0.98 * ASTRONOMICAL_UNIT_KM)
#: Rounding of the altitudes and of the bound's inputs [rad] (near the zenith an arcsine turns a rounding
#: of 1e-16 into 2e-8 rad).
_ROUNDING_RAD = 1.0e-7
#: Relative margin on the sums of the bound (their order of addition differs from the fit's).
_SUM_MARGIN = 1.0e-9


def moved_altitude(sin_term, cos_factor, cos_lat, hour_angle_rad, shift_s, latitude_sign: float = 1.0):
    """The Sun's altitude for a hypothesis that moves it, from the logged reading's terms, and its bounds.

    ``sin_term``, ``cos_factor``, ``cos_lat``: :func:`sun_altitude_rad`'s ``parts`` at the logged times and
    sites; ``hour_angle_rad``: the hour angle under the hypothesis at the logged declination; ``shift_s``:
    the clock's shift [s] (0 for a sign); ``latitude_sign``: -1 for the latitude's sign changed.

    Returns ``(altitude_rad, within_rad, rate_max_rad_s)``: the true altitude :func:`sun_altitude_rad` gives
    under the hypothesis is within ``within_rad`` of ``altitude_rad`` and its rate at most ``rate_max_rad_s``
    in size. The Sun moves by at most ``|shift| (declination rate + hour-angle rate deviation)`` on the
    sky over the shift, and an altitude changes by at most the angle the Sun moves.
    """
    move = np.abs(shift_s) * (_DECLINATION_RATE_MAX_RAD_S + _HOUR_ANGLE_RATE_RAD_S * _HOUR_ANGLE_RATE_DEVIATION)
    cos_part = np.cos(hour_angle_rad)
    cos_part *= cos_factor
    sin_alt = sin_term * latitude_sign if latitude_sign != 1.0 else sin_term.copy()
    sin_alt += cos_part
    np.clip(sin_alt, -1.0, 1.0, out=sin_alt)
    within = move + (_PARALLAX_MAX_RAD + _ROUNDING_RAD)
    # |cos(lat) cos(dec) sin(ha)| at the derived place, then moved; over cos(altitude), whose least value is
    # that at the derived place less the altitude's bound (the rate's own floor 1e-6 as sun_altitude_rad's)
    across = np.sqrt(np.maximum(cos_factor * cos_factor - cos_part * cos_part, 0.0))
    across += cos_lat * move + _ROUNDING_RAD
    cos_alt = np.sqrt(np.maximum(1.0 - sin_alt * sin_alt, 0.0))
    cos_alt -= within + _ROUNDING_RAD
    rate_max = across
    rate_max /= np.maximum(cos_alt, 1e-6)
    rate_max *= _HOUR_ANGLE_RATE_RAD_S * (1.0 + _SUM_MARGIN)
    return np.arcsin(sin_alt, out=sin_alt), within, rate_max


class _Screen:
    """Which series of the hypotheses' rows a hypothesis can matter for, found without computing it.

    ``beyond``: per series, the statistic above which the hypothesis is never chosen there.
    """

    def __init__(self, group: np.ndarray, n_groups: int, beyond: np.ndarray) -> None:
        self.group = group
        # the rows by series (none when they come so, as a log's rows usually do)
        self.order = None if bool(np.all(group[1:] >= group[:-1])) else np.argsort(group, kind="stable")
        self.count = np.bincount(group, minlength=n_groups)
        self.starts = np.concatenate([[0], np.cumsum(self.count)[:-1]])
        self.beyond = beyond
        self.usable = bool(self.count.size and self.count.min() > 0)
        self._known: dict = {}
        self.bound_ratio: dict = {}

    def share(self, *arrays) -> None:
        """Arrays every hypothesis of a kind passes again (the logged reading's errors and rates): their
        per-series summaries are kept (by identity)."""
        for values in arrays:
            self._known[id(values)] = (values, {})

    def _kept(self, per_series, values):
        """``per_series(values)``, computed once for a shared array."""
        known = self._known.get(id(values))
        if known is None or known[0] is not values:
            return per_series(values)
        if per_series.__name__ not in known[1]:
            known[1][per_series.__name__] = per_series(values)
        return known[1][per_series.__name__]

    def _weight_total(self, variance):
        return self._total(1.0 / (np.maximum(variance, 0.0) * (1.0 - _SUM_MARGIN)))

    def _by_series(self, values):
        return values if self.order is None else values[self.order]

    def _least(self, values):
        return np.minimum.reduceat(self._by_series(values), self.starts)

    def _most(self, values):
        return np.maximum.reduceat(self._by_series(values), self.starts)

    def _total(self, values):
        return np.add.reduceat(self._by_series(values), self.starts)

    def hopeless(self, residual_rad, within_rad, rate_max_rad_s, variance_low, variance_high, systematic_high,
                 key=None):
        """Per series: whether :func:`series_statistic`'s robust statistic is sure to exceed ``beyond`` for
        every residual within ``within_rad`` of ``residual_rad``, rates at most ``rate_max_rad_s`` in size,
        random variances from ``variance_low`` to ``variance_high`` and systematic ones at most
        ``systematic_high`` (per row). The bound of :func:`hopeless_series`, with each input at the end of
        its interval that lowers it; a series with an input not finite is never hopeless. ``key``: keep each
        series' bound over the least that is hopeless in :attr:`bound_ratio` under this key.
        """
        if not self.usable:
            return np.zeros(self.count.size, bool)
        prior = 1.0 / CHECK_CLOCK_SIGMA_S**2
        with np.errstate(all="ignore"):
            if np.ndim(within_rad) == 0:  # one bound for every row: the least and the greatest residual moved
                low = self._least(residual_rad) - within_rad
                high = self._most(residual_rad) + within_rad
            else:
                low = self._least(residual_rad - within_rad)
                high = self._most(residual_rad + within_rad)
            reach = np.where(low > 0.0, low, np.where(high < 0.0, -high, 0.0))
            rate_max = self._kept(self._most, rate_max_rad_s)
            weight_low = 1.0 / (variance_high * (1.0 + _SUM_MARGIN))
            weight_high = self._kept(self._weight_total, variance_low)
            clock_max = (high - low) * np.sqrt(weight_high * (1.0 + _SUM_MARGIN) / prior)
            z_max = np.sqrt(weight_low)
            z_max *= ((high - low) + 2.0 * rate_max * clock_max)[self.group]
            huber_weight = np.minimum(1.0, HUBER_SIGMA / np.maximum(z_max, 1e-300))
            huber_weight *= weight_low
            weight_min = self._total(huber_weight) * (1.0 - _SUM_MARGIN)
            systematic = self._kept(self._total, systematic_high) / self.count * (1.0 + _SUM_MARGIN)
            bound = reach**2 / (systematic + 2.0 * rate_max**2 / prior + 1.0 / weight_min) * (1.0 - _SUM_MARGIN)
            if key is not None:
                self.bound_ratio[key] = np.where(np.isfinite(bound), bound, 0.0) / (1.01 * self.beyond + 2.0)
            return np.isfinite(bound) & (bound > 1.01 * self.beyond + 2.0)


def _refraction_max_deg() -> float:
    """The greatest refraction :func:`refraction_from_apparent_deg` gives: at its lowest apparent altitude
    (it decreases with the altitude), the coldest air and the highest pressure it takes (1.40 deg)."""
    return float(refraction_from_apparent_deg(LOWEST_REFRACTED_ALTITUDE_DEG, TEMPERATURE_RANGE_C[0],
                                              PRESSURE_RANGE_HPA[1]))


def unit_bounds(rows: ShadowReadings, factor: float, sign, semidiameter_deg, pred_rad, time_variance):
    """A length-unit hypothesis' residual per row, its bound and its random variance, without the refraction.

    The observed altitude is :func:`_observed`'s of the lengths over ``factor`` less a refraction from 0 to
    its greatest (:func:`_refraction_max_deg`): the residual is within ``within`` of the one returned. The
    random variance is :func:`_error_terms`'s (the shadow's reading, less its rounding) plus ``time_variance``.
    """
    length = rows.shadow_m / factor
    refraction_half = 0.5 * _refraction_max_deg()
    residual = np.degrees(np.arctan2(rows.gnomon_m, length))
    residual -= sign * semidiameter_deg + refraction_half
    residual = np.radians(residual, out=residual)
    residual -= pred_rad
    length *= length
    length += rows.gnomon_m**2
    variance = rows.gnomon_m * rows.shadow_sigma_m / length
    variance *= variance
    variance += time_variance
    return residual, np.radians(refraction_half) + _ROUNDING_RAD, variance


def unit_systematic_bound(rows: ShadowReadings, width_m) -> np.ndarray:
    """Per row, at least :func:`_error_terms`'s systematic variance for a shadow of any length (not an angle).

    With h the gnomon and L the length, L / (h^2 + L^2) <= 1 / (2 h), h / (h^2 + L^2) <= 1 / h and
    L^2, h^2 <= h^2 + L^2: each term of :func:`altitude_error_terms_rad` at most its value at that bound,
    the edge's fraction and the refraction's at their greatest.
    """
    h = np.abs(rows.gnomon_m)
    bound = (rows.gnomon_sigma_m / (2.0 * h)) ** 2
    bound += (max(EDGE_LOCATION_FRACTION.values()) * np.abs(width_m) / h) ** 2
    bound += (np.radians(max(REFRACTION_SIGMA_FRACTION_STANDARD, REFRACTION_SIGMA_FRACTION_MEASURED)
                         * _refraction_max_deg()) ** 2 + BOARD_LEVEL_SIGMA_RAD**2 + GNOMON_PLUMB_SIGMA_RAD**2)
    bound *= 1.0 + _SUM_MARGIN
    return bound
