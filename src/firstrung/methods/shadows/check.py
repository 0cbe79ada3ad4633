"""Checking observers' logs against the ephemeris before any reduction.

Each log row that looks wrong gets a :class:`Flag`: where it is (file, 1-based
data row, site), a code from the design's list, a severity (``error`` for a
blunder that a reduction leaves out, ``warning`` for a doubtful row it keeps),
a plain-language diagnosis and the fix to ask the observer for.

Shadow logs (the only kind checked so far; eclipse and phase logs add their
own ``check_*_log`` function and one line in :mod:`firstrung.app.check`):

1. rows are grouped into series: one file and site, readings no more than
   :data:`SERIES_GAP_H` apart (one observer's session);
2. each row's shadow length gives the observed altitude of the Sun's centre
   (as in :func:`firstrung.methods.shadows.reduction.centre_altitude_deg`), and the
   ephemeris the predicted one at the logged time;
3. the series is compared with the prediction by a robust chi-square
   (:func:`series_statistic`): a free clock offset (prior sigma
   :data:`~firstrung.methods.shadows.reduction.CLOCK_PRIOR_SIGMA_S`) and a common level
   are fitted by iteratively reweighted least squares (Huber weights); the
   statistic is the sum of the squared normalised residuals, each capped at
   :data:`RESIDUAL_CAP_SIGMA` squared, plus the level squared over the
   series' systematic variance (gnomon height, edge placement, refraction),
   plus the clock offset's prior penalty (:data:`CHECK_CLOCK_SIGMA_S`). The stated errors are those of
   :func:`~firstrung.methods.shadows.reduction.altitude_error_terms_rad`;
4. the same statistic is formed under explicit alternative hypotheses, each
   a transformation of the logged values: whole-hour time shifts, local time
   typed as UTC, the longitude's or the latitude's sign, a length-unit factor,
   another shadow edge (:data:`HYPOTHESES`). One is reported only when it
   (a) changes the prediction decisively (its separation from the logged
   reading, :data:`MIN_SEPARATION`), (b) lowers the statistic by at least
   :data:`DECISIVE_IMPROVEMENT`, (c) beats every other explanation by
   :data:`DISTINCT_MARGIN` and (d) leaves an acceptable fit;
5. isolated bad rows are found by their residual from the series' own fit,
   scaled by a robust spread (:data:`OUTLIER_SIGMA`); also the Sun below the
   horizon or below 5 deg at the logged time, exact duplicate rows, and
   readings far from noon in a campaign whose readings are all near noon.

Ties are broken in favour of the more specific time hypothesis. A
longitude-sign error moves apparent noon by 2 lambda / 15 hours, which is a
whole-hour shift when lambda is a multiple of 7.5 deg: then the two cannot
be told apart from one series and the time hypothesis is reported, its
message naming the longitude as the alternative. Local time typed as UTC
equals a time shift of minus the zone's offset: that more specific
explanation is reported.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from firstrung.campaign_model import Campaign
from firstrung.constants import (
    STANDARD_TEMPERATURE_C,
)
from firstrung.distinct import distinct_texts
from firstrung.flags import (
    CODES,
    Flag,
    KindCheck,
    SeriesDiagnosis,
    problem_flags,
)
from firstrung.methods.shadows.altitude import penumbra_width_m
from firstrung.methods.shadows.check_hypotheses import (
    DECISIVE_IMPROVEMENT,
    DISTINCT_MARGIN,
    MIN_SEPARATION,
    _in_span,
    _Inputs,
    _single_hypotheses,
)
from firstrung.methods.shadows.check_messages import (
    MIN_ROWS_FOR_SHAPE,
    NOON_ONLY_MEDIAN_H,
    _Context,
    _duplicate_flags,
    _explained_flags,
    _horizon_flags,
    _mismatch_flags,
    _noon_flags,
    _outlier_flags,
    _pair_flags,
)
from firstrung.methods.shadows.check_statistics import (
    _ARCMIN_PER_RAD,
    CHECK_CLOCK_SIGMA_S,
    HYPOTHESES,
    READING_TIME_SIGMA_S,
    SERIES_GAP_H,
    CheckSite,
    SeriesStatistic,
    _edge_sign,
    _error_terms,
    _observed,
    _zone_offsets_h,
    check_footing,
    check_sites,
    distinct_sun,
    edge_groups,
    series_statistic,
    sun_altitude_rad,
)
from firstrung.methods.shadows.inputs import ShadowReadings
from firstrung.methods.shadows.log import shadow_readings
from firstrung.methods.shadows.series_layout import SeriesLayout
from firstrung.numbers import median
from firstrung.refraction import standard_pressure_hpa

__all__ = [
    "CheckSite",
    "ShadowCheck",
    "ShadowReadings",
    "check_campaign",
    "check_shadow_log",
    "check_shadow_rows",
    "log_flags",
    "series_statistic",
    "sun_altitude_rad",
]


#: An explanation is acceptable when its fitted level is within this many sigma
#: and its mean capped squared residual below ACCEPTABLE_MEAN_SQUARE.
ACCEPTABLE_LEVEL_SIGMA = 4.0
ACCEPTABLE_MEAN_SQUARE = 4.0
#: ... and its fitted clock offset within this many prior sigmas (10 min): a fix that leaves the
#: readings ten minutes and more off the Sun is no fix (another mistake is mixed in).
ACCEPTABLE_CLOCK_SIGMA = 2.0
#: A series whose level is this many sigma off, unexplained, is flagged.
SERIES_LEVEL_SIGMA = 5.0


# --- inputs and results ---------------------------------------------------------------


@dataclass(frozen=True)
class ShadowCheck:
    """The check of a set of shadow rows: the flags and the per-series diagnoses."""

    flags: tuple[Flag, ...]
    series: tuple[SeriesDiagnosis, ...]
    noon_only: bool


# --- assembling rows from a campaign -------------------------------------------------------


# --- the Sun, fast enough for every hypothesis ---------------------------------------------


# --- the series statistic ----------------------------------------------------------------------


# --- observed altitudes and their errors --------------------------------------------------


# --- hypotheses --------------------------------------------------------------------------------


# --- the check ------------------------------------------------------------------------------------


def check_shadow_rows(sites: tuple[CheckSite, ...], rows: ShadowReadings, *, diagnoses: bool = True) -> ShadowCheck:
    """Flags for shadow rows that disagree with the Sun, and why.

    Parameters
    ----------
    sites : tuple of CheckSite
        ``rows.site_index`` points into it.
    rows : ShadowReadings
        The rows to check (good rows of the logs, defaults filled in).
    diagnoses : bool
        False: no per-series diagnosis (a reduction that leaves out the flagged rows needs only the flags).

    Returns
    -------
    ShadowCheck
        Flags sorted by file and row; one diagnosis per series.

    Examples
    --------
    >>> from firstrung.methods.shadows.rehearsal import ShadowErrors, simulate_shadow_readings
    >>> t = np.array(["2027-03-20T11:20", "2027-03-20T11:38", "2027-03-20T11:56"], dtype="datetime64[ms]")
    >>> syn = simulate_shadow_readings(np.zeros(3, int), t, [46.2], [7.4], [620.0], [1.0],
    ...                                np.array(["umbra"], dtype=object), ShadowErrors(),
    ...                                np.random.default_rng(1))
    >>> rows = ShadowReadings(np.zeros(3, int), t, syn.shadow_m * 10, syn.gnomon_m, syn.edge, np.full(3, 0.002),
    ...     np.full(3, 0.001), np.full(3, np.nan), np.full(3, np.nan), file=np.array(["a.csv"] * 3, dtype=object),
    ...     row=np.arange(1, 4), time_column=np.array(["time_utc"] * 3, dtype=object),
    ...     shadow_column=np.array(["shadow_m"] * 3, dtype=object), observer=np.array([""] * 3, dtype=object))
    >>> result = check_shadow_rows((CheckSite("ridge", 46.2, 7.4, 620.0),), rows)
    >>> [(f.row, f.code, f.fields["factor"]) for f in result.flags]
    [(1, 'length-unit', 10.0), (2, 'length-unit', 10.0), (3, 'length-unit', 10.0)]
    """
    rows = check_footing(rows)
    n = len(rows)
    if n == 0:
        return ShadowCheck((), (), False)
    idx = np.asarray(rows.site_index, int)
    lat = np.array([s.latitude_deg for s in sites], float)[idx]
    lon = np.array([s.longitude_deg for s in sites], float)[idx]
    elev = np.array([s.elevation_m for s in sites], float)[idx]
    t = np.asarray(rows.time_utc, dtype="datetime64[ms]")

    # series: runs of one file and site with no gap longer than SERIES_GAP_H between readings
    _, file_index = distinct_texts(rows.file)
    t_ms = t.astype(np.int64)
    by = np.lexsort((t_ms, idx, file_index))
    new_series = np.ones(n, bool)
    new_series[1:] = (
        (np.diff(file_index[by]) != 0) | (np.diff(idx[by]) != 0) | (np.diff(t_ms[by]) > SERIES_GAP_H * 3600e3)
    )
    group = np.empty(n, np.int64)
    group[by] = np.cumsum(new_series) - 1
    n_groups = int(group.max()) + 1
    group_site = idx[by][new_series]
    local_day = (t + np.round(lon / 15.0 * 3600e3).astype(np.int64).astype("timedelta64[ms]")).astype("datetime64[D]")
    group_day = local_day[by][new_series].astype(np.int64)
    count = np.bincount(group, minlength=n_groups)
    order = np.argsort(group, kind="stable")
    start = np.concatenate([[0], np.cumsum(count)[:-1]])
    first_row = order[start]  # a row of each group

    # the logged reading
    temperature = np.where(np.isfinite(rows.temperature_c), rows.temperature_c, STANDARD_TEMPERATURE_C)
    measured_weather = np.isfinite(rows.pressure_hpa)
    pressure = np.where(measured_weather, rows.pressure_hpa, standard_pressure_hpa(elev))
    sign = _edge_sign(rows.edge)
    distinct0 = distinct_sun(t)
    sun_parts: dict = {}  # what the hypotheses that move the Sun start from
    pred0, rate0, ha0, sd = sun_altitude_rad(t, lat, lon, distinct=distinct0, parts=sun_parts)
    pred0_deg = np.degrees(pred0)
    obs0, refr0 = _observed(rows, rows.shadow_m, sign, sd, temperature, pressure)
    edges0 = edge_groups(rows.edge)
    width0 = penumbra_width_m(rows.gnomon_m, np.clip(pred0_deg, 1.0, 89.0), sd)  # the error terms' and hypotheses'
    rand0, sys0 = _error_terms(rows, rows.shadow_m, pred0_deg, sd, refr0, measured_weather, edge=edges0,
                               width_m=width0)
    rand0 = rand0 + (rate0 * READING_TIME_SIGMA_S) ** 2
    base = series_statistic(SeriesLayout(group, n_groups), n_groups, obs0 - pred0, rate0, np.sqrt(rand0), sys0)

    zone_offset_h = _zone_offsets_h(sites, rows, group, group_site, group_day)
    # Only a series whose statistic as logged reaches DECISIVE_IMPROVEMENT can be explained by a
    # hypothesis (every statistic is a sum of squares, never below zero); the others are judged on
    # their level alone, so the hypotheses are tried on the rows of the series that need them.
    needy = np.flatnonzero(base.statistic >= DECISIVE_IMPROVEMENT)
    sel = np.flatnonzero(np.isin(group, needy))
    if sel.size > n // 2:  # most rows: all of them, no copies (a long log's memory is in its copies)
        needy, sel = np.arange(n_groups), np.arange(n)

        def pick(values):
            return values
    else:
        def pick(values):
            return values[sel]
    sub = _Inputs(rows if sel.size == n else rows.select(sel), np.searchsorted(needy, pick(group)), needy.size,
                  pick(t), pick(lat), pick(lon), pick(sign), pick(sd), pick(temperature), pick(pressure),
                  pick(measured_weather), pick(zone_offset_h), pick(ha0),
                  {name: pick(values) for name, values in sun_parts.items()})
    del sun_parts
    tried = _single_hypotheses(sub, pick(obs0 - pred0), pick(pred0), pick(rate0), pick(obs0), pick(refr0),
                               pick(rand0), pick(sys0), distinct0 if sel.size == n else None,
                               edges0 if sel.size == n else None, base_statistic=base.statistic[needy], sel=sel,
                               width0=width0 if sel.size == n else None)
    del width0
    del sub
    stats, fits, separations = _widen(tried, needy, sel, n_groups, n)

    verdicts = _decide(base, stats, fits, separations, count)
    from firstrung.methods.shadows.check_pairs import pair_verdicts

    pairs = pair_verdicts(verdicts, count, group, rows, t, lat, lon, sd, temperature, pressure, measured_weather,
                          zone_offset_h, singles=(base, stats, fits, separations), decide=_decide, in_span=_in_span,
                          min_rows=MIN_ROWS_FOR_SHAPE)
    for g, p in pairs.items():
        verdicts[g] = (p.verdict, None, p.candidates)
    noon_only = bool(median(np.abs(ha0)) <= np.radians(NOON_ONLY_MEDIAN_H * 15.0))
    flags: list[Flag] = []
    series: list[SeriesDiagnosis] = []
    chosen_z = base.z.copy()
    explained_time = np.zeros(n_groups, bool)
    # each series' numbers as Python values at once (not a NumPy scalar per series)
    dates = np.datetime_as_string(group_day.astype("datetime64[D]"), unit="D").tolist()
    files, counts = rows.file[first_row].tolist(), count.tolist()
    logged, levels = base.statistic.tolist(), base.level_rad.tolist()
    level_sigmas = (base.level_rad / base.level_sigma_rad).tolist()
    for g in range(n_groups):  # one pass over series, not rows; flags are built only where needed
        verdict, k, candidates = verdicts[g]
        if verdict == "fits" and not diagnoses:
            continue
        site = sites[group_site[g]]
        rows_g = order[start[g] : start[g] + count[g]] if verdict != "fits" else None
        date = dates[g]
        file = str(files[g])
        best_stat = None if k is None else float(stats[k][g])
        pair = pairs.get(g)
        explained_by_pair = pair is not None and pair.verdict == "explained"
        if explained_by_pair:
            best_stat = pair.statistic
        if diagnoses:
            series.append(SeriesDiagnosis(
                file=file, site=site.id, date=date, rows=counts[g],
                statistic_logged=round(logged[g], 2),
                level_arcmin=round(levels[g] * _ARCMIN_PER_RAD, 2),
                level_sigma=round(level_sigmas[g], 2),
                best=pair.pair.label if explained_by_pair else (None if k is None else HYPOTHESES[k].label),
                statistic_best=None if best_stat is None else round(best_stat, 2),
                verdict=verdict,
            ))
        if verdict == "fits":
            continue
        if explained_by_pair:
            chosen_z[np.sort(rows_g)] = pair.z
            explained_time[g] = True
            context = _Context(site, date, file, int(count[g]), float(base.statistic[g]), best_stat,
                               candidates, zone_offset_h[rows_g[0]], rows, rows_g, base, g)
            flags.extend(_pair_flags(pair.pair, context))
        elif verdict == "explained":
            h = HYPOTHESES[k]
            chosen_z[rows_g] = fits[k].z[rows_g]
            explained_time[g] = h.moves_time or h.longitude_sign != 1.0 or h.latitude_sign != 1.0
            context = _Context(site, date, file, int(count[g]), float(base.statistic[g]), best_stat,
                               candidates, zone_offset_h[rows_g[0]], rows, rows_g, fits[k], g)
            flags.extend(_explained_flags(h, context))
        else:
            context = _Context(site, date, file, int(count[g]), float(base.statistic[g]), None,
                               candidates, 0.0, rows, rows_g, base, g)
            flags.extend(_mismatch_flags(context))

    flags.extend(_outlier_flags(sites, rows, group, n_groups, count, chosen_z, obs0 - pred0, rand0, sys0, verdicts))
    time_ok = ~explained_time[group]
    flags.extend(_horizon_flags(sites, rows, pred0_deg, time_ok))
    if noon_only:
        flags.extend(_noon_flags(sites, rows, ha0, time_ok))
    flags.extend(_duplicate_flags(sites, rows))
    flags.sort(key=lambda f: (f.file, -1 if f.row is None else f.row, CODES.index(f.code) if f.code in CODES else 99))
    return ShadowCheck(tuple(flags), tuple(series), noon_only)


def _widen(tried, needy, sel, n_groups: int, n: int):
    """The hypotheses' results for every series: those of ``needy`` (rows ``sel``), the others never decisive."""
    stats, fits, separations = [], [], []

    def wide(values, fill):
        out = np.full(n_groups, fill)
        out[needy] = values
        return out

    for s, f, sep in zip(*tried, strict=True):
        stats.append(None if s is None else wide(s, np.inf))
        fits.append(None if f is None else SeriesStatistic(
            wide(f.statistic, np.inf), wide(f.level_rad, np.nan), wide(f.level_sigma_rad, np.nan),
            wide(f.clock_s, np.nan), wide(f.mean_square, np.nan), f.z))
        separations.append(wide(sep, 0.0))
    return stats, fits, separations


