"""Benchmarks: what a user gets from each command, beside fair baselines run in full.

Every path is timed as a whole command in a fresh process (``python -m
firstrung ...``), the way a user pays for it: the median of several cold
runs (a new interpreter each time, every import paid; the operating
system's file cache is not dropped; firstrung's modules compiled to bytecode
once, as installing the package compiles them) and the peak resident memory of that
process (``os.wait4``'s ``ru_maxrss``, the child alone). Beside it stands
the same command run in process, warm (imports and ephemeris already
loaded), to show what start-up and imports cost.

Baselines are written as a competent user would write them and run in full
in the same run, never timed on a sample and scaled:

* skyfield: one ``observe(...).apparent().altaz()`` call per site with all of
  that site's rows; ``almanac.find_transits`` per site for transits;
* astropy: one vectorised ``get_body(...).transform_to(AltAz(...))`` call for
  every row.

Their agreement with firstrung is printed beside them. The scaling table
times ``check``, ``reduce shadows`` and ``plan shadows`` over sites 10 to
10,000 and rows 10^3 to 10^6 and fits the exponent of time in the workload
(least squares in log-log). ``--quick`` runs reduced workloads in about a
minute (the test suite smoke-runs it; no test asserts a time).

The workloads are synthetic logs written by firstrung's own rehearsal
(every row one the reader accepts; the script stops if not).

Run: python benchmarks/run.py [--quick] [--forms] [--markdown FILE]

``--forms`` runs only the table of the ways of recording the noon Sun (length, altitude, timed and
untimed tip traces): ``reduce shadows`` on about 100,000 rows of each, CPU per row against the length
form's.
"""

from __future__ import annotations

import argparse
import contextlib
import importlib
import io
import json
import math
import os
import platform
import statistics
import subprocess
import sys
import tempfile
import time
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parent.parent
FIRSTRUNG = [sys.executable, "-m", "firstrung"]
ENV = dict(os.environ, COLUMNS="80", PYTHONHASHSEED="0")
# as an installed package runs: its modules compiled once (see compiled_package), not compiled again by
# every command because the shell that starts the benchmark says not to write bytecode
ENV.pop("PYTHONDONTWRITEBYTECODE", None)


def compiled_package() -> None:
    """Compile firstrung's modules to bytecode once, as installing the package does (pip compiles them):
    a cold command then pays for importing them, not for compiling their source every time."""
    import compileall

    import firstrung

    compileall.compile_dir(str(Path(firstrung.__file__).parent), quiet=1)


def _lib(name: str, *modules: str):
    """A library function by name from the first module that has it (the package's layout may move)."""
    for module in modules:
        try:
            found = getattr(importlib.import_module(module), name, None)
        except ImportError:
            continue
        if found is not None:
            return found
    raise ImportError(f"{name} not found in {', '.join(modules)}")


# --- timing ------------------------------------------------------------------------------------


@dataclass
class Cold:
    """Whole command in fresh processes: median seconds, peak resident MB (largest of the runs)."""

    seconds: float
    peak_mb: float
    runs: list[float]
    status: int
    stdout: str
    cpu_s: float = 0.0  # median CPU time (user + system) of the runs: less sensitive to a shared machine


#: Runs one command and reports its wall time and the peak resident memory of that command alone.
#: A small launcher does the fork: Linux hands a forked child the parent's high-water mark, so
#: forking from this (large) benchmark process would overstate every child's peak.
_LAUNCHER = (
    "import resource, subprocess, sys, time\n"
    "t0 = time.perf_counter()\n"
    "status = subprocess.call(sys.argv[2:])\n"
    "seconds = time.perf_counter() - t0\n"
    "usage = resource.getrusage(resource.RUSAGE_CHILDREN)\n"
    "cpu = usage.ru_utime + usage.ru_stime\n"
    "open(sys.argv[1], 'w').write(f'{status} {seconds!r} {usage.ru_maxrss} {cpu!r}')\n"
)


def cold(args: list[str], repeats: int, ok=(0, 1)) -> Cold:
    """Run ``firstrung args`` ``repeats`` times, each in a new process; time and peak memory of each."""
    times, peaks, cpus = [], [], []
    status, stdout = 0, ""
    for _ in range(repeats):
        with tempfile.TemporaryDirectory() as scratch:
            report, out_path, err_path = (Path(scratch) / name for name in ("report", "out", "err"))
            with open(out_path, "wb") as out, open(err_path, "wb") as err:
                subprocess.run([sys.executable, "-c", _LAUNCHER, str(report), *FIRSTRUNG, *args],
                               stdout=out, stderr=err, env=ENV, check=True)
            status_text, seconds, peak_kb, cpu = report.read_text().split()
            status = int(status_text)
            times.append(float(seconds))
            cpus.append(float(cpu))
            peaks.append(int(peak_kb) / 1024.0)  # Linux reports kilobytes
            stdout = out_path.read_text("utf-8", "replace")
            if status not in ok:
                raise RuntimeError(f"firstrung {' '.join(args)} exited {status}: {err_path.read_text()[-2000:]}")
    return Cold(statistics.median(times), max(peaks), times, status, stdout, statistics.median(cpus))


