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

    from firstrung.methods.shadows.prediction import PlanSite, ShadowConstraints, plan_shadows

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
    from firstrung.methods.shadows.inputs import ShadowReadings, SiteInput
    from firstrung.methods.shadows.reduction import reduce_shadows
    from firstrung.methods.shadows.rehearsal import (
        ShadowErrors,
        reading_times_utc,
        simulate_shadow_readings,
    )

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
    from firstrung.app.ladder import Draw, LadderInputs, climb

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


def _big_campaign(folder, n_sites, n_rows, rng):
    """A synthetic campaign file and shadow log of about ``n_rows`` rows at ``n_sites`` sites."""
    from firstrung.campaign import read_campaign
    from firstrung.methods.shadows.rehearsal import LOG_COLUMNS as SHADOW_COLUMNS
    from firstrung.methods.shadows.rehearsal import rehearsal_rows as shadow_rows
    from firstrung.output import rows_to_csv

    lat = rng.uniform(-50.0, 60.0, n_sites)
    lon = rng.uniform(-170.0, 170.0, n_sites)
    parts = ['[campaign]\nname = "benchmark"\n']
    for i in range(n_sites):
        parts.append(f'[[site]]\nid = "s{i}"\nlatitude_deg = {lat[i]:.4f}\nlongitude_deg = {lon[i]:.4f}\n'
                     'elevation_m = 100\n[site.gnomon]\nheight_m = 1.0\n')
    parts.append('[logs]\nshadows = ["shadows.csv"]\n')
    path = os.path.join(folder, "campaign.toml")
    with open(path, "w") as f:
        f.write("\n".join(parts))
    days = max(1, int(np.ceil(n_rows / (n_sites * 17))))
    rows = shadow_rows(read_campaign(path), "2027-03-20", str(np.datetime64("2027-03-20") + np.timedelta64(days - 1, "D")),
                       1, half_span_min=16, step_min=2)[:n_rows]
    with open(os.path.join(folder, "shadows.csv"), "w") as f:
        f.write(rows_to_csv(rows, SHADOW_COLUMNS))
    return path, len(rows)


