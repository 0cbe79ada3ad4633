"""The half-moon rung from a campaign file: the plan of the quarters, and the reduction of the logs.

``plan_phases`` lists the quarters of a range with each site's own half moon
and the windows when the Sun and the Moon are both up; ``run_phases`` reads
the half-moon logs and turns every row (a measured elongation, a timing, or
a series of illuminated fractions) into an elongation at half moon with its
error, combines them, and applies the interval method. Both read files but
never print and never write.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass, field
from zoneinfo import ZoneInfo

import numpy as np

from firstrung.campaign import read_campaign
from firstrung.campaign_model import Campaign
from firstrung.errors import ComputationError, InputError, RowProblem
from firstrung.methods.phases import reduction as m
from firstrung.methods.phases.combine import CombinedElongation, combine_half_moon
from firstrung.methods.phases.interval_method import IntervalMethod, interval_method
from firstrung.methods.phases.log import read_phase_logs
from firstrung.methods.phases.shared import mark_shared_judgement
from firstrung.methods.phases.topocentric import both_up_windows, sun_moon_topocentric
from firstrung.uncertainty import Measured

__all__ = [
    "HalfMoonEstimate",
    "PhasePlan",
    "PhaseRun",
    "PhaseSettings",
    "PlanSettings",
    "calendar_bytes",
    "local_time_iso",
    "plan_phases",
    "run_phases",
]

#: A row is assigned to the nearest quarter of its kind; farther than this it is refused [d].
MAX_DAYS_FROM_QUARTER = 4.0
#: Margin of the quarter search around the rows' times [d] (a half month and a little).
_QUARTER_SEARCH_MARGIN_D = 20.0
#: A body lower than this is not seen [deg] (the refracted horizon is near -0.6 deg).
_BELOW_HORIZON_DEG = -1.0
_US_PER_S = 1_000_000


def local_time_iso(t_utc, zone: str | None) -> str | None:
    """ISO 8601 local time with its offset in the IANA zone, or None without a zone.

    >>> local_time_iso(np.datetime64("2027-01-15T18:40:00"), "Europe/Zurich")
    '2027-01-15T19:40:00+01:00'
    """
    if zone is None:
        return None
    aware = np.datetime64(t_utc, "s").astype(dt.datetime).replace(tzinfo=dt.UTC)
    return aware.astimezone(ZoneInfo(zone)).isoformat()


def _site_arrays(sites):
    lat = np.array([s.latitude_deg for s in sites], dtype=float)
    lon = np.array([s.longitude_deg for s in sites], dtype=float)
    elev = np.array([s.elevation_m for s in sites], dtype=float)
    return lat, lon, elev


def _observed_altitude_deg(airless_deg):
    from firstrung.refraction import apparent_from_true_altitude_deg

    return np.asarray(apparent_from_true_altitude_deg(np.clip(airless_deg, -90.0, 90.0)), dtype=float)


# --- the plan ------------------------------------------------------------------------------


@dataclass(frozen=True)
class PlanSettings:
    """What a window needs.

    Parameters
    ----------
    min_altitude_deg : float
        Lowest observed altitude of the Sun's and the Moon's centres [deg].
    min_sun_elongation_deg : float
        Smallest Sun-Moon angle allowed for the instrument [deg]: never point
        optics near the Sun.
    half_span_h : float
        Windows are searched this long before and after each half moon [h].
    step_min : float
        Step of the search grid [min].
    """

    min_altitude_deg: float = 10.0
    min_sun_elongation_deg: float = 30.0
    half_span_h: float = 24.0
    step_min: float = 10.0


@dataclass(frozen=True)
class PhasePlan:
    """The quarters of a range, each site's half moon, and the windows.

    ``site_dichotomy_utc`` and ``at_dichotomy`` are (quarters, sites);
    ``windows`` is flat (see :class:`~firstrung.methods.phases.prediction.HalfMoonWindows`)
    with ``at_window`` the geometry at each window's ``closest_utc``.
    ``rank`` is 1 for the best quarter and 0 for an excluded one, whose
    reasons are in ``excluded``. ``*_observed_altitude_deg`` are refracted
    (standard conditions): at each site's half moon (quarters, sites) and at
    each window's closest instant (flat).
    """

    campaign: Campaign
    first_date: str
    last_date: str
    settings: PlanSettings
    quarters: object
    site_dichotomy_utc: np.ndarray
    at_dichotomy: object
    windows: object
    at_window: object
    rank: np.ndarray
    excluded: tuple[tuple[str, ...], ...]
    sites_with_half_moon: np.ndarray
    sites_with_window: np.ndarray
    sun_observed_altitude_deg: np.ndarray
    moon_observed_altitude_deg: np.ndarray
    window_sun_observed_altitude_deg: np.ndarray
    window_moon_observed_altitude_deg: np.ndarray


def _parse_date(name: str, value) -> np.datetime64:
    try:
        return np.datetime64(str(value).strip(), "D")
    except ValueError:
        raise InputError(f"{name}: expected an ISO date such as 2027-01-15, got {value!r}") from None


def plan_phases(campaign_or_path, first_date, last_date, settings: PlanSettings = PlanSettings()) -> PhasePlan:
    """Plan the half moons of a range at every site of a campaign.

    Parameters
    ----------
    campaign_or_path : Campaign or path-like
        The campaign (or its TOML file).
    first_date, last_date : str or datetime64
        The range of the quadratures, both dates included (UTC days).
    settings : PlanSettings

    Returns
    -------
    PhasePlan

    Raises
    ------
    InputError
        Bad dates, a campaign without sites, or settings out of range.
    """
    from firstrung.methods.phases import prediction as ep

    campaign = campaign_or_path if isinstance(campaign_or_path, Campaign) else read_campaign(campaign_or_path)
    if not campaign.sites:
        raise InputError("the campaign file lists no [[site]]", file=str(campaign.path))
    first, last = _parse_date("--from", first_date), _parse_date("--to", last_date)
    if last < first:
        raise InputError(f"--to: {last} is before --from {first}; expected a later or equal date")
    start = first.astype("datetime64[us]")
    stop = (last + np.timedelta64(1, "D")).astype("datetime64[us]")
    quarters = ep.quarters_between(start, stop)
    lat, lon, elev = _site_arrays(campaign.sites)
    q, s = len(quarters), lat.size
    if q:
        site_dich = ep.topocentric_dichotomy_utc(quarters.dichotomy_utc[:, None], lat, lon, elev)
        at_dich = sun_moon_topocentric(site_dich, lat, lon, elev, rates=False)
        sun_alt = _observed_altitude_deg(at_dich.sun_altitude_deg)
        moon_alt = _observed_altitude_deg(at_dich.moon_altitude_deg)
    else:
        site_dich = np.zeros((0, s), "datetime64[us]")
        at_dich = None
        sun_alt = moon_alt = np.zeros((0, s))
    windows = both_up_windows(
        quarters.dichotomy_utc, site_dich, lat, lon, elev,
        half_span_h=settings.half_span_h, step_min=settings.step_min,
        min_altitude_deg=settings.min_altitude_deg, min_sun_elongation_deg=settings.min_sun_elongation_deg,
    )
    at_window = (
        sun_moon_topocentric(windows.closest_utc, lat[windows.site], lon[windows.site], elev[windows.site], rates=False)
        if len(windows) else None
    )
    window_sun = _observed_altitude_deg(at_window.sun_altitude_deg) if len(windows) else np.zeros(0)
    window_moon = _observed_altitude_deg(at_window.moon_altitude_deg) if len(windows) else np.zeros(0)
    inside = np.zeros((q, s), bool)
    has_window = np.zeros((q, s), bool)
    best_offset = np.full((q, s), np.inf)
    if len(windows):
        np.logical_or.at(inside, (windows.event, windows.site), windows.contains_target)
        has_window[windows.event, windows.site] = True
        np.minimum.at(best_offset, (windows.event, windows.site), np.abs(windows.minutes_from_target))
    n_inside, n_window = inside.sum(axis=1), has_window.sum(axis=1)
    mean_offset = np.where(n_window > 0, np.where(has_window, best_offset, 0.0).sum(axis=1) / np.maximum(n_window, 1), np.inf)
    rank = np.zeros(q, dtype=int)
    excluded = []
    for k in range(q):
        excluded.append(() if n_window[k] else (
            f"no site has the Sun and the Moon both above {settings.min_altitude_deg:g} deg "
            f"within {settings.half_span_h:g} h of the half moon",
        ))
    ok = np.flatnonzero(n_window > 0)
    order = sorted(ok, key=lambda k: (-n_inside[k], -n_window[k], mean_offset[k], k))
    for r, k in enumerate(order, start=1):
        rank[k] = r
    return PhasePlan(
        campaign=campaign, first_date=str(first), last_date=str(last), settings=settings,
        quarters=quarters, site_dichotomy_utc=site_dich, at_dichotomy=at_dich, windows=windows,
        at_window=at_window, rank=rank, excluded=tuple(excluded),
        sites_with_half_moon=n_inside, sites_with_window=n_window,
        sun_observed_altitude_deg=sun_alt, moon_observed_altitude_deg=moon_alt,
        window_sun_observed_altitude_deg=window_sun, window_moon_observed_altitude_deg=window_moon,
    )


def site_notes(plan: PhasePlan, k: int, j: int) -> list[str]:
    """Why a site cannot watch its own half moon of quarter k, if it cannot (plain words)."""
    notes = []
    threshold = plan.settings.min_altitude_deg
    sun = float(plan.sun_observed_altitude_deg[k, j])
    moon = float(plan.moon_observed_altitude_deg[k, j])
    if moon < threshold:
        notes.append(f"the Moon is at {moon:.0f} deg at the half moon (below {threshold:g} deg)")
    if sun < threshold:
        notes.append(f"the Sun is at {sun:.0f} deg at the half moon (below {threshold:g} deg): "
                     "time the half moon or photograph it; the angle cannot be measured")
    return notes


def best_window(plan: PhasePlan, k: int, j: int) -> int | None:
    """Index of the window of quarter k at site j nearest to the site's half moon, or None."""
    w = plan.windows
    idx = np.flatnonzero((w.event == k) & (w.site == j))
    if idx.size == 0:
        return None
    return int(idx[np.argmin(np.abs(w.minutes_from_target[idx]))])


