"""Simulated campaigns for the coverage of each rung's 68 % interval (the suite's check and notes/coverage_study.py).

Every campaign is invented; the readings come from DE421 (skyfield, read
directly) with errors drawn at the sizes the logs state, plus the shared
errors of the scenario. Each scenario returns the share of campaigns whose
68 % interval holds the truth and the median bias.
"""

from __future__ import annotations

import datetime as dt
import functools
import json
import math
import os
import tempfile
from pathlib import Path

import numpy as np

from truth_helpers import write_campaign, z


@functools.lru_cache(maxsize=1)
def _sky():
    import skyfield_data
    from skyfield.api import Loader, wgs84

    load = Loader(os.path.join(os.path.dirname(skyfield_data.__file__), "data"), verbose=False)
    return load.timescale(builtin=True), load("de421.bsp"), wgs84


#: Print each scenario's line (the notes script sets it).
VERBOSE = False


def _t(t64):
    return _sky()[0].from_datetime(np.datetime64(t64, "us").astype(dt.datetime).replace(tzinfo=dt.UTC))


def predicted_coverage(error, sigma):
    """The coverage a Gaussian error gives with the campaigns' own shift and spread in units of their sigma.

    z = error / sigma; a fixed shared error (one draw) shifts z by its mean, the random errors
    spread it: the expected coverage is P(|m + N(0, sd)| <= 1) with m and sd the mean and spread of z.
    Calibrated intervals with no fixed part give m ~ 0, sd ~ 1: 0.68.
    """
    from scipy.special import ndtr

    z = np.asarray(error, float) / np.asarray(sigma, float)
    if z.size < 2:
        return None
    m, sd = float(z.mean()), float(z.std(ddof=1))
    return round(float(ndtr((1 - m) / sd) - ndtr((-1 - m) / sd)), 3)


def summary(name, hits, bias, extra=None, error=None, sigma=None):
    hits = np.asarray(hits, bool)
    out = {"scenario": name, "campaigns": int(hits.size), "coverage": round(float(hits.mean()), 3),
           "binomial_sigma": round(float(math.sqrt(0.68 * 0.32 / max(hits.size, 1))), 3),
           "median_bias": round(float(np.median(bias)), 5)}
    if error is not None:
        out["predicted"] = predicted_coverage(error, sigma)
    out.update(extra or {})
    if VERBOSE:
        print(json.dumps(out), flush=True)
    return out


#: Every trial's folder is made in this one, removed with them when the process ends.
_TRIALS = tempfile.TemporaryDirectory(prefix="firstrung-trials-")


def trial_folder() -> Path:
    """A new folder for one simulated campaign (its file and logs)."""
    return Path(tempfile.mkdtemp(dir=_TRIALS.name))


# --- shadows -------------------------------------------------------------------------------


def shadows(n, seed=1):
    from firstrung.campaign import read_campaign
    from firstrung.methods.shadows.rehearsal import LOG_COLUMNS as SHADOW_COLUMNS
    from firstrung.methods.shadows.rehearsal import rehearsal_rows as shadow_rows
    from firstrung.methods.shadows.run import run_shadows

    hits, bias = [], []
    sites = [("north", 52.0, 5.0, 10.0), ("mid", 46.0, 6.0, 400.0), ("south", 40.0, 4.0, 50.0)]
    for i in range(n):
        folder = trial_folder()
        path = write_campaign(folder, sites, shadows=[])
        rows = shadow_rows(read_campaign(path), "2027-03-18", "2027-03-20", seed + i)
        (folder / "logs" / "shadows.csv").write_text(
            ",".join(SHADOW_COLUMNS) + "\n" + "".join(",".join(r[c] for c in SHADOW_COLUMNS) + "\n" for r in rows))
        r = run_shadows(path).reduction
        m, truth = r.earth_radius_km, r.expected_radius_km
        hits.append(m.low <= truth <= m.high)
        bias.append(m.value / truth - 1)
    return summary("shadows: stated random errors (reading, gnomon, edge, refraction, clock)", hits, bias)


# --- eclipse -------------------------------------------------------------------------------

