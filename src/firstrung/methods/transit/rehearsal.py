"""Rehearsal transit logs: the contacts each site of a campaign would time, with stated errors,
from the ephemeris and a seeded generator (same campaign, range and seed, same rows)."""

from __future__ import annotations

import numpy as np

from firstrung.methods.transit.prediction import CONTACTS

LOG_COLUMNS = ("site", "time_utc", "event", "time_sigma_s", "observer", "note")
#: A site times a contact only with the Sun's centre this high [deg] (common practice).
REHEARSAL_MIN_SUN_DEG = 5.0


def rehearsal_rows(campaign, first_date, last_date, seed: int, *, time_sigma_s: float = 5.0,
                   black_drop_s: float = 3.0, observers_per_site: int = 1, swap_label: bool = False):
    """C1-C4 at every site of every transit of the range, where the Sun is up.

    Each timing is the site's predicted contact plus a Gaussian error of
    ``time_sigma_s``; internal contacts (C2, C3) also get the instrument's black
    drop: C2 late and C3 early by one draw of ``|N(0, black_drop_s)|`` per observer.
    With ``swap_label`` one C4 (the last one logged) is written as C3, the usual slip
    for ``check`` to find.
    """
    from firstrung.methods.transit.run import plan_transits

    plan = plan_transits(campaign, first_date, last_date)
    rng = np.random.default_rng(seed)
    rows = []
    for k in range(len(plan.transits)):
        view = plan.sites[k]
        for j, site in enumerate(campaign.sites):
            for o in range(observers_per_site):
                observer = f"rehearsal {site.id} {chr(ord('A') + o)}"
                drop = abs(rng.normal(0.0, black_drop_s))
                for c in CONTACTS:
                    t = view.time_utc[c][j]
                    if np.isnat(t) or not view.sun_altitude_deg[c][j] >= REHEARSAL_MIN_SUN_DEG:
                        continue
                    err = rng.normal(0.0, time_sigma_s) + (drop if c == "C2" else -drop if c == "C3" else 0.0)
                    when = np.datetime64(t, "us") + np.timedelta64(int(round(err * 1e6)), "us")
                    rows.append({"site": site.id, "time_utc": _ms_z(when), "event": c,
                                 "time_sigma_s": f"{time_sigma_s:g}", "observer": observer,
                                 "note": "projection screen, time signal"})
    rows.sort(key=lambda r: (r["time_utc"], r["site"], r["observer"]))
    if swap_label:
        last = [r for r in rows if r["event"] == "C4"]
        if last:
            last[-1]["event"] = "C3"
    return rows


def _ms_z(t) -> str:
    """ISO 8601 UTC to the tenth of a second, ending in Z (contacts are timed to fractions of a second)."""
    return str(np.datetime64(t, "ms"))[:21] + "Z"
