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

import datetime as _dt
from dataclasses import dataclass
from zoneinfo import ZoneInfo

import numpy as np

from firstrung.campaign import Campaign
from firstrung.constants import (
    ASTRONOMICAL_UNIT_KM,
    STANDARD_TEMPERATURE_C,
    SUN_SEMIDIAMETER_AT_1AU_ARCSEC,
    WGS84_SEMI_MAJOR_AXIS_M,
)
from firstrung.errors import RowProblem
from firstrung.flags import (
    CODES,
    Flag,
    KindCheck,
    SeriesDiagnosis,
    problem_flags,
)
from firstrung.methods.shadows.reduction import (
    EDGE_LIMB_SIGN,
    MIN_ALTITUDE_DEG,
    altitude_error_terms_rad,
)
from firstrung.refraction import refraction_from_apparent_deg, standard_pressure_hpa

__all__ = [
    "CheckSite",
    "ShadowCheck",
    "ShadowRows",
    "check_campaign",
    "check_shadow_log",
    "check_shadow_rows",
    "log_flags",
    "series_statistic",
    "shadow_rows",
    "sun_altitude_rad",
]


#: Readings of one file and site more than this apart [h] belong to different series.
SERIES_GAP_H = 6.0
#: Prior one-sigma of a series' clock offset in the check [s]: a watch set by
#: hand keeps within a few minutes (common practice). Tighter than the
#: reduction's weak prior, so that offsets of a quarter of an hour and more
#: are left to the explicit hypotheses.
CHECK_CLOCK_SIGMA_S = 300.0
#: Whole-hour clock shifts tried [h].
TIME_SHIFTS_H = (-3, -2, -1, 1, 2, 3)
#: Length-unit factors tried (logged length / length the Sun allows): mm/cm/m
#: mix-ups and inches or feet read as a metric unit.
LENGTH_FACTORS = (10.0, 100.0, 1000.0, 2.54, 25.4, 30.48, 0.1, 0.01, 0.001, 1 / 2.54, 1 / 25.4, 1 / 30.48)

#: Each normalised residual contributes at most this squared to the statistic,
#: so that one wild row cannot decide between explanations of a whole series.
RESIDUAL_CAP_SIGMA = 3.0
#: Huber constant of the reweighting (sigma).
HUBER_SIGMA = 2.0
#: IRLS iterations of the level-and-clock fit (converges in 2-3).
_FIT_ITERATIONS = 4
#: One-sigma timing error of a single logged reading [s]: times written to
#: the whole minute have a rounding error of 60 / sqrt(12) = 17 s (common practice).
READING_TIME_SIGMA_S = 20.0
#: A hypothesis is tried only when the data it predicts would score at least
#: this under the logged reading (it changes the prediction by 4 sigma or more).
MIN_SEPARATION = 16.0
#: Decrease of the statistic an explanation must bring (likelihood ratio e^6, about 400).
DECISIVE_IMPROVEMENT = 12.0
#: The winning explanation must beat every other (not equivalent) one by this.
DISTINCT_MARGIN = 10.0
#: An explanation is acceptable when its fitted level is within this many sigma
#: and its mean capped squared residual below ACCEPTABLE_MEAN_SQUARE.
ACCEPTABLE_LEVEL_SIGMA = 4.0
ACCEPTABLE_MEAN_SQUARE = 4.0
#: A series whose level is this many sigma off, unexplained, is flagged.
SERIES_LEVEL_SIGMA = 5.0
#: Fewest rows for a time, longitude, latitude or edge hypothesis (the shape
#: of the series is needed); a length unit is judged from a single row.
MIN_ROWS_FOR_SHAPE = 3
#: Robust residual beyond which a row is an outlier: a warning from
#: OUTLIER_SIGMA, an error from OUTLIER_ERROR_SIGMA (two-sided normal
#: probabilities 7e-6 and 1e-15).
OUTLIER_SIGMA = 4.5
OUTLIER_ERROR_SIGMA = 8.0
#: Rows per series from which the residual spread is estimated from the data
#: (1.4826 MAD) and, when larger than stated, used to scale the outlier test.
MIN_ROWS_FOR_SPREAD = 8
#: A campaign is "noon-only" when the median reading is within this of noon [h];
#: then readings more than FAR_FROM_NOON_H from noon get a warning.
NOON_ONLY_MEDIAN_H = 1.0
FAR_FROM_NOON_H = 2.0
#: The Sun's mean hour-angle rate [rad/s]: 360 deg per mean solar day.
_HOUR_ANGLE_RATE_RAD_S = 2.0 * np.pi / 86400.0
_ARCMIN_PER_RAD = 60.0 * 180.0 / np.pi

_FAMILY = {
    "local-time-as-utc": "time",
    "time-shift-hours": "time",
    "longitude-sign": "time",
    "latitude-sign": "latitude",
    "length-unit": "unit",
    "edge-convention": "edge",
}
#: Preference among explanations that the data cannot tell apart (lower first).
_PREFERENCE = {
    "local-time-as-utc": 0,
    "time-shift-hours": 1,
    "longitude-sign": 2,
    "latitude-sign": 3,
    "length-unit": 4,
    "edge-convention": 5,
}


# --- inputs and results ---------------------------------------------------------------


@dataclass(frozen=True)
class CheckSite:
    """What the check needs to know of a site."""

    id: str
    latitude_deg: float
    longitude_deg: float
    elevation_m: float = 0.0
    timezone: str | None = None


