"""Lunar eclipses from a campaign file: the plan, the reduction of timings, the picture.

- :func:`plan_eclipses` lists the eclipses of a range with their contacts and
  each site's view of each contact, ranked for timing work;
  :func:`eclipses_ics` exports them as an RFC 5545 calendar.
- :func:`run_eclipse` reads the campaign's eclipse logs, assigns each timing
  to its eclipse, combines observers, and reduces each eclipse: the shadow's
  ratio to the Moon and the Moon's distance (from the observers' own Moon
  diameter and rate when the campaign gives them, else from the ephemeris,
  saying so), and the umbra's enlargement from crater timings.
- :func:`eclipse_figure` draws one eclipse's umbra, the Moon's fitted track
  and the observed chord points (matplotlib, imported when called).

These functions read files but never print and never write.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from firstrung.campaign import read_campaign
from firstrung.campaign_model import Campaign
from firstrung.errors import ComputationError, InputError, RowProblem
from firstrung.methods.eclipse.chords import (
    CONTACTS,
    DEFAULT_CONTACT_SIGMA_S,
    DEFAULT_CRATER_SIGMA_S,
    CombinedTimings,
    FeatureOffsets,
    combine_timings,
)
from firstrung.methods.eclipse.craters import CraterTable, load_craters
from firstrung.methods.eclipse.log import read_eclipse_logs
from firstrung.methods.eclipse.observed_moon import (
    ObservedMoon,
    _observed_moon,
    _reduce_observed_moon,
    _site_counts,
    equatorial_radius_from_shadows,
)
from firstrung.methods.eclipse.reduction import (
    EclipseReduction,
    EnlargementFit,
    distance_in_km,
    fit_umbra_enlargement,
    reduce_eclipse_timings,
)
from firstrung.methods.eclipse.umbra import (
    CONVENTIONS,
    shadow_rate_from_sky_rate_deg_per_h,
    umbra_radius_deg,
)
from firstrung.uncertainty import Measured

#: Default one-sigma error of an observer's Moon diameter [arcmin] when the campaign
#: gives the value without its sigma: a reticle or a timed drift across a wire reads
#: the diameter to about 1 % (common practice).
DEFAULT_MOON_DIAMETER_SIGMA_ARCMIN = 0.3
#: Default relative error of an observer's Moon rate when given without its sigma (common practice).
DEFAULT_MOON_RATE_SIGMA_FRACTION = 0.02
#: Timings are assigned to an eclipse when they fall within this margin of its P1-P4 [min].
ASSIGN_MARGIN_MIN = 30.0
#: The planning contacts, in order.
PLAN_CONTACTS = ("P1", "U1", "U2", "U3", "U4", "P4")


# --- crater table --------------------------------------------------------------------


# --- planning ----------------------------------------------------------------------------


@dataclass(frozen=True)
class EclipsePlan:
    """The eclipses of a range as a campaign sees them."""

    campaign: Campaign
    start_utc: np.datetime64
    end_utc: np.datetime64
    eclipses: object  # LunarEclipses
    visibility: object  # EclipseVisibility
    rank: tuple[int | None, ...]
    excluded: tuple[tuple[str, ...], ...]
    timeable: tuple[dict[str, tuple[str, ...]], ...]
    assumptions: tuple[str, ...]


def _check_convention(convention: str) -> None:
    if convention not in CONVENTIONS:
        raise InputError(f"--convention: expected one of {', '.join(CONVENTIONS)}, got {convention!r}")


def plan_eclipses(campaign: Campaign, start_date, end_date, convention: str = "danjon") -> EclipsePlan:
    """Every lunar eclipse from start to end (inclusive dates, UTC) with each site's view.

    An eclipse is ranked when at least one site can time an umbral contact
    with the Moon up and the Sun below -12 deg; ranks go by the number of
    such sites, then the number of such (site, contact) pairs, then the
    umbral magnitude. Penumbral eclipses and those no site can time are
    listed with ``rank`` None and the reasons.

    Raises
    ------
    InputError
        A bad date range, a campaign without sites, or an unknown convention.
    """
    from firstrung.methods.eclipse.prediction import eclipse_visibility, lunar_eclipses

    _check_convention(convention)
    if not campaign.sites:
        raise InputError("the campaign file lists no sites ([[site]])", file=str(campaign.path))
    start = np.datetime64(str(start_date), "D").astype("datetime64[us]")
    end = (np.datetime64(str(end_date), "D") + np.timedelta64(1, "D")).astype("datetime64[us]")
    if end <= start:
        raise InputError(f"--to: expected a date on or after --from {start_date}, got {end_date}")
    e = lunar_eclipses(start, end - np.timedelta64(1, "us"), convention)
    sites = campaign.sites
    v = eclipse_visibility(
        e, [s.latitude_deg for s in sites], [s.longitude_deg for s in sites], [s.elevation_m for s in sites]
    )
    events = list(v.events)
    umbral = [events.index(c) for c in CONTACTS]
    timeable_all = v.timeable
    keys, excluded, timeable = [], [], []
    for i in range(len(e)):
        per_site = {
            s.id: tuple(c for c, j in zip(CONTACTS, umbral, strict=True) if timeable_all[i, j, k])
            for k, s in enumerate(sites)
        }
        timeable.append(per_site)
        reasons = []
        if e.kind[i] == "penumbral":
            reasons.append("penumbral: the umbra does not reach the Moon, no contacts to time")
        elif not any(per_site.values()):
            reasons.append("no site can time an umbral contact with the Moon up and the Sun below -12 deg")
        excluded.append(tuple(reasons))
        n_sites = sum(1 for x in per_site.values() if x)
        n_pairs = sum(len(x) for x in per_site.values())
        keys.append((-n_sites, -n_pairs, -float(e.umbral_magnitude[i]), i))
    order = sorted((k for k, r in zip(keys, excluded, strict=True) if not r))
    rank: list[int | None] = [None] * len(e)
    for r, k in enumerate(order, start=1):
        rank[k[3]] = r
    assumptions = (
        f"shadow radii by the {convention} convention (Danjon: the NASA canon's)",
        "contacts are geocentric and the same instant for every site; times UTC (skyfield's Delta T)",
        "Moon altitude: topocentric centre, refracted at 10 deg C and 1010 hPa; dark: Sun below -12 deg",
        "a lunar eclipse is safe to watch with the naked eye or any instrument; never look at the Sun",
    )
    return EclipsePlan(campaign, start, end, e, v, tuple(rank), tuple(excluded), tuple(timeable), assumptions)


def eclipses_ics(plan: EclipsePlan, *, site: str | None = None, penumbral: bool = False) -> bytes:
    """The plan's eclipses that some site (or ``site``) can see, as an RFC 5545 calendar (UTC times;
    byte-identical for equal input).

    An eclipse is in the calendar when the Moon is above the horizon at one of its contacts
    at a site; penumbral eclipses (hardly visible) only with ``penumbral``. Each is one event
    from P1 to P4 whose description lists the contacts and each site's Moon altitude; UID and
    DTSTAMP derive from the time of greatest eclipse, so the file depends only on the data.
    """
    import icalendar

    from firstrung.calendar_export import calendar_text, checked_ical
    from firstrung.jsonout import time_z

    cal = icalendar.Calendar()
    cal.add("prodid", "-//firstrung//lunar eclipses//EN")
    cal.add("version", "2.0")
    cal.add("calscale", "GREGORIAN")
    e, v = plan.eclipses, plan.visibility
    events = list(v.events)
    chosen = [k for k, s in enumerate(plan.campaign.sites) if site is None or s.id == site]
    with np.errstate(invalid="ignore"):
        seen = np.any(np.nan_to_num(v.moon_altitude_deg[:, :, chosen], nan=-90.0) > 0.0, axis=(1, 2))
    for i in range(len(e)):
        if not seen[i] or (str(e.kind[i]) == "penumbral" and not penumbral):
            continue
        g = e.greatest_utc[i]
        stamp = _aware(g)
        ev = icalendar.Event()
        ev.add("uid", f"lunar-eclipse-{str(np.datetime64(g, 's')).replace('-', '').replace(':', '')}Z@firstrung")
        ev.add("dtstamp", stamp)
        ev.add("dtstart", _aware(e.contacts_utc["P1"][i]))
        ev.add("dtend", _aware(e.contacts_utc["P4"][i]))
        ev.add("summary", f"{str(e.kind[i]).capitalize()} lunar eclipse (umbral magnitude {e.umbral_magnitude[i]:.3f})")
        lines = [f"Greatest eclipse {time_z(g)}; shadow radii by the {e.convention} convention."]
        for c in PLAN_CONTACTS:
            t = e.contacts_utc[c][i]
            if not np.isnat(t):
                lines.append(f"{c} {time_z(t)}")
        for k, s in enumerate(plan.campaign.sites):
            if k not in chosen:
                continue
            alts = []
            for c in PLAN_CONTACTS:
                j = events.index(c)
                if not np.isnan(v.moon_altitude_deg[i, j, k]):
                    mark = "" if v.timeable[i, j, k] else " (not timeable)"
                    alts.append(f"{c} {v.moon_altitude_deg[i, j, k]:.0f} deg{mark}")
            lines.append(f"{s.id}: Moon altitude " + ", ".join(alts))
        if plan.excluded[i]:
            lines.append("Not ranked: " + "; ".join(plan.excluded[i]))
        lines.append("A lunar eclipse is safe to watch with the naked eye or any instrument.")
        ev.add("description", calendar_text("\n".join(lines)))
        cal.add_component(ev)
    return checked_ical(cal)


def _aware(t):
    import datetime as dt

    seconds = int(np.datetime64(t, "s").astype(np.int64))  # truncated, as the calendar's UID is
    return dt.datetime(1970, 1, 1, tzinfo=dt.UTC) + dt.timedelta(seconds=seconds)


# --- reduction ---------------------------------------------------------------------------


@dataclass(frozen=True)
class MoonData:
    """The Moon's angular radius and rate used by a reduction, and where they came from."""

    semidiameter_deg: float
    semidiameter_sigma_deg: float
    rate_deg_per_h: float
    rate_sigma_deg_per_h: float
    semidiameter_source: str  # "observers" or "ephemeris"
    rate_source: str  # "observers", "observers (sky rate)" or "ephemeris"
    #: What the observers measured from their site, before it is reduced to the Earth's
    #: centre (None when the ephemeris supplies both values).
    observed: ObservedMoon | None = None

    @property
    def observational(self) -> bool:
        return self.semidiameter_source != "ephemeris" and self.rate_source != "ephemeris"


