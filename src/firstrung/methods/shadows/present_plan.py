"""JSON of ``plan shadows`` (DESIGN section 4: days[], rank, sigma_radius_km, sites.<id>...)."""

from __future__ import annotations

from firstrung.jsonout import number, time_z


def site_day(plan, k: int, j: int) -> dict:
    """JSON of one site on one day of a plan (``days[k].sites.<id>``)."""
    from firstrung.methods.shadows.plan import local_time_iso

    s = plan.sites[j]
    return {
        "transit_utc": time_z(plan.transit_utc[k, j]),
        "transit_local": local_time_iso(plan.transit_utc[k, j], s.timezone),
        "altitude_deg": number(plan.altitude_deg[k, j], 5),
        "altitude_airless_deg": number(plan.altitude_airless_deg[k, j], 5),
        "declination_deg": number(plan.declination_deg[k, j], 5),
        "shadow_m": number(plan.shadow_m[k, j], 4),
        "penumbra_m": number(plan.penumbra_m[k, j], 4),
        "shadow_direction": str(plan.shadow_direction[k, j]),
        "sigma_latitude_deg": number(plan.sigma_latitude_deg[k, j], 5),
    }


def shadow_plan_to_json(run) -> dict:
    from firstrung.methods.shadows.plan_network import zero_shadow_days

    plan = run.plan
    days = []
    for k, date in enumerate(plan.dates):
        sites = {s.id: site_day(plan, k, j) for j, s in enumerate(plan.sites)}
        days.append(
            {
                "date": str(date),
                "rank": int(plan.rank[k]) if plan.rank[k] > 0 else None,
                "sigma_radius_km": number(plan.sigma_radius_km[k], 2),
                "excluded": list(plan.excluded[k]),
                "special": list(plan.special[k]),
                "sites": sites,
            }
        )
    c = plan.constraints
    return {
        "campaign": run.campaign.name,
        "kind": "shadows",
        "from": str(plan.dates[0]),
        "to": str(plan.dates[-1]),
        "expected_radius_km": number(plan.expected_radius_km, 3),
        "constraints": {
            "min_altitude_deg": c.min_altitude_deg,
            "max_shadow_m": c.max_shadow_m,
            "weekdays": None if c.weekdays is None else list(c.weekdays),
            "excluded_dates": list(c.excluded_dates),
        },
        "sites_without_gnomon": list(run.skipped_sites),
        "zero_shadow_days": zero_shadow_days(plan),
        "days": days,
        "assumptions": list(plan.assumptions),
    }