def calendar_bytes(plan: PhasePlan, site: str | None = None) -> bytes:
    """One event per site (or only ``site``) and ranked quarter: the window nearest to that site's half moon."""
    from firstrung.calendar_export import CalendarEvent, events_to_ics
    from firstrung.safety import PHASES_CAUTION

    quarters = plan.quarters
    w = plan.windows
    slug = "-".join("".join(ch if ch.isalnum() else " " for ch in plan.campaign.name.lower()).split()) or "campaign"
    events = []
    for k in np.argsort(quarters.quadrature_utc, kind="stable"):
        if plan.rank[k] == 0:
            continue
        for j, s in enumerate(plan.campaign.sites):
            if site is not None and s.id != site:
                continue
            i = best_window(plan, k, j)
            if i is None:
                continue
            half = plan.site_dichotomy_utc[k, j]
            local = local_time_iso(half, s.timezone)
            lines = [
                f"{quarters.quarter[k].capitalize()} quarter (quadrature) {np.datetime64(quarters.quadrature_utc[k], 's')}Z; "
                f"geocentric true half moon {np.datetime64(quarters.dichotomy_utc[k], 's')}Z",
                f"True half moon seen from {s.name}: {np.datetime64(half, 's')}Z" + (f" ({local})" if local else ""),
                f"Sun and Moon both above {plan.settings.min_altitude_deg:g} deg from "
                f"{np.datetime64(w.start_utc[i], 's')}Z to {np.datetime64(w.end_utc[i], 's')}Z"
                + ("; the half moon falls inside" if w.contains_target[i]
                   else f"; nearest {abs(w.minutes_from_target[i]):.0f} min from the half moon"),
                "Measure the Sun-Moon angle when the Moon looks exactly half lit, or note the time, "
                "or photograph the Moon every 20-30 minutes around it.",
                PHASES_CAUTION,
            ]
            events.append(
                CalendarEvent(
                    uid=f"{slug}-{s.id}-{np.datetime64(quarters.quadrature_utc[k], 'm')}-half-moon@firstrung",
                    start_utc=np.datetime64(w.start_utc[i], "s"),
                    end_utc=np.datetime64(w.end_utc[i], "s"),
                    summary=f"Half moon ({quarters.quarter[k]} quarter) at {s.name}",
                    description="\n".join(lines),
                    location=s.name,
                    geo=(s.latitude_deg, s.longitude_deg),
                )
            )
    return events_to_ics(events, f"{plan.campaign.name}: half moons")