@dataclass(frozen=True)
class EclipseResult:
    """One eclipse's reduction: its prediction, the timings, the results."""

    eclipse: object  # LunarEclipses of length 1
    epoch_utc: np.datetime64
    timings: CombinedTimings
    rows: int
    moon: MoonData
    reduction: EclipseReduction | None
    reduction_problem: str | None
    enlargement: EnlargementFit | None
    enlargement_problem: str | None
    moon_distance_km: Measured | None
    ephemeris_distance_earth_radii: float
    ephemeris_enlargement_percent: float
    offsets: FeatureOffsets
    crater_points: dict | None
    assumptions: tuple[str, ...] = field(default_factory=tuple)


@dataclass(frozen=True)
class EclipseRun:
    """A campaign's eclipse reductions with what was read and refused."""

    campaign: Campaign
    convention: str
    results: tuple[EclipseResult, ...]
    problems: tuple[RowProblem, ...]
    rows_read: int
    rows_accepted: int
    earth_radius_km: Measured | None
    earth_radius_source: str | None
    rows_left_out_flagged: int = 0


def _moon_data(campaign: Campaign, eclipse, site_counts: dict | None = None) -> MoonData:
    s = campaign.eclipse
    sm_e = float(eclipse.moon_semidiameter_deg[0])
    v_e = float(eclipse.moon_rate_deg_per_h[0])
    if s.moon_diameter_arcmin is not None:
        sig = s.moon_diameter_sigma_arcmin if s.moon_diameter_sigma_arcmin is not None else DEFAULT_MOON_DIAMETER_SIGMA_ARCMIN
        sm, sm_sig, sm_src = s.moon_diameter_arcmin / 120.0, sig / 120.0, "observers"
    else:
        sm, sm_sig, sm_src = sm_e, 0.0, "ephemeris"
    if s.moon_rate_deg_per_h is not None:
        rs = s.moon_rate_sigma_deg_per_h
        v, v_sig, v_src = s.moon_rate_deg_per_h, rs if rs is not None else DEFAULT_MOON_RATE_SIGMA_FRACTION * s.moon_rate_deg_per_h, "observers"
    elif s.moon_sky_rate_deg_per_h is not None:
        rs = s.moon_sky_rate_sigma_deg_per_h
        v = float(shadow_rate_from_sky_rate_deg_per_h(s.moon_sky_rate_deg_per_h))
        v_sig = rs if rs is not None else DEFAULT_MOON_RATE_SIGMA_FRACTION * v
        v_src = "observers (sky rate)"
    else:
        v, v_sig, v_src = v_e, 0.0, "ephemeris"
    if sm_src == "ephemeris" and v_src == "ephemeris":
        return MoonData(sm, sm_sig, v, v_sig, sm_src, v_src)
    observed = _observed_moon(campaign, eclipse, sm if sm_src != "ephemeris" else None, sm_sig,
                              v if v_src == "observers" else s.moon_sky_rate_deg_per_h if v_src != "ephemeris" else None,
                              v_sig, "sky" if v_src == "observers (sky rate)" else "shadow" if v_src == "observers" else None,
                              site_counts or {})
    return MoonData(sm, sm_sig, v, v_sig, sm_src, v_src, observed)


