"""Two usual mistakes made together: the shadow check's second look at the series no single one explains.

A clock an hour off on a site whose longitude also has the wrong sign
leaves readings that no single hypothesis fits; the nearest single one
(``times -2 h``) would leave them a quarter of an hour off the Sun. The
pairs (:data:`PAIRS`) are tried on those series only, their rows
recomputed with every part of the pair applied at once.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from firstrung.methods.shadows.check_statistics import (
    HYPOTHESES,
    READING_TIME_SIGMA_S,
    SeriesStatistic,
    _edge_sign,
    _error_terms,
    _Hypothesis,
    _observed,
    series_statistic,
    sun_altitude_rad,
)
from firstrung.methods.shadows.inputs import ShadowReadings

#: Length-unit slips tried within a pair (the common metric ones).
PAIR_FACTORS = (10.0, 100.0, 1000.0, 0.1, 0.01, 0.001)


def _pairs() -> tuple[_Hypothesis, ...]:
    """Each usual mistake with each of another kind: the clock an hour off (daylight-saving time) or
    local time typed as UTC, a coordinate's sign, a common length-unit slip, the edge convention."""
    kinds = [
        [h for h in HYPOTHESES if h.local_as_utc or abs(h.hours) == 1.0],
        [h for h in HYPOTHESES if h.code == "longitude-sign"],
        [h for h in HYPOTHESES if h.code == "latitude-sign"],
        [h for h in HYPOTHESES if h.code == "length-unit" and h.factor in PAIR_FACTORS],
        [h for h in HYPOTHESES if h.code == "edge-convention"],
    ]
    out = []
    for i, first in enumerate(kinds):
        for second in kinds[i + 1:]:
            for a in first:
                for b in second:
                    out.append(_Hypothesis(
                        "pair", f"{a.label} with {b.label}", hours=a.hours + b.hours, factor=a.factor * b.factor,
                        edge=a.edge or b.edge, longitude_sign=a.longitude_sign * b.longitude_sign,
                        latitude_sign=a.latitude_sign * b.latitude_sign, local_as_utc=a.local_as_utc or b.local_as_utc,
                        parts=(a, b),
                    ))
    return tuple(out)


#: Pairs of mistakes, tried only on the series the single hypotheses leave unexplained.
PAIRS = _pairs()


def fit_hypothesis(h: _Hypothesis, rows: ShadowReadings, group, n_groups, t, lat, lon, sd, temperature, pressure,
                   measured_weather, zone_offset_h, in_span, cache=None):
    """The series' statistic under any hypothesis, every part of it applied (time, coordinates, unit, edge).

    Returns the fit and the (residual, rate, random variance, systematic
    variance) it was made from, or (None, None) when the shifted times leave
    the ephemeris. ``cache`` (a dict) keeps the Sun's place per time and
    coordinate change, shared by the hypotheses that differ only in unit or edge.
    """
    key = (h.hours, h.local_as_utc, h.latitude_sign, h.longitude_sign)
    if cache is not None and key in cache:
        sun = cache[key]
    else:
        shift_h = (h.hours - zone_offset_h) if h.local_as_utc else np.full(len(rows), h.hours)
        t_h = t + np.round(shift_h * 3600e3).astype(np.int64).astype("timedelta64[ms]")
        sun = sun_altitude_rad(t_h, lat * h.latitude_sign, lon * h.longitude_sign)[:2] if in_span(t_h) else None
        if cache is not None:
            cache[key] = sun
    if sun is None:
        return None, None
    pred, rate = sun
    length = rows.shadow_m / h.factor
    edge = rows.edge if h.edge is None else np.full(len(rows), h.edge, dtype=object)
    obs, refr = _observed(rows, length, _edge_sign(edge), sd, temperature, pressure)
    rand, sysv = _error_terms(rows, length, np.degrees(pred), sd, refr, measured_weather, edge=edge)
    rand = rand + (rate * READING_TIME_SIGMA_S) ** 2
    fit = series_statistic(group, n_groups, obs - pred, rate, np.sqrt(rand), sysv)
    return fit, (obs - pred, rate, rand, sysv)


@dataclass(frozen=True)
class PairVerdict:
    """A series judged again with the pairs: its verdict, the pair (when one explains it) and its fit."""

    verdict: str
    pair: _Hypothesis | None
    z: np.ndarray | None  # normalised residuals of the series' rows under the pair, in row order of ``rows_of``
    candidates: tuple
    statistic: float | None


def _take(fit: SeriesStatistic | None, groups, rows) -> SeriesStatistic | None:
    """A fit's values for some series and their rows."""
    if fit is None:
        return None
    return SeriesStatistic(fit.statistic[groups], fit.level_rad[groups], fit.level_sigma_rad[groups],
                           fit.clock_s[groups], fit.mean_square[groups], fit.z[rows])


def pair_verdicts(verdicts, count, group, rows, t, lat, lon, sd, temperature, pressure, measured_weather,
                  zone_offset_h, *, singles, decide, in_span, min_rows) -> dict[int, PairVerdict]:
    """Series no single mistake explains, judged with the single and the paired hypotheses together.

    Only their rows are recomputed for the pairs; ``singles`` (the single
    hypotheses' base fit, statistics, fits and separations) are taken as
    they were. ``decide`` is the check's own rule (decisive, distinct,
    acceptable). A series a single hypothesis explains after all keeps its
    first verdict (it is not returned).
    """
    needy = [g for g, v in enumerate(verdicts) if v[0] in ("unexplained", "ambiguous") and count[g] >= min_rows]
    if not needy:
        return {}
    sel = np.flatnonzero(np.isin(group, needy))
    sub_group = np.searchsorted(np.asarray(needy), group[sel])
    n_sub = len(needy)
    args = (rows.select(sel), sub_group, n_sub, t[sel], lat[sel], lon[sel], sd[sel], temperature[sel],
            pressure[sel], measured_weather[sel], zone_offset_h[sel], in_span, {})
    base, (r0, rate0, rand0, sys0) = fit_hypothesis(_Hypothesis("as-logged", "as logged"), *args)
    single_base, single_stats, single_fits, single_separations = singles
    base = _take(single_base, needy, sel)
    candidates = HYPOTHESES + PAIRS
    stats = [None if s is None else s[needy] for s in single_stats]
    fits = [_take(f, needy, sel) for f in single_fits]
    separations = [s[needy] for s in single_separations]
    for h in PAIRS:
        fit, parts = fit_hypothesis(h, *args)
        stats.append(None if fit is None else fit.statistic)
        fits.append(fit)
        separations.append(np.zeros(n_sub) if fit is None else series_statistic(
            sub_group, n_sub, r0 - parts[0], rate0, np.sqrt(rand0), sys0, robust=False).statistic)
    decided = decide(base, stats, fits, separations, np.asarray(count)[needy], candidates)
    out = {}
    for j, g in enumerate(needy):
        verdict, k, names = decided[j]
        if verdict == "explained" and not candidates[k].parts:
            continue
        pair = None if k is None else candidates[k]
        z = None if k is None else fits[k].z[sub_group == j]
        out[g] = PairVerdict(verdict, pair, z, names, None if k is None else float(stats[k][j]))
    return out


__all__ = ["PAIRS", "PairVerdict", "SeriesStatistic", "fit_hypothesis", "pair_verdicts"]
