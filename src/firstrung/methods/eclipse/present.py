"""JSON of the eclipse plan (``plan eclipses``) and the eclipse reduction (``reduce eclipse``)."""

from __future__ import annotations

import numpy as np

from firstrung.errors import refused_rows
from firstrung.jsonout import number as _num
from firstrung.jsonout import time_z as _time
from firstrung.methods.eclipse.umbra import distance_enlargement, enlargement_against_convention

#: Contacts in the plan's ``contacts_utc`` (DESIGN section 4).
_CONTACTS = ("P1", "U1", "U2", "U3", "U4", "P4")


def _q(m, digits: int = 6) -> dict | None:
    return None if m is None else m.to_json(digits)


def _contacts(eclipses, i: int) -> dict:
    out = {}
    for c in _CONTACTS:
        t = eclipses.contacts_utc[c][i]
        if not np.isnat(t):
            out[c] = _time(t)
    return out


def eclipse_plan_to_json(plan) -> dict:
    """The ``plan eclipses`` result: ``eclipses[]`` with contacts and each site's view."""
    e, v = plan.eclipses, plan.visibility
    sky = v.sky()
    events = list(v.events)
    items = []
    for i in range(len(e)):
        sites = {}
        for k, s in enumerate(plan.campaign.sites):
            per = {}
            for j, name in enumerate(events):
                if np.isnan(v.moon_altitude_deg[i, j, k]):
                    continue
                per[name] = {
                    "moon_altitude_deg": _num(v.moon_altitude_deg[i, j, k], 3),
                    "moon_altitude_airless_deg": _num(v.moon_altitude_airless_deg[i, j, k], 3),
                    "moon_azimuth_deg": _num(v.moon_azimuth_deg[i, j, k], 2),
                    "sun_altitude_deg": _num(v.sun_altitude_deg[i, j, k], 3),
                    "sky": sky[i, j, k],
                    "moon_up": bool(v.moon_up[i, j, k]),
                    "dark": bool(v.dark[i, j, k]),
                    "timeable": bool(v.timeable[i, j, k]),
                }
            per["timeable_contacts"] = list(plan.timeable[i][s.id])
            sites[s.id] = per
        items.append(
            {
                "date": str(np.datetime64(e.greatest_utc[i], "D")),
                "kind": str(e.kind[i]),
                "rank": plan.rank[i],
                "excluded": list(plan.excluded[i]),
                "greatest_utc": _time(e.greatest_utc[i]),
                "umbral_magnitude": _num(e.umbral_magnitude[i], 4),
                "penumbral_magnitude": _num(e.penumbral_magnitude[i], 4),
                "gamma": _num(e.gamma[i], 4),
                "contacts_utc": _contacts(e, i),
                "durations_min": {
                    "penumbral": _num(e.duration_min("P1", "P4")[i], 1),
                    "partial": _num(e.duration_min("U1", "U4")[i], 1),
                    "total": _num(e.duration_min("U2", "U3")[i], 1),
                },
                "umbra_radius_arcmin": _num(e.umbra_radius_deg[i] * 60, 3),
                "moon_semidiameter_arcmin": _num(e.moon_semidiameter_deg[i] * 60, 3),
                "moon_rate_deg_per_h": _num(e.moon_rate_deg_per_h[i], 5),
                "sites": sites,
            }
        )
    return {
        "campaign": plan.campaign.name,
        "from": str(np.datetime64(plan.start_utc, "D")),
        "to": str(np.datetime64(plan.end_utc, "D") - np.timedelta64(1, "D")),
        "convention": e.convention,
        "eclipses": items,
        "assumptions": list(plan.assumptions),
    }


def _timings_json(result) -> list[dict]:
    t = result.timings
    res = result.reduction.solution.residual_s if result.reduction is not None else None
    out = []
    for k in range(len(t)):
        out.append(
            {
                "event": str(t.event[k]),
                "feature": str(t.feature[k]) or None,
                "time_utc": _time(result.epoch_utc + np.timedelta64(int(round(t.time_s[k] * 1e6)), "us")),
                "sigma_s": _num(t.sigma_s[k], 2),
                "timings_used": int(t.count[k]),
                "scatter_s": _num(t.scatter_s[k], 2),
                "rejected": list(t.rejected[k]),
                "residual_s": None if res is None else _num(res[k], 2),
            }
        )
    return out