def _moon_assumptions(m: MoonData) -> list[str]:
    out = []
    if m.semidiameter_source == "ephemeris":
        out.append("the Moon's angular diameter is the ephemeris's (DE421) at greatest eclipse, not measured: ephemeris-assisted")
    else:
        out.append("the Moon's angular diameter as measured by the observers, reduced from their site to the Earth's "
                   "centre (the Moon is nearer a site: it looks larger) with the distance found")
    if m.rate_source == "ephemeris":
        out.append("the Moon's rate across the shadow is the ephemeris's (DE421) at greatest eclipse, not measured: ephemeris-assisted")
    elif m.rate_source == "observers (sky rate)":
        out.append("the observers' rate against the stars, seen from their turning site over their interval, reduced to "
                   "the Earth's centre with the distance found, less the shadow's own motion of the date (the Sun's)")
    else:
        out.append("the Moon's rate across the shadow as measured by the observers, reduced from their site to the "
                   "Earth's centre with the distance found")
    if m.observed is not None:
        out.append(f"the observers' Moon {m.observed.site_choice}; the reduction to the Earth's centre uses the "
                   "ephemeris's directions only and is iterated with the distance it gives")
    if m.observational:
        out.append("purely observational: no ephemeris distance enters the result (the Sun's size and parallax of the "
                   "date are almanac values; directions from the ephemeris)")
    return out