ECLIPSES = [("2029-06-26T03:22Z", [("norte", 20.0, -75.5, 0.0), ("andes", -33.0, -70.6, 500.0)]),
            ("2025-09-07T18:12Z", [("delhi", 28.6, 77.2, 200.0), ("perth", -31.9, 115.9, 20.0)]),
            ("2028-12-31T16:52Z", [("tokyo", 35.7, 139.7, 40.0), ("manila", 14.6, 121.0, 10.0)])]


def _topocentric_moon(site, t1, t2, td):
    ts, eph, wgs84 = _sky()
    observer = eph["earth"] + wgs84.latlon(site[1], site[2], site[3])
    a = observer.at(_t(t1)).observe(eph["moon"]).apparent()
    b = observer.at(_t(t2)).observe(eph["moon"]).apparent()
    hours = (np.datetime64(t2, "us") - np.datetime64(t1, "us")).astype(np.int64) / 3.6e9
    d = observer.at(_t(td)).observe(eph["moon"]).apparent().distance().km
    return a.separation_from(b).degrees / hours, 2 * math.degrees(math.asin(1737.4 / d)) * 60


def eclipse(n, seed=2, observed_moon=False):
    from firstrung.campaign import read_campaign
    from firstrung.methods.eclipse.prediction import eclipse_near
    from firstrung.methods.eclipse.rehearsal import LOG_COLUMNS as ECLIPSE_COLUMNS
    from firstrung.methods.eclipse.rehearsal import rehearsal_rows as eclipse_rows
    from firstrung.methods.eclipse.run import run_eclipse

    rng = np.random.default_rng(seed)
    hits, bias, error, sigma = [], [], [], []
    checks = _EnlargementChecks()
    for i in range(n):
        when, sites = ECLIPSES[i % len(ECLIPSES)]
        e = eclipse_near(when)
        folder = trial_folder()
        extra = ""
        if observed_moon:
            site = sites[0]
            rate, diameter = _topocentric_moon(site, e.contacts_utc["U1"][0], e.contacts_utc["U4"][0], e.greatest_utc[0])
            rate_sigma, diameter_sigma = 0.01 * rate, 0.15
            extra = (f"\n[eclipse]\nmoon_diameter_arcmin = {diameter + rng.normal(0, diameter_sigma):.4f}\n"
                     f"moon_diameter_sigma_arcmin = {diameter_sigma}\n"
                     f"moon_sky_rate_deg_per_h = {rate + rng.normal(0, rate_sigma):.5f}\n"
                     f"moon_sky_rate_sigma_deg_per_h = {rate_sigma:.5f}\n")
        path = write_campaign(folder, sites, eclipse=[], extra=extra)
        day = str(np.datetime64(e.greatest_utc[0], "D"))
        rows = eclipse_rows(read_campaign(path), day, day, seed * 1000 + i)
        if observed_moon:  # the observers' own site logs the most timings (the default site)
            rows = [r for r in rows if r["site"] == sites[0][0]] + [r for r in rows if r["site"] != sites[0][0]][::2]
        (folder / "logs" / "eclipse.csv").write_text(
            ",".join(ECLIPSE_COLUMNS) + "\n" + "".join(",".join(r[c] for c in ECLIPSE_COLUMNS) + "\n" for r in rows))
        (r,) = run_eclipse(path).results
        if r.reduction is None:
            continue
        m, truth = r.reduction.moon_distance_earth_radii, r.ephemeris_distance_earth_radii
        hits.append(m.low <= truth <= (m.high if m.high is not None else math.inf))
        bias.append(m.value / truth - 1)
        error.append(m.value - truth)
        sigma.append(m.sigma)
        checks.add(r, m, truth)
    name = ("eclipse: observers' topocentric sky rate (1 %) and diameter (0.15') at their site, contacts 40 s, craters 20 s"
            if observed_moon else "eclipse: ephemeris Moon, contacts 40 s, craters 20 s (stated)")
    return summary(name, hits, bias, checks.extra(), error=error, sigma=sigma)


