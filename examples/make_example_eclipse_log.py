"""Make the invented example campaign's eclipse log (synthetic, seeded).

The total lunar eclipse of 2029 December 20, well placed for Europe: every
umbral contact high in a dark sky at the three invented sites. Two observers
per site time the four umbral contacts (one-sigma 40 s) and a dozen crater
immersions and emersions (one-sigma 20 s) on an umbra enlarged by Danjon's
convention; one observer's U1 is typed four minutes late, to show the outlier
rejection.

Run from the repository root: python examples/make_example_eclipse_log.py
"""

from __future__ import annotations

import csv
import io
import os

import numpy as np

from firstrung.ephemeris.eclipses import eclipse_near, feature_edge_times
from firstrung.runs.eclipse import load_craters

HERE = os.path.dirname(os.path.abspath(__file__))
SEED = 20291220
OBSERVERS = {
    "fjell": ("I. Nygaard", "club team A"),
    "lowmead": ("club team B", "R. Hofer"),
    "sardo": ("class 4C", "G. Pinna"),
}
CRATERS = ("Grimaldi", "Kepler", "Aristarchus", "Copernicus", "Tycho", "Plato", "Manilius",
           "Menelaus", "Plinius", "Proclus", "Taruntius", "Langrenus")
CONTACT_SIGMA_S = 40.0
CRATER_SIGMA_S = 20.0


def main() -> None:
    rng = np.random.default_rng(SEED)
    eclipse = eclipse_near("2029-12-20T22:42:00Z")
    table = load_craters()
    rows_idx = [table.index(n) for n in CRATERS]
    lat, lon = table.latitude_deg[rows_idx], table.longitude_deg[rows_idx]
    events = []
    for name in ("U1", "U2", "U3", "U4"):
        events.append((name, "", eclipse.contacts_utc[name][0], CONTACT_SIGMA_S))
    for kind in ("immersion", "emersion"):
        times = feature_edge_times(eclipse, lat, lon, [kind] * len(CRATERS), convention="danjon")
        for crater, t in zip(CRATERS, times, strict=True):
            events.append((kind, crater, t, CRATER_SIGMA_S))
    out = []
    for site, observers in OBSERVERS.items():
        for observer in observers:
            for name, feature, t, sigma in events:
                if feature and rng.random() < 0.3:
                    continue  # not every crater is timed by every observer
                err = rng.normal(0.0, sigma)
                if site == "lowmead" and observer == "R. Hofer" and name == "U1":
                    err += 240.0  # typed four minutes late
                when = np.datetime64(t, "us") + np.timedelta64(int(round(err * 1e6)), "us")
                out.append((when, site, name, feature, sigma, observer))
    out.sort(key=lambda r: (r[0], r[1], r[5]))
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(["site", "time_utc", "event", "feature", "time_sigma_s", "observer"])
    for when, site, name, feature, sigma, observer in out:
        w.writerow([site, f"{np.datetime64(when, 's')}Z", name, feature, f"{sigma:.0f}", observer])
    os.makedirs(os.path.join(HERE, "logs"), exist_ok=True)
    with open(os.path.join(HERE, "logs", "eclipse.csv"), "w", encoding="utf-8", newline="") as f:
        f.write(buf.getvalue())


if __name__ == "__main__":
    main()