def bench_check(n_sites, n_rows, repeats):
    """check on a big shadow log: the check itself, and the whole command; baselines: skyfield and astropy alt/az."""
    import tempfile

    from firstrung.campaign import read_campaign
    from firstrung.methods.shadows.check import check_shadow_rows
    from firstrung.methods.shadows.check_statistics import check_sites
    from firstrung.methods.shadows.log import read_shadow_logs, shadow_readings

    rng = np.random.default_rng(5)
    with tempfile.TemporaryDirectory() as folder:
        path, n = _big_campaign(folder, n_sites, n_rows, rng)
        campaign = read_campaign(path)
        log = read_shadow_logs(campaign)
        rows, _ = shadow_readings(campaign, log)
        sites = check_sites(campaign)
        t_ours, result, mem = timed(lambda: check_shadow_rows(sites, rows), repeats)
        t_cli = statistics.median(
            [_once(lambda: subprocess.run([sys.executable, "-m", "firstrung", "check", path, "--json"],
                                          capture_output=True, check=False)) for _ in range(max(1, repeats // 2))]
        )
        # baselines on a sample of rows, scaled: skyfield's topocentric alt/az per site, astropy AltAz per row set
        from skyfield.api import wgs84

        from firstrung import ephemeris

        ts, _, earth, sun = ephemeris._loaded()
        lat = np.array([s.latitude_deg for s in sites])
        lon = np.array([s.longitude_deg for s in sites])
        sample = np.arange(0, len(rows), max(1, len(rows) // 2000))
        t_rows = np.asarray(log.time_utc)[sample]
        site_rows = np.asarray(rows.site_index)[sample]

        def skyfield_baseline():
            out = np.empty(sample.size)
            for si in np.unique(site_rows):
                k = site_rows == si
                topos = earth + wgs84.latlon(lat[si], lon[si], elevation_m=100.0)
                alt, _, _ = topos.at(ephemeris._skyfield_time(t_rows[k])).observe(sun).apparent().altaz()
                out[k] = alt.degrees
            return out

        t_sky, alt_sky, _ = timed(skyfield_baseline, 1)
        t_sky *= len(rows) / sample.size
        try:
            from astropy import units as u
            from astropy.coordinates import AltAz, EarthLocation, get_body, solar_system_ephemeris
            from astropy.time import Time
            from astropy.utils import iers

            iers.conf.auto_download = False
            iers.conf.auto_max_age = None  # offline: predictive UT1 beyond the bundled table is fine for timing
            import skyfield_data

            solar_system_ephemeris.set(os.path.join(os.path.dirname(skyfield_data.__file__), "data", "de421.bsp"))
            small = sample[:300]

            def astropy_baseline():
                loc = EarthLocation.from_geodetic(lon[np.asarray(rows.site_index)[small]] * u.deg,
                                                  lat[np.asarray(rows.site_index)[small]] * u.deg, 100.0 * u.m)
                t = Time(np.asarray(log.time_utc)[small].astype("datetime64[ms]").astype(str).tolist(), scale="utc")
                return get_body("sun", t, loc).transform_to(AltAz(obstime=t, location=loc, pressure=0 * u.hPa)).alt.deg

            t_ast, _, _ = timed(astropy_baseline, 1)
            t_ast *= len(rows) / small.size
        except Exception:  # astropy is a test extra; the table says when it is missing
            t_ast = float("nan")
        ours_alt = ephemeris.sun_position(t_rows, lat[site_rows], lon[site_rows], 100.0).altitude_deg
        agree = float(np.max(np.abs(ours_alt - alt_sky))) * 3600
    return [
        ("check (the check)", f"{n:,} rows, {n_sites} sites", t_ours, t_sky, mem,
         f'vs skyfield alt/az; max {agree:.2f}"; astropy {t_ast:.1f} s = {t_ast / t_ours:.0f}x'),
        ("check (whole command)", f"{n:,} rows, {n_sites} sites", t_cli, t_sky, None, "read + check + JSON"),
    ]


def bench_eclipses(repeats):
    """Every lunar eclipse 1900-2050 with its contacts."""
    from firstrung.methods.eclipse.prediction import lunar_eclipses

    t_ours, e, mem = timed(lambda: lunar_eclipses(np.datetime64("1900-01-01T00:00"), np.datetime64("2050-12-31T23:59")), repeats)
    return ("eclipses with contacts", "1900-2050", t_ours, None, mem, f"{len(e.greatest_utc)} eclipses")


def bench_quarters(n_sites, repeats):
    """A year of quarters for many sites with the windows when both Sun and Moon are up."""
    from firstrung.campaign import parse_campaign
    from firstrung.methods.phases.run import plan_phases

    rng = np.random.default_rng(6)
    text = "".join(
        f'[[site]]\nid = "s{i}"\nlatitude_deg = {rng.uniform(-50, 60):.3f}\nlongitude_deg = {rng.uniform(-170, 170):.3f}\n'
        for i in range(n_sites)
    )
    campaign = parse_campaign(text)
    t_ours, plan, mem = timed(lambda: plan_phases(campaign, "2027-01-01", "2027-12-31"), repeats)
    return ("quarters with windows", f"{n_sites} sites x 1 year", t_ours, None, mem, f"{len(plan.quarters)} quarters")


def bench_scaling(counts, repeats):
    """Transits for a year at 10, 100, 1,000 sites: cost per site should not grow."""
    from firstrung import ephemeris

    rng = np.random.default_rng(7)
    days = np.arange(np.datetime64("2027-01-01"), np.datetime64("2028-01-01"))
    out = []
    for n in counts:
        lat, lon, elev = synthetic_sites(n, rng)
        def transits(lat=lat, lon=lon, elev=elev):
            return ephemeris.solar_transit(days[:, None], lat[None, :], lon[None, :], elev[None, :])

        t, _, mem = timed(transits, repeats)
        out.append(("scaling: transits", f"{n} sites x 365 days", t, None, mem, f"{t / n * 1e3:.2f} ms per site"))
    return out


def _transit_campaign(folder, n_sites):
    """A campaign of ``n_sites`` sites spread over the hemisphere that sees the 2032 transit."""
    rng = np.random.default_rng(11)
    lat = rng.uniform(-60.0, 60.0, n_sites)
    lon = rng.uniform(-20.0, 140.0, n_sites)
    text = '[campaign]\nname = "transit benchmark"\n' + "".join(
        f'\n[[site]]\nid = "s{i}"\nlatitude_deg = {a:.4f}\nlongitude_deg = {b:.4f}\nelevation_m = 0\n'
        for i, (a, b) in enumerate(zip(lat, lon, strict=True)))
    path = os.path.join(folder, "transit.toml")
    with open(path, "w", encoding="utf-8") as f:
        f.write(text)
    return path


def bench_planet_transits(n_sites, first, last, work):
    """``firstrung plan transits --json`` as a user runs it (fresh process, cold)."""
    import json
    import tempfile

    with tempfile.TemporaryDirectory() as folder:
        path = _transit_campaign(folder, n_sites)
        out = {}

        def run():
            out["p"] = subprocess.run([sys.executable, "-m", "firstrung", "plan", "transits", path, "--from", first,
                                       "--to", last, "--json"], capture_output=True, check=True)

        t = _once(run)
        n = len(json.loads(out["p"].stdout)["transits"])
    return ("plan transits", work, t, None, None, f"{n} transits, {n_sites} site(s)")


def bench_demo():
    """``firstrung demo`` end to end, in a fresh process."""
    import tempfile

    with tempfile.TemporaryDirectory() as folder:
        t = _once(lambda: subprocess.run([sys.executable, "-m", "firstrung", "demo", "-o", folder],
                                         capture_output=True, check=True))
    return ("demo end to end", "firstrung demo", t, None, None, "")


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
        *bench_check(100 if quick else 1000, 5_000 if quick else 100_000, 2 if quick else 3),
        bench_reduce(50 if quick else 500, 20, 3 if quick else 5),
        bench_eclipses(1 if quick else 3),
        bench_planet_transits(1, "1900-01-01", "2050-12-31", "all transits 1900-2050"),
        bench_planet_transits(100 if quick else 1000, "2032-11-13", "2032-11-13",
                              f"{100 if quick else 1000} sites, 2032-11-13"),
        bench_quarters(10 if quick else 100, 1 if quick else 3),
        bench_ladder(100_000 if quick else 1_000_000, 3 if quick else 5),
        *bench_scaling((10, 100) if quick else (10, 100, 1000), 1 if quick else 3),
        bench_cli_start(3 if quick else 15),
    ]
    if not quick:
        rows.append(bench_demo())
    print(f"firstrung benchmarks ({'quick' if quick else 'full'}) on {platform.machine()}, "
          f"{os.cpu_count()} cores, Python {platform.python_version()}")
    header = f"{'path':<24} {'workload':<28} {'firstrung':>10} {'baseline':>10} {'speed-up':>8} {'peak MB':>8}  agreement"
    print(header)
    print("-" * len(header))
    for name, work, ours, base, mem, agree in rows:
        base_s = f"{base:10.3f}" if base is not None else f"{'-':>10}"
        ratio = f"{base / ours:7.1f}x" if base else f"{'-':>8}"
        mem_s = f"{mem:8.1f}" if mem is not None else f"{'-':>8}"
        print(f"{name:<24} {work:<28} {ours:10.3f} {base_s} {ratio} {mem_s}  {agree}")


if __name__ == "__main__":
    main()
