"""Cepheids: the periodogram against astropy's, delta Cephei's period from 30 nights, its distance
against its HST parallax, honest intervals, the log's checks and the commands."""

from __future__ import annotations

import json

import numpy as np
import pytest
from tests.helpers import run_cli

from firstrung.methods.cepheids.periodogram import (
    false_alarm_probability,
    frequency_grid,
    lomb_scargle_power,
)
from firstrung.methods.cepheids.reduction import cepheid_distance, distance_from_mean_magnitude
from firstrung.methods.cepheids.rehearsal import (
    DELTA_CEP_RANGE_V,
    light_curve_mag,
)
from firstrung.methods.cepheids.relations import RELATIONS

DAY = 1.0
#: delta Cephei's period, 5.366 d (GCVS; from memory, as the issue allows).
PERIOD_D = 5.366
#: delta Cephei's trigonometric distance: 273 +/- 11 pc, HST FGS parallax 3.66 +/- 0.15 mas
#: (Benedict et al. 2002, AJ 124, 1695).
HST_DISTANCE_PC, HST_SIGMA_PC = 273.0, 11.0
#: Its mean V = 3.954 (intensity-mean light curve of the DDO Cepheid database, Fernie et al. 1995;
#: from memory) and A_V = 0.23 (E(B-V) = 0.075 with R_V = 3.1, as Benedict et al. 2002 adopt; from memory).
MEAN_V, A_V = 3.954, 0.23


def test_periodogram_and_false_alarm_match_astropy():
    """Reference: astropy's LombScargle (fit_mean, standard normalisation; Baluev's false-alarm probability)."""
    from astropy.timeseries import LombScargle

    rng = np.random.default_rng(5)
    t = np.sort(rng.uniform(0.0, 40.0, 35))
    dy = rng.uniform(0.015, 0.03, 35)
    y = 4.0 + 0.4 * np.sin(2 * np.pi * t / PERIOD_D) + rng.normal(0.0, dy)
    f = frequency_grid(t, 1.0, 40.0)
    ours = lomb_scargle_power(t, y, dy, f)
    ls = LombScargle(t, y, dy)
    assert np.max(np.abs(ours - ls.power(f, method="slow"))) < 1e-10
    for z in (0.2, 0.35, 0.6):
        theirs = ls.false_alarm_probability(z, method="baluev", minimum_frequency=f[0], maximum_frequency=f[-1],
                                            samples_per_peak=10)
        assert false_alarm_probability(z, f[-1], t, dy) == pytest.approx(float(theirs), rel=1e-9)
    # a scalar frequency, an array, and a bad input
    assert lomb_scargle_power(t, y, dy, np.array([1 / PERIOD_D]))[0] > 0.9
    with pytest.raises(Exception, match="at least 6 magnitudes"):
        cepheid_distance(t[:5], y[:5], dy[:5], RELATIONS["benedict2007-v"])


def _nights(seed: int, n: int = 30, sigma: float = 0.02):
    rng = np.random.default_rng(seed)
    t = 2461650.4 + np.arange(n) + rng.uniform(-0.1, 0.1, n)  # one magnitude a night, near midnight
    m = light_curve_mag(((t - 2436075.445) / PERIOD_D) % 1.0, MEAN_V, DELTA_CEP_RANGE_V)
    return t, m + rng.normal(0.0, sigma, n), np.full(n, sigma)


def test_delta_cephei_period_from_30_nights():
    """Synthetic delta Cephei (its period and V range 3.48-4.37, GCVS from memory), 30 nights: with 0.01 mag
    photometry (a camera on a 4th-magnitude star; common practice) the period comes out within 0.01 d of
    5.366 d in every one of 20 simulated campaigns; with 0.02 mag (sigma of the period about 0.005 d) in
    at least 18 of 20."""
    close = 0
    for seed in range(20):
        fit = cepheid_distance(*_nights(seed, sigma=0.01), RELATIONS["benedict2007-v"], extinction_mag=A_V)
        assert abs(fit.period_days.value - PERIOD_D) < 0.01 * DAY
        assert fit.false_alarm_probability < 1e-6
        assert fit.mean_magnitude.value == pytest.approx(MEAN_V, abs=0.02)
        rough = cepheid_distance(*_nights(seed, sigma=0.02), RELATIONS["benedict2007-v"])
        close += abs(rough.period_days.value - PERIOD_D) < 0.01 * DAY
    assert close >= 18


