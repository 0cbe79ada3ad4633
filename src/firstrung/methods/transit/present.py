"""JSON of the transit plan (``plan transits``) and the transit reduction (``reduce transit``)."""

from __future__ import annotations

import numpy as np

from firstrung.errors import refused_rows
from firstrung.jsonout import number as _num
from firstrung.jsonout import time_z as _time
from firstrung.methods.transit.prediction import CONTACTS
from firstrung.safety import TRANSIT_CAUTION


def transit_plan_to_json(plan) -> dict:
    """``transits[]``: planet, greatest transit, geocentric contacts, and each site's contacts."""
    from firstrung.methods.transit.run import LOW_SUN_DEG

    tr = plan.transits
    items = []
    for k in range(len(tr)):
        sites = {}
        for j, s in enumerate(plan.campaign.sites):
            view = plan.sites[k]
            per = {}
            for c in CONTACTS:
                t = view.time_utc[c][j]
                if np.isnat(t):
                    continue
                alt = float(view.sun_altitude_deg[c][j])
                per[c] = {
                    "time_utc": _time(t),
                    "sun_altitude_deg": _num(alt, 2),
                    "position_angle_deg": _num(view.position_angle_deg[c][j], 1),
                    "sun_up": alt > 0.0,
                    "low_sun": 0.0 < alt < LOW_SUN_DEG,
                }
            sites[s.id] = per
        items.append({
            "planet": tr.planet[k],
            "date": str(np.datetime64(tr.greatest_utc[k], "D")),
            "greatest_utc": _time(tr.greatest_utc[k]),
            "contacts_utc": {c: _time(tr.contacts_utc[c][k]) for c in CONTACTS if not np.isnat(tr.contacts_utc[c][k])},
            "least_separation_arcsec": _num(tr.least_separation_arcsec[k], 1),
            "sun_semidiameter_arcsec": _num(tr.sun_semidiameter_arcsec[k], 2),
            "planet_semidiameter_arcsec": _num(tr.planet_semidiameter_arcsec[k], 2),
            "sites": sites,
        })
    return {
        "campaign": plan.campaign.name,
        "from": plan.first_date,
        "to": plan.last_date,
        "transits": items,
        "assumptions": [
            "geocentric and topocentric contacts from DE421's apparent places; the Sun's semidiameter "
            "959.63\" at 1 au (Auwers), Mercury 3.36\", Venus 8.41\" (Meeus 1998 ch. 55)",
            "the Sun's altitude is the airless altitude of its centre; the position angle runs from the "
            "disc's north point (true equator of date) through east",
        ],
        "safety": TRANSIT_CAUTION,
    }


def transit_run_to_json(run) -> dict:
    """The ``reduce transit`` result: the solar parallax, the Sun's distance, per transit and per row."""

    r = run.reduction
    tr = run.transits
    items = []
    for k in sorted(set(int(x) for x in run.transit_of_row if x >= 0)):
        rows = np.flatnonzero(np.asarray(run.transit_of_row)[np.asarray(run.transit_of_row) >= 0] == k)
        items.append({
            "date": str(np.datetime64(tr.greatest_utc[k], "D")),
            "planet": tr.planet[k],
            "timings": int(rows.size),
            "sites": sorted({str(s) for s in np.asarray(run.log.site)[rows]}),
            "contact_offsets_s": {CONTACTS[c]: _num(v, 2) for (t, c), v in sorted(r.contact_offsets_s.items()) if t == k},
        })
    log = run.log
    return {
        "campaign": run.campaign.name,
        "solar_parallax_arcsec": r.solar_parallax_arcsec.to_json(4),
        "sun_distance_km": r.sun_distance_km.to_json(0),
        "sun_distance_au": r.sun_distance_au.to_json(5),
        "parallax_scale": r.parallax_scale.to_json(6),
        "transits": items,
        "clock_offsets_s": {f"{s}": _num(v, 2) for (s, _), v in sorted(r.clock_offsets_s.items(), key=str)}
        if run.clocks_fitted else {},
        "timings": [
            {"file": str(log.file[i]), "row": int(log.row[i]), "site": str(log.site[i]), "event": str(log.event[i]),
             "used": bool(r.used[i]), "residual_s": _num(r.residual_s[i], 2)}
            for i in range(len(log))
        ],
        "chi2": _num(r.chi2, 2),
        "dof": r.dof,
        "error_budget": [{"source": b.source, "sigma_arcsec": _num(b.sigma, 4)} for b in r.budget],
        "black_drop_sigma_s": {k: _num(v, 1) for k, v in sorted(run.black_drop_sigma_s.items())},
        "modern": {"solar_parallax_arcsec": 8.794143, "sun_distance_au": 1.0},
        "assumptions": list(r.assumptions),
        "rows": {"read": run.rows_read, "accepted": len(log), "left_out_flagged": run.rows_left_out_flagged,
                 "refused": refused_rows(run.problems)},
        "safety": TRANSIT_CAUTION,
    }