def _earth_radius(campaign_path, campaign: Campaign, earth_radius_km, earth_radius_sigma_km):
    if earth_radius_km is not None:
        if not earth_radius_km > 0:
            raise InputError(f"--earth-radius-km: expected a positive number of km, got {earth_radius_km}")
        sig = 0.0 if earth_radius_sigma_km is None else float(earth_radius_sigma_km)
        if sig < 0:
            raise InputError(f"--earth-radius-sigma-km: expected a non-negative number of km, got {sig}")
        return Measured(float(earth_radius_km), sig, earth_radius_km - sig, earth_radius_km + sig, "km"), "given"
    if campaign.logs.get("shadows"):
        from firstrung.methods.shadows.run import run_shadows

        try:
            return equatorial_radius_from_shadows(run_shadows(campaign_path).reduction)
        except (InputError, ComputationError):
            return None, None
    return None, None


def _crater_geometry(eclipse, epoch, timings: CombinedTimings, craters: CraterTable, convention: str):
    """Disc offsets of the combined crater timings, and the enlargement fit's inputs."""
    from firstrung.methods.eclipse.prediction import feature_points

    n = len(timings)
    east, north, depth = np.zeros(n), np.zeros(n), np.zeros(n)
    is_crater = np.array([e not in CONTACTS for e in timings.event], bool)
    if not np.any(is_crater):
        return FeatureOffsets(east, north, depth), None
    idx = np.flatnonzero(is_crater)
    rows = [craters.index(timings.feature[i]) for i in idx]
    lat = craters.latitude_deg[rows]
    lon = craters.longitude_deg[rows]
    t = epoch + np.round(timings.time_s[idx] * 1e6).astype(np.int64).astype("timedelta64[us]")
    step = np.timedelta64(30, "s")
    p = feature_points(np.stack([t, t + step]), lat[None, :], lon[None, :])
    east[idx], north[idx], depth[idx] = p.disc_east[0], p.disc_north[0], p.depth[0]
    g = p.geometry
    geo = umbra_radius_deg(g.moon_parallax_deg[0], g.sun_parallax_deg[0], g.sun_semidiameter_deg[0], "geometric")
    points = {
        "index": idx,
        "distance_deg": p.distance_deg[0],
        "edge_scale": p.edge_scale[0],
        "edge_offset_deg": p.edge_offset_deg[0],
        "geometric_umbra_deg": geo,
        "radial_rate_deg_per_s": (p.distance_deg[1] - p.distance_deg[0]) / 30.0,
        "position_angle_deg": np.mod(np.degrees(np.arctan2(p.east_deg[0], p.north_deg[0])), 360.0),
        "east_deg": p.east_deg[0],
        "north_deg": p.north_deg[0],
        "sigma_s": timings.sigma_s[idx],
    }
    return FeatureOffsets(east, north, depth), points


