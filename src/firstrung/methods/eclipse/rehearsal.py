"""Rehearsal eclipse logs: the umbral contacts and crater timings a campaign's observers would log,
with stated errors, from the ephemeris and a seeded generator (same campaign, range and seed, same rows).
"""

from __future__ import annotations

import numpy as np

from firstrung.jsonout import time_z as _z

#: Craters the eclipse rehearsal times (well spread over the disc; IAU names).
REHEARSAL_CRATERS = ("Grimaldi", "Kepler", "Aristarchus", "Copernicus", "Tycho", "Plato", "Manilius",
                     "Menelaus", "Plinius", "Proclus", "Taruntius", "Langrenus")


LOG_COLUMNS = ("site", "time_utc", "event", "feature", "time_sigma_s", "observer")


def rehearsal_rows(campaign, first_date, last_date, seed: int, *, observers_per_site: int = 2,
                 contact_sigma_s: float = 40.0, crater_sigma_s: float = 20.0, late_contact: bool = False):
    """Umbral contacts and crater timings for every eclipse of the range each site can time (1 to 100 observers).

    A site logs a contact only with the Moon up and the Sun below -12 deg;
    craters are timed with 70 % chance each (not every observer finds every
    crater). ``late_contact`` types one observer's first U1 four minutes late,
    for the outlier rejection.
    """
    from firstrung.methods.eclipse.craters import load_craters
    from firstrung.methods.eclipse.run import plan_eclipses

    if not 1 <= observers_per_site <= 100:
        from firstrung.errors import InputError

        raise InputError(f"--observers: expected 1 to 100 observers at each site, got {observers_per_site:,}")
    plan = plan_eclipses(campaign, first_date, last_date)
    from firstrung.methods.eclipse.prediction import feature_edge_times

    table = load_craters()
    idx = [table.index(c) for c in REHEARSAL_CRATERS]
    rng = np.random.default_rng(seed)
    rows = []
    late_done = not late_contact
    for k, timeable in enumerate(plan.timeable):
        if plan.rank[k] is None:
            continue
        one = plan.eclipses.select(np.arange(len(plan.timeable)) == k)
        events = []
        for name in ("U1", "U2", "U3", "U4"):
            times = one.contacts_utc.get(name)
            if times is not None and not np.isnat(np.asarray(times)[0]):
                events.append((name, "", np.asarray(times)[0], contact_sigma_s))
        for kind in ("immersion", "emersion"):
            times = feature_edge_times(one, table.latitude_deg[idx], table.longitude_deg[idx], [kind] * len(idx),
                                       convention="danjon")
            for crater, t in zip(REHEARSAL_CRATERS, times, strict=True):
                if not np.isnat(t):
                    events.append((kind, crater, t, crater_sigma_s))
        for site in campaign.sites:
            contacts = set(timeable.get(site.id, ()))
            if not contacts:
                continue
            for o in range(observers_per_site):
                observer = f"rehearsal {site.id} {chr(ord('A') + o)}"
                for name, feature, t, sigma in events:
                    if not feature and name not in contacts:
                        continue
                    if feature and rng.random() < 0.3:
                        continue
                    err = rng.normal(0.0, sigma)
                    if not late_done and name == "U1" and o == 1:
                        err += 240.0
                        late_done = True
                    when = np.datetime64(t, "us") + np.timedelta64(int(round(err * 1e6)), "us")
                    rows.append({"site": site.id, "time_utc": _z(when), "event": name, "feature": feature,
                                 "time_sigma_s": f"{sigma:.0f}", "observer": observer})
    rows.sort(key=lambda r: (r["time_utc"], r["site"], r["observer"]))
    return rows