def _decide(base: SeriesStatistic, stats, fits, separations, count, hypotheses=HYPOTHESES):
    """Per series: ("fits" | "explained" | "unexplained" | "ambiguous", chosen hypothesis index, candidates)."""
    n_groups = count.size
    k_all = len(hypotheses)
    table = np.full((k_all, n_groups), np.inf)
    for k, s in enumerate(stats):
        if s is None:
            continue
        h = hypotheses[k]
        usable = separations[k] >= MIN_SEPARATION
        if h.code != "length-unit":
            usable &= count >= MIN_ROWS_FOR_SHAPE
        table[k] = np.where(usable, s, np.inf)
    improvement = base.statistic[None, :] - table
    level_z = np.abs(base.level_rad / base.level_sigma_rad)
    best = np.argmin(table, axis=0)
    decisive = improvement[best, np.arange(n_groups)] >= DECISIVE_IMPROVEMENT
    out = []
    for g in range(n_groups):  # only series with a decisive candidate need the detailed rules
        if not decisive[g]:
            bad_level = level_z[g] >= SERIES_LEVEL_SIGMA and count[g] >= MIN_ROWS_FOR_SHAPE
            out.append(("unexplained", None, ()) if bad_level else ("fits", None, ()))
            continue
        b = int(best[g])
        band = [k for k in range(k_all) if np.isfinite(table[k, g]) and table[k, g] <= table[b, g] + DISTINCT_MARGIN]
        families = {hypotheses[k].family for k in band}

        def acceptable(k, g=g):
            fit = fits[k]
            return bool(
                abs(fit.level_rad[g] / fit.level_sigma_rad[g]) <= ACCEPTABLE_LEVEL_SIGMA
                and fit.mean_square[g] <= ACCEPTABLE_MEAN_SQUARE
                and abs(fit.clock_s[g]) <= ACCEPTABLE_CLOCK_SIGMA * CHECK_CLOCK_SIGMA_S
            )

        # the simplest explanation that leaves the rows consistent with the Sun
        chosen = min(band, key=lambda k: (not acceptable(k), hypotheses[k].preference, table[k, g]))
        others = tuple(hypotheses[k].label for k in band if k != chosen)
        if len(families) > 1 or (hypotheses[chosen].code == "length-unit" and len(band) > 1):
            out.append(("ambiguous", None, tuple(hypotheses[k].label for k in band)))
        elif not acceptable(chosen):
            out.append(("unexplained", None, (hypotheses[chosen].label,)))
        else:
            out.append(("explained", chosen, others))
    return out