def reduce_one_eclipse(
    eclipse,
    timings: CombinedTimings,
    moon: MoonData,
    craters: CraterTable,
    *,
    epoch_utc,
    convention: str = "danjon",
    magnitude: float | None = None,
    magnitude_sigma: float | None = None,
    earth_radius: Measured | None = None,
    rows: int = 0,
) -> EclipseResult:
    """Reduce one eclipse's combined timings (times in s from ``epoch_utc``).

    The chord solution (distance) and the crater fit (enlargement) are each
    attempted; one that the data cannot support leaves its reason in
    ``reduction_problem`` / ``enlargement_problem``.
    """
    offsets, points = _crater_geometry(eclipse, epoch_utc, timings, craters, convention)
    notes = _moon_assumptions(moon)
    reduction = problem = None

    def reduce(m: MoonData):
        return reduce_eclipse_timings(
            timings, m.semidiameter_deg, m.semidiameter_sigma_deg, m.rate_deg_per_h,
            m.rate_sigma_deg_per_h, float(eclipse.sun_semidiameter_deg[0]), float(eclipse.sun_parallax_deg[0]),
            convention=convention, track_position_angle_deg=float(eclipse.track_position_angle_deg[0]),
            offsets=offsets, greatest_magnitude=magnitude, greatest_magnitude_sigma=magnitude_sigma,
            assumptions=tuple(notes),
        )

    try:
        if moon.observed is None:
            reduction = reduce(moon)
        else:
            reduction, moon = _reduce_observed_moon(reduce, moon)
    except ComputationError as error:
        problem = str(error)
    enlargement = en_problem = None
    if points is None:
        en_problem = "no crater timings"
    else:
        try:
            enlargement = fit_umbra_enlargement(
                points["distance_deg"], points["edge_scale"], points["edge_offset_deg"],
                points["geometric_umbra_deg"], points["radial_rate_deg_per_s"], points["sigma_s"],
                points["position_angle_deg"],
            )
        except (ComputationError, InputError) as error:
            en_problem = str(error)
    km = None
    if reduction is not None and earth_radius is not None:
        km = distance_in_km(reduction.moon_distance_earth_radii, earth_radius.value, earth_radius.sigma or 0.0)
    g_umbra = float(eclipse.umbra_radius_deg[0])
    geo = float(umbra_radius_deg(eclipse.moon_parallax_deg[0], eclipse.sun_parallax_deg[0], eclipse.sun_semidiameter_deg[0], "geometric"))
    return EclipseResult(
        eclipse=eclipse,
        epoch_utc=np.datetime64(epoch_utc, "us"),
        timings=timings,
        rows=rows,
        moon=moon,
        reduction=reduction,
        reduction_problem=problem,
        enlargement=enlargement,
        enlargement_problem=en_problem,
        moon_distance_km=km,
        ephemeris_distance_earth_radii=float(1.0 / math.sin(math.radians(eclipse.moon_parallax_deg[0]))),
        ephemeris_enlargement_percent=100.0 * (g_umbra / geo - 1.0),
        offsets=offsets,
        crater_points=points,
        assumptions=tuple(notes),
    )