def _reduction_json(r) -> dict:
    total = sum(b.sigma**2 for b in r.budget)
    return {
        "shadow_moon_ratio": _q(r.shadow_moon_ratio, 5),
        "umbra_radius_arcmin": _q(r.umbra_radius_arcmin, 4),
        "moon_parallax_arcmin": _q(r.moon_parallax_arcmin, 4),
        "moon_distance_earth_radii": _q(r.moon_distance_earth_radii, 4),
        "least_distance_arcmin": _q(r.least_distance_arcmin, 4),
        "greatest_magnitude": _q(r.greatest_magnitude, 4),
        "error_budget": [
            {"source": b.source, "sigma_earth_radii": _num(b.sigma, 4), "share_percent": _num(100 * b.share(total), 1)}
            for b in r.budget
        ],
        "limited_by": r.budget[0].source if r.budget else None,
        "chi2": _num(r.solution.chi2, 3),
        "dof": r.solution.dof,
        "error_scale": _num(r.solution.scale, 3),
        "propagation": r.propagation,
    }


def _enlargement_json(f) -> dict:
    return {
        "points": f.points,
        "used": int(np.sum(f.used)),
        "enlargement_percent": _q(f.enlargement_percent, 4),
        "flattening": _q(f.flattening, 5),
        "equatorial_enlargement_percent": _q(f.equatorial_enlargement_percent, 4),
        "chi2": _num(f.chi2, 3),
        "dof": f.dof,
        "error_scale": _num(f.scale, 3),
    }


def _distance_enlargement(res, convention: str) -> dict:
    """The enlargement the distance used (the convention) and its allowance, at the parallax found."""
    r, e = res.reduction, res.eclipse
    d = r.moon_distance_earth_radii.value
    allowance = [b.sigma for b in r.budget if b.source.startswith("umbra's enlargement")]
    return distance_enlargement(r.moon_parallax_arcmin.value / 60.0, e.sun_parallax_deg, e.sun_semidiameter_deg,
                                convention, 100.0 * allowance[0] / d if allowance else None)


def eclipse_run_to_json(run) -> dict:
    """The ``reduce eclipse`` result (DESIGN section 4 keys under ``eclipses[]``)."""
    items = []
    for res in run.results:
        e = res.eclipse
        red, en = res.reduction, res.enlargement
        m = res.moon
        items.append(
            {
                "date": str(np.datetime64(e.greatest_utc[0], "D")),
                "kind": str(e.kind[0]),
                "predicted_greatest_utc": _time(e.greatest_utc[0]),
                "rows": res.rows,
                "shadow_moon_ratio": None if red is None else _q(red.shadow_moon_ratio, 5),
                "moon_distance_earth_radii": None if red is None else _q(red.moon_distance_earth_radii, 4),
                "moon_distance_km": _q(res.moon_distance_km, 1),
                "umbra_enlargement_percent": None if en is None else _q(en.enlargement_percent, 4),
                "reduction": None if red is None else _reduction_json(red),
                "reduction_problem": res.reduction_problem,
                "enlargement": None if en is None else _enlargement_json(en),
                "enlargement_problem": res.enlargement_problem,
                "distance_enlargement": None if red is None else _distance_enlargement(res, run.convention),
                "enlargement_against_convention": None if en is None else enlargement_against_convention(
                    en.enlargement_percent.value, en.enlargement_percent.sigma, e.moon_parallax_deg,
                    e.sun_parallax_deg, e.sun_semidiameter_deg, run.convention),
                "moon": {
                    "semidiameter_arcmin": _num(m.semidiameter_deg * 60, 4),
                    "semidiameter_sigma_arcmin": _num(m.semidiameter_sigma_deg * 60, 4),
                    "semidiameter_source": m.semidiameter_source,
                    "rate_deg_per_h": _num(m.rate_deg_per_h, 5),
                    "rate_sigma_deg_per_h": _num(m.rate_sigma_deg_per_h, 5),
                    "rate_source": m.rate_source,
                    "observational": m.observational,
                },
                "modern": {
                    "moon_distance_earth_radii": _num(res.ephemeris_distance_earth_radii, 4),
                    "umbra_enlargement_percent": _num(res.ephemeris_enlargement_percent, 3),
                    "source": f"DE421 at greatest eclipse; enlargement of the {run.convention} convention",
                },
                "timings": _timings_json(res),
                "assumptions": list(red.assumptions if red is not None else res.assumptions),
            }
        )
    er = run.earth_radius_km
    return {
        "campaign": run.campaign.name,
        "method": "lunar eclipse timings: chords of the Moon's track across the umbra",
        "convention": run.convention,
        "earth_radius_km": _q(er, 3),
        "earth_radius_source": run.earth_radius_source,
        "eclipses": items,
        "rows": {"read": run.rows_read, "accepted": run.rows_accepted, "refused": refused_rows(run.problems),
                 "left_out_flagged": run.rows_left_out_flagged},
        "problems": [str(p) for p in run.problems],
    }