# --- the reduction -----------------------------------------------------------------------------


@dataclass(frozen=True)
class PhaseSettings:
    """Errors assumed where the logs give none.

    Parameters
    ----------
    elongation_sigma_deg : float
        The instrument's error of a measured Sun-Moon angle [deg].
    time_sigma_s : float
        Error of judging "exactly half lit", for rows without ``time_sigma_s``
        [s]. By eye the half moon is good to hours: the terminator is
        straight at half moon and bows by only about 4" half an hour away
        (the Moon's 933" radius times sin 0.25 deg); the eye resolves about 1'
        (7 h away) and judges a line's straightness a few times finer, about
        15" (from memory), reached 2 h away: 2 h is assumed. The judgement is
        shared by all who look at the same Moon: the smallest judgement error
        among a quarter's observers is common to them and does not average down.
    fraction_sigma : float
        Error of an illuminated fraction measured on an image [1].
    fraction_zero_point_sigma : float
        Error shared by every fraction of one photo series (a photometric zero
        point: exposure, processing, the threshold of "lit") [1]; half the
        per-image error by default.
    common_zero_point_sigma : float
        Error of the fractions shared by every series (one camera and processing for all) [1]; 0 by default.
    """

    elongation_sigma_deg: float = 0.25
    time_sigma_s: float = 7200.0
    fraction_sigma: float = 0.01
    fraction_zero_point_sigma: float = 0.005
    common_zero_point_sigma: float = 0.0

    def check(self) -> None:
        for name, value in (("elongation_sigma_deg", self.elongation_sigma_deg), ("time_sigma_s", self.time_sigma_s),
                            ("fraction_sigma", self.fraction_sigma)):
            if not (np.isfinite(value) and value > 0):
                raise InputError(f"{name}: received {value!r}; expected a positive error")
        for name, value in (("fraction_zero_point_sigma", self.fraction_zero_point_sigma),
                            ("common_zero_point_sigma", self.common_zero_point_sigma)):
            if not (np.isfinite(value) and value >= 0):
                raise InputError(f"{name}: received {value!r}; expected a non-negative error")