def _assign(log, eclipses):
    """Index of the eclipse each row falls in (-1 for none)."""
    out = np.full(len(log), -1, dtype=int)
    margin = np.timedelta64(int(ASSIGN_MARGIN_MIN * 60e6), "us")
    t = np.asarray(log.time_utc).astype("datetime64[us]")
    for i in range(len(eclipses)):
        inside = (t >= eclipses.contacts_utc["P1"][i] - margin) & (t <= eclipses.contacts_utc["P4"][i] + margin)
        out[inside & (out < 0)] = i
    return out


def run_eclipse(
    campaign_path,
    *,
    convention: str = "danjon",
    earth_radius_km: float | None = None,
    earth_radius_sigma_km: float | None = None,
    magnitude: float | None = None,
    magnitude_sigma: float | None = None,
    include_flagged: bool = False,
    measured_earth_radius: tuple[Measured, str] | None = None,
) -> EclipseRun:
    """Read the campaign and its eclipse logs and reduce each eclipse they time.

    Parameters
    ----------
    campaign_path : path-like
    convention : {"danjon", "chauvenet", "geometric"}
        The enlargement convention inverted for the Moon's parallax.
    earth_radius_km, earth_radius_sigma_km : float, optional
        An Earth radius for the distance in km; without it, the campaign's
        own shadow reduction is used when it has shadow logs.
    magnitude, magnitude_sigma : float, optional
        The observed greatest umbral magnitude (needed for a partial eclipse
        timed at U1 and U4 only); applied to every eclipse of the logs.

    Raises
    ------
    InputError
        Unreadable campaign, no eclipse logs, no usable rows, or umbral
        contacts logged that the eclipse does not have (U2/U3 in a partial
        eclipse, any U-contact in a penumbral one).
    """
    from firstrung.methods.eclipse.prediction import lunar_eclipses

    _check_convention(convention)
    if (magnitude is None) != (magnitude_sigma is None):
        raise InputError("--magnitude and --magnitude-sigma: give both or neither")
    if magnitude_sigma is not None and not magnitude_sigma > 0:
        raise InputError(f"--magnitude-sigma: expected a positive number, got {magnitude_sigma}")
    campaign = read_campaign(campaign_path)
    if not campaign.logs.get("eclipse"):
        raise InputError("the campaign file lists no eclipse logs ([logs] eclipse = [...])", file=str(campaign_path))
    log = read_eclipse_logs(campaign)
    left_out_flagged = 0
    if not include_flagged:
        from firstrung.flags import without_error_rows
        from firstrung.methods.eclipse.check import log_flags

        log, left_out_flagged = without_error_rows(campaign, log, log_flags)
    problems = list(log.problems)
    if len(log) == 0:
        first = f" (first: {problems[0]})" if problems else ""
        raise InputError(f"no usable eclipse timings in the campaign's logs{first}", file=str(campaign_path),
                         problems=tuple(problems))
    craters = load_craters()
    t = np.asarray(log.time_utc).astype("datetime64[us]")
    day = np.timedelta64(1, "D")
    eclipses = lunar_eclipses(t.min() - day, t.max() + day, convention)
    which = _assign(log, eclipses)
    good = np.ones(len(log), bool)
    unknown_problems, unknown = craters.unknown_features(log)
    unknown_of = dict(zip(np.flatnonzero(unknown), unknown_problems, strict=True))
    for k in range(len(log)):
        where = f"{log.file[k]}"
        if which[k] < 0:
            problems.append(RowProblem(where, int(log.row[k]), log.time_column[k] or "time_utc",
                                       f"no lunar eclipse is under way at {str(np.datetime64(t[k], 's'))}Z "
                                       "(within 30 min of its P1-P4); check the date and the time zone"))
            good[k] = False
        elif unknown[k]:
            problems.append(unknown_of[k])
            good[k] = False
    for i in sorted(set(which[good])):
        rows = np.flatnonzero(good & (which == i))
        kind = eclipses.kind[i]
        impossible = ("U1", "U2", "U3", "U4", "immersion", "emersion") if kind == "penumbral" else ("U2", "U3") if kind == "partial" else ()
        bad = [k for k in rows if log.event[k] in impossible]
        if bad:
            k = bad[0]
            date = str(np.datetime64(eclipses.greatest_utc[i], "D"))
            raise InputError(
                f"{log.event[k]} logged, but the eclipse of {date} is {kind} (umbral magnitude "
                f"{eclipses.umbral_magnitude[i]:.3f}): it has no "
                + ("umbral phase" if kind == "penumbral" else "totality, so no U2 or U3")
                + f"; {len(bad)} such row(s) — check the event names and the date",
                file=str(log.file[k]), row=int(log.row[k]), column="event",
            )
    if measured_earth_radius is not None and earth_radius_km is None:
        earth_radius, er_source = measured_earth_radius  # already reduced by the caller: not redone
    else:
        earth_radius, er_source = _earth_radius(campaign_path, campaign, earth_radius_km, earth_radius_sigma_km)
    results = []
    for i in sorted(set(which[good])):
        rows = np.flatnonzero(good & (which == i))
        one = eclipses.select([i])
        epoch = eclipses.greatest_utc[i]
        time_s = (t[rows] - epoch).astype(np.int64) / 1e6
        is_contact = np.isin(log.event[rows].astype(str), CONTACTS)
        sigma = np.asarray(log.time_sigma_s, float)[rows]
        sigma = np.where(np.isfinite(sigma), sigma, np.where(is_contact, DEFAULT_CONTACT_SIGMA_S, DEFAULT_CRATER_SIGMA_S))
        feature = np.array([
            "" if c else craters.name[craters.index(log.feature[k])] for c, k in zip(is_contact, rows, strict=True)
        ], dtype=object)
        labels = [f"{log.file[k]}:{log.row[k]}" for k in rows]
        timings = combine_timings(log.event[rows].astype(object), feature, time_s, sigma, labels)
        results.append(
            reduce_one_eclipse(
                one, timings, _moon_data(campaign, one, _site_counts(log.site[rows])), craters, epoch_utc=epoch,
                convention=convention,
                magnitude=magnitude, magnitude_sigma=magnitude_sigma, earth_radius=earth_radius, rows=len(rows),
            )
        )
    if not results:
        first = f" (first: {problems[0]})" if problems else ""
        raise InputError(f"no timing falls in a lunar eclipse{first}", file=str(campaign_path),
                         problems=tuple(problems))
    return EclipseRun(
        campaign=campaign,
        convention=convention,
        results=tuple(results),
        problems=tuple(problems),
        rows_read=log.rows_read,
        rows_accepted=int(good.sum()),
        earth_radius_km=earth_radius,
        earth_radius_source=er_source,
        rows_left_out_flagged=left_out_flagged,
    )