@dataclass(frozen=True)
class ShadowRows:
    """Shadow rows to check, as equal-length arrays (one entry per good log row).

    ``site_index`` points into the sites tuple; ``gnomon_m``, ``edge`` and the
    sigmas are filled in from the campaign where the log gives none.
    """

    file: np.ndarray
    row: np.ndarray
    site_index: np.ndarray
    time_utc: np.ndarray
    time_column: np.ndarray
    shadow_m: np.ndarray
    shadow_column: np.ndarray
    gnomon_m: np.ndarray
    edge: np.ndarray
    shadow_sigma_m: np.ndarray
    gnomon_sigma_m: np.ndarray
    temperature_c: np.ndarray
    pressure_hpa: np.ndarray
    observer: np.ndarray

    def __len__(self) -> int:
        return int(np.size(self.row))


@dataclass(frozen=True)
class ShadowCheck:
    """The check of a set of shadow rows: the flags and the per-series diagnoses."""

    flags: tuple[Flag, ...]
    series: tuple[SeriesDiagnosis, ...]
    noon_only: bool


# --- assembling rows from a campaign -------------------------------------------------------


def check_sites(campaign: Campaign) -> tuple[CheckSite, ...]:
    """The campaign's sites as the check takes them."""
    return tuple(
        CheckSite(s.id, s.latitude_deg, s.longitude_deg, s.elevation_m, s.timezone) for s in campaign.sites
    )


def shadow_rows(campaign: Campaign, log) -> tuple[ShadowRows, list[RowProblem]]:
    """The good rows of a :class:`~firstrung.methods.shadows.log.ShadowLog` with the campaign's defaults filled in.

    Rows of a site without a gnomon and without ``gnomon_m`` in the log cannot
    be checked against the Sun; each becomes a problem.

    >>> from firstrung.campaign import parse_campaign
    >>> from firstrung.methods.shadows.log import ShadowLog
    >>> c = parse_campaign('[[site]]\\nid = "a"\\nlatitude_deg = 45.0\\nlongitude_deg = 7.0\\n'
    ...                    '[site.gnomon]\\nheight_m = 1.0\\n')
    >>> empty = ShadowLog(*[np.array([])] * 13)
    >>> len(shadow_rows(c, empty)[0])
    0
    """
    from firstrung.methods.shadows.log import shadow_instruments

    inst = shadow_instruments(campaign, log)
    ok, site_index, height, edge = inst.ok, inst.site_index, inst.gnomon_m, inst.edge
    height_sigma, shadow_sigma, problems = inst.gnomon_sigma_m, inst.shadow_sigma_m, list(inst.problems)
    rows = ShadowRows(
        file=np.asarray(log.file, dtype=object)[ok],
        row=np.asarray(log.row, dtype=np.int64)[ok],
        site_index=site_index[ok],
        time_utc=np.asarray(log.time_utc, dtype="datetime64[ms]")[ok],
        time_column=np.asarray(log.time_column, dtype=object)[ok],
        shadow_m=np.asarray(log.shadow_m, float)[ok],
        shadow_column=np.asarray(log.shadow_column, dtype=object)[ok],
        gnomon_m=height[ok],
        edge=edge[ok],
        shadow_sigma_m=shadow_sigma[ok],
        gnomon_sigma_m=height_sigma[ok],
        temperature_c=np.asarray(log.temperature_c, float)[ok],
        pressure_hpa=np.asarray(log.pressure_hpa, float)[ok],
        observer=np.asarray(log.observer, dtype=object)[ok],
    )
    return rows, problems


# --- the Sun, fast enough for every hypothesis ---------------------------------------------


def sun_altitude_rad(time_utc, latitude_deg, longitude_deg):
    """True (airless) topocentric altitude of the Sun's centre, its rate, hour angle and semi-diameter.

    The geocentric apparent Sun comes from the ephemeris once per distinct
    time; the step to the site is the spherical formula with the Sun's
    parallax ``(a / d) cos(altitude)`` (diurnal aberration, 0.3", is left
    out). Good to about 1" against :func:`firstrung.ephemeris.sun_position`,
    far below the arcminutes a shadow reading is good to.

    Parameters
    ----------
    time_utc : datetime64 array (n,)
        Instants [UTC].
    latitude_deg, longitude_deg : arrays (n,)
        Sites [deg].

    Returns
    -------
    altitude_rad, altitude_rate_rad_s, hour_angle_rad, semidiameter_deg : arrays (n,)

    >>> t = np.array(["2027-06-21T11:30:00"], dtype="datetime64[ms]")
    >>> a, rate, ha, sd = sun_altitude_rad(t, np.array([46.2]), np.array([7.4]))
    >>> round(float(np.degrees(a[0])), 1), round(float(sd[0]) * 60, 2)
    (67.2, 15.74)
    """
    from firstrung import ephemeris

    t = np.asarray(time_utc, dtype="datetime64[us]")
    ephemeris.check_in_span(t)
    unique_t, inverse = np.unique(t, return_inverse=True)
    xyz_km, gast_rad = ephemeris._geocentric_sun(unique_t)
    distance_km = np.sqrt(np.sum(xyz_km**2, axis=0))
    ra = np.arctan2(xyz_km[1], xyz_km[0])[inverse]
    dec = np.arcsin(xyz_km[2] / distance_km)[inverse]
    distance_km = distance_km[inverse]
    lat = np.radians(np.asarray(latitude_deg, float))
    ha = gast_rad[inverse] + np.radians(np.asarray(longitude_deg, float)) - ra
    ha = np.angle(np.exp(1j * ha))
    sin_alt = np.sin(lat) * np.sin(dec) + np.cos(lat) * np.cos(dec) * np.cos(ha)
    alt = np.arcsin(np.clip(sin_alt, -1.0, 1.0))
    alt = alt - (WGS84_SEMI_MAJOR_AXIS_M / 1000.0 / distance_km) * np.cos(alt)
    rate = -np.cos(lat) * np.cos(dec) * np.sin(ha) / np.maximum(np.cos(alt), 1e-6) * _HOUR_ANGLE_RATE_RAD_S
    semidiameter_deg = SUN_SEMIDIAMETER_AT_1AU_ARCSEC / 3600.0 / (distance_km / ASTRONOMICAL_UNIT_KM)
    return alt, rate, ha, semidiameter_deg


