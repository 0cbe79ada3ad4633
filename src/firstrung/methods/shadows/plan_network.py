"""Planning for many sites: a summary per day instead of a column per site, every site's noon in a file,
and the zero-shadow days of the tropical sites (the Sun at the zenith at noon).
"""

from __future__ import annotations

import numpy as np

from firstrung.jsonout import number, time_z

#: Up to this many sites the plan's table has a column per site; more, a summary per day.
SITE_COLUMNS_SHOWN = 30
#: The Sun's disc covers the zenith at noon when the site's latitude is within the Sun's
#: semi-diameter of its declination [deg] (about 0.27 deg, common practice).
SUN_SEMIDIAMETER_DEG = 0.27

SITES_CSV_COLUMNS = ("date", "rank", "site", "name", "transit_utc", "transit_local", "altitude_deg", "shadow_m",
                     "shadow_direction")


def zero_shadow_days(plan) -> list[dict]:
    """Each site's days in the range when the Sun passes its zenith at noon (no shadow at noon).

    The day is the one of the pair between which the Sun crosses from one
    side of the zenith to the other (the declination passes the site's
    latitude), the nearer of the two; at the range's ends, a day with the
    Sun's disc over the zenith. Returns dicts ``site``, ``date``, ``transit_utc``,
    ``transit_local``, ``altitude_deg``, sorted by date and site.
    """
    from firstrung.methods.shadows.plan import local_time_iso

    lat = np.array([s.latitude_deg for s in plan.sites], float)
    d = lat[None, :] - np.asarray(plan.declination_deg, float)  # (days, sites)
    hit = np.zeros(d.shape, bool)
    if d.shape[0] > 1:
        cross = np.sign(d[:-1]) != np.sign(d[1:])
        nearer_first = np.abs(d[:-1]) <= np.abs(d[1:])
        hit[:-1] |= cross & nearer_first
        hit[1:] |= cross & ~nearer_first
    # a crossing just outside the range: its first or last day, when the Sun's disc covers the zenith
    ends = ~hit.any(axis=0)
    for k in (0, d.shape[0] - 1):
        hit[k] |= ends & (np.abs(d[k]) <= SUN_SEMIDIAMETER_DEG)
    out = []
    for k, j in zip(*np.nonzero(hit), strict=True):
        s = plan.sites[j]
        out.append({"site": s.id, "date": str(plan.dates[k]), "transit_utc": time_z(plan.transit_utc[k, j]),
                    "transit_local": local_time_iso(plan.transit_utc[k, j], s.timezone),
                    "altitude_deg": number(plan.altitude_deg[k, j], 3)})
    return sorted(out, key=lambda e: (e["date"], e["site"]))


def sites_csv(plan, days) -> str:
    """Every site's noon on the chosen days, one row per day and site (CSV text)."""
    from firstrung.methods.shadows.plan import local_time_iso
    from firstrung.output import rows_to_csv

    rows = []
    for k in days:
        for j, s in enumerate(plan.sites):
            t = plan.transit_utc[k, j]
            rows.append({"date": str(plan.dates[k]), "rank": int(plan.rank[k]), "site": s.id, "name": s.name,
                         "transit_utc": time_z(t), "transit_local": local_time_iso(t, s.timezone) or "",
                         "altitude_deg": number(plan.altitude_deg[k, j], 5), "shadow_m": number(plan.shadow_m[k, j], 4),
                         "shadow_direction": str(plan.shadow_direction[k, j])})
    return rows_to_csv(rows, SITES_CSV_COLUMNS)


def summary_columns(plan, k: int) -> list[str]:
    """A day's cells for many sites: the range of noon altitudes and of shadows, and the noons in UTC."""
    alt = np.asarray(plan.altitude_deg[k], float)
    shadow = np.asarray(plan.shadow_m[k], float)
    t = np.asarray(plan.transit_utc[k]).astype("datetime64[m]")
    return [f"{np.nanmin(alt):.1f} to {np.nanmax(alt):.1f}", f"{np.nanmin(shadow):.2f} to {np.nanmax(shadow):.2f}",
            f"{str(t.min())[11:16]}Z to {str(t.max())[11:16]}Z"]


def summary_note(notes) -> str:
    """A day's notes for many sites: the sites with the Sun at the zenith counted, the others as they are.

    >>> summary_note(["Sun at the zenith at noon at a", "Sun at the zenith at noon at b", "equinox"])
    'Sun at the zenith at noon at 2 sites, equinox'
    """
    zenith = [n for n in notes if n.startswith("Sun at the zenith at noon at ")]
    rest = [n for n in notes if n not in zenith]
    head = [] if not zenith else [zenith[0] if len(zenith) == 1 else
                                  f"Sun at the zenith at noon at {len(zenith)} sites"]
    return ", ".join(head + rest)