# --- the picture ---------------------------------------------------------------------------


def eclipse_figure(result: EclipseResult, *, title: str | None = None):
    """The eclipse as seen from the Earth's centre: umbra, the Moon's track, the chord points.

    Draws the fitted umbra (solid) and the geometric one (dashed), the
    Moon's fitted track with its disc at each combined contact, and each
    crater timing as a point on the edge. Angles in arcmin about the shadow's
    axis, east to the left as on the sky.

    Returns
    -------
    matplotlib.figure.Figure
        Not shown and not saved; the caller decides.
    """
    from matplotlib.figure import Figure

    e = result.eclipse
    fig = Figure(figsize=(6.4, 6.0))
    ax = fig.add_subplot(1, 1, 1)
    theta = np.linspace(0, 2 * np.pi, 361)
    geo = float(umbra_radius_deg(e.moon_parallax_deg[0], e.sun_parallax_deg[0], e.sun_semidiameter_deg[0], "geometric")) * 60
    red = result.reduction
    ru = red.solution.umbra_radius_deg * 60 if red is not None else float(e.umbra_radius_deg[0]) * 60
    ax.plot(ru * np.sin(theta), ru * np.cos(theta), color="0.2", lw=1.5, label=f"umbra {ru:.2f}'")
    ax.plot(geo * np.sin(theta), geo * np.cos(theta), color="0.5", lw=1, ls="--", label=f"geometric umbra {geo:.2f}'")
    sm = result.moon.semidiameter_deg * 60
    pa = math.radians(float(e.track_position_angle_deg[0]))
    along = np.array([math.sin(pa), math.cos(pa)])
    normal = np.array([math.cos(pa), -math.sin(pa)])
    d = red.solution.least_distance_deg * 60 if red is not None else float(e.least_separation_deg[0]) * 60
    tg = red.solution.closest_approach_s if red is not None else 0.0
    if result.crater_points is None:  # contacts alone cannot tell the side: take the ephemeris's
        d = abs(d) if -math.sin(pa) * float(e.gamma[0]) >= 0 else -abs(d)
    v = result.moon.rate_deg_per_h * 60 / 3600  # arcmin per s
    span = np.linspace(-1.6 * (ru + sm) / v, 1.6 * (ru + sm) / v, 50)
    track = d * normal[:, None] + v * span[None, :] * along[:, None]
    ax.plot(track[0], track[1], color="tab:blue", lw=1, label="Moon's track (fitted)")
    tim = result.timings
    for k in range(len(tim)):
        if tim.event[k] in CONTACTS:
            c = d * normal + v * (tim.time_s[k] - tg) * along
            ax.plot(c[0] + sm * np.sin(theta), c[1] + sm * np.cos(theta), color="tab:blue", lw=0.6, alpha=0.6)
            ax.annotate(tim.event[k], (c[0], c[1]), ha="center", va="center", fontsize=8)
    if result.crater_points is not None:
        p = result.crater_points
        immersion = np.array([tim.event[i] == "immersion" for i in p["index"]], bool)
        east, north = np.asarray(p["east_deg"]) * 60, np.asarray(p["north_deg"]) * 60
        if immersion.any():
            ax.scatter(east[immersion], north[immersion], s=14, c="tab:red", zorder=3,
                       label="crater immersions (enters the umbra)")
        if (~immersion).any():
            ax.scatter(east[~immersion], north[~immersion], s=14, c="tab:green", marker="s", zorder=3,
                       label="crater emersions (leaves the umbra)")
    ax.set_aspect("equal")
    ax.invert_xaxis()
    ax.set_xlabel("east of the shadow's axis (arcmin)")
    ax.set_ylabel("north of the shadow's axis (arcmin)")
    ax.set_title(title or f"Lunar eclipse of {str(np.datetime64(e.greatest_utc[0], 'D'))}")
    ax.legend(loc="upper right", fontsize=7)
    return fig
