"""Coverage of the transit reduction's 68 % interval over simulated campaigns.
Writes notes/transit_coverage.md.

    python notes/transit_coverage.py [campaigns per scenario, default 1000]

Each campaign's timings are the contacts the ephemeris predicts for its sites at a true
parallax scale, plus drawn errors; the reduction is that of `reduce transit`, told the
stated errors. An honest 68 % interval holds the truth in 60-76 % of campaigns (the
project's band); with 1,000 campaigns one binomial sigma is 1.5 %.
"""

from __future__ import annotations

import sys
import time
from pathlib import Path

import numpy as np

from firstrung.methods.transit.precision import contact_design, simulate_coverage
from firstrung.methods.transit.prediction import inferior_planet_transits

#: Six sites that see all four contacts of the transit of Venus of 2012-06-05/06 with the Sun up
#: (Fairbanks, Guam, Sydney, Tokyo, Manila, Hong Kong), as in tests/methods/test_transit_reduction.py.
VENUS_2012 = np.array([[64.8, -147.7, 150.0], [13.4, 144.8, 10.0], [-33.9, 151.2, 50.0],
                       [35.7, 139.7, 40.0], [14.6, 121.0, 10.0], [22.3, 114.2, 30.0]])
#: Six sites for the transit of Mercury of 2032-11-13 (Helsinki, Rome, Cairo, Nairobi, Port Louis,
#: Cape Town) and 28 cities (those of notes/transit_precision.py).
MERCURY_2032_SIX = np.array([[60.2, 24.9, 0.0], [41.9, 12.5, 0.0], [30.0, 31.2, 0.0], [-1.3, 36.8, 0.0],
                             [-20.2, 57.5, 0.0], [-33.9, 18.4, 0.0]])

SCENARIOS = [
    # label, date, sites, options of simulate_coverage
    ("Venus 2012, six sites, 5 s timings, clocks fitted", "2012-06-06", VENUS_2012,
     {"time_sigma_s": 5.0, "fit_clocks": True}),
    ("Mercury 2032, six sites, 5 s timings, black drop 2 s mean + 3 s scatter, clocks off by 0.5 s (not fitted), "
     "truth 3 % below DE421's parallax", "2032-11-13", MERCURY_2032_SIX,
     {"time_sigma_s": 5.0, "black_drop_mean_s": 2.0, "black_drop_sigma_s": 3.0, "clock_sigma_s": 0.5,
      "fit_clocks": False, "truth_scale": 0.97}),
    ("Mercury 2032, 28 cities, 5 s timings, black drop 2 s mean + 3 s scatter, clocks off by 30 s (fitted), "
     "truth 3 % above", "2032-11-13", "cities",
     {"time_sigma_s": 5.0, "black_drop_mean_s": 2.0, "black_drop_sigma_s": 3.0, "clock_sigma_s": 30.0,
      "fit_clocks": True, "truth_scale": 1.03}),
    ("Mercury 2032, 28 cities, video 1 s timings, black drop 3 s scatter, clocks off by 0.5 s (not fitted)",
     "2032-11-13", "cities",
     {"time_sigma_s": 1.0, "black_drop_sigma_s": 3.0, "clock_sigma_s": 0.5, "fit_clocks": False}),
]


def cities() -> np.ndarray:
    sys.path.insert(0, str(Path(__file__).parent))
    from transit_precision import CITIES

    return np.array([[lat, lon, 0.0] for _, lat, lon in CITIES])


def main() -> None:
    campaigns = int(sys.argv[1]) if len(sys.argv) > 1 else 1000
    lines = [
        "# Coverage of the transit reduction's 68 % interval",
        "",
        f"Made by `python notes/transit_coverage.py {campaigns}`: {campaigns:,} simulated campaigns per scenario,",
        "seeds 1 to 4. Each campaign's timings are the ephemeris's contacts for its sites at the true",
        "parallax scale, plus a Gaussian timing error, a black drop on C2 (late) and C3 (early) of a mean",
        "common to every site plus a scatter from site to site, and a clock error per site shared by its",
        "contacts. The reduction (that of `reduce transit`) is told the timing error and the black",
        "drop's scatter; the mean drop is left to the free offset per contact. An honest interval holds",
        f"the truth in 60-76 % of campaigns; one binomial sigma at {campaigns:,} campaigns is "
        f"{100 * np.sqrt(0.6827 * 0.3173 / campaigns):.1f} %.",
        "",
        "| scenario | timings | coverage | median sigma of the parallax | rms error | contacts rejected | seconds |",
        "|---|---:|---:|---:|---:|---:|---:|",
    ]
    for seed, (label, date, sites, options) in enumerate(SCENARIOS, start=1):
        s = cities() if isinstance(sites, str) else sites
        transits = inferior_planet_transits(f"{date}T00:00Z", f"{date}T23:59Z")
        design = contact_design(transits, 0, *s.T)
        t0 = time.perf_counter()
        c = simulate_coverage(design, campaigns, seed, **options)
        seconds = time.perf_counter() - t0
        lines.append(f"| {label} | {design.site.size} | {100 * c.fraction:.1f} % | {100 * c.median_sigma:.2f} % | "
                     f"{100 * c.rms_error:.2f} % | {c.rejected} | {seconds:.1f} |")
        print(lines[-1], flush=True)
    lines += [
        "",
        "The rms error of the fitted parallax about the truth matches the median stated sigma in every",
        "scenario, and the coverage stays inside the band: the stated errors are the errors. The fast",
        "test (tests/methods/test_transit_coverage.py) repeats the first scenario, and the third's errors",
        "on the six sites of the second, with 600 campaigns each.",
        "",
    ]
    Path(__file__).with_name("transit_coverage.md").write_text("\n".join(lines), encoding="utf-8")


if __name__ == "__main__":
    main()
