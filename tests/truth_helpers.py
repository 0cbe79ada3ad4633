"""Perfect and noisy campaigns built from the ephemeris, for the scientific-truth tests.

Every campaign here is invented (sites, observers); the readings are what a
perfect observer would log, computed from DE421 through skyfield, so that a
reduction can be compared with the ephemeris's own distances.
"""

from __future__ import annotations

import numpy as np


def z(t) -> str:
    """ISO 8601 UTC with milliseconds and a Z."""
    return str(np.datetime64(t, "ms")) + "Z"


def site_block(sid, lat, lon, elev=0.0, gnomon=True) -> str:
    text = f'[[site]]\nid = "{sid}"\nname = "{sid} (invented)"\nlatitude_deg = {lat}\nlongitude_deg = {lon}\nelevation_m = {elev}\n\n'
    if gnomon:
        text += "[site.gnomon]\nheight_m = 1.0\nheight_sigma_m = 0.001\nshadow_sigma_m = 0.002\nedge = \"umbra\"\n\n"
    return text


def write_campaign(folder, sites, *, shadows=None, eclipse=None, phases=None, extra="") -> str:
    """A campaign file with the given sites (id, lat, lon, elev) and log rows; returns its path."""
    logs = folder / "logs"
    logs.mkdir(parents=True, exist_ok=True)
    text = '[campaign]\nname = "truth test (invented)"\n\n' + "".join(site_block(*s) for s in sites)
    entries = []
    for kind, rows, header in (
        ("shadows", shadows, "site,time_utc,shadow_mm,observer"),
        ("eclipse", eclipse, "site,time_utc,event,feature,time_sigma_s,observer"),
        ("phases", phases, "site,time_utc,quarter,elongation_deg,illuminated_fraction,time_sigma_s,observer"),
    ):
        if rows is None:
            continue
        (logs / f"{kind}.csv").write_text(header + "\n" + "".join(",".join(r) + "\n" for r in rows), encoding="utf-8")
        entries.append(f'{kind} = ["logs/{kind}.csv"]')
    text += "[logs]\n" + "\n".join(entries) + "\n" + extra
    path = folder / "campaign.toml"
    path.write_text(text, encoding="utf-8")
    return path


def perfect_shadow_rows(sites, dates):
    """Noise-free umbra-edge shadow lengths (0.01 mm) every 2 min around each site's noon."""
    from firstrung.methods.shadows.rehearsal import (
        ShadowErrors,
        reading_times_utc,
        simulate_shadow_readings,
    )

    lat = np.array([s[1] for s in sites], float)
    lon = np.array([s[2] for s in sites], float)
    elev = np.array([s[3] for s in sites], float)
    times, pair = reading_times_utc(np.array(dates, "datetime64[D]"), lat, lon, elev, half_span_min=20, step_min=2)
    idx = pair % len(sites)
    syn = simulate_shadow_readings(idx, times, lat, lon, elev, np.ones(len(sites)), np.array(["umbra"] * len(sites)),
                                   ShadowErrors(), np.random.default_rng(0))
    return [[sites[i][0], z(t), f"{L * 1000:.2f}", "perfect"] for i, t, L in zip(idx, syn.time_utc, syn.shadow_m, strict=True)]


def perfect_contact_rows(eclipse, site_id, sigma_s=20.0):
    """The eclipse's Danjon contacts (geocentric, the same instant everywhere) as one site's log."""
    rows = []
    for c in ("U1", "U2", "U3", "U4"):
        t = eclipse.contacts_utc.get(c)
        if t is not None and not np.isnat(np.asarray(t)[0]):
            rows.append([site_id, z(np.asarray(t)[0]), c, "", f"{sigma_s:g}", "perfect"])
    return rows


def perfect_half_moon_rows(site, first_date, last_date, sigma_s=60.0, min_altitude_deg=10.0):
    """Timings of a site's own true half moons (the physical one) where the Moon is up."""
    from firstrung.methods.phases import prediction as ep
    from firstrung.methods.phases import topocentric as tp

    sid, lat, lon, elev = site
    q = ep.quarters_between(np.datetime64(first_date, "us"), np.datetime64(last_date, "us"))
    half = ep.topocentric_dichotomy_utc(q.dichotomy_utc, lat, lon, elev)
    g = tp.sun_moon_topocentric(half, lat, lon, elev, rates=False)
    return [[sid, z(h), str(qq), "", "", f"{sigma_s:g}", "perfect"]
            for h, qq, alt in zip(half, q.quarter, g.moon_altitude_deg, strict=True) if alt > min_altitude_deg]
