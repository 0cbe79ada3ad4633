"""Benchmarks: firstrung's heavy paths, each beside the straightforward way where there is one.

Prints one table: path, workload, firstrung's median of several runs, the
baseline's median in the same run, their ratio, peak memory of firstrung's
run (tracemalloc, Python and numpy allocations) and the agreement of the two
results. ``--quick`` runs reduced workloads in well under a minute (the test
suite runs it as a smoke test; no test asserts a time).

Run: python benchmarks/run.py [--quick]
"""

from __future__ import annotations

import argparse
import os
import platform
import statistics
import subprocess
import sys
import time
import tracemalloc

import numpy as np


def timed(fn, repeats):
    """Median wall time [s] of ``repeats`` calls, the last result, and the peak memory [MB] of one call."""
    times = []
    result = None
    for _ in range(repeats):
        t0 = time.perf_counter()
        result = fn()
        times.append(time.perf_counter() - t0)
    tracemalloc.start()
    fn()
    _, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    return statistics.median(times), result, peak / 1e6


def synthetic_sites(n_sites, rng):
    lat = rng.uniform(-55.0, 60.0, n_sites)
    lon = rng.uniform(-170.0, 170.0, n_sites)
    elev = rng.uniform(0.0, 1500.0, n_sites)
    return lat, lon, elev


