"""Make the invented example campaign's half-moon log (synthetic, seeded).

For each quarter of January-June 2027 and each example site, from the
ephemeris's half moon as seen from that site:

- fjell times the half moon by eye whenever the Moon is up then
  (judgement error 20 min, logged as time_sigma_s = 1200);
- lowmead measures the Sun-Moon angle with a hand instrument when both are
  up at its half moon (judgement error 15 min, instrument error 0.1 deg, the
  refracted angle an instrument sees), and otherwise times the half moon;
- sardo photographs the Moon five times, 30 min apart, around its half moon
  when the Moon is up then, and measures the illuminated fraction (error 0.01).

Run from the repository root: python examples/make_example_phase_log.py
"""

from __future__ import annotations

import csv
import io
import os

import numpy as np

from firstrung.campaign import read_campaign
from firstrung.ephemeris.phases import sun_moon_topocentric
from firstrung.refraction import apparent_from_true_altitude_deg
from firstrung.runs.phases import plan_phases

HERE = os.path.dirname(os.path.abspath(__file__))
SEED = 1
OBSERVERS = {"fjell": "I. Nygaard", "lowmead": "club team B", "sardo": "class 4C photo series"}
#: Lowest observed altitude of the Moon (and of the Sun, for an angle) to observe at all [deg].
MIN_ALTITUDE_DEG = 8.0


def _minutes(x: float) -> np.timedelta64:
    return np.timedelta64(int(round(x * 60e6)), "us")


def _z(t) -> str:
    return f"{np.datetime64(t, 's')}Z"


def main() -> None:
    campaign = read_campaign(os.path.join(HERE, "campaign.toml"))
    plan = plan_phases(campaign, "2027-01-01", "2027-06-30")
    rng = np.random.default_rng(SEED)
    rows = []
    quarters = plan.quarters
    for k in range(len(quarters)):
        for j, site in enumerate(campaign.sites):
            half = plan.site_dichotomy_utc[k, j]
            g = plan.at_dichotomy
            moon = float(apparent_from_true_altitude_deg(g.moon_altitude_deg[k, j]))
            sun = float(apparent_from_true_altitude_deg(g.sun_altitude_deg[k, j]))
            args = (site.latitude_deg, site.longitude_deg, site.elevation_m)
            if moon < MIN_ALTITUDE_DEG:
                continue
            quarter = str(quarters.quarter[k])
            if site.id == "lowmead" and sun >= MIN_ALTITUDE_DEG:
                t = half + _minutes(rng.normal(0.0, 15.0))
                seen = sun_moon_topocentric(t, *args).observed_elongation_deg
                angle = float(seen) + rng.normal(0.0, 0.1)
                rows.append([site.id, _z(t), quarter, f"{angle:.2f}", "", "900", OBSERVERS[site.id]])
            elif site.id in ("fjell", "lowmead"):
                t = half + _minutes(rng.normal(0.0, 20.0))
                rows.append([site.id, _z(t), quarter, "", "", "1200", OBSERVERS[site.id]])
            elif site.id == "sardo":
                times = half + np.array([_minutes(30.0 * n + rng.normal(0.0, 2.0)) for n in range(-2, 3)])
                fraction = sun_moon_topocentric(times, *args).illuminated_fraction
                for t, f in zip(times, fraction, strict=True):
                    rows.append([site.id, _z(t), quarter, "", f"{f + rng.normal(0.0, 0.01):.3f}", "", OBSERVERS[site.id]])
    rows.sort(key=lambda r: (r[1], r[0]))
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(["site", "time_utc", "quarter", "elongation_deg", "illuminated_fraction", "time_sigma_s", "observer"])
    w.writerows(rows)
    os.makedirs(os.path.join(HERE, "logs"), exist_ok=True)
    with open(os.path.join(HERE, "logs", "phases.csv"), "w", newline="") as f:
        f.write(buf.getvalue())
    print(f"wrote {len(rows)} half-moon rows")


if __name__ == "__main__":
    main()