@dataclass(frozen=True)
class HalfMoonEstimate:
    """One estimate of the elongation at half moon: a row, or a series of images.

    ``elongation_deg`` is the triangle's Sun-Moon angle (the Sun where its light left it) seen from the site at
    the (judged or fitted) half moon, ``sun_moon_distance_ratio`` the ratio
    from it; ``expected_ratio`` is the ephemeris's for that site and quarter.
    """

    kind: str
    site: str
    observer: str
    quarter: str
    quarter_index: int
    quadrature_utc: np.datetime64
    time_utc: np.datetime64
    time_sigma_s: float
    elongation_deg: Measured
    sun_moon_distance_ratio: Measured
    rate_deg_per_h: float
    expected_elongation_deg: float
    expected_ratio: float
    site_dichotomy_utc: np.datetime64
    rows: tuple[str, ...]
    corrections_deg: dict = field(default_factory=dict)
    fit: m.HalfPhaseFit | None = None
    #: The part of ``elongation_deg.sigma`` shared with every estimate judged at the same Moon [deg].
    shared_sigma_deg: float = 0.0


@dataclass(frozen=True)
class PhaseRun:
    """The half-moon reduction with what was read and refused."""

    campaign: Campaign
    settings: PhaseSettings
    estimates: tuple[HalfMoonEstimate, ...]
    combined: CombinedElongation
    by_kind: dict
    interval: IntervalMethod | None
    within_10_percent: m.Precision
    within_factor_2: m.Precision
    sentence: str
    expected_ratio: float
    expected_elongation_deg: float
    rate_deg_per_h: float
    problems: tuple[RowProblem, ...]
    rows_read: int
    rows_accepted: int
    assumptions: tuple[str, ...]
    rows_left_out_flagged: int = 0

    @property
    def sun_moon_distance_ratio(self) -> Measured:
        return self.combined.sun_moon_distance_ratio

    @property
    def elongation_deg(self) -> Measured:
        c = self.combined
        return Measured(c.elongation_deg, c.sigma_deg, c.elongation_deg - c.sigma_deg, c.elongation_deg + c.sigma_deg, "deg")