def test_delta_cephei_distance_within_its_hst_interval():
    """The distance from delta Cephei's published mean V and extinction through Benedict et al. (2007)'s
    V relation lies within the HST parallax's interval, 273 +/- 11 pc (Benedict et al. 2002)."""
    d = distance_from_mean_magnitude(MEAN_V, PERIOD_D, RELATIONS["benedict2007-v"], A_V)
    assert HST_DISTANCE_PC - HST_SIGMA_PC <= d <= HST_DISTANCE_PC + HST_SIGMA_PC
    fit = cepheid_distance(*_nights(3), RELATIONS["benedict2007-v"], extinction_mag=A_V, extinction_sigma_mag=0.03)
    q = fit.distance_pc
    assert q.low < HST_DISTANCE_PC < q.high  # and the campaign's own light curve says the same
    # the budget names the relation's scatter as what limits it
    assert fit.budget[0].source.startswith("relation's scatter")


def test_mean_magnitude_and_period_intervals_hold_the_truth():
    """Over 200 simulated 30-night campaigns the 68 % intervals of the mean magnitude and the period hold
    the truth 60-76 % of the time (the truth: the template's mean and delta Cephei's period)."""
    from firstrung.methods.cepheids.reduction import fit_light_curve

    grid = light_curve_mag(np.linspace(0.0, 1.0, 20001)[:-1], MEAN_V, DELTA_CEP_RANGE_V)
    true_mean = float(np.mean(grid))  # the Fourier constant of the template's curve
    hits_m = hits_p = 0
    for seed in range(200):
        t, m, s = _nights(1000 + seed)
        f, f_sigma, coef, cov, *_ = fit_light_curve(t, m, s)
        hits_m += abs(coef[0] - true_mean) <= np.sqrt(cov[0, 0])
        hits_p += abs(1 / f - PERIOD_D) <= f_sigma / f**2
    assert 0.60 <= hits_m / 200 <= 0.76
    assert 0.60 <= hits_p / 200 <= 0.76


CAMPAIGN = """
[campaign]
name = "Cepheid rehearsal"
[[site]]
id = "ridge"
latitude_deg = 46.2
longitude_deg = 7.4
timezone = "Europe/Zurich"
[[star]]
id = "dcep"
name = "delta Cephei"
ra_deg = 337.2929
dec_deg = 58.4152
extinction_mag = 0.23
extinction_sigma_mag = 0.03
period_days = 5.366
[logs]
light_curves = ["logs/light_curves.csv"]
"""


def test_plan_simulate_reduce(tmp_path, capsys, monkeypatch):
    c = tmp_path / "c.toml"
    c.write_text(CAMPAIGN)
    code, out, _ = run_cli(["plan", "cepheids", c, "--from", "2027-09-01", "--to", "2027-10-15", "--nights", "10",
                            "--json"], capsys, monkeypatch)
    assert code == 0
    star = json.loads(out)["stars"][0]
    assert star["chosen"] == 10 and star["largest_phase_gap"] < 0.2
    code, _, _ = run_cli(["simulate", "cepheids", c, "--from", "2027-09-01", "--to", "2027-09-30", "-o",
                          tmp_path / "logs", "--seed", "2"], capsys, monkeypatch)
    assert code == 0
    code, out, _ = run_cli(["reduce", "cepheids", c, "--json", "--figure", tmp_path / "lc.svg"], capsys, monkeypatch)
    assert code == 0
    s = json.loads(out)["stars"][0]
    assert set(s) >= {"id", "period_days", "mean_magnitude", "absolute_magnitude", "distance_pc", "relation"}
    assert s["relation"] == "benedict2007-v" and s["distance_pc"]["unit"] == "pc"
    assert abs(s["period_days"]["value"] - PERIOD_D) < 0.01
    assert s["distance_pc"]["low"] < HST_DISTANCE_PC < s["distance_pc"]["high"]
    assert "<svg" in (tmp_path / "lc.svg").read_text()
    code, out, _ = run_cli(["ladder", c, "--json", "--samples", "20000"], capsys, monkeypatch)
    rung = json.loads(out)["stars"][0]
    assert rung["method"] == "cepheid" and abs(rung["distance_pc"]["value"] - s["distance_pc"]["value"]) < 2.0
    assert {"step": "the period-luminosity calibration", "source": "published: on parallaxes of nearby Cepheids"} in rung["steps"]
    code, _, err = run_cli(["reduce", "cepheids", c, "--relation", "benedict2007-k"], capsys, monkeypatch)
    assert code == 2 and len(err.strip().splitlines()) == 1 and "band K" in err
    code, _, err = run_cli(["reduce", "cepheids", c, "--relation", "nosuch"], capsys, monkeypatch)
    assert code == 2 and "known: benedict2007-v" in err