def bench_transits(n_sites, n_days, repeats):
    """Planning shadow days (transits and predictions) against skyfield's find_transits, site by site."""
    from skyfield import almanac
    from skyfield.api import wgs84

    from firstrung import ephemeris

    rng = np.random.default_rng(1)
    lat, lon, elev = synthetic_sites(n_sites, rng)
    days = np.arange(np.datetime64("2027-01-01"), np.datetime64("2027-01-01") + np.timedelta64(n_days, "D"))

    from firstrung.planning import PlanSite, ShadowConstraints, plan_shadows

    sites = tuple(
        PlanSite(f"s{i}", f"s{i}", lat[i], lon[i], elev[i], None, 1.0, 0.001, 0.002, "umbra") for i in range(n_sites)
    )
    last = str(days[-1])

    def ours():  # the whole plan: transits, altitudes, shadows, sigma of R, constraints, special days
        return plan_shadows(sites, str(days[0]), last, ShadowConstraints(max_shadow_m=3.0)).transit_utc

    ts, _, earth, sun = ephemeris._loaded()

    def baseline():
        out = []
        for i in range(n_sites):
            site = earth + wgs84.latlon(lat[i], lon[i], elevation_m=elev[i])
            start = ts.utc(2027, 1, 1, 12 - lon[i] / 15.0 - 12)
            end = ts.utc(2027, 1, 1 + n_days, 12 - lon[i] / 15.0 - 12)
            t = almanac.find_transits(site, sun, start, end)
            out.append(t)
        return out

    t_ours, ours_result, mem = timed(ours, repeats)
    t_base, base_result, _ = timed(baseline, max(1, repeats // 2))
    # agreement: match each baseline transit to ours by day index
    worst = 0.0
    for i, t in enumerate(base_result):
        dt64 = np.array([np.datetime64(x.replace(tzinfo=None), "us") for x in t.utc_datetime()])
        ours_i = ours_result[:, i]
        k = min(len(dt64), len(ours_i))
        if k:
            diff = np.abs((ours_i[:k] - dt64[:k]).astype(float)) / 1e6
            worst = max(worst, float(np.max(diff)))
    return ("plan shadows", f"{n_sites} sites x {n_days} days", t_ours, t_base, mem, f"max {worst:.3f} s")


def bench_sun_positions(n_rows, n_sites, repeats):
    """Topocentric Sun for many (site, time) rows: firstrung against skyfield topocentric alt/az and astropy AltAz."""
    from firstrung import ephemeris

    rng = np.random.default_rng(2)
    lat, lon, elev = synthetic_sites(n_sites, rng)
    site = rng.integers(0, n_sites, n_rows)
    t = np.datetime64("2027-03-20T12:00") + (rng.uniform(-4, 4, n_rows) * 3600).astype("timedelta64[s]")

    def ours():
        return ephemeris.sun_position(t, lat[site], lon[site], elev[site]).altitude_deg

    from skyfield.api import wgs84

    ts, _, earth, sun = ephemeris._loaded()
    sample = np.arange(min(n_rows, 2000))  # the baseline costs ~60 us a row; time a sample and scale

    def baseline():
        out = np.empty(sample.size)
        for s_index in np.unique(site[sample]):
            rows = sample[site[sample] == s_index]
            topos = earth + wgs84.latlon(lat[s_index], lon[s_index], elevation_m=elev[s_index])
            tt = ephemeris._skyfield_time(t[rows])
            alt, _, _ = topos.at(tt).observe(sun).apparent().altaz()
            out[rows - sample[0]] = alt.degrees
        return out

    t_ours, a, mem = timed(ours, repeats)
    t_base, b, _ = timed(baseline, 1)
    t_base *= n_rows / sample.size
    agree = float(np.max(np.abs(a[sample] - b))) * 3600
    return ("Sun alt for check rows", f"{n_rows} rows, {n_sites} sites", t_ours, t_base, mem, f'max {agree:.2f}"')


def bench_reduce(n_sites, per_site, repeats):
    """reduce shadows on a synthetic campaign (no baseline)."""
    from firstrung.methods.shadows import ShadowReadings, SiteInput, reduce_shadows
    from firstrung.simulation import ShadowErrors, reading_times_utc, simulate_shadow_readings

    rng = np.random.default_rng(3)
    lat = rng.uniform(-50.0, 60.0, n_sites)
    lon = rng.uniform(-20.0, 20.0, n_sites)
    elev = np.full(n_sites, 100.0)
    half = per_site - 1  # minutes, step 2 min -> per_site readings
    times, pair = reading_times_utc(["2027-09-23"], lat, lon, elev, half_span_min=half, step_min=2.0)
    idx = pair % n_sites
    syn = simulate_shadow_readings(
        idx, times, lat, lon, elev, np.ones(n_sites), np.array(["umbra"] * n_sites, dtype=object),
        ShadowErrors.stated(0.002, 0.001, 20.0), rng,
    )
    k = len(idx)
    readings = ShadowReadings(
        idx, syn.time_utc, syn.shadow_m, syn.gnomon_m, syn.edge, np.full(k, 0.002), np.full(k, 0.001),
        np.full(k, np.nan), np.full(k, np.nan),
    )
    sites = tuple(SiteInput(f"s{i}", f"s{i}", lat[i], lon[i], elev[i]) for i in range(n_sites))
    t_ours, r, mem = timed(lambda: reduce_shadows(sites, readings), repeats)
    return ("reduce shadows", f"{k} rows, {n_sites} sites", t_ours, None, mem,
            f"R/expected {r.earth_radius_km.value / r.expected_radius_km:.4f}")


def bench_ladder(samples, repeats):
    """The ladder's Monte Carlo with every rung measured."""
    from firstrung.ladder import Draw, LadderInputs, climb

    inputs = LadderInputs(
        earth_radius_km=Draw("reciprocal", 1 / 6371.0, 0.01 / 6371.0),
        moon_distance_earth_radii=Draw("reciprocal_sine", float(np.arcsin(1 / 60.27)), 0.0002),
        sun_moon_distance_ratio=Draw("secant", float(np.radians(89.85)), float(np.radians(0.05))),
        moon_angular_diameter_deg=Draw("gaussian", 0.518, 0.002),
        sun_angular_diameter_deg=Draw("gaussian", 0.533, 0.002),
    )
    t_ours, lad, mem = timed(lambda: climb(inputs, samples=samples, seed=1), repeats)
    moon = lad.rung("moon_distance_km").measured
    return ("ladder Monte Carlo", f"{samples:,} samples", t_ours, None, mem, f"Moon {moon.value / 384400:.3f} x modern")


def bench_cli_start(repeats):
    """`firstrung --help` against `python -c "import typer"` (fresh processes)."""
    def ours():
        subprocess.run([sys.executable, "-m", "firstrung", "--help"], capture_output=True, check=True)

    def baseline():
        subprocess.run([sys.executable, "-c", "import typer"], capture_output=True, check=True)

    t_ours = statistics.median([_once(ours) for _ in range(repeats)])
    t_base = statistics.median([_once(baseline) for _ in range(repeats)])
    return ("CLI start", "firstrung --help", t_ours, t_base, None, "")


def _once(fn):
    t0 = time.perf_counter()
    fn()
    return time.perf_counter() - t0


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="reduced workloads, under a minute")
    args = parser.parse_args()
    quick = args.quick
    rows = [
        bench_transits(10 if quick else 100, 60 if quick else 365, 3 if quick else 5),
        bench_sun_positions(10_000 if quick else 100_000, 100 if quick else 1000, 3 if quick else 5),
        bench_reduce(50 if quick else 500, 20, 3 if quick else 5),
        bench_ladder(100_000 if quick else 1_000_000, 3 if quick else 5),
        bench_cli_start(3 if quick else 7),
    ]
    print(f"firstrung benchmarks ({'quick' if quick else 'full'}) on {platform.machine()}, "
          f"{os.cpu_count()} cores, Python {platform.python_version()}")
    header = f"{'path':<24} {'workload':<26} {'firstrung':>10} {'baseline':>10} {'speed-up':>8} {'peak MB':>8}  agreement"
    print(header)
    print("-" * len(header))
    for name, work, ours, base, mem, agree in rows:
        base_s = f"{base:10.3f}" if base is not None else f"{'-':>10}"
        ratio = f"{base / ours:7.1f}x" if base else f"{'-':>8}"
        mem_s = f"{mem:8.1f}" if mem is not None else f"{'-':>8}"
        print(f"{name:<24} {work:<26} {ours:10.3f} {base_s} {ratio} {mem_s}  {agree}")


if __name__ == "__main__":
    main()