def _label(log, k) -> str:
    return f"{log.file[k]}:{log.row[k]}"


def _assign_quarters(log, problems):
    """Nearest quarter of the row's kind; rows too far from one are refused. Returns (quarters, index, keep)."""
    from firstrung.methods.phases import prediction as ep

    t = np.asarray(log.time_utc, dtype="datetime64[us]")
    margin = np.timedelta64(int(_QUARTER_SEARCH_MARGIN_D * 86400), "s")
    quarters = ep.quarters_between(t.min() - margin, t.max() + margin)
    index = np.full(t.size, -1)
    keep = np.ones(t.size, bool)
    for kind in ("first", "last"):
        rows = np.flatnonzero(np.asarray(log.quarter) == kind)
        cand = np.flatnonzero(quarters.quarter == kind)
        if rows.size == 0:
            continue
        gap_d = np.abs((t[rows, None] - quarters.dichotomy_utc[None, cand]).astype(np.int64)) / (86400 * _US_PER_S)
        nearest = np.argmin(gap_d, axis=1)
        index[rows] = cand[nearest]
        far = gap_d[np.arange(rows.size), nearest] > MAX_DAYS_FROM_QUARTER
        for r, g in zip(rows[far], gap_d[np.arange(rows.size), nearest][far], strict=True):
            keep[r] = False
            problems.append(RowProblem(
                str(log.file[r]), int(log.row[r]), "quarter",
                f"the nearest {kind} quarter is {g:.1f} days from {np.datetime64(t[r], 's')}Z "
                f"(expected within {MAX_DAYS_FROM_QUARTER:g} days); check the date and the quarter",
            ))
    return quarters, index, keep