def test_check_flags_band_alias_and_local_time(tmp_path, capsys, monkeypatch):
    c = tmp_path / "c.toml"
    c.write_text(CAMPAIGN)
    run_cli(["simulate", "cepheids", c, "--from", "2027-09-01", "--to", "2027-09-30", "-o", tmp_path / "logs",
             "--seed", "2"], capsys, monkeypatch)
    path = tmp_path / "logs" / "light_curves.csv"
    lines = path.read_text().splitlines()
    # a second observer whose magnitudes are in B though logged as V (B-V of delta Cephei about 0.66)
    extra = []
    for line in lines[1:9]:
        cells = line.split(",")
        cells[3] = f"{float(cells[3]) + 0.66:.3f}"
        cells[2] = cells[2].replace("T", "T").replace(":10:24Z", ":40:24Z")
        cells[6] = "school B"
        extra.append(",".join(cells))
    extra.append("ridge,dcep,2027-09-15T23:10:00Z,4.1,0.02,I,school C")      # another band
    extra.append("ridge,dcep,2027-09-16T12:30:00Z,4.1,0.02,V,school C")      # noon: local time as UTC? no, still day
    extra.append("ridge,dcep,2027-09-17T05:00:00Z,4.1,0.02,V,school C")      # 05:00 CEST typed as UTC: dawn
    path.write_text("\n".join(lines + extra) + "\n")
    code, out, _ = run_cli(["check", c, "--json"], capsys, monkeypatch)
    assert code == 1
    flags = json.loads(out)["flags"]
    band = [f for f in flags if f["code"] == "wrong-band"]
    assert {f["observer"] for f in band} == {"school B", "school C"}
    assert all(0.5 < f["offset_mag"] < 0.8 for f in band if f["observer"] == "school B")
    local = [f for f in flags if f["code"] == "local-time-as-utc"]
    assert [f["row"] for f in local] == [len(lines) + len(extra) - 1] and local[0]["hours"] == -2


def test_period_alias_is_flagged():
    """Magnitudes taken at one hour every night of a 1.23 d pulsator: its one-day alias (5.35 d) fits as well."""
    from firstrung.campaign_model import Campaign, Star
    from firstrung.methods.cepheids.check import _alias_flags
    from firstrung.methods.cepheids.log import LightCurveLog

    rng = np.random.default_rng(1)
    n = 30
    t_days = np.arange(n) + 0.001 * rng.normal(size=n)
    period = 1.0 / (1.0 - 1.0 / 5.35)
    m = 4.0 + 0.3 * np.cos(2 * np.pi * t_days / period) + rng.normal(0.0, 0.01, n)
    times = (np.datetime64("2027-09-01T22:00", "ms") + (t_days * 86_400_000).astype("timedelta64[ms]"))
    log = LightCurveLog(np.full(n, "lc.csv"), np.arange(1, n + 1), np.full(n, ""), times, np.full(n, "time_utc"),
                        np.full(n, "x"), m, np.full(n, 0.01), np.full(n, "V"), np.full(n, "", object), np.full(n, "", object))
    star = Campaign("c", stars=(Star("x", "x", 10.0, 10.0),)).stars[0]
    flags = _alias_flags(star, log, np.arange(n))
    assert flags and flags[0].code == "period-alias"
    periods = sorted([flags[0].fields["period_days"], flags[0].fields["alias_period_days"]])
    assert periods[0] == pytest.approx(period, abs=0.01) and periods[1] == pytest.approx(5.35, abs=0.1)


def test_the_check_and_the_reduction_fit_one_light_curve_once(tmp_path, capsys, monkeypatch):
    """The reduction leaves out the check's flagged rows and fits the rest: with none flagged, the
    check's fit of the main band's magnitudes is the reduction's, made once (and equal to a fresh fit)."""
    import firstrung.methods.cepheids.reduction as reduction
    from firstrung.methods.cepheids.log import julian_date_utc
    from firstrung.methods.cepheids.run import run_cepheids

    c = tmp_path / "c.toml"
    c.write_text(CAMPAIGN)
    assert run_cli(["simulate", "cepheids", c, "--from", "2027-09-01", "--to", "2027-09-30", "-o", tmp_path / "logs",
                    "--seed", "3"], capsys, monkeypatch)[0] == 0
    sizes = []
    fit = reduction._fit_light_curve

    def counted(t, *rest):
        sizes.append(t.size)
        return fit(t, *rest)

    monkeypatch.setattr(reduction, "_RECENT_FITS", {})
    monkeypatch.setattr(reduction, "_fit_light_curve", counted)
    run = run_cepheids(c)
    (star,) = run.stars
    assert run.rows_left_out_flagged == 0 and sizes.count(star.rows.size) == 1
    rows = star.rows
    fresh = fit(julian_date_utc(run.log.time_utc[rows]), run.log.magnitude[rows].astype(float),
                run.log.magnitude_sigma[rows].astype(float), reduction.MIN_PERIOD_D, reduction.MAX_PERIOD_D,
                reduction.DEFAULT_HARMONICS)
    assert 1.0 / fresh[0] == pytest.approx(star.fit.period_days.value, rel=1e-9)
