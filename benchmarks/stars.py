"""Star benchmarks (issue 21): ``reduce parallax`` and ``reduce cepheids`` beside baselines a competent
user would write, run in full in the same run.

* parallax: per star, skyfield's Earth (``earth.at(t).position.au``, one call per star for all its
  epochs) for the parallax factors, then ``numpy.linalg.lstsq`` on the five parameters;
* Cepheids: per star, astropy's ``LombScargle(...).autopower()`` for the period, then a three-
  harmonic Fourier fit with ``numpy.linalg.lstsq`` at that period.

The workloads are written by firstrung's own rehearsals (``simulate parallax``, ``simulate
cepheids``) for a campaign of stars without sites (every date observed), so the logs are rows the
reader accepts. Called from ``run.py`` with its timing helpers.
"""

from __future__ import annotations

import json
import subprocess
from pathlib import Path

import numpy as np

#: Stars spread over the sky (ICRS degrees), none in the catalogue's bright list on purpose: the
#: rehearsal gives them a parallax of 1 mas (or the stated one).
_RNG_SEED = 21


def star_campaign(folder: Path, n_stars: int, kind: str) -> Path:
    rng = np.random.default_rng(_RNG_SEED)
    ra = rng.uniform(0.0, 360.0, n_stars)
    dec = np.degrees(np.arcsin(rng.uniform(-0.9, 0.9, n_stars)))
    period = rng.uniform(3.0, 30.0, n_stars)
    log = {"parallax": 'astrometry = ["logs/astrometry.csv"]', "cepheids": 'light_curves = ["logs/light_curves.csv"]'}
    text = f'[campaign]\nname = "{kind} benchmark"\n' + "".join(
        f'\n[[star]]\nid = "s{i}"\nra_deg = {a:.5f}\ndec_deg = {d:.5f}\nperiod_days = {p:.3f}\n'
        for i, (a, d, p) in enumerate(zip(ra, dec, period, strict=True))) + f"\n[logs]\n{log[kind]}\n"
    folder.mkdir(parents=True, exist_ok=True)
    path = folder / f"{kind}-{n_stars}.toml"
    path.write_text(text, encoding="utf-8")
    return path


def _simulate(firstrung, env, path: Path, kind: str, first: str, last: str, extra: list[str]) -> None:
    subprocess.run(firstrung + ["simulate", kind, str(path), "--from", first, "--to", last, "-o",
                                str(path.parent / "logs"), "--seed", "2", *extra], env=env, capture_output=True, check=True)


def _columns(path: Path):
    import csv

    with open(path, newline="", encoding="utf-8") as handle:
        rows = list(csv.DictReader(handle))
    return {k: np.array([r[k] for r in rows]) for k in rows[0]}


def parallax_baseline(log_path: Path):
    """Per star: skyfield's Earth for the factors, numpy's least squares for the five parameters."""
    import skyfield_data
    from skyfield.api import Loader

    folder = Path(skyfield_data.__file__).parent / "data"
    load = Loader(str(folder), verbose=False)
    ts = load.timescale(builtin=True)
    earth = load("de421.bsp")["earth"]
    c = _columns(log_path)
    out = {}
    for star in np.unique(c["star"]):
        k = c["star"] == star
        ra, dec = c["ra_deg"][k].astype(float), c["dec_deg"][k].astype(float)
        t = ts.from_datetimes([__import__("datetime").datetime.fromisoformat(x.replace("Z", "+00:00")) for x in c["time_utc"][k]])
        x, y, z = earth.at(t).position.au
        a, d = np.radians(ra.mean()), np.radians(dec.mean())
        f_ra = x * np.sin(a) - y * np.cos(a)
        f_dec = (x * np.cos(a) + y * np.sin(a)) * np.sin(d) - z * np.cos(d)
        years = (t.tt - t.tt.mean()) / 365.25
        n = ra.size
        design = np.zeros((2 * n, 5))
        design[:n, 0], design[n:, 1], design[:n, 2], design[n:, 3] = 1, 1, years, years
        design[:n, 4], design[n:, 4] = f_ra, f_dec
        obs = np.concatenate([(ra - ra.mean()) * np.cos(d) * 3.6e6, (dec - dec.mean()) * 3.6e6])
        out[str(star)] = float(np.linalg.lstsq(design, obs, rcond=None)[0][4])
    return out


