"""Make the invented example campaign's shadow log (synthetic, seeded).

Readings every 2 minutes from 30 minutes before to 30 minutes after each
site's local apparent noon on 2027-03-20, with the errors the campaign file
states (2 mm reading, 1 mm gnomon height), the usual edge placement and
refraction errors, and clocks a few tens of seconds off.

Run from the repository root: python examples/make_example_logs.py
"""

from __future__ import annotations

import csv
import io
import os
from zoneinfo import ZoneInfo

import numpy as np

from firstrung.campaign import read_campaign
from firstrung.simulation import ShadowErrors, reading_times_utc, simulate_shadow_readings

HERE = os.path.dirname(os.path.abspath(__file__))
OBSERVERS = {"fjell": "I. Nygaard", "lowmead": "club team B", "sardo": "class 4C"}
SEED = 20270320


def main() -> None:
    campaign = read_campaign(os.path.join(HERE, "campaign.toml"))
    sites = campaign.sites
    lat = np.array([s.latitude_deg for s in sites])
    lon = np.array([s.longitude_deg for s in sites])
    elev = np.array([s.elevation_m for s in sites])
    times, pair = reading_times_utc(["2027-03-20"], lat, lon, elev)
    index = pair % len(sites)
    rng = np.random.default_rng(SEED)
    syn = simulate_shadow_readings(
        index, times, lat, lon, elev,
        np.array([s.gnomon.height_m for s in sites]),
        np.array([s.gnomon.edge for s in sites], dtype=object),
        ShadowErrors.stated(0.002, 0.001, clock_sigma_s=40.0),
        rng,
    )
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(["site", "time_utc", "shadow_mm", "observer", "note"])
    for k in range(len(index)):
        s = sites[index[k]]
        t = np.datetime64(syn.time_utc[k], "s")
        w.writerow([s.id, f"{t}Z", f"{syn.shadow_m[k] * 1000:.0f}", OBSERVERS[s.id], ""])
    os.makedirs(os.path.join(HERE, "logs"), exist_ok=True)
    with open(os.path.join(HERE, "logs", "shadows.csv"), "w", newline="") as f:
        f.write(buf.getvalue())
    print(f"wrote {len(index)} readings")


if __name__ == "__main__":
    ZoneInfo("UTC")
    main()