def warm(args: list[str], repeats: int) -> float:
    """Median seconds of the same command run in this process after one untimed run (imports loaded)."""
    from firstrung.cli import main

    def once():
        with contextlib.redirect_stdout(io.StringIO()), contextlib.redirect_stderr(io.StringIO()):
            try:
                main(list(args))
            except SystemExit:
                pass

    once()
    times = []
    for _ in range(repeats):
        t0 = time.perf_counter()
        once()
        times.append(time.perf_counter() - t0)
    return statistics.median(times)


def median_time(fn, repeats: int):
    """Median seconds of ``repeats`` calls of ``fn`` and its last result."""
    times, result = [], None
    for _ in range(repeats):
        t0 = time.perf_counter()
        result = fn()
        times.append(time.perf_counter() - t0)
    return statistics.median(times), result


# --- workloads ---------------------------------------------------------------------------------


def synthetic_latitudes(n_sites: int, rng) -> np.ndarray:
    """Sites 30-60 deg from the equator on either side: the noon Sun never reaches the zenith there.

    So every noon shadow is long (over 10 cm for a 1 m gnomon all year) and no
    reading rounds to a negative or zero millimetre count.
    """
    lat = rng.uniform(30.0, 60.0, n_sites)
    return np.where(rng.random(n_sites) < 0.5, -lat, lat)


def write_campaign(folder: Path, n_sites: int, seed: int, with_logs: bool = True, declared: int = 0) -> Path:
    """A campaign file of ``n_sites`` synthetic sites (``declared`` of them when larger: the same first sites)."""
    rng = np.random.default_rng(seed)
    lat = synthetic_latitudes(n_sites, rng)
    lon = rng.uniform(-170.0, 170.0, n_sites)
    if declared > n_sites:
        more = np.random.default_rng(seed + 1)
        lat = np.concatenate([lat, synthetic_latitudes(declared - n_sites, more)])
        lon = np.concatenate([lon, more.uniform(-170.0, 170.0, declared - n_sites)])
    parts = ['[campaign]\nname = "benchmark"\n']
    for i in range(lat.size):
        parts.append(
            f'[[site]]\nid = "s{i}"\nlatitude_deg = {lat[i]:.4f}\nlongitude_deg = {lon[i]:.4f}\n'
            "elevation_m = 100\n[site.gnomon]\nheight_m = 1.0\nheight_sigma_m = 0.001\nshadow_sigma_m = 0.002\n"
        )
    if with_logs:
        parts.append('[logs]\nshadows = ["shadows.csv"]\n')
    folder.mkdir(parents=True, exist_ok=True)
    path = folder / "campaign.toml"
    path.write_text("\n".join(parts))
    return path