def cepheid_baseline(log_path: Path):
    """Per star: astropy's LombScargle for the period, then a three-harmonic Fourier fit for the mean."""
    from astropy.timeseries import LombScargle

    c = _columns(log_path)
    jd = np.array([np.datetime64(x.rstrip("Z"), "ms") for x in c["time_utc"]]).astype(np.int64) / 86_400_000.0
    out = {}
    for star in np.unique(c["star"]):
        k = c["star"] == star
        t, m, s = jd[k], c["magnitude"][k].astype(float), c["magnitude_sigma"][k].astype(float)
        freq, power = LombScargle(t, m, s).autopower(minimum_frequency=1 / 100, maximum_frequency=1.0,
                                                      samples_per_peak=10)
        f = freq[np.argmax(power)]
        cols = [np.ones_like(t)] + [g(2 * np.pi * h * f * t) for h in (1, 2, 3) for g in (np.cos, np.sin)]
        a = np.column_stack(cols) / s[:, None]
        coef = np.linalg.lstsq(a, m / s, rcond=None)[0]
        out[str(star)] = (1 / f, float(coef[0]))
    return out


def bench_stars(root: Path, quick: bool, repeats: int, tools) -> list:
    """Rows for the benchmark table: reduce parallax and reduce cepheids with their baselines."""
    rows = []
    n_par = 10 if quick else 200
    par = star_campaign(root / "parallax", n_par, "parallax")
    _simulate(tools.FIRSTRUNG, tools.ENV, par, "parallax", "2027-01-01", "2027-12-31",
              ["--cadence-days", "7", "--parallax-mas", "100"])
    row = tools.bench_command("reduce parallax", f"{n_par} stars, 53 epochs each", ["reduce", "parallax", str(par)],
                              repeats)
    data = json.loads(tools.cold(["reduce", "parallax", str(par), "--json"], 1).stdout)
    from firstrung.methods.parallax.run import run_parallax

    row.inner_s, _ = tools.median_time(lambda: run_parallax(str(par)), max(1, repeats // 2))
    base_s, base = tools.median_time(lambda: parallax_baseline(par.parent / "logs" / "astrometry.csv"), max(1, repeats // 2))
    worst = max(abs(s["parallax_mas"]["value"] - base[s["id"]]) for s in data["stars"])
    row.baselines.append(("skyfield Earth + numpy lstsq, per star", base_s))
    row.agreement = f"parallaxes agree: max {worst:.3f} mas"
    rows.append(row)

    n_cep = 10 if quick else 200
    cep = star_campaign(root / "cepheids", n_cep, "cepheids")
    _simulate(tools.FIRSTRUNG, tools.ENV, cep, "cepheids", "2027-09-01", "2027-11-29", [])
    row = tools.bench_command("reduce cepheids", f"{n_cep} stars, 90 nights each", ["reduce", "cepheids", str(cep)],
                              repeats, ok=(0, 1, 2))
    data = json.loads(tools.cold(["reduce", "cepheids", str(cep), "--json"], 1, ok=(0, 1, 2)).stdout)
    from firstrung.campaign import read_campaign
    from firstrung.methods.cepheids.run import run_cepheids

    row.inner_s, _ = tools.median_time(lambda: run_cepheids(str(cep)), max(1, repeats // 2))
    base_s, base = tools.median_time(lambda: cepheid_baseline(cep.parent / "logs" / "light_curves.csv"), max(1, repeats // 2))
    truth = {s.id: s.period_days for s in read_campaign(str(cep)).stars}
    ours = sum(abs(s["period_days"]["value"] / truth[s["id"]] - 1) < 0.01 for s in data["stars"])
    theirs = sum(abs(base[k][0] / truth[k] - 1) < 0.01 for k in base)
    row.baselines.append(("astropy LombScargle + numpy Fourier fit, per star", base_s))
    row.agreement = (f"true period within 1 %: firstrung {ours} of {len(data['stars'])}, "
                     f"the baseline's highest peak {theirs} of {len(base)} (one-day aliases)")
    rows.append(row)
    return rows