def run_phases(campaign_path, settings: PhaseSettings = PhaseSettings(), *, include_flagged: bool = False) -> PhaseRun:
    """Read the campaign's half-moon logs and reduce them to the Sun/Moon distance ratio.

    Raises
    ------
    InputError
        The campaign is unreadable, lists no phase logs, or no row is usable.
    """
    from firstrung.methods.phases import prediction as ep

    settings.check()
    campaign = read_campaign(campaign_path)
    if not campaign.logs.get("phases"):
        raise InputError("the campaign file lists no half-moon logs ([logs] phases = [...])", file=str(campaign_path))
    log = read_phase_logs(campaign)
    left_out_flagged = 0
    if not include_flagged:
        from firstrung.flags import without_error_rows
        from firstrung.methods.phases.check import log_flags

        log, left_out_flagged = without_error_rows(campaign, log, log_flags)
    problems: list[RowProblem] = list(log.problems)
    if len(log) == 0:
        first = f" (first: {problems[0]})" if problems else ""
        raise InputError(f"no usable half-moon rows in the campaign's logs{first}", file=str(campaign_path),
                         problems=tuple(problems))
    site_index = {s.id: i for i, s in enumerate(campaign.sites)}
    lat_all, lon_all, elev_all = _site_arrays(campaign.sites)
    quarters, q_index, keep = _assign_quarters(log, problems)
    sidx = np.array([site_index[s] for s in log.site], dtype=int)
    lat, lon, elev = lat_all[sidx], lon_all[sidx], elev_all[sidx]
    t = np.asarray(log.time_utc, dtype="datetime64[us]")
    at_row = sun_moon_topocentric(t, lat, lon, elev)

    elong = np.asarray(log.elongation_deg, float)
    frac = np.asarray(log.illuminated_fraction, float)
    tsig = np.asarray(log.time_sigma_s, float)
    is_elong, is_frac = np.isfinite(elong), np.isfinite(frac)
    moon_obs = _observed_altitude_deg(at_row.moon_altitude_deg)
    sun_obs = _observed_altitude_deg(at_row.sun_altitude_deg)
    for k in np.flatnonzero(keep & (moon_obs < _BELOW_HORIZON_DEG)):
        keep[k] = False
        problems.append(RowProblem(str(log.file[k]), int(log.row[k]), "time_utc" if log.time_column[k] == "time_utc" else "time_local",
                                   f"the Moon is below the horizon at {log.site[k]} then (altitude {moon_obs[k]:.1f} deg); "
                                   "check the date, the time zone and the site"))
    for k in np.flatnonzero(keep & is_elong & (sun_obs < _BELOW_HORIZON_DEG)):
        keep[k] = False
        problems.append(RowProblem(str(log.file[k]), int(log.row[k]), "elongation_deg",
                                   f"the Sun is below the horizon at {log.site[k]} then (altitude {sun_obs[k]:.1f} deg), "
                                   "so its angle from the Moon cannot have been measured; check the time"))
    for k in np.flatnonzero(keep & is_frac & ((frac <= 0) | (frac >= 1))):
        keep[k] = False
        problems.append(RowProblem(str(log.file[k]), int(log.row[k]), "illuminated_fraction",
                                   f"fraction {frac[k]:g} carries no half-moon timing; expected 0 < k < 1"))

    # each site's own half moon for each quarter that has rows: the expected values
    pairs = sorted({(int(q_index[k]), int(sidx[k])) for k in np.flatnonzero(keep)})
    if not pairs:
        first = f" (first: {problems[0]})" if problems else ""
        raise InputError(f"no usable half-moon rows in the campaign's logs{first}", file=str(campaign_path),
                         problems=tuple(problems))
    pq = np.array([p[0] for p in pairs])
    ps = np.array([p[1] for p in pairs])
    site_half = ep.topocentric_dichotomy_utc(quarters.dichotomy_utc[pq], lat_all[ps], lon_all[ps], elev_all[ps])
    at_half = sun_moon_topocentric(site_half, lat_all[ps], lon_all[ps], elev_all[ps])
    site_quad = ep.topocentric_quadrature_utc(site_half, lat_all[ps], lon_all[ps], elev_all[ps])
    at_quad = sun_moon_topocentric(site_quad, lat_all[ps], lon_all[ps], elev_all[ps])
    pair_of = {p: i for i, p in enumerate(pairs)}

    def expected(k):
        i = pair_of[(int(q_index[k]), int(sidx[k]))]
        return i, float(at_half.elongation_deg[i]), float(at_half.sun_distance_km[i] / at_half.moon_distance_km[i])

    estimates: list[HalfMoonEstimate] = []
    defaulted_time = 0
    for k in np.flatnonzero(keep & ~is_frac):
        i, e_true, r_true = expected(k)
        rate = float(at_row.elongation_rate_deg_per_h[k])
        judge = float(tsig[k]) if np.isfinite(tsig[k]) else settings.time_sigma_s
        defaulted_time += not np.isfinite(tsig[k])
        if is_elong[k]:
            seen_minus_geometric = float(at_row.observed_elongation_deg[k] - at_row.elongation_deg[k])
            refraction = float(at_row.observed_elongation_deg[k] - at_row.apparent_elongation_deg[k])
            e = m.corrected_elongation_deg(float(elong[k]), seen_minus_geometric)
            sigma = m.elongation_sigma_deg(settings.elongation_sigma_deg, judge, rate)
            kind = "elongation"
            corrections = {"refraction": refraction, "parallax and the Moon's own aberration": seen_minus_geometric - refraction}
        else:
            e = float(at_row.elongation_deg[k])
            sigma = m.elongation_sigma_from_timing_deg(judge, rate)
            kind = "timing"
            corrections = {}
        estimates.append(HalfMoonEstimate(
            kind=kind, site=str(log.site[k]), observer=str(log.observer[k] or ""), quarter=str(log.quarter[k]),
            quarter_index=int(q_index[k]), quadrature_utc=quarters.quadrature_utc[q_index[k]], time_utc=t[k],
            time_sigma_s=judge, elongation_deg=Measured(e, sigma, e - sigma, e + sigma, "deg"),
            sun_moon_distance_ratio=m.ratio_from_elongation(float(np.clip(e, 0, 180)), sigma),
            rate_deg_per_h=rate, expected_elongation_deg=e_true, expected_ratio=r_true,
            site_dichotomy_utc=site_half[i], rows=(_label(log, k),), corrections_deg=corrections,
        ))
    estimates = mark_shared_judgement(estimates)

    series_rows = np.flatnonzero(keep & is_frac)
    groups: dict[tuple, list[int]] = {}
    for k in series_rows:
        groups.setdefault((str(log.site[k]), str(log.observer[k] or ""), int(q_index[k])), []).append(int(k))
    fits = []
    for key, rows in groups.items():
        rows = np.array(sorted(rows, key=lambda r: t[r]))
        clock = np.where(np.isfinite(tsig[rows]), tsig[rows], 0.0)
        fit = m.fit_half_phase(at_row.elongation_deg[rows], frac[rows], settings.fraction_sigma,
                               m.elongation_sigma_from_timing_deg(clock, at_row.elongation_rate_deg_per_h[rows]),
                               fraction_zero_point_sigma=settings.fraction_zero_point_sigma)
        nearest = rows[np.argmin(np.abs(frac[rows] - 0.5))]
        fits.append((key, rows, fit, nearest))
    if fits:
        near = np.array([t[f[3]] for f in fits])
        fl = np.array([lat[f[3]] for f in fits])
        fo = np.array([lon[f[3]] for f in fits])
        fe = np.array([elev[f[3]] for f in fits])
        target = np.array([np.clip(f[2].elongation_deg, 80.0, 100.0) for f in fits])
        t_half = ep.time_of_elongation_utc(near, target, fl, fo, fe)
        at_fit = sun_moon_topocentric(t_half, fl, fo, fe)
        for n, (key, rows, fit, nearest) in enumerate(fits):
            i, e_true, r_true = expected(nearest)
            rate = float(at_fit.elongation_rate_deg_per_h[n])
            e, sigma = fit.elongation_deg, fit.sigma_deg
            estimates.append(HalfMoonEstimate(
                kind="fraction series", site=key[0], observer=key[1], quarter=str(log.quarter[nearest]),
                quarter_index=key[2], quadrature_utc=quarters.quadrature_utc[key[2]], time_utc=t_half[n],
                time_sigma_s=sigma / abs(rate) * 3600.0, elongation_deg=Measured(e, sigma, e - sigma, e + sigma, "deg"),
                sun_moon_distance_ratio=m.ratio_from_elongation(float(np.clip(e, 0, 180)), sigma),
                rate_deg_per_h=rate, expected_elongation_deg=e_true, expected_ratio=r_true,
                site_dichotomy_utc=site_half[i], rows=tuple(_label(log, r) for r in rows), fit=fit,
            ))
    if not estimates:
        raise ComputationError("no half-moon estimate could be made from the rows", problems=tuple(problems))
    estimates.sort(key=lambda x: (x.time_utc, x.site, x.rows))

    combined = combine_half_moon(estimates, settings.common_zero_point_sigma)
    by_kind = {kind: combine_half_moon(estimates, settings.common_zero_point_sigma, (kind,))
               for kind in ("elongation", "timing", "fraction series") if any(x.kind == kind for x in estimates)}

    expected_e = float(np.mean([x.expected_elongation_deg for x in estimates]))
    expected_r = float(np.mean([x.expected_ratio for x in estimates]))
    rate = float(np.mean([abs(x.rate_deg_per_h) for x in estimates]))
    p10 = m.precision_needed(expected_e, rate, 0.10)
    p2 = m.precision_needed(expected_e, rate, 1.0)
    sentence = m.precision_sentence(p10, combined.sigma_deg, rate)

    interval = _interval(estimates, pairs, pair_of, site_half, site_quad, at_quad, campaign)

    assumptions = [
        "the right angle is at the Moon at the true half moon (Sun-Moon-observer angle 90 deg, the Moon lit by "
        "the Sun's apparent place: light time and aberration, as the observer sees it); "
        "the ratio is that of the observer's distances, which differs from the geocentric one by less than 1.7 %",
        "timings and fitted half phases give E from the ephemeris's directions of the Sun and the Moon seen "
        "from the site; no ephemeris distance enters the result",
        "measured angles are reduced to the triangle's: standard refraction (10 deg C, 1010 hPa) removed with "
        "the ephemeris's directions; the Sun's aberration stays (it lights the Moon from the same place)",
        f"instrument error of a measured angle {settings.elongation_sigma_deg:g} deg (option)",
        f"illuminated fractions measured to {settings.fraction_sigma:g} (option), with a zero point shared by "
        f"each series of {settings.fraction_zero_point_sigma:g} and by every series of "
        f"{settings.common_zero_point_sigma or 'none'} (options); a series' slope is fixed by the geometry unless its "
        "images determine it to 10 %",
        "judging \"exactly half lit\" carries an error shared by all who look at the same Moon: the smallest "
        "judgement error among a quarter's timings and angles is common to them all, unless four or more of "
        "them scatter as independent errors would (chi2 not below its 5 % point)"
        + (f"; combined as independent: {', '.join(combined.independent_quarters)}"
           if combined.independent_quarters else ""),
        "estimates are combined by generalised least squares in 90 deg - E (shared errors do not average "
        "down), scaled by sqrt(chi2/dof) when the scatter is significant at 5 %",
        "the 68 % interval of the ratio is the image of E +/- sigma; no upper bound when E + sigma reaches 90 deg",
    ]
    if defaulted_time:
        assumptions.append(
            f"{defaulted_time} row(s) without time_sigma_s: judging the half moon by eye to "
            f"{settings.time_sigma_s / 60:g} min assumed (option; the terminator bows by only 4\" half an hour "
            "from half moon, and by the 15\" an eye judges a line's straightness to about 2 h from it)"
        )
    accepted = int(keep.sum())
    return PhaseRun(
        campaign=campaign, settings=settings, estimates=tuple(estimates), combined=combined, by_kind=by_kind,
        interval=interval, within_10_percent=p10, within_factor_2=p2, sentence=sentence,
        expected_ratio=expected_r, expected_elongation_deg=expected_e, rate_deg_per_h=rate,
        problems=tuple(problems), rows_read=log.rows_read, rows_accepted=accepted,
        assumptions=tuple(assumptions),
        rows_left_out_flagged=left_out_flagged
    )


