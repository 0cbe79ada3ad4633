"""``plan shadows`` from a campaign file: sites with gnomons, the plan, its calendar."""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass
from zoneinfo import ZoneInfo

import numpy as np

from firstrung.campaign import read_campaign
from firstrung.campaign_model import Campaign
from firstrung.errors import InputError
from firstrung.methods.shadows.inputs import baseline_inputs
from firstrung.methods.shadows.prediction import (
    PlanSite,
    ShadowConstraints,
    ShadowPlan,
    plan_shadows,
)
from firstrung.safety import SOLAR_CAUTION

#: Length of a calendar session around local apparent noon [min], as on the field sheet.
SESSION_HALF_SPAN_MIN = 30


@dataclass(frozen=True)
class ShadowPlanRun:
    campaign: Campaign
    plan: ShadowPlan
    skipped_sites: tuple[str, ...]


def plan_sites(campaign: Campaign) -> tuple[tuple[PlanSite, ...], tuple[str, ...]]:
    """The campaign's sites that have a gnomon, and the ids of those that do not."""
    sites, skipped = [], []
    for s in campaign.sites:
        if s.gnomon is None:
            skipped.append(s.id)
            continue
        g = s.gnomon
        sites.append(PlanSite(s.id, s.name, s.latitude_deg, s.longitude_deg, s.elevation_m, s.timezone,
                              g.height_m, g.height_sigma_m, g.shadow_sigma_m, g.edge))
    return tuple(sites), tuple(skipped)


def run_plan_shadows(campaign_path, first_date, last_date, constraints: ShadowConstraints) -> ShadowPlanRun:
    """Read the campaign and plan every day of the range."""
    campaign = read_campaign(campaign_path)
    sites, skipped = plan_sites(campaign)
    if len(sites) < 2:
        raise InputError(
            "planning shadows needs two or more sites with [site.gnomon]; "
            f"sites without one: {', '.join(skipped) or 'none'}",
            file=str(campaign_path),
        )
    with_gnomon = {s.id for s in sites}
    index = {s.id: i for i, s in enumerate(sites)}
    baselines = tuple(
        b for b, raw in zip(baseline_inputs(campaign), campaign.baselines, strict=True)
        if raw.sites[0] in with_gnomon and raw.sites[1] in with_gnomon
    )
    # re-index baselines to the planned sites
    baselines = tuple(
        type(b)(index[campaign.sites[b.first].id], index[campaign.sites[b.second].id], b.distance_km,
                b.sigma_km, b.bearing_deg)
        for b in baselines
    )
    plan = plan_shadows(sites, first_date, last_date, constraints, baselines)
    return ShadowPlanRun(campaign, plan, skipped)


def local_time_iso(t_utc, zone: str | None) -> str | None:
    """ISO 8601 local time with its offset in the IANA zone, or None without a zone."""
    if zone is None:
        return None
    aware = np.datetime64(t_utc, "s").astype(dt.datetime).replace(tzinfo=dt.UTC)
    return aware.astimezone(ZoneInfo(zone)).isoformat()


def chosen_days(plan: ShadowPlan, top: int | None) -> np.ndarray:
    """Indices of the ranked days, best first, at most ``top``."""
    ranked = np.flatnonzero(plan.rank > 0)
    ranked = ranked[np.argsort(plan.rank[ranked])]
    return ranked if top is None else ranked[:top]


def calendar_bytes(run: ShadowPlanRun, days: np.ndarray, site: str | None = None) -> bytes:
    """One event per site (or only ``site``) per chosen day, from 30 min before to 30 min after
    local apparent noon."""
    from firstrung.calendar_export import CalendarEvent, events_to_ics  # only for a calendar

    plan = run.plan
    events = []
    half = np.timedelta64(SESSION_HALF_SPAN_MIN, "m")
    slug = "-".join("".join(ch if ch.isalnum() else " " for ch in run.campaign.name.lower()).split()) or "campaign"
    for k in sorted(days, key=lambda k: plan.dates[k]):
        for j, s in enumerate(plan.sites):
            if site is not None and s.id != site:
                continue
            t = plan.transit_utc[k, j]
            local = local_time_iso(t, s.timezone)
            lines = [
                f"Local apparent noon at {s.name}: {np.datetime64(t, 's')}Z" + (f" ({local})" if local else ""),
                f"Sun's altitude at noon {plan.altitude_deg[k, j]:.2f} deg (refracted, standard conditions)",
                f"Predicted shadow ({s.edge} edge, {s.gnomon_height_m:g} m gnomon): {plan.shadow_m[k, j]:.3f} m, "
                f"pointing {plan.shadow_direction[k, j]}; penumbra {plan.penumbra_m[k, j] * 100:.1f} cm wide",
                f"Campaign rank {int(plan.rank[k])}: expected sigma of the Earth's radius "
                f"{plan.sigma_radius_km[k]:.0f} km",
                "Read the shadow every 2 minutes from 30 minutes before to 30 minutes after noon.",
                "Caution: " + SOLAR_CAUTION,
            ]
            events.append(
                CalendarEvent(
                    uid=f"{slug}-{s.id}-{plan.dates[k]}-shadows@firstrung",
                    start_utc=(t - half).astype("datetime64[s]"),
                    end_utc=(t + half).astype("datetime64[s]"),
                    summary=f"Noon shadows at {s.name}",
                    description="\n".join(lines),
                    location=s.name,
                    geo=(s.latitude_deg, s.longitude_deg),
                )
            )
    return events_to_ics(events, f"{run.campaign.name}: noon shadows")