# --- the series statistic ----------------------------------------------------------------------


@dataclass(frozen=True)
class SeriesStatistic:
    """Robust fit of level and clock offset per series, and the statistic (see :func:`series_statistic`)."""

    statistic: np.ndarray  # (n_groups,)
    level_rad: np.ndarray
    level_sigma_rad: np.ndarray
    clock_s: np.ndarray
    mean_square: np.ndarray
    z: np.ndarray  # (n,) normalised residual of each row about the fit


def _sums(group, n_groups, values):
    return np.bincount(group, weights=values, minlength=n_groups)


def _group_median(values, group, n_groups, start, count):
    """Median of ``values`` within each group, by one sort of all values with the groups kept apart."""
    spread = float(np.max(np.abs(values))) if values.size else 0.0
    gap = 2.0 * spread + 1.0
    ordered = np.sort(group * gap + values) - np.repeat(np.arange(n_groups) * gap, count)
    low = ordered[start + (count - 1) // 2]
    high = ordered[start + count // 2]
    return 0.5 * (low + high)


def series_statistic(group, n_groups, residual_rad, rate_rad_s, sigma_random_rad, variance_systematic_rad2,
                     *, robust=True) -> SeriesStatistic:
    """Robust chi-square of each series about a fitted level and clock offset.

    Model of row i of series g: ``r_i = m_g + d_i u_g + e_i`` with ``d_i``
    the rate of the predicted altitude, ``u_g`` the clock offset (prior sigma
    CHECK_CLOCK_SIGMA_S) and ``e_i`` the reading error (sigma_random). The
    statistic is ``sum min(z_i^2, C^2) + m^2 / (V_sys + var m) + u^2 / s_u^2``
    with ``C`` = RESIDUAL_CAP_SIGMA and ``V_sys`` the series' mean systematic
    variance (errors common to its rows: gnomon height, edge, refraction).
    With ``robust`` the fit starts at the median and uses Huber weights;
    without, it is plain weighted least squares and nothing is capped.

    Parameters
    ----------
    group : int array (n,)
        Series of each row, 0..n_groups-1.
    residual_rad, rate_rad_s, sigma_random_rad, variance_systematic_rad2 : arrays (n,)
        Observed minus predicted altitude [rad], its rate with time [rad/s],
        the random and the systematic error [rad, rad^2].

    Returns
    -------
    SeriesStatistic

    >>> g = np.zeros(5, int)
    >>> s = series_statistic(g, 1, np.full(5, 1e-3), np.zeros(5), np.full(5, 1e-3), np.full(5, 1e-6))
    >>> round(float(s.statistic[0]), 2), round(float(s.level_rad[0]) * 1e3, 3)
    (0.83, 1.0)
    """
    group = np.asarray(group, int)
    r = np.asarray(residual_rad, float)
    d = np.asarray(rate_rad_s, float)
    w = 1.0 / np.asarray(sigma_random_rad, float) ** 2
    count = np.bincount(group, minlength=n_groups)
    prior = 1.0 / CHECK_CLOCK_SIGMA_S**2
    if robust:
        start = np.concatenate([[0], np.cumsum(count)[:-1]])
        m = _group_median(r, group, n_groups, start, np.maximum(count, 0))
    else:
        m = _sums(group, n_groups, w * r) / np.maximum(_sums(group, n_groups, w), 1e-300)
    u = np.zeros(n_groups)
    weight = w
    iterations = _FIT_ITERATIONS if robust else 1
    for _ in range(iterations):
        if robust:
            z = (r - m[group] - d * u[group]) * np.sqrt(w)
            weight = w * np.minimum(1.0, HUBER_SIGMA / np.maximum(np.abs(z), 1e-12))
        a = _sums(group, n_groups, weight)
        b = _sums(group, n_groups, weight * d)
        c = _sums(group, n_groups, weight * d * d) + prior
        b1 = _sums(group, n_groups, weight * r)
        b2 = _sums(group, n_groups, weight * d * r)
        det = a * c - b * b
        m = (c * b1 - b * b2) / det
        u = (a * b2 - b * b1) / det
    var_m = c / det
    z = (r - m[group] - d * u[group]) * np.sqrt(w)
    z2 = np.minimum(z * z, RESIDUAL_CAP_SIGMA**2) if robust else z * z
    scatter = _sums(group, n_groups, z2)
    v_sys = _sums(group, n_groups, variance_systematic_rad2) / np.maximum(count, 1)
    level_var = v_sys + var_m
    statistic = scatter + m * m / level_var + u * u * prior
    return SeriesStatistic(
        statistic=statistic,
        level_rad=m,
        level_sigma_rad=np.sqrt(level_var),
        clock_s=u,
        mean_square=scatter / np.maximum(count, 1),
        z=z,
    )


# --- observed altitudes and their errors --------------------------------------------------


def _edge_sign(edge) -> np.ndarray:
    edge = np.asarray(edge, dtype=object)
    names, inverse = np.unique(edge.astype(str), return_inverse=True)
    return np.array([EDGE_LIMB_SIGN.get(n, 0.0) for n in names], float)[inverse]


def _observed(rows: ShadowRows, length_m, sign, semidiameter_deg, temperature_c, pressure_hpa):
    """Observed centre altitude [rad] and the random and systematic error terms (as centre_altitude_deg)."""
    apparent_deg = np.degrees(np.arctan2(rows.gnomon_m, length_m))
    refraction_deg = refraction_from_apparent_deg(apparent_deg, temperature_c, pressure_hpa)
    centre_deg = apparent_deg - refraction_deg - sign * semidiameter_deg
    return np.radians(centre_deg), refraction_deg


def _error_terms(rows: ShadowRows, length_m, altitude_deg, semidiameter_deg, refraction_deg, measured_weather,
                 edge=None):
    """(random reading variance, systematic variance) per row [rad^2], from altitude_error_terms_rad."""
    random_var = np.zeros(len(rows))
    systematic_var = np.zeros(len(rows))
    edges = np.asarray(rows.edge if edge is None else edge, dtype=object).astype(str)
    for name in np.unique(edges):  # at most three edge names
        pick = edges == name
        terms = altitude_error_terms_rad(
            rows.gnomon_m[pick], length_m[pick], rows.shadow_sigma_m[pick], rows.gnomon_sigma_m[pick],
            name, altitude_deg[pick], semidiameter_deg[pick], refraction_deg[pick], measured_weather[pick],
        )
        random_var[pick] = terms["shadow reading"] ** 2
        systematic_var[pick] = terms["gnomon height"] ** 2 + terms["edge location"] ** 2 + terms["refraction"] ** 2
    return random_var, systematic_var


# --- hypotheses --------------------------------------------------------------------------------


@dataclass(frozen=True)
class _Hypothesis:
    code: str
    label: str
    hours: float = 0.0
    factor: float = 1.0
    edge: str | None = None
    longitude_sign: float = 1.0
    latitude_sign: float = 1.0
    local_as_utc: bool = False

    @property
    def moves_time(self) -> bool:
        return self.hours != 0.0 or self.local_as_utc


def _hypotheses() -> tuple[_Hypothesis, ...]:
    out = [_Hypothesis("local-time-as-utc", "local time typed as UTC", local_as_utc=True)]
    out += [_Hypothesis("time-shift-hours", f"times {h:+d} h", hours=float(h)) for h in TIME_SHIFTS_H]
    out.append(_Hypothesis("longitude-sign", "longitude sign", longitude_sign=-1.0))
    out.append(_Hypothesis("latitude-sign", "latitude sign", latitude_sign=-1.0))
    out += [_Hypothesis("length-unit", f"lengths x {f:.6g}", factor=f) for f in LENGTH_FACTORS]
    out += [_Hypothesis("edge-convention", f"{e} edge", edge=e) for e in EDGE_LIMB_SIGN]
    return tuple(out)


#: The alternative hypotheses tried on every series, in order.
HYPOTHESES = _hypotheses()


def _zone_offsets_h(sites, rows: ShadowRows, group, group_site, group_day) -> np.ndarray:
    """Per row: the UTC offset [h] of its site's zone at local noon of its series' day (0 without a zone).

    Only for rows given in ``time_utc``: typing local time there is the mistake tested.
    """
    offsets = np.zeros(len(group_site))
    cache: dict[tuple[str, int], float] = {}
    for g, (s, day) in enumerate(zip(group_site, group_day, strict=True)):  # one per series, not per row
        zone = sites[s].timezone
        if zone is None:
            continue
        key = (zone, int(day))
        if key not in cache:
            noon = _dt.datetime(1970, 1, 1, 12) + _dt.timedelta(days=int(day))
            offset = ZoneInfo(zone).utcoffset(noon)
            cache[key] = 0.0 if offset is None else offset.total_seconds() / 3600.0
        offsets[g] = cache[key]
    per_row = offsets[group]
    return np.where(np.asarray(rows.time_column, dtype=object) == "time_utc", per_row, 0.0)


# --- the check ------------------------------------------------------------------------------------


def check_shadow_rows(sites: tuple[CheckSite, ...], rows: ShadowRows) -> ShadowCheck:
    """Flags for shadow rows that disagree with the Sun, and why.

    Parameters
    ----------
    sites : tuple of CheckSite
        ``rows.site_index`` points into it.
    rows : ShadowRows
        The rows to check (good rows of the logs, defaults filled in).

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
    >>> rows = ShadowRows(np.array(["a.csv"] * 3, dtype=object), np.arange(1, 4), np.zeros(3, int), t,
    ...     np.array(["time_utc"] * 3, dtype=object), syn.shadow_m * 10, np.array(["shadow_m"] * 3, dtype=object),
    ...     syn.gnomon_m, syn.edge, np.full(3, 0.002), np.full(3, 0.001), np.full(3, np.nan),
    ...     np.full(3, np.nan), np.array([""] * 3, dtype=object))
    >>> result = check_shadow_rows((CheckSite("ridge", 46.2, 7.4, 620.0),), rows)
    >>> [(f.row, f.code, f.fields["factor"]) for f in result.flags]
    [(1, 'length-unit', 10.0), (2, 'length-unit', 10.0), (3, 'length-unit', 10.0)]
    """
    n = len(rows)
    if n == 0:
        return ShadowCheck((), (), False)
    idx = np.asarray(rows.site_index, int)
    lat = np.array([s.latitude_deg for s in sites], float)[idx]
    lon = np.array([s.longitude_deg for s in sites], float)[idx]
    elev = np.array([s.elevation_m for s in sites], float)[idx]
    t = np.asarray(rows.time_utc, dtype="datetime64[ms]")

    # series: runs of one file and site with no gap longer than SERIES_GAP_H between readings
    _, file_index = np.unique(np.asarray(rows.file, dtype=object).astype(str), return_inverse=True)
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
    pred0, rate0, ha0, sd = sun_altitude_rad(t, lat, lon)
    pred0_deg = np.degrees(pred0)
    obs0, refr0 = _observed(rows, rows.shadow_m, sign, sd, temperature, pressure)
    rand0, sys0 = _error_terms(rows, rows.shadow_m, pred0_deg, sd, refr0, measured_weather)
    rand0 = rand0 + (rate0 * READING_TIME_SIGMA_S) ** 2
    base = series_statistic(group, n_groups, obs0 - pred0, rate0, np.sqrt(rand0), sys0)

    zone_offset_h = _zone_offsets_h(sites, rows, group, group_site, group_day)
    stats, fits, separations = [], [], []
    for h in HYPOTHESES:  # a few dozen hypotheses, each vectorised over every row
        pred, rate, obs, rand, sysv = pred0, rate0, obs0, rand0, sys0
        if h.moves_time or h.longitude_sign != 1.0 or h.latitude_sign != 1.0:
            shift_h = -zone_offset_h if h.local_as_utc else np.full(n, h.hours)
            t_h = t + np.round(shift_h * 3600e3).astype(np.int64).astype("timedelta64[ms]")
            if _in_span(t_h):
                pred, rate, _, _ = sun_altitude_rad(t_h, lat * h.latitude_sign, lon * h.longitude_sign)
            else:
                stats.append(None)
                fits.append(None)
                separations.append(np.zeros(n_groups))
                continue
            rand = rand0 - (rate0 * READING_TIME_SIGMA_S) ** 2 + (rate * READING_TIME_SIGMA_S) ** 2
        if h.factor != 1.0:
            length = rows.shadow_m / h.factor
            obs, refr = _observed(rows, length, sign, sd, temperature, pressure)
            rand, sysv = _error_terms(rows, length, pred0_deg, sd, refr, measured_weather)
            rand = rand + (rate0 * READING_TIME_SIGMA_S) ** 2
        if h.edge is not None:
            obs = obs0 - np.radians((EDGE_LIMB_SIGN[h.edge] - sign) * sd)
            rand, sysv = _error_terms(rows, rows.shadow_m, pred0_deg, sd, refr0, measured_weather,
                                      edge=np.full(n, h.edge, dtype=object))
            rand = rand + (rate0 * READING_TIME_SIGMA_S) ** 2
        fit = series_statistic(group, n_groups, obs - pred, rate, np.sqrt(rand), sysv)
        delta = (obs0 - pred0) - (obs - pred)
        sep = series_statistic(group, n_groups, delta, rate0, np.sqrt(rand0), sys0, robust=False).statistic
        stats.append(fit.statistic)
        fits.append(fit)
        separations.append(sep)

    verdicts = _decide(base, stats, fits, separations, count)
    noon_only = bool(np.median(np.abs(ha0)) <= np.radians(NOON_ONLY_MEDIAN_H * 15.0))
    flags: list[Flag] = []
    diagnoses: list[SeriesDiagnosis] = []
    chosen_z = base.z.copy()
    explained_time = np.zeros(n_groups, bool)
    for g in range(n_groups):  # one pass over series, not rows; flags are built only where needed
        verdict, k, candidates = verdicts[g]
        site = sites[group_site[g]]
        rows_g = order[start[g] : start[g] + count[g]] if verdict != "fits" else None
        date = str(np.datetime64(int(group_day[g]), "D"))
        file = str(rows.file[first_row[g]])
        best_stat = None if k is None else float(stats[k][g])
        diagnoses.append(
            SeriesDiagnosis(
                file=file, site=site.id, date=date, rows=int(count[g]),
                statistic_logged=round(float(base.statistic[g]), 2),
                level_arcmin=round(float(base.level_rad[g]) * _ARCMIN_PER_RAD, 2),
                level_sigma=round(float(base.level_rad[g] / base.level_sigma_rad[g]), 2),
                best=None if k is None else HYPOTHESES[k].label,
                statistic_best=None if best_stat is None else round(best_stat, 2),
                verdict=verdict,
            )
        )
        if verdict == "fits":
            continue
        if verdict == "explained":
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
    return ShadowCheck(tuple(flags), tuple(diagnoses), noon_only)


def _in_span(t) -> bool:
    from firstrung import ephemeris

    first, last = ephemeris.ephemeris_span_utc()
    return bool(np.all((t >= first) & (t <= last)))


def _decide(base: SeriesStatistic, stats, fits, separations, count):
    """Per series: ("fits" | "explained" | "unexplained" | "ambiguous", chosen hypothesis index, candidates)."""
    n_groups = count.size
    k_all = len(HYPOTHESES)
    table = np.full((k_all, n_groups), np.inf)
    for k, s in enumerate(stats):
        if s is None:
            continue
        h = HYPOTHESES[k]
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
        families = {_FAMILY[HYPOTHESES[k].code] for k in band}
        chosen = min(band, key=lambda k: (_PREFERENCE[HYPOTHESES[k].code], table[k, g]))
        fit = fits[chosen]
        acceptable = (
            abs(fit.level_rad[g] / fit.level_sigma_rad[g]) <= ACCEPTABLE_LEVEL_SIGMA
            and fit.mean_square[g] <= ACCEPTABLE_MEAN_SQUARE
        )
        others = tuple(HYPOTHESES[k].label for k in band if k != chosen)
        if len(families) > 1 or (HYPOTHESES[chosen].code == "length-unit" and len(band) > 1):
            out.append(("ambiguous", None, tuple(HYPOTHESES[k].label for k in band)))
        elif not acceptable:
            out.append(("unexplained", None, (HYPOTHESES[chosen].label,)))
        else:
            out.append(("explained", chosen, others))
    return out


# --- building the flags ------------------------------------------------------------------------


@dataclass
class _Context:
    site: CheckSite
    date: str
    file: str
    n: int
    statistic_logged: float
    statistic_best: float | None
    alternatives: tuple
    zone_offset_h: float
    rows: ShadowRows
    rows_g: np.ndarray
    fit: SeriesStatistic
    g: int


def _plural(x: float, word: str) -> str:
    return f"{x:g} {word}" + ("" if abs(x) == 1 else "s")


def _row_span(rows_g_rows) -> str:
    r = np.sort(np.asarray(rows_g_rows))
    return f"row {r[0]}" if r.size == 1 else f"rows {r[0]}-{r[-1]}"


def _statistic_text(c: _Context) -> str:
    return (
        f"robust chi-square {c.statistic_logged:.1f} as logged against {c.statistic_best:.1f} "
        f"so explained, over {c.n} reading{'s' if c.n != 1 else ''}"
    )


def _flags_for_rows(c: _Context, code: str, severity: str, message: str, fix: str, fields: dict) -> list[Flag]:
    base_fields = {**fields, "statistic_logged": round(c.statistic_logged, 2)}
    if c.statistic_best is not None:
        base_fields["statistic_explained"] = round(c.statistic_best, 2)
    base_fields["series_rows"] = c.n
    return [
        Flag(c.file, int(c.rows.row[i]), c.site.id, code, severity, message, fix, str(c.rows.observer[i] or ""),
             dict(base_fields))
        for i in c.rows_g
    ]


_UNIT_GUESSES = {
    # (column unit, factor): what was probably typed
    ("cm", 10.0): "millimetres typed in a centimetre column",
    ("m", 100.0): "centimetres typed in a metre column",
    ("m", 1000.0): "millimetres typed in a metre column",
    ("mm", 0.1): "centimetres typed in a millimetre column",
    ("cm", 0.01): "metres typed in a centimetre column",
    ("mm", 0.001): "metres typed in a millimetre column",
    ("cm", 1 / 2.54): "inches typed in a centimetre column",
    ("mm", 1 / 25.4): "inches typed in a millimetre column",
    ("cm", 1 / 30.48): "feet typed in a centimetre column",
    ("mm", 0.01): "decimetres typed in a millimetre column",
}


def _explained_flags(h: _Hypothesis, c: _Context) -> list[Flag]:
    site, rows = c.site, c.rows
    where = f"{c.file} {_row_span(rows.row[c.rows_g])}"
    stat = _statistic_text(c)
    observer = str(rows.observer[c.rows_g[0]] or "") or "the observer"
    also = ""
    lon_alt = [a for a in c.alternatives if a == "longitude sign"]
    if lon_alt and h.code != "longitude-sign":
        also = (f"; a wrong longitude sign would fit as well ({site.longitude_deg:g} deg is close to a "
                "multiple of 7.5 deg), so check the campaign's longitude too")
    if h.code == "local-time-as-utc":
        offset = c.zone_offset_h
        message = (
            f"the readings at {site.id} on {c.date} fit the Sun when their times are read as local time "
            f"({site.timezone}, UTC{offset:+g} h), not UTC: local clock times were probably typed in the "
            f"time_utc column ({stat}){also}"
        )
        fix = (f"ask {observer} to confirm; then rename the column of {c.file} to time_local, or subtract "
               f"{_plural(offset, 'hour')} from {where}")
        return _flags_for_rows(c, h.code, "error", message, fix,
                               {"hours": -offset, "offset_hours": offset, "timezone": site.timezone})
    if h.code == "time-shift-hours":
        hours = h.hours
        direction = "later" if hours > 0 else "earlier"
        column = str(rows.time_column[c.rows_g[0]])
        if abs(hours) == 1 and column == "time_local":
            why = ("the clock was probably on standard time while daylight-saving time applied" if hours > 0
                   else "the clock was probably on daylight-saving time")
        elif abs(hours) == 1:
            why = "the conversion to UTC probably used the wrong offset (daylight-saving time?)"
        else:
            why = "the clock or the conversion to UTC was probably set to the wrong zone"
        message = (f"the readings at {site.id} on {c.date} fit the Sun exactly {_plural(abs(hours), 'hour')} "
                   f"{direction} than logged: {why} ({stat}){also}")
        verb = "add" if hours > 0 else "subtract"
        fix = f"ask {observer} which time the clock showed; if confirmed, {verb} {_plural(abs(hours), 'hour')} to {where}"
        return _flags_for_rows(c, h.code, "error", message, fix, {"hours": hours})
    if h.code == "longitude-sign":
        hours = 2.0 * site.longitude_deg / 15.0
        message = (
            f"the readings at {site.id} on {c.date} fit a longitude of {-site.longitude_deg:g} deg, not the "
            f"campaign's {site.longitude_deg:g} deg: apparent noon came {abs(hours) * 60:.0f} min "
            f"{'later' if hours > 0 else 'earlier'} than predicted, so the sign of longitude_deg is probably "
            f"wrong (east is positive) ({stat})"
        )
        fix = (f"check longitude_deg of site '{site.id}' in the campaign file against a map "
               f"(east positive); {-site.longitude_deg:g} fits these readings")
        return _flags_for_rows(c, h.code, "error", message, fix,
                               {"longitude_deg": site.longitude_deg, "fitted_longitude_deg": -site.longitude_deg,
                                "hours": round(hours, 4)})
    if h.code == "latitude-sign":
        message = (
            f"the readings at {site.id} on {c.date} fit a latitude of {-site.latitude_deg:g} deg, not the "
            f"campaign's {site.latitude_deg:g} deg: the sign of latitude_deg is probably wrong (north is "
            f"positive) ({stat})"
        )
        fix = f"check latitude_deg of site '{site.id}' in the campaign file (north positive)"
        return _flags_for_rows(c, h.code, "error", message, fix,
                               {"latitude_deg": site.latitude_deg, "fitted_latitude_deg": -site.latitude_deg})
    if h.code == "length-unit":
        f = h.factor
        column = str(rows.shadow_column[c.rows_g[0]])
        unit = column.rsplit("_", 1)[-1]
        size = f"{f:.4g} times" if f >= 1 else f"1/{1 / f:.4g} of"
        guess = _UNIT_GUESSES.get((unit, _nearest_factor(f)))
        guess_text = f": {guess}?" if guess else ": a unit mix-up?"
        message = (f"shadow lengths at {site.id} on {c.date} are {size} what the Sun allows{guess_text} "
                   f"({stat})")
        scale = f"divide the values of {where} by {f:.6g}" if f >= 1 else f"multiply the values of {where} by {1 / f:.6g}"
        fix = (f"ask {observer} in which unit the lengths were measured; the column is {column}; "
               f"{scale}, or give them in the right column")
        return _flags_for_rows(c, h.code, "error", message, fix, {"factor": float(f), "column": column})
    # edge convention
    logged = sorted({str(e) for e in rows.edge[c.rows_g]})
    close = [a.split()[0] for a in c.alternatives if a.endswith(" edge")]
    also = f" (the {' or '.join(close)} edge fits almost as well)" if close else ""
    message = (
        f"the readings at {site.id} on {c.date} fit the {h.edge} edge of the shadow{also}, not the "
        f"{'/'.join(logged)} edge stated for them (the difference is the Sun's semi-diameter or "
        f"diameter, 16' or 32'; {stat})"
    )
    fix = (f"ask {observer} which edge was marked (sharp dark end, middle of the soft fringe, faint end) "
           f"and set edge = \"{h.edge}\" for these rows or for the site's gnomon")
    return _flags_for_rows(c, h.code, "error", message, fix, {"edge_logged": "/".join(logged), "edge": h.edge})


def _nearest_factor(f: float) -> float:
    for known in LENGTH_FACTORS:
        if abs(known / f - 1.0) < 1e-9:
            return known
    return f


def _mismatch_flags(c: _Context) -> list[Flag]:
    if c.n < MIN_ROWS_FOR_SHAPE:
        return []  # single rows are judged by the outlier test
    level = float(c.fit.level_rad[c.g]) * _ARCMIN_PER_RAD
    z = float(c.fit.level_rad[c.g] / c.fit.level_sigma_rad[c.g])
    candidates = ", ".join(c.alternatives)
    tail = (f"; several explanations fit about equally well: {candidates}" if len(c.alternatives) > 1
            else f"; the nearest usual mistake ({candidates}) does not fit well either" if c.alternatives
            else "; none of the usual mistakes (clock, zone, coordinates' signs, units, edge) explains them")
    message = (
        f"the readings at {c.site.id} on {c.date} do not fit the Sun: {abs(level):.1f}' "
        f"{'high' if level > 0 else 'low'} on average ({abs(z):.1f} sigma; robust chi-square "
        f"{c.statistic_logged:.1f} over {c.n} readings){tail}"
    )
    observer = str(c.rows.observer[c.rows_g[0]] or "") or "the observer"
    fix = (f"ask {observer} for the field sheet: the clock and its zone, the length unit, the gnomon's "
           "height and which shadow edge was marked")
    return _flags_for_rows(c, "series-mismatch", "error", message, fix,
                           {"level_arcmin": round(level, 2), "level_sigma": round(z, 2),
                            "candidates": list(c.alternatives)})


def _outlier_flags(sites, rows, group, n_groups, count, z, residual0, rand0, sys0, verdicts) -> list[Flag]:
    """Rows far from their series' fit (robust spread), or for series of one or two rows, from the Sun."""
    small = count[group] < MIN_ROWS_FOR_SHAPE
    spread = np.ones(n_groups)
    big = count >= MIN_ROWS_FOR_SPREAD
    if np.any(big):
        start = np.concatenate([[0], np.cumsum(count)[:-1]])
        mad = _group_median(np.abs(z), group, n_groups, start, count)
        spread = np.where(big, np.maximum(1.0, 1.4826 * mad), 1.0)
    score = np.abs(z) / spread[group]
    direct = np.abs(residual0) / np.sqrt(rand0 + sys0)
    score = np.where(small, direct, score)
    explained = np.array([v[0] == "explained" for v in verdicts])
    # in an unexplained series the whole series is flagged; rows are not tested one by one
    tested = ~np.array([v[0] in ("unexplained", "ambiguous") and c >= MIN_ROWS_FOR_SHAPE
                        for v, c in zip(verdicts, count, strict=True)])[group]
    hits = np.flatnonzero(tested & (score > OUTLIER_SIGMA))
    out = []
    for i in hits:  # flagged rows only
        site = sites[rows.site_index[i]]
        s = float(score[i])
        severity = "error" if s > OUTLIER_ERROR_SIGMA else "warning"
        against = "the Sun" if small[i] else "the rest of its series"
        if explained[group[i]] and not small[i]:
            against += " (after the series' own mistake is corrected)"
        out.append(
            Flag(
                str(rows.file[i]), int(rows.row[i]), site.id, "outlier", severity,
                f"this reading at {site.id} is {s:.1f} sigma off {against}: a misread or mistyped value?",
                f"ask {str(rows.observer[i] or '') or 'the observer'} to check this row against the field sheet "
                "(a digit typed wrong, a reading of another gnomon?)",
                str(rows.observer[i] or ""),
                {"sigma": round(s, 2)},
            )
        )
    return out


def _horizon_flags(sites, rows, altitude_deg, time_ok) -> list[Flag]:
    out = []
    for i in np.flatnonzero(time_ok & (altitude_deg < MIN_ALTITUDE_DEG)):
        site = sites[rows.site_index[i]]
        a = float(altitude_deg[i])
        below = a < 0.0
        message = (
            f"at the logged time ({np.datetime64(rows.time_utc[i], 's')}Z) the Sun was "
            + (f"{-a:.1f} deg below the horizon at {site.id}: no shadow can be cast" if below
               else f"only {a:.1f} deg high at {site.id}: the shadow is too long and too soft to use (below "
               f"{MIN_ALTITUDE_DEG:g} deg the reduction leaves it out)")
        )
        out.append(
            Flag(str(rows.file[i]), int(rows.row[i]), site.id, "sun-below-horizon", "error" if below else "warning",
                 message, "check the date and time of this row, and the time zone the clock was on",
                 str(rows.observer[i] or ""), {"altitude_deg": round(a, 3)})
        )
    return out


def _noon_flags(sites, rows, hour_angle_rad, time_ok) -> list[Flag]:
    hours = np.degrees(hour_angle_rad) / 15.0
    out = []
    for i in np.flatnonzero(time_ok & (np.abs(hours) > FAR_FROM_NOON_H)):
        site = sites[rows.site_index[i]]
        h = float(hours[i])
        out.append(
            Flag(str(rows.file[i]), int(rows.row[i]), site.id, "far-from-noon", "warning",
                 f"this reading at {site.id} was taken {abs(h):.1f} h {'after' if h > 0 else 'before'} local "
                 "apparent noon, in a campaign whose readings are otherwise near noon",
                 "check the time of this row (hour typed wrong?); if right, it is kept",
                 str(rows.observer[i] or ""), {"hours_from_noon": round(h, 3)})
        )
    return out


def _duplicate_flags(sites, rows) -> list[Flag]:
    """Second and later copies of a row with the same site, time and length."""
    n = len(rows)
    t = np.asarray(rows.time_utc, dtype="datetime64[ms]").astype(np.int64)
    length_um = np.round(np.asarray(rows.shadow_m) * 1e6).astype(np.int64)
    keys = np.stack([np.asarray(rows.site_index, np.int64), t, length_um], axis=1)
    _, first, inverse = np.unique(keys, axis=0, return_index=True, return_inverse=True)
    inverse = inverse.ravel()
    out = []
    for i in np.flatnonzero(first[inverse] != np.arange(n)):
        j = first[inverse[i]]
        site = sites[rows.site_index[i]]
        out.append(
            Flag(str(rows.file[i]), int(rows.row[i]), site.id, "duplicate-row", "error",
                 f"same site, time and shadow length as {rows.file[j]} row {rows.row[j]}: a row entered twice?",
                 "delete the copy (or, if two readings were really taken, correct the time of one)",
                 str(rows.observer[i] or ""), {"duplicate_of": f"{rows.file[j]}:{rows.row[j]}"})
        )
    return out


# --- problems found by the readers ------------------------------------------------------------


# --- summary --------------------------------------------------------------------------------------


# --- entry points over a campaign's log ------------------------------------------------------------


def check_shadow_log(campaign: Campaign, log) -> tuple[ShadowCheck, list[Flag]]:
    """Check a read shadow log against the campaign and the ephemeris.

    Returns the check of the good rows and the flags for the rows the reader
    (or the gnomon lookup) refused.
    """
    rows, extra = shadow_rows(campaign, log)
    result = check_shadow_rows(check_sites(campaign), rows)
    return result, problem_flags(tuple(log.problems) + tuple(extra))


def log_flags(campaign: Campaign, log) -> list[Flag]:
    """The flags of a shadow log (what :func:`firstrung.flags.without_error_rows` leaves out)."""
    return list(check_shadow_log(campaign, log)[0].flags)


def check_campaign(campaign: Campaign) -> KindCheck:
    """Read the campaign's shadow logs and check them: flags, refused rows, per-series diagnoses."""
    from firstrung.methods.shadows.log import read_shadow_logs

    log = read_shadow_logs(campaign)
    result, problems = check_shadow_log(campaign, log)
    return KindCheck(tuple(result.flags) + tuple(problems), result.series, result.noon_only)