class _EnlargementChecks:
    """What the campaigns say beside the distance's coverage: the coverage of the interval without the
    enlargement allowance (the timings' part alone: calibrated timings give 0.68 when the umbra is
    exactly the convention's), how often the crater fit flags an umbra departing from the convention,
    and the crater fit's own coverage of the simulated enlargement."""

    def __init__(self):
        self.timings_only, self.departs, self.fit_hits = [], [], []

    def add(self, r, m, truth, simulated_percent=None):
        from firstrung.methods.eclipse.umbra import enlargement_against_convention

        allowance = sum(b.sigma**2 for b in r.reduction.budget if b.source.startswith("umbra's enlargement"))
        self.timings_only.append(abs(m.value - truth) <= math.sqrt(max(m.sigma**2 - allowance, 0.0)))
        if r.enlargement is not None:
            q = r.enlargement.enlargement_percent
            e = r.eclipse
            self.departs.append(enlargement_against_convention(
                q.value, q.sigma, e.moon_parallax_deg, e.sun_parallax_deg, e.sun_semidiameter_deg)["departs"])
            if simulated_percent is not None:
                self.fit_hits.append(abs(q.value - simulated_percent) <= q.sigma)

    def extra(self):
        out = {"coverage_without_allowance": round(float(np.mean(self.timings_only)), 3) if self.timings_only else None}
        if self.departs:
            out["departs_share"] = round(float(np.mean(self.departs)), 3)
        if self.fit_hits:
            out["enlargement_fit_coverage"] = round(float(np.mean(self.fit_hits)), 3)
        return out


def _umbra_contacts(when, enlargement):
    """U1-U4 of the eclipse for an umbra ``enlargement`` times Danjon's (from the ephemeris's geometry on a
    20 s grid, linear interpolation: under 0.01 s off); the geometry is computed once per eclipse."""
    key = when
    if key not in _GEOMETRY:
        try:
            from firstrung.methods.eclipse.prediction import eclipse_near, shadow_geometry
        except ImportError:
            from firstrung.ephemeris.eclipses import eclipse_near, shadow_geometry
        e = eclipse_near(when)
        g0 = np.datetime64(e.greatest_utc[0], "us")
        t = g0 + (np.arange(-4 * 180, 4 * 180 + 1) * 20_000_000).astype("timedelta64[us]")
        g = shadow_geometry(t)
        _GEOMETRY[key] = (e, t, g.separation_deg, g.moon_semidiameter_deg, g.umbra_deg("danjon"))
    e, t, sep, sm, ru = _GEOMETRY[key]
    mid = int(np.argmin(sep))
    out = {}
    for name, sign, part in (("U1", 1, slice(0, mid + 1)), ("U2", -1, slice(0, mid + 1)),
                             ("U3", -1, slice(mid, None)), ("U4", 1, slice(mid, None))):
        f = sep[part] - (ru[part] * enlargement + sign * sm[part])
        k = np.flatnonzero(np.sign(f[:-1]) != np.sign(f[1:]))
        if k.size == 0:
            continue
        k = int(k[0])
        tt = t[part]
        frac = f[k] / (f[k] - f[k + 1])
        out[name] = tt[k] + np.timedelta64(int(round(frac * 20e6)), "us")
    return e, out


_GEOMETRY: dict = {}


def _crater_rows(e, enlargement_percent, sites, rng, sigma_s=20.0):
    """Crater immersions and emersions (the rehearsal's twelve craters, 20 s, two observers per site, each
    crater timed with 70 % chance) of an umbra ``enlargement_percent`` over the geometric one."""
    from firstrung.methods.eclipse.craters import load_craters
    from firstrung.methods.eclipse.prediction import feature_edge_times
    from firstrung.methods.eclipse.rehearsal import REHEARSAL_CRATERS

    table = load_craters()
    idx = [table.index(c) for c in REHEARSAL_CRATERS]
    lat = np.tile(table.latitude_deg[idx], 2)
    lon = np.tile(table.longitude_deg[idx], 2)
    events = ["immersion"] * len(idx) + ["emersion"] * len(idx)
    names = list(REHEARSAL_CRATERS) * 2
    times = feature_edge_times(e, lat, lon, events, enlargement_percent=enlargement_percent)
    rows = []
    for site in sites:
        for o in range(2):
            for t, ev, name in zip(times, events, names, strict=True):
                if np.isnat(t) or rng.random() < 0.3:
                    continue
                err = rng.normal(0, sigma_s)
                rows.append([site[0], z(t + np.timedelta64(int(err * 1e6), "us")), ev, name, f"{sigma_s:g}",
                             f"{site[0]} {o}"])
    return rows