def shadow_workload(folder: Path, n_sites: int, n_rows: int, seed: int = 5, declared: int = 0) -> tuple[Path, int]:
    """A campaign of ``n_sites`` sites and a shadow log of ``n_rows`` rows written by firstrung's rehearsal.

    Each site logs ``k`` readings a day 2 minutes apart around its noon
    (k = 17, fewer when there are few rows per site), over as many days as
    the rows need. Every ``shadow_mm`` is a positive whole number.
    """
    path = write_campaign(folder, n_sites, seed)
    per_site = max(1, n_rows // n_sites)
    k = min(17, max(3, per_site))
    days = max(1, math.ceil(n_rows / (n_sites * k)))
    read_campaign = _lib("read_campaign", "firstrung.campaign")
    shadow_rows = _lib("rehearsal_rows", "firstrung.methods.shadows.rehearsal")
    start = np.datetime64("2027-03-20")
    rows = shadow_rows(read_campaign(str(path)), str(start), str(start + np.timedelta64(days - 1, "D")), seed,
                       half_span_min=(k - 1), step_min=2.0)
    # the first rows in time (every site on the first days), then back in the log's order (site, time)
    keep = sorted(sorted(range(len(rows)), key=lambda j: rows[j]["time_utc"])[:n_rows])
    rows = [rows[j] for j in keep]
    bad = [r["shadow_mm"] for r in rows if not r["shadow_mm"].isdigit() or int(r["shadow_mm"]) <= 0]
    if bad:
        raise RuntimeError(f"the benchmark generator wrote shadow_mm {bad[0]!r}: not a positive whole number")
    with open(folder / "shadows.csv", "w", newline="") as f:
        f.write("site,time_utc,shadow_mm,observer,note\n")
        f.writelines(f"{r['site']},{r['time_utc']},{r['shadow_mm']},{r['observer']},{r['note']}\n" for r in rows)
    if declared > n_sites:  # the same sites first, then many more that logged nothing
        write_campaign(folder, n_sites, seed, declared=declared)
    return path, len(rows)


def form_workloads(folder: Path, n_sites: int, days: int, seed: int = 5) -> dict[str, tuple[Path, int]]:
    """One campaign, and a shadow log of it in each way of recording the noon Sun, by firstrung's rehearsal.

    ``length`` (17 readings a site-day, 2 minutes apart), ``altitude`` (the same times, an angle
    instrument's readings), ``timed trace`` (tip positions every 10 minutes over two hours, 13 a
    site-day) and ``untimed trace`` (the same points with the date only: the log a class without a
    clock writes). Returns form -> (campaign file, rows); each campaign names its own log.
    """
    read_campaign = _lib("read_campaign", "firstrung.campaign")
    shadow_rows = _lib("rehearsal_rows", "firstrung.methods.shadows.rehearsal")
    form_rows = _lib("form_rows", "firstrung.methods.shadows.rehearsal_forms")
    first = np.datetime64("2027-03-20")
    last = str(first + np.timedelta64(days - 1, "D"))
    out = {}
    for form in ("length", "altitude", "timed trace", "untimed trace"):
        sub = folder / form.replace(" ", "-")
        path = write_campaign(sub, n_sites, seed)
        campaign = read_campaign(str(path))
        if form == "length":
            rows = shadow_rows(campaign, str(first), last, seed, half_span_min=16.0, step_min=2.0)
            lines = ["site,time_utc,shadow_mm,observer,note"] + [
                f"{r['site']},{r['time_utc']},{r['shadow_mm']},{r['observer']},{r['note']}" for r in rows]
        elif form == "altitude":
            rows = form_rows(campaign, "altitude", str(first), last, seed, half_span_min=16.0, step_min=2.0)
            lines = ["site,time_utc,altitude_deg,limb,observer,note"] + [
                f"{r['site']},{r['time_utc']},{r['altitude_deg']},{r['limb']},{r['observer']},{r['note']}" for r in rows]
        else:
            rows = form_rows(campaign, "trace", str(first), last, seed)
            if form == "timed trace":
                lines = ["site,time_utc,tip_x_mm,tip_y_mm,observer,note"] + [
                    f"{r['site']},{r['time_utc']},{r['tip_x_mm']},{r['tip_y_mm']},{r['observer']},{r['note']}"
                    for r in rows]
            else:  # the date of the site's mean noon (the benchmark's sites keep UTC and no zone)
                lon = {s.id: s.longitude_deg for s in campaign.sites}
                lines = ["site,date,tip_x_mm,tip_y_mm,observer,note"]
                for r in rows:
                    t = np.datetime64(r["time_utc"].rstrip("Z"), "s") + np.timedelta64(int(lon[r["site"]] * 240), "s")
                    lines.append(f"{r['site']},{str(t)[:10]},{r['tip_x_mm']},{r['tip_y_mm']},{r['observer']},{r['note']}")
        (sub / "shadows.csv").write_text("\n".join(lines) + "\n")
        out[form] = (path, len(lines) - 1)
    return out


def bench_forms(work: Workloads, n_sites: int, days: int, repeats: int) -> list[Row]:
    """``reduce shadows`` on a log of each form: time and CPU per row against the length form's."""
    found = []
    for form, (path, n) in form_workloads(work.root / "forms", n_sites, days).items():
        whole = cold(["reduce", "shadows", str(path)], repeats)
        found.append((form, n, whole))
    _, n_length, length = found[0]
    rows = []
    for form, n, whole in found:
        per_row = (whole.cpu_s / n) / (length.cpu_s / n_length)
        wall = (whole.seconds / n) / (length.seconds / n_length)
        rows.append(Row(f"forms: {form}", f"reduce shadows, {n:,} rows, {n_sites} sites", whole,
                        agreement=f"{per_row:.2f}x the length form's CPU per row ({wall:.2f}x wall)",
                        target="" if form == "length" else "<= 1.5x the length form"))
    return rows


class Workloads:
    """Campaigns written once per run, by (sites, rows)."""

    def __init__(self, root: Path):
        self.root = root
        self.made: dict[tuple[int, int], tuple[Path, int]] = {}

    def shadows(self, n_sites: int, n_rows: int) -> tuple[Path, int]:
        key = (n_sites, n_rows)
        if key not in self.made:
            self.made[key] = shadow_workload(self.root / f"c{n_sites}x{n_rows}", n_sites, n_rows)
        return self.made[key]


# --- results -----------------------------------------------------------------------------------


@dataclass
class Row:
    path: str
    workload: str
    cold: Cold | None = None
    warm_s: float | None = None
    inner_s: float | None = None
    baselines: list[tuple[str, float]] = field(default_factory=list)
    agreement: str = ""
    target: str = ""


def _fmt_s(x: float | None) -> str:
    if x is None:
        return "-"
    return f"{x:.3f}" if x < 10 else f"{x:.1f}"


# --- the check against skyfield and astropy -----------------------------------------------------


def bench_check(work: Workloads, n_sites: int, n_rows: int, repeats: int, with_astropy: bool = True) -> Row:
    """``check`` whole command cold; the check itself in process; skyfield per site and astropy in one call."""
    path, n = work.shadows(n_sites, n_rows)
    whole = cold(["check", str(path)], repeats)
    warm_s = warm(["check", str(path)], max(1, repeats - 1))
    data = json.loads(cold(["check", str(path), "--json"], 1).stdout)
    if data["rows"]["read"] != n:
        raise RuntimeError(f"check read {data['rows']['read']} of the {n} rows written")

    read_campaign = _lib("read_campaign", "firstrung.campaign")
    read_shadow_logs = _lib("read_shadow_logs", "firstrung.methods.shadows.log")
    check_sites = _lib("check_sites", "firstrung.methods.shadows.check_statistics", "firstrung.methods.shadows.check")
    check_rows = _lib("shadow_readings", "firstrung.methods.shadows.log")
    check_shadow_rows = _lib("check_shadow_rows", "firstrung.methods.shadows.check")
    ephemeris = importlib.import_module("firstrung.ephemeris")

    campaign = read_campaign(str(path))
    log = read_shadow_logs(campaign)
    rows, _ = check_rows(campaign, log)
    sites = check_sites(campaign)
    inner_s, _ = median_time(lambda: check_shadow_rows(sites, rows), repeats)

    lat = np.array([s.latitude_deg for s in sites])
    lon = np.array([s.longitude_deg for s in sites])
    elev = np.array([s.elevation_m for s in sites])
    site_of = np.asarray(rows.site_index)
    t_utc = np.asarray(rows.time_utc).astype("datetime64[ns]")
    ours = ephemeris.sun_position(t_utc, lat[site_of], lon[site_of], elev[site_of]).altitude_deg

    sky_s, sky_alt = median_time(lambda: skyfield_altitudes(t_utc, site_of, lat, lon, elev), max(1, repeats // 2))
    baselines = [("skyfield, one call per site", sky_s)]
    agree = f'skyfield max {np.max(np.abs(ours - sky_alt)) * 3600:.2f}"'
    if with_astropy:
        ast_s, ast_alt = median_time(lambda: astropy_altitudes(t_utc, site_of, lat, lon, elev), 1)
        baselines.append(("astropy, one vectorised call", ast_s))
        agree += f'; astropy max {np.max(np.abs(ours - ast_alt)) * 3600:.2f}"'
    return Row("check", f"{n:,} rows, {n_sites:,} sites", whole, warm_s, inner_s, baselines, agree)


def skyfield_altitudes(t_utc, site_of, lat, lon, elev) -> np.ndarray:
    """Airless topocentric altitude of the Sun [deg]: skyfield, one vectorised call per site with all its rows."""
    from skyfield.api import wgs84

    ts = _timescale()
    eph = _skyfield_ephemeris()
    earth, sun = eph["earth"], eph["sun"]
    out = np.empty(t_utc.size)
    year, month, day, second = _civil(t_utc)
    order = np.argsort(site_of, kind="stable")
    bounds = np.flatnonzero(np.diff(site_of[order])) + 1
    for chunk in np.split(order, bounds):
        i = site_of[chunk[0]]
        observer = earth + wgs84.latlon(lat[i], lon[i], elevation_m=elev[i])
        t = ts.utc(year[chunk], month[chunk], day[chunk], 0, 0, second[chunk])
        alt, _, _ = observer.at(t).observe(sun).apparent().altaz()
        out[chunk] = alt.degrees
    return out


def _civil(t_utc):
    """Year, month, day and second of the day of UTC instants (so that skyfield applies the leap seconds)."""
    months = t_utc.astype("datetime64[M]")
    days = t_utc.astype("datetime64[D]")
    year = months.astype("datetime64[Y]").astype(np.int64) + 1970
    month = months.astype(np.int64) % 12 + 1
    day = (days - months.astype("datetime64[D]")).astype(np.int64) + 1
    second = (t_utc - days.astype(t_utc.dtype)).astype("timedelta64[ns]").astype(np.int64) / 1e9
    return year, month, day, second


def _timescale():
    """skyfield's built-in timescale files, without the notice that their UT1 table has aged."""
    import warnings

    from skyfield.api import load

    with warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)
        return load.timescale(builtin=True)


def _skyfield_ephemeris():
    """DE421 from the skyfield-data package (no download)."""
    import warnings

    from skyfield.api import load_file
    from skyfield_data import get_skyfield_data_path

    with warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)  # the package's notice that its UT1 table has aged
        return load_file(os.path.join(get_skyfield_data_path(), "de421.bsp"))


def astropy_altitudes(t_utc, site_of, lat, lon, elev) -> np.ndarray:
    """Airless topocentric altitude of the Sun [deg]: astropy, one vectorised call for every row (offline)."""
    import warnings

    from astropy import units as u
    from astropy.coordinates import AltAz, EarthLocation, get_body, solar_system_ephemeris
    from astropy.time import Time
    from astropy.utils import iers
    from skyfield_data import get_skyfield_data_path

    iers.conf.auto_download = False
    iers.conf.auto_max_age = None
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # predictive UT1 beyond the bundled table: harmless for the Sun's altitude
        with solar_system_ephemeris.set(os.path.join(get_skyfield_data_path(), "de421.bsp")):
            t = Time(t_utc, scale="utc")
            loc = EarthLocation.from_geodetic(lon[site_of] * u.deg, lat[site_of] * u.deg, elev[site_of] * u.m)
            frame = AltAz(obstime=t, location=loc, pressure=0 * u.hPa)
            return get_body("sun", t, loc).transform_to(frame).alt.deg


# --- plan shadows against skyfield's transits --------------------------------------------------


def bench_plan_transits(work: Workloads, n_sites: int, repeats: int, quick: bool) -> Row:
    """``plan shadows`` for a year (whole command) beside skyfield's ``find_transits`` per site."""
    folder = work.root / f"plan{n_sites}"
    path = write_campaign(folder, n_sites, seed=1, with_logs=False)
    first, last = ("2027-01-01", "2027-02-28") if quick else ("2027-01-01", "2027-12-31")
    args = ["plan", "shadows", str(path), "--from", first, "--to", last]
    whole = cold(args, repeats)
    warm_s = warm(args, max(1, repeats - 1))
    data = json.loads(cold([*args, "--json"], 1).stdout)
    read_campaign = _lib("read_campaign", "firstrung.campaign")
    campaign = read_campaign(str(path))
    sites = [(s.id, s.latitude_deg, s.longitude_deg, s.elevation_m) for s in campaign.sites]

    from skyfield import almanac
    from skyfield.api import wgs84

    ts = _timescale()
    eph = _skyfield_ephemeris()
    earth, sun = eph["earth"], eph["sun"]
    d0 = np.datetime64(first)
    n_days = int((np.datetime64(last) - d0).astype(int)) + 1

    def baseline():
        out = {}
        for sid, la, lo, el in sites:
            observer = earth + wgs84.latlon(la, lo, elevation_m=el)
            start = ts.utc(2027, 1, 1, -lo / 15.0)  # local midnight of the first day
            end = ts.utc(2027, 1, 1 + n_days, -lo / 15.0)
            out[sid] = almanac.find_transits(observer, sun, start, end)
        return out

    base_s, transits = median_time(baseline, max(1, repeats // 2))
    worst = 0.0
    for k, day in enumerate(data["days"]):
        for sid, t in transits.items():
            if k >= len(t):
                continue
            ours = np.datetime64(day["sites"][sid]["transit_utc"].rstrip("Z"), "ms")
            theirs = np.datetime64(t[k].utc_datetime().replace(tzinfo=None), "ms")
            late = float((theirs - ours).astype(float)) / 1e3  # the JSON prints the second, cut
            worst = max(worst, -late, late - 1.0, 0.0)
    return Row("plan shadows", f"{n_sites:,} sites x {n_days} days", whole, warm_s, None,
               [("skyfield find_transits, per site", base_s)],
               f"skyfield's transits fall in the second printed: max {worst:.3f} s outside")


# --- scaling ---------------------------------------------------------------------------------------


@dataclass
class Point:
    command: str
    sites: int
    rows: int | None
    seconds: float
    peak_mb: float
    cpu_s: float = 0.0


def fit_exponent(x: list[float], y: list[float]) -> float:
    """Least-squares slope of log(y) on log(x)."""
    return float(np.polyfit(np.log(x), np.log(y), 1)[0])


def scaling(work: Workloads, quick: bool, repeats: int) -> list[Point]:
    points = []
    rows_axis = [1_000, 4_000] if quick else [1_000, 10_000, 100_000, 1_000_000]
    sites_axis = [10, 30] if quick else [10, 100, 1_000, 10_000]
    fixed_sites, fixed_rows = (30, 4_000) if quick else (100, 100_000)
    plan_axis = [10, 100] if quick else [10, 30, 100, 1_000, 3_000, 10_000]
    for command in (["check"], ["reduce", "shadows"]):
        for rows in rows_axis:
            path, n = work.shadows(fixed_sites, rows)
            c = cold([*command, str(path)], repeats if rows < 1_000_000 else max(1, repeats - 2), ok=(0, 1, 2))
            points.append(Point(" ".join(command), fixed_sites, n, c.seconds, c.peak_mb, c.cpu_s))
        for sites in sites_axis:
            if sites == fixed_sites:
                continue
            path, n = work.shadows(sites, fixed_rows)
            c = cold([*command, str(path)], repeats, ok=(0, 1, 2))
            points.append(Point(" ".join(command), sites, n, c.seconds, c.peak_mb, c.cpu_s))
    last = "2027-02-28" if quick else "2027-12-31"
    for sites in plan_axis:
        folder = work.root / f"plan{sites}"
        path = write_campaign(folder, sites, seed=1, with_logs=False)
        c = cold(["plan", "shadows", str(path), "--from", "2027-01-01", "--to", last],
                 repeats if sites <= 3_000 else max(1, repeats - 2))
        points.append(Point("plan shadows", sites, None, c.seconds, c.peak_mb, c.cpu_s))
    return points


def exponents(points: list[Point]) -> dict[str, str]:
    out = {}
    for command in ("check", "reduce shadows"):
        by_rows = sorted((p.rows, p.seconds) for p in points if p.command == command and p.sites == _fixed_sites(points))
        by_sites = sorted((p.sites, p.seconds) for p in points if p.command == command and p.rows == _fixed_rows(points))
        parts = []
        if len(by_rows) >= 2:
            parts.append(f"time ~ rows^{fit_exponent(*zip(*by_rows, strict=True)):.2f} "
                         f"({by_rows[0][0]:,} to {by_rows[-1][0]:,})")
        if len(by_sites) >= 2:
            parts.append(f"time ~ sites^{fit_exponent(*zip(*by_sites, strict=True)):.2f} at {_fixed_rows(points):,} rows "
                         f"({by_sites[0][0]:,} to {by_sites[-1][0]:,})")
        out[command] = "; ".join(parts)
    plan = sorted((p.sites, p.seconds) for p in points if p.command == "plan shadows" and p.sites >= 100)
    if len(plan) >= 2:
        out["plan shadows"] = (f"time ~ sites^{fit_exponent(*zip(*plan, strict=True)):.2f} "
                               f"({plan[0][0]:,} to {plan[-1][0]:,} sites)")
    return out


def _fixed_sites(points):
    counts = {}
    for p in points:
        if p.rows is not None:
            counts[p.sites] = counts.get(p.sites, 0) + 1
    return max(counts, key=counts.get)


def _fixed_rows(points):
    fs = _fixed_sites(points)
    rows = {p.rows for p in points if p.rows is not None and p.sites != fs}
    return min(rows) if rows else None


# --- other whole commands --------------------------------------------------------------------------


def transit_campaign(folder: Path, n_sites: int) -> Path:
    """A campaign of ``n_sites`` synthetic sites spread over the hemisphere that sees the 2032 transit."""
    rng = np.random.default_rng(11)
    lat = rng.uniform(-60.0, 60.0, n_sites)
    lon = rng.uniform(-20.0, 140.0, n_sites)
    text = '[campaign]\nname = "transit benchmark"\n' + "".join(
        f'\n[[site]]\nid = "s{i}"\nlatitude_deg = {a:.4f}\nlongitude_deg = {b:.4f}\nelevation_m = 0\n'
        for i, (a, b) in enumerate(zip(lat, lon, strict=True)))
    folder.mkdir(parents=True, exist_ok=True)
    path = folder / f"transit-{n_sites}.toml"
    path.write_text(text, encoding="utf-8")
    return path


def bench_command(name: str, workload: str, args: list[str], repeats: int, target: str = "", ok=(0, 1)) -> Row:
    whole = cold(args, repeats, ok=ok)
    warm_s = warm(args, max(1, repeats - 1)) if repeats > 1 else None
    return Row(name, workload, whole, warm_s, target=target)


def bench_network(root: Path, schools: int, repeats: int, quick: bool) -> list[Row]:
    """An open network (issue 16): ``schools`` schools, one reading each, no [[site]]: reduce and report."""
    import shutil

    folder = root / f"network-{schools}"
    shutil.rmtree(folder, ignore_errors=True)  # a log the campaign reads is never written over
    folder.mkdir(parents=True)
    camp = folder / "network.toml"
    camp.write_text('[campaign]\nname = "Benchmark network"\n[logs]\nshadows = ["logs/shadows.csv"]\n')
    subprocess.run(FIRSTRUNG + ["simulate", "shadows", str(camp), "--from", "2027-03-20", "--to", "2027-03-20",
                                "-o", str(folder / "logs"), "--network", str(schools), "--seed", "3"],
                   env=ENV, capture_output=True, check=True)
    work = f"{schools:,} schools, one reading each, pairs included"
    out = folder / "report.html"
    return [bench_command("check", f"{schools:,} schools, one reading each", ["check", str(camp)], repeats,
                          ok=(0, 1, 2)),
            bench_command("reduce shadows", work, ["reduce", "shadows", str(camp)], repeats,
                          "" if quick else "< 2 s", ok=(0, 1, 2)),
            bench_command("report", work, ["report", str(camp), "-o", str(out)], max(1, repeats // 2),
                          "" if quick else "< 10 s", ok=(0, 1, 2))]


def bench_cli_start(repeats: int) -> Row:
    whole = cold(["--help"], repeats, ok=(0,))
    times = []
    for _ in range(repeats):
        t0 = time.perf_counter()
        subprocess.run([sys.executable, "-c", "import typer"], capture_output=True, check=True)
        times.append(time.perf_counter() - t0)
    return Row("CLI start", "firstrung --help", whole, None, None,
               [("python -c 'import typer'", statistics.median(times))])


# --- output --------------------------------------------------------------------------------------


def machine_line(quick: bool) -> str:
    import matplotlib
    import scipy
    import skyfield

    try:
        import astropy

        astropy_v = astropy.__version__
    except ImportError:
        astropy_v = "missing"
    return (f"firstrung benchmarks ({'quick' if quick else 'full'}) on {platform.machine()}, {os.cpu_count()} cores, "
            f"Python {platform.python_version()}, numpy {np.__version__}, scipy {scipy.__version__}, "
            f"skyfield {skyfield.__version__}, astropy {astropy_v}, matplotlib {matplotlib.__version__}")


def print_table(rows: list[Row]) -> None:
    header = (f"{'path':<24} {'workload':<28} {'cold s':>8} {'cpu s':>8} {'peak MB':>8} {'warm s':>8} {'inner s':>8}  "
              "baselines (s, ratio to inner or cold)  agreement")
    print(header)
    print("-" * len(header))
    for r in rows:
        ref = r.inner_s if r.inner_s is not None else (r.cold.seconds if r.cold else None)
        base = "; ".join(f"{name} {_fmt_s(s)} = {s / ref:.1f}x" for name, s in r.baselines) if ref else ""
        cold_s = _fmt_s(r.cold.seconds) if r.cold else "-"
        peak = f"{r.cold.peak_mb:.0f}" if r.cold else "-"
        cpu = _fmt_s(r.cold.cpu_s) if r.cold else "-"
        print(f"{r.path:<24} {r.workload:<28} {cold_s:>8} {cpu:>8} {peak:>8} {_fmt_s(r.warm_s):>8} {_fmt_s(r.inner_s):>8}  "
              f"{base}  {r.agreement}")


def print_scaling(points: list[Point]) -> None:
    print()
    print("scaling (whole command, cold, median)")
    print(f"{'scaling: command':<24} {'sites':>7} {'rows':>10} {'s':>8} {'cpu s':>8} {'peak MB':>8}")
    for p in points:
        rows = f"{p.rows:,}" if p.rows is not None else "1 year"
        print(f"{'scaling: ' + p.command:<24} {p.sites:>7,} {rows:>10} {_fmt_s(p.seconds):>8} {_fmt_s(p.cpu_s):>8} "
              f"{p.peak_mb:>8.0f}")
    for command, text in exponents(points).items():
        print(f"  {command}: {text}")


def markdown(rows: list[Row], points: list[Point], header: str) -> str:
    out = [header, "", "| path | workload | whole command, cold (s) | its CPU (s) | peak RSS (MB) | in process, warm (s) | "
           "the computation alone (s) | baselines, run in full (s) | agreement | target |",
           "|---|---|---:|---:|---:|---:|---:|---|---|---|"]
    for r in rows:
        ref = r.inner_s if r.inner_s is not None else (r.cold.seconds if r.cold else None)
        base = "<br>".join(f"{name}: {_fmt_s(s)} ({s / ref:.1f}x {'the computation' if r.inner_s else 'the command'})"
                           for name, s in r.baselines) if ref else "-"
        out.append(f"| {r.path} | {r.workload} | {_fmt_s(r.cold.seconds) if r.cold else '-'} | "
                   f"{_fmt_s(r.cold.cpu_s) if r.cold else '-'} | "
                   f"{f'{r.cold.peak_mb:.0f}' if r.cold else '-'} | {_fmt_s(r.warm_s)} | {_fmt_s(r.inner_s)} | "
                   f"{base or '-'} | {r.agreement or '-'} | {r.target or '-'} |")
    if not points:  # a run without the scaling table (--forms, --network)
        return "\n".join(out) + "\n"
    out += ["", "Scaling (whole command, cold, median of the runs; peak RSS the largest):", "",
            "| command | sites | rows | time (s) | CPU (s) | peak RSS (MB) |", "|---|---:|---:|---:|---:|---:|"]
    for p in points:
        out.append(f"| {p.command} | {p.sites:,} | {f'{p.rows:,}' if p.rows is not None else '1 year of days'} | "
                   f"{_fmt_s(p.seconds)} | {_fmt_s(p.cpu_s)} | {p.peak_mb:.0f} |")
    out.append("")
    for command, text in exponents(points).items():
        out.append(f"- {command}: {text}")
    return "\n".join(out) + "\n"


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="reduced workloads, about a minute")
    parser.add_argument("--markdown", type=Path, help="also write the tables as Markdown to this file")
    parser.add_argument("--forms", action="store_true",
                        help="only the ways of recording the noon Sun: reduce shadows on ~100,000 rows of each form")
    parser.add_argument("--targets", action="store_true",
                        help="only the paths with targets (issue 18) and the scaling table, 3 cold runs each "
                             "(1 for the largest): for a shared machine where the full run takes hours")
    parser.add_argument("--network", action="store_true",
                        help="only the open network of 1,000 schools (check, reduce, report), 3 cold runs each, "
                             "with the load average before and after")
    parser.add_argument("--million", action="store_true",
                        help="only reduce shadows and check on 1,000,000 rows from 100 sites, 2 cold runs each, "
                             "with the load average")
    args = parser.parse_args()
    compiled_package()
    if args.million:
        million_run(args.markdown)
        return
    quick = args.quick
    r = 1 if quick else 5  # cold runs per measurement (median)
    if args.network:
        load_before = os.getloadavg()
        with tempfile.TemporaryDirectory() as scratch:
            rows = bench_network(Path(scratch), 40 if quick else 1_000, 1 if quick else 3, quick)
        load_after = os.getloadavg()
        header = (machine_line(quick).replace("(full)", "(network)") + f"; load average (1 min) {load_before[0]:.1f} "
                  f"at the start, {load_after[0]:.1f} at the end, on {os.cpu_count()} cores")
        print(header)
        print_table(rows)
        if args.markdown:
            args.markdown.write_text(markdown(rows, [], header))
        return
    if args.targets:
        targets_run(args.markdown)
        return
    if args.forms:
        with tempfile.TemporaryDirectory() as scratch:
            rows = bench_forms(Workloads(Path(scratch)), 50 if quick else 500, 2 if quick else 12, 1 if quick else 3)
        header = machine_line(quick)
        print(header)
        print_table(rows)
        if args.markdown:
            args.markdown.write_text(markdown(rows, [], header))
        return
    with tempfile.TemporaryDirectory() as scratch:
        work = Workloads(Path(scratch))
        rows: list[Row] = []
        rows.append(bench_plan_transits(work, 10 if quick else 100, r, quick))
        if not quick:
            rows.append(bench_plan_transits(work, 30, r, quick))
        check = bench_check(work, 50 if quick else 1_000, 2_000 if quick else 100_000, r, with_astropy=not quick)
        check.target = "" if quick else "cold < 1.2 s, < 300 MB; >= 3x skyfield, >= 8x astropy"
        rows.append(check)
        path, n = work.shadows(50 if quick else 500, 2_000 if quick else 10_000)
        rows.append(bench_command("reduce shadows", f"{n:,} rows, {50 if quick else 500} sites",
                                  ["reduce", "shadows", str(path)], r, "" if quick else "cold < 0.8 s"))
        if not quick:
            path, n = work.shadows(100, 1_000_000)
            rows.append(bench_command("reduce shadows", f"{n:,} rows, 100 sites", ["reduce", "shadows", str(path)],
                                      3, "< 15 s, < 1 GB"))
            big, n = shadow_workload(work.root / "declared", 3, 3 * 17, declared=10_000)
            rows.append(bench_command("reduce shadows", f"10,000 sites declared, 3 logged {n} rows",
                                      ["reduce", "shadows", str(big)], 3, "cost grows with the data"))
            path, n = work.shadows(500, 10_000)
            out = work.root / "report.html"
            rows.append(bench_command("report", f"{n:,} shadow rows, 500 sites", ["report", str(path), "-o", str(out)],
                                      3, "< 10 s"))
            rows.append(bench_command("eclipses", "plan eclipses 1900-2050",
                                      ["plan", "eclipses", str(ROOT / "examples" / "campaign.toml"), "--from", "1900-01-01",
                                       "--to", "2050-12-31"], 3))
            from transit_baselines import bench_all_transits, bench_site_contacts

            rows.append(bench_all_transits(work.root, 3))
            rows.append(bench_site_contacts(work.root, 3))
            demo_out = work.root / "demo"
            rows.append(bench_command("demo", "firstrung demo", ["demo", "-o", str(demo_out)], 1))
        rows.extend(bench_network(work.root, 40 if quick else 1_000, r, quick))
        from stars import (
            bench_stars,  # benchmarks/stars.py (this folder is on the path when run as a script)
        )

        rows.extend(bench_stars(work.root, quick, r, __import__("types").SimpleNamespace(
            FIRSTRUNG=FIRSTRUNG, ENV=ENV, cold=cold, median_time=median_time, bench_command=bench_command)))
        rows.append(bench_cli_start(3 if quick else 15))
        points = scaling(work, quick, 1 if quick else 3)
    header = machine_line(quick)
    print(header)
    print_table(rows)
    print_scaling(points)
    if args.markdown:
        args.markdown.write_text(markdown(rows, points, header))


def million_run(markdown_path: Path | None) -> None:
    """``reduce shadows`` and ``check`` on 1,000,000 rows (100 sites), whole command, cold: time, CPU, peak RSS."""
    load_before = os.getloadavg()
    with tempfile.TemporaryDirectory() as scratch:
        work = Workloads(Path(scratch))
        path, n = work.shadows(100, 1_000_000)
        rows = [bench_command("reduce shadows", f"{n:,} rows, 100 sites", ["reduce", "shadows", str(path)], 2,
                              "< 15 s, < 1 GB"),
                bench_command("check", f"{n:,} rows, 100 sites", ["check", str(path)], 2)]
    load_after = os.getloadavg()
    header = (machine_line(False).replace("(full)", "(1,000,000 rows)") + f"; load average (1 min) "
              f"{load_before[0]:.1f} at the start, {load_after[0]:.1f} at the end, on {os.cpu_count()} cores")
    print(header)
    print_table(rows)
    if markdown_path:
        markdown_path.write_text(markdown(rows, [], header))


def targets_run(markdown_path: Path | None) -> None:
    """The paths with targets and the scaling table, fewer cold runs; the load average before and after."""
    load_before = os.getloadavg()
    r = 3
    with tempfile.TemporaryDirectory() as scratch:
        work = Workloads(Path(scratch))
        rows: list[Row] = [bench_plan_transits(work, 30, r, False)]
        rows[-1].target = "< 0.5 s"
        check = bench_check(work, 1_000, 100_000, r)
        check.target = "cold < 1.2 s, < 300 MB; >= 3x skyfield, >= 8x astropy"
        rows.append(check)
        path, n = work.shadows(500, 10_000)
        rows.append(bench_command("reduce shadows", f"{n:,} rows, 500 sites", ["reduce", "shadows", str(path)], r,
                                  "cold < 0.8 s"))
        out = work.root / "report.html"
        rows.append(bench_command("report", f"{n:,} shadow rows, 500 sites", ["report", str(path), "-o", str(out)],
                                  r, "< 10 s"))
        path, n = work.shadows(100, 1_000_000)
        rows.append(bench_command("reduce shadows", f"{n:,} rows, 100 sites", ["reduce", "shadows", str(path)], 1,
                                  "< 15 s, < 1 GB"))
        big, n = shadow_workload(work.root / "declared", 3, 3 * 17, declared=10_000)
        rows.append(bench_command("reduce shadows", f"10,000 sites declared, 3 logged {n} rows",
                                  ["reduce", "shadows", str(big)], r, "cost grows with the data"))
        rows.append(bench_cli_start(5))
        points = scaling(work, False, 1)
    load_after = os.getloadavg()
    header = (machine_line(False).replace("(full)", "(targets)") + f"; load average (1 min) {load_before[0]:.1f} at "
              f"the start, {load_after[0]:.1f} at the end, on {os.cpu_count()} cores")
    print(header)
    print_table(rows)
    print_scaling(points)
    if markdown_path:
        markdown_path.write_text(markdown(rows, points, header))


if __name__ == "__main__":
    main()