def _interval(estimates, pairs, pair_of, site_half, site_quad, at_quad, campaign):
    """The interval method over the half moons timed at each site (observers of one half moon merged)."""
    sites = campaign.site_ids
    merged: dict[tuple[int, int], list] = {}
    for x in estimates:
        key = (x.quarter_index, sites.index(x.site))
        merged.setdefault(key, []).append(x)
    if len(merged) < 2:
        return None
    keys = sorted(merged)
    origin = min(x.time_utc for x in estimates)
    hours = []
    sig = []
    for key in keys:
        xs = merged[key]
        th = np.array([(x.time_utc - origin).astype(np.int64) / (3600 * _US_PER_S) for x in xs])
        w = 1.0 / np.array([x.time_sigma_s / 3600.0 for x in xs]) ** 2
        hours.append(float((w * th).sum() / w.sum()))
        sig.append(float(1.0 / np.sqrt(w.sum())))
    idx = [pair_of[k] for k in keys]

    def rel(tt):
        return (np.asarray(tt, dtype="datetime64[us]") - origin).astype(np.int64) / (3600 * _US_PER_S)

    return interval_method(
        site=[sites[k[1]] for k in keys],
        quarter=[merged[k][0].quarter for k in keys],
        quarter_index=[k[0] for k in keys],
        time_h=hours,
        time_sigma_h=sig,
        perfect_time_h=rel(site_half[idx]),
        quadrature_h=rel(site_quad[idx]),
        rate_deg_per_h=at_quad.elongation_rate_deg_per_h[idx],
    )
