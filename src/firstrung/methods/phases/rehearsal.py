"""Rehearsal half-moon logs: timings by eye, measured Sun-Moon angles and photo series of the lit
fraction, with stated errors, from the ephemeris and a seeded generator.
"""

from __future__ import annotations

import numpy as np

from firstrung.jsonout import time_z as _z

LOG_COLUMNS = ("site", "time_utc", "quarter", "elongation_deg", "illuminated_fraction", "time_sigma_s", "observer")


def rehearsal_rows(campaign, first_date, last_date, seed: int, *, min_altitude_deg: float = 8.0):
    """Half-moon rows of all three kinds, from each site's own half moon.

    Sites take turns by their order in the campaign: the first times the half
    moon by eye (judgement 20 min), the second measures the Sun-Moon angle
    when both bodies are up (instrument 0.1 deg, judgement 15 min), the third
    photographs the Moon five times 30 min apart and measures the lit
    fraction (0.01); further sites repeat the cycle.
    """
    from firstrung.methods.phases.run import plan_phases
    from firstrung.methods.phases.topocentric import sun_moon_topocentric
    from firstrung.refraction import apparent_from_true_altitude_deg

    plan = plan_phases(campaign, first_date, last_date)
    rng = np.random.default_rng(seed)
    rows = []

    def minutes(x):
        return np.timedelta64(int(round(x * 60e6)), "us")

    g = plan.at_dichotomy
    for k in range(len(plan.quarters)):
        quarter = str(plan.quarters.quarter[k])
        for j, site in enumerate(campaign.sites):
            half = plan.site_dichotomy_utc[k, j]
            moon = float(apparent_from_true_altitude_deg(g.moon_altitude_deg[k, j]))
            sun = float(apparent_from_true_altitude_deg(g.sun_altitude_deg[k, j]))
            if moon < min_altitude_deg:
                continue
            args = (site.latitude_deg, site.longitude_deg, site.elevation_m)
            role = j % 3
            observer = f"rehearsal {site.id}"
            if role == 1 and sun >= min_altitude_deg:
                t = half + minutes(rng.normal(0.0, 15.0))
                angle = float(sun_moon_topocentric(t, *args).observed_elongation_deg) + rng.normal(0.0, 0.1)
                rows.append({"site": site.id, "time_utc": _z(t), "quarter": quarter, "elongation_deg": f"{angle:.2f}",
                             "illuminated_fraction": "", "time_sigma_s": "900", "observer": observer})
            elif role in (0, 1):
                t = half + minutes(rng.normal(0.0, 20.0))
                rows.append({"site": site.id, "time_utc": _z(t), "quarter": quarter, "elongation_deg": "",
                             "illuminated_fraction": "", "time_sigma_s": "1200", "observer": observer})
            else:
                times = half + np.array([minutes(30.0 * n + rng.normal(0.0, 2.0)) for n in range(-2, 3)])
                fraction = sun_moon_topocentric(times, *args).illuminated_fraction
                for t, f in zip(times, fraction, strict=True):
                    rows.append({"site": site.id, "time_utc": _z(t), "quarter": quarter, "elongation_deg": "",
                                 "illuminated_fraction": f"{f + rng.normal(0.0, 0.01):.3f}", "time_sigma_s": "",
                                 "observer": observer + " photo series"})
    rows.sort(key=lambda r: (r["time_utc"], r["site"]))
    return rows