# --- building the flags ------------------------------------------------------------------------


# --- problems found by the readers ------------------------------------------------------------


# --- summary --------------------------------------------------------------------------------------


# --- entry points over a campaign's log ------------------------------------------------------------


def check_shadow_log(campaign: Campaign, log, readings=None) -> tuple[ShadowCheck, list[Flag]]:
    """Check a read shadow log against the campaign and the ephemeris.

    Returns the check of the good rows and the flags for the rows the reader
    (or the gnomon lookup) refused. ``readings``: what :func:`shadow_readings` gives for the log, when made.
    """
    from firstrung.flags import shared_check

    def compute():
        rows, extra = shadow_readings(campaign, log) if readings is None else readings
        result = check_shadow_rows(check_sites(campaign), rows)
        return result, problem_flags(tuple(log.problems) + tuple(extra))

    return shared_check("shadows", campaign, log, compute)


def log_flags(campaign: Campaign, log) -> list[Flag]:
    """The flags of a shadow log (what :func:`firstrung.flags.without_error_rows` leaves out)."""
    return list(check_shadow_log(campaign, log)[0].flags)


def check_campaign(campaign: Campaign) -> KindCheck:
    """Read the campaign's shadow logs and check them: flags, refused rows, per-series diagnoses."""
    from firstrung.methods.shadows.log import read_shadow_logs

    log = read_shadow_logs(campaign)
    result, problems = check_shadow_log(campaign, log)
    return KindCheck(tuple(result.flags) + tuple(problems), result.series, result.noon_only)


