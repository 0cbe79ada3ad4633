"""Rehearsal logs for a whole campaign: what its observers would log, with stated errors.

One function per log kind, each returning rows in the log contract's
columns (times in UTC), sorted by time and site, from the ephemeris and a
seeded random generator: the same campaign, range and seed always give the
same rows. Optional blunders (the usual mistakes of field logs) are injected
on purpose so that ``firstrung check`` can be rehearsed too.
"""

from __future__ import annotations

import numpy as np

from . import blunders as blunder_kit
from .simulation import ShadowErrors, reading_times_utc, simulate_shadow_readings

#: Blunders ``simulate shadows --blunders`` can inject, each at one site:
SHADOW_BLUNDERS = {
    "clock": "a clock on daylight-saving time: logged times one hour late (last day, first site)",
    "unit": "centimetres typed in the millimetre column (second site, last day)",
    "longitude": "the campaign's longitude of the first site has the wrong sign",
    "edge": "the observer marked the other edge of the shadow than the campaign says (the last site "
    "that marks a sharp or faint edge)",
    "wild": "one mistyped reading (first site, first day)",
    "duplicate": "one row entered twice (second site, first day)",
}
#: Craters the eclipse rehearsal times (well spread over the disc; IAU names).
REHEARSAL_CRATERS = ("Grimaldi", "Kepler", "Aristarchus", "Copernicus", "Tycho", "Plato", "Manilius",
                     "Menelaus", "Plinius", "Proclus", "Taruntius", "Langrenus")


def _z(t) -> str:
    return f"{np.datetime64(t, 's')}Z"


def shadow_rows(campaign, first_date, last_date, seed: int, blunders=(), *, half_span_min=30.0, step_min=2.0):
    """Shadow readings every 2 minutes around each site's local apparent noon on every day.

    Errors: each site's stated reading and gnomon errors, the usual edge
    placement and refraction errors, and clocks about 30 s off
    (:meth:`firstrung.simulation.ShadowErrors.stated`). ``blunders`` names keys
    of :data:`SHADOW_BLUNDERS`.
    """
    unknown = [b for b in blunders if b not in SHADOW_BLUNDERS]
    if unknown:
        from .errors import InputError

        raise InputError(f"--blunders: expected some of {', '.join(SHADOW_BLUNDERS)}, got {unknown[0]!r}")
    sites = [s for s in campaign.sites if s.gnomon is not None]
    if not sites:
        return []
    n = len(sites)
    lat = np.array([s.latitude_deg for s in sites])
    lon = np.array([s.longitude_deg for s in sites])
    true_lon = lon.copy()
    edges = np.array([s.gnomon.edge for s in sites], dtype=object)
    if "longitude" in blunders:
        true_lon[0] = blunder_kit.mirrored(lon[0])
    if "edge" in blunders:
        # umbra <-> outer is the blunder of the trade; middle -> umbra is a quarter of the step
        sharp = [i for i in range(n) if edges[i] != "middle"]
        i = sharp[-1] if sharp else n - 1
        edges[i] = blunder_kit.other_edge(edges[i])
    elev = np.array([s.elevation_m for s in sites])
    dates = np.arange(np.datetime64(first_date, "D"), np.datetime64(last_date, "D") + np.timedelta64(1, "D"))
    times, pair = reading_times_utc(dates, lat, true_lon, elev, half_span_min=half_span_min, step_min=step_min)
    index = pair % n
    day = pair // n
    rng = np.random.default_rng(seed)
    errors = ShadowErrors.stated(float(np.mean([s.gnomon.shadow_sigma_m for s in sites])),
                                 float(np.mean([s.gnomon.height_sigma_m for s in sites])), clock_sigma_s=30.0)
    syn = simulate_shadow_readings(index, times, lat, true_lon, elev, np.array([s.gnomon.height_m for s in sites]),
                                   edges, errors, rng)
    t, length = syn.time_utc.astype("datetime64[ms]"), syn.shadow_m
    last = day == day.max()
    if "clock" in blunders:
        t = blunder_kit.clock_shift(t, (index == 0) & last, 1.0)
    if "unit" in blunders and n >= 2:
        length = blunder_kit.length_unit(length, (index == 1) & last, 0.1)
    if "wild" in blunders:
        first_rows = np.flatnonzero((index == 0) & (day == 0))
        length = blunder_kit.wild_row(length, int(first_rows[len(first_rows) // 3]), rng)
    order = np.lexsort((t, index))
    if "duplicate" in blunders and n >= 2:
        pos = int(np.flatnonzero(index[order] == 1)[2])
        order = order[blunder_kit.duplicate(order.size, pos)]
    return [
        {"site": sites[index[k]].id, "time_utc": _z(t[k]), "shadow_mm": f"{length[k] * 1000:.0f}",
         "observer": f"rehearsal {sites[index[k]].id}", "note": "synthetic"}
        for k in order
    ]


SHADOW_COLUMNS = ("site", "time_utc", "shadow_mm", "observer", "note")
ECLIPSE_COLUMNS = ("site", "time_utc", "event", "feature", "time_sigma_s", "observer")
PHASE_COLUMNS = ("site", "time_utc", "quarter", "elongation_deg", "illuminated_fraction", "time_sigma_s", "observer")


def eclipse_rows(campaign, first_date, last_date, seed: int, *, observers_per_site: int = 2,
                 contact_sigma_s: float = 40.0, crater_sigma_s: float = 20.0, late_contact: bool = False):
    """Umbral contacts and crater timings for every eclipse of the range each site can time.

    A site logs a contact only with the Moon up and the Sun below -12 deg;
    craters are timed with 70 % chance each (not every observer finds every
    crater). ``late_contact`` types one observer's first U1 four minutes late,
    for the outlier rejection.
    """
    from .runs.eclipse import load_craters, plan_eclipses

    plan = plan_eclipses(campaign, first_date, last_date)
    from .ephemeris.eclipses import feature_edge_times

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


def phase_rows(campaign, first_date, last_date, seed: int, *, min_altitude_deg: float = 8.0):
    """Half-moon rows of all three kinds, from each site's own half moon.

    Sites take turns by their order in the campaign: the first times the half
    moon by eye (judgement 20 min), the second measures the Sun-Moon angle
    when both bodies are up (instrument 0.1 deg, judgement 15 min), the third
    photographs the Moon five times 30 min apart and measures the lit
    fraction (0.01); further sites repeat the cycle.
    """
    from .ephemeris.phases import sun_moon_topocentric
    from .refraction import apparent_from_true_altitude_deg
    from .runs.phases import plan_phases

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