def eclipse_enlargement(n, seed=5, fixed=None, craters=False):
    """Contacts (40 s, two observers at two sites), and crater timings (20 s) with ``craters``, of an umbra
    whose enlargement differs from Danjon's: drawn from the spread the reduction states (half the
    Danjon-Chauvenet difference), or ``fixed``."""
    try:
        from firstrung.methods.eclipse.run import run_eclipse
    except ImportError:
        from firstrung.runs.eclipse import run_eclipse
    rng = np.random.default_rng(seed)
    hits, bias, error, sigma = [], [], [], []
    checks = _EnlargementChecks()
    for i in range(n):
        when, sites = ECLIPSES[i % len(ECLIPSES)]
        e0, _ = _umbra_contacts(when, 1.0)
        pm, ps, ss = (float(np.asarray(x)[0]) for x in (e0.moon_parallax_deg, e0.sun_parallax_deg, e0.sun_semidiameter_deg))
        danjon = 1.01 * pm + ps - ss
        chauvenet = 1.02 * (0.99834 * pm + ps - ss)
        spread = abs(chauvenet - danjon) / 2 / danjon
        factor = 1.0 + (fixed if fixed is not None else rng.normal(0, spread))
        e, contacts = _umbra_contacts(when, factor)
        rows = []
        for site in sites:
            for o in range(2):
                for name, t in contacts.items():
                    err = rng.normal(0, 40.0)
                    rows.append([site[0], z(t + np.timedelta64(int(err * 1e6), "us")), name, "", "40", f"{site[0]} {o}"])
        geometric = pm + ps - ss
        simulated_percent = 100 * (factor * danjon / geometric - 1)
        if craters:
            rows += _crater_rows(e, simulated_percent, sites, rng)
        folder = trial_folder()
        path = write_campaign(folder, sites, eclipse=rows)
        results = [r for r in run_eclipse(path).results if r.reduction is not None]
        if not results:
            continue
        r = results[0]
        m, truth = r.reduction.moon_distance_earth_radii, r.ephemeris_distance_earth_radii
        hits.append(m.low <= truth <= (m.high if m.high is not None else math.inf))
        bias.append(m.value / truth - 1)
        error.append(m.value - truth)
        sigma.append(m.sigma)
        checks.add(r, m, truth, simulated_percent)
    what = f"umbra {fixed * 100:+.1f} % from Danjon's" if fixed is not None else "umbra's enlargement drawn at the stated spread"
    timed = "contacts 40 s + craters 20 s" if craters else "contacts only 40 s"
    return summary(f"eclipse: {what}, {timed}", hits, bias, checks.extra(), error=error, sigma=sigma)


# --- half moon -----------------------------------------------------------------------------

PHASE_SITES = [("ridge", 46.2, 7.4, 620.0), ("coast", 43.3, 5.4, 20.0), ("vale", 48.1, 11.6, 520.0),
               ("moor", 53.4, -2.2, 80.0)]


def _physical_halves():
    """The ephemeris's half moons (the tool's physical ones) at each site, 2026, with the Moon up."""
    try:
        from firstrung.methods.phases import prediction as ep
        from firstrung.methods.phases import topocentric as tp
    except ImportError:  # the layout before the reshape, for "before" runs
        from firstrung.ephemeris import phases as ep
        tp = ep

    q = ep.quarters_between("2026-01-01T00:00Z", "2027-01-01T00:00Z")
    lat = np.array([s[1] for s in PHASE_SITES])
    lon = np.array([s[2] for s in PHASE_SITES])
    elev = np.array([s[3] for s in PHASE_SITES])
    half = ep.topocentric_dichotomy_utc(q.dichotomy_utc[:, None], lat, lon, elev)
    up = np.zeros(half.shape, bool)
    for d in (-90, 0, 90):
        up_d = tp.sun_moon_topocentric(half + np.timedelta64(d, "m"), lat, lon, elev, rates=False).moon_altitude_deg > 15
        up = up_d if d == -90 else up & up_d
    return q, half, up


def _true_fraction(site, t):
    ts, eph, wgs84 = _sky()
    observer = eph["earth"] + wgs84.latlon(site[1], site[2], site[3])
    return observer.at(_t(t)).observe(eph["moon"]).apparent().fraction_illuminated(eph["sun"])


def phases(n, scenario, seed=3, common_zero_point_sigma=0.0):
    try:
        from firstrung.methods.phases.run import run_phases
    except ImportError:
        from firstrung.runs.phases import run_phases
    settings = {}
    if common_zero_point_sigma:
        from firstrung.methods.phases.run import PhaseSettings

        settings = {"settings": PhaseSettings(common_zero_point_sigma=common_zero_point_sigma)}

    q, half, up = _physical_halves()
    usable = [k for k in range(len(q)) if up[k].sum() >= 2]
    rng = np.random.default_rng(seed)
    hits, bias = [], []
    for i in range(n):
        k = usable[i % len(usable)]
        rows = []
        shared = rng.normal(0, 1200.0) if scenario == "shared judgement N(0, 20 min)" else 1200.0
        for j, site in enumerate(PHASE_SITES):
            if not up[k, j]:
                continue
            # each site's series has its own zero point (drawn), or all share a fixed +0.005
            zero_point = rng.normal(0, 0.005) if scenario == "series zero point N(0, 0.005)" else 0.005
            if scenario.startswith("series"):
                times = half[k, j] + np.array([-90, -45, 0, 45, 90]) * np.timedelta64(60, "s")
                for t in times:
                    f = float(_true_fraction(site, t)) + zero_point + rng.normal(0, 0.01)
                    rows.append([site[0], z(t), str(q.quarter[k]), "", f"{f:.5f}", "", f"camera {site[0]}"])
            else:
                for o in range(2):
                    err = rng.normal(0, 1200.0)
                    if scenario != "independent judgement 20 min":
                        err = shared + rng.normal(0, 300.0)
                    t = half[k, j] + np.timedelta64(int(err * 1e3), "ms")
                    rows.append([site[0], z(t), str(q.quarter[k]), "", "", "1200", f"eye {site[0]} {o}"])
        folder = trial_folder()
        path = write_campaign(folder, [s + (False,) for s in PHASE_SITES], phases=rows)
        run = run_phases(path, **settings)
        truth_e = float(np.mean([x.expected_elongation_deg for x in run.estimates]))
        truth = 1 / math.cos(math.radians(truth_e))
        r = run.sun_moon_distance_ratio
        low = r.low if r.low is not None else math.inf
        hits.append(low <= truth <= (r.high if r.high is not None else math.inf))
        bias.append((run.combined.elongation_deg - truth_e) * 60)  # arcmin
    stated = f", stated as common {common_zero_point_sigma:g}" if common_zero_point_sigma else ""
    # no Gaussian prediction here: E's errors mix quarters, rates and decisions, and one Gaussian fitted to them
    # predicted 0.68 for the shared +20 min row, where a one-sigma shift gives 0.50 (as measured)
    return summary(f"half moon: {scenario}{stated}", hits, bias, {"bias_unit": "arcmin of E"})


SCENARIOS = {
    "shadows": lambda n: shadows(n),
    "eclipse": lambda n: eclipse(n),
    "eclipse-observed": lambda n: eclipse(n, observed_moon=True),
    "eclipse-enlargement": lambda n: eclipse_enlargement(n),
    "eclipse-enlargement-fixed": lambda n: eclipse_enlargement(n, fixed=0.005),
    "eclipse-enlargement-craters": lambda n: eclipse_enlargement(n, craters=True),
    "eclipse-enlargement-fixed-craters": lambda n: eclipse_enlargement(n, fixed=0.005, craters=True),
    "phases-independent": lambda n: phases(n, "independent judgement 20 min"),
    "phases-shared": lambda n: phases(n, "shared judgement N(0, 20 min)"),
    "phases-shared-fixed": lambda n: phases(n, "shared judgement +20 min (fixed)"),
    "phases-zero-point": lambda n: phases(n, "series zero point N(0, 0.005)"),
    "phases-zero-point-fixed": lambda n: phases(n, "series zero point +0.005 (fixed)"),
    "phases-zero-point-fixed-stated": lambda n: phases(n, "series zero point +0.005 (fixed)", common_zero_point_sigma=0.005),
}
