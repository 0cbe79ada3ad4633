"""Stellar parallax: the model against skyfield's own Star, recovery and coverage of a known
parallax, the shipped catalogue against published parallaxes, the log's checks and the commands."""

from __future__ import annotations

import json

import numpy as np
import pytest
from tests.helpers import run_cli

from firstrung.ephemeris.stars import julian_year_tt, parallax_factors, star_astrometric_radec_deg
from firstrung.methods.parallax.reduction import fit_parallax, tangent_offsets_mas
from firstrung.star_catalogue import CATALOGUE_EPOCH_JYEAR, catalogue_star, named_star

MAS = 1.0
#: 61 Cygni A in the shipped catalogue (HIP 104214, van Leeuwen 2007).
CYG61 = 104214
EPOCHS = np.arange(np.datetime64("2027-01-10"), np.datetime64("2028-01-10"), np.timedelta64(15, "D")).astype("datetime64[ms]")


def _star_places(parallax_mas: float):
    s = catalogue_star(CYG61)
    return s, star_astrometric_radec_deg(s.ra_deg, s.dec_deg, s.pm_ra_mas_per_yr, s.pm_dec_mas_per_yr,
                                         parallax_mas, CATALOGUE_EPOCH_JYEAR, EPOCHS)


def test_parallax_factors_match_skyfield_star():
    """Reference: skyfield's Star with parallax (its own barycentric-to-geocentric vector sum).
    The displacement between the star with its parallax and with none is p times our factors."""
    s, (ra, dec) = _star_places(286.82)
    _, (ra0, dec0) = _star_places(1e-9)
    dx = ((ra - ra0 + 180.0) % 360.0 - 180.0) * np.cos(np.radians(dec0)) * 3.6e6
    dy = (dec - dec0) * 3.6e6
    f_ra, f_dec = parallax_factors(ra0, dec0, EPOCHS)
    assert np.max(np.abs(dx - 286.82 * f_ra)) < 0.02 * MAS
    assert np.max(np.abs(dy - 286.82 * f_dec)) < 0.02 * MAS
    # a year's displacement spans the whole ellipse: the semi-major axis is the parallax itself
    assert 0.98 < np.max(np.hypot(f_ra, f_dec)) < 1.02


def test_linear_model_reproduces_skyfield_positions():
    """Reference: skyfield's Star. Place + proper motion + p * factors (noise-free) fits its positions
    within 0.5 mas over a year and returns the catalogue's parallax and motion."""
    s, (ra, dec) = _star_places(286.82)
    f_ra, f_dec = parallax_factors(ra, dec, EPOCHS)
    fit = fit_parallax(ra, dec, np.full(ra.size, 0.05), julian_year_tt(EPOCHS), f_ra, f_dec)
    assert np.max(np.abs(fit.residual_ra_mas)) < 0.5 * MAS and np.max(np.abs(fit.residual_dec_mas)) < 0.5 * MAS
    assert fit.parallax_mas.value == pytest.approx(286.82, abs=0.3)
    # loosened to 5 mas/yr: 36 years after the catalogue's epoch the motion's components on the sky have
    # turned (the sphere's curvature at 5"/yr), by 2.4 mas/yr in declination for this star
    assert fit.proper_motion_ra_mas_per_yr.value == pytest.approx(s.pm_ra_mas_per_yr, abs=5.0)
    assert fit.proper_motion_dec_mas_per_yr.value == pytest.approx(s.pm_dec_mas_per_yr, abs=5.0)


def test_known_parallax_recovered_with_honest_intervals():
    """Synthetic astrometry of 61 Cygni A (its catalogue parallax 286.82 mas, van Leeuwen 2007), 25 epochs
    over a year with 0.05" errors: the 68 % interval holds the truth 60-76 % of 400 simulated campaigns."""
    truth = 286.82
    _, (ra, dec) = _star_places(truth)
    f_ra, f_dec = parallax_factors(ra, dec, EPOCHS)
    years = julian_year_tt(EPOCHS)
    rng = np.random.default_rng(21)
    sigma = 0.05
    hits, values = 0, []
    for _ in range(400):
        e = rng.normal(0.0, sigma / 3600.0, (2, ra.size))
        fit = fit_parallax(ra + e[0] / np.cos(np.radians(dec)), dec + e[1], np.full(ra.size, sigma), years, f_ra, f_dec)
        p = fit.parallax_mas
        hits += p.low <= truth <= p.high
        values.append(p.value)
        d = fit.distance_pc
        assert d.low < d.value < d.high  # the distance's interval is the parallax's, mapped
    assert 0.60 <= hits / 400 <= 0.76
    assert abs(np.mean(values) - truth) < 3 * np.std(values) / np.sqrt(400)


def test_catalogue_parallaxes_against_published_values():
    """The shipped catalogue (Hipparcos new reduction, van Leeuwen 2007) against published parallaxes:
    61 Cygni A, Gaia DR3 286.0054 +/- 0.0289 mas (Gaia Collaboration 2023, A&A 674, A1; value from memory);
    delta Cephei, HST FGS 3.66 +/- 0.15 mas (Benedict et al. 2002, AJ 124, 1695: 273 +/- 11 pc)."""
    cyg = named_star("61 Cyg A")
    assert cyg.hip == 104214
    assert cyg.parallax_mas == 286.82 and cyg.parallax_sigma_mas == 6.78
    assert abs(cyg.parallax_mas - 286.0054) < cyg.parallax_sigma_mas
    dcep = named_star("delta Cep")
    assert dcep.hip == 110991
    assert abs(dcep.parallax_mas - 3.66) < np.hypot(dcep.parallax_sigma_mas, 0.15)
    # positions: delta Cephei at 22h29m10.27s +58d24m54.7s (ICRS, J2000; SIMBAD, from memory), moved to J1991.25
    assert dcep.ra_deg == pytest.approx((22 + 29 / 60 + 10.27 / 3600) * 15, abs=2e-4)
    assert dcep.dec_deg == pytest.approx(58 + 24 / 60 + 54.7 / 3600, abs=2e-4)


def test_tangent_offsets_scalar_array_and_wrap():
    x, y = tangent_offsets_mas(359.9, 10.0, 0.1, 10.0)
    assert float(x) == pytest.approx(-0.2 * np.cos(np.radians(10.0)) * 3.6e6)
    assert float(y) == 0.0
    with pytest.raises(Exception, match="at least 3 epochs"):
        fit_parallax([1.0, 1.0], [2.0, 2.0], [0.1, 0.1], [2027.0, 2027.5], [0.1, 0.2], [0.3, 0.4])


CAMPAIGN = """
[campaign]
name = "Parallax rehearsal"
[[site]]
id = "ridge"
latitude_deg = 46.2
longitude_deg = 7.4
timezone = "Europe/Zurich"
[[star]]
id = "cyg61"
name = "61 Cygni A"
ra_deg = 316.7248
dec_deg = 38.7494
[logs]
astrometry = ["logs/astrometry.csv"]
"""


def test_plan_simulate_reduce_check(tmp_path, capsys, monkeypatch):
    c = tmp_path / "c.toml"
    c.write_text(CAMPAIGN)
    code, out, _ = run_cli(["plan", "parallax", c, "--from", "2027-01-01", "--to", "2027-12-31", "--json"], capsys, monkeypatch)
    assert code == 0
    plan = json.loads(out)
    days = plan["stars"][0]["days"]
    assert plan["stars"][0]["catalogue"]["hip"] == 104214  # found by position (moved by its proper motion)
    ranked = sorted((d for d in days if d["rank"]), key=lambda d: d["rank"])
    assert ranked[0]["displacement_mas"] > 0.95 * 286.82
    assert any(d["rank"] is None and d["excluded"] for d in days)  # 61 Cyg is low in the northern winter nights
    code, _, _ = run_cli(["simulate", "parallax", c, "--from", "2027-01-01", "--to", "2027-12-31", "-o", tmp_path / "logs",
                          "--seed", "3"], capsys, monkeypatch)
    assert code == 0
    code, out, _ = run_cli(["reduce", "parallax", c, "--json", "--figure", tmp_path / "e.svg"], capsys, monkeypatch)
    assert code == 0
    star = json.loads(out)["stars"][0]
    assert set(star) >= {"id", "parallax_mas", "distance_pc", "proper_motion_ra_mas_per_yr", "proper_motion_dec_mas_per_yr"}
    p = star["parallax_mas"]
    assert abs(p["value"] - 286.82) < 4 * p["sigma"] and p["unit"] == "mas"
    assert star["distance_pc"]["low"] < 1000 / 286.82 * 1.2 and star["distance_pc"]["unit"] == "pc"
    assert star["proper_motion_ra_mas_per_yr"]["value"] == pytest.approx(4168.3, abs=60)
    assert "<svg" in (tmp_path / "e.svg").read_text()
    code, out, _ = run_cli(["reduce", "parallax", c], capsys, monkeypatch, columns=80)
    assert "parallax" in out and "light years" in out
    code, out, _ = run_cli(["ladder", c, "--json", "--samples", "20000"], capsys, monkeypatch)
    assert code == 0
    rung = json.loads(out)["stars"][0]
    assert rung["method"] == "parallax" and rung["modern_pc"] == pytest.approx(1000 / 286.82, abs=0.01)
    assert rung["distance_pc"]["value"] == pytest.approx(1000 / p["value"], rel=0.01)
    assert {"step": "the astronomical unit in km", "source": "published: IAU 2012 Resolution B2"} in rung["steps"]


def test_parsec_rung_maps_the_parallax_and_uses_the_campaigns_au():
    from firstrung.app.parsec import AU_PER_PARSEC, parsec_rungs
    from firstrung.uncertainty import Draw

    rng = np.random.default_rng(1)
    au = np.full(50_000, 1.02)  # a campaign whose Sun rung measured 1.02 au
    (r,) = parsec_rungs((("s", "S", "parallax", Draw("gaussian", 100.0, 10.0), (10.0, "x")),), rng, 50_000, au, "transit")
    assert r.distance_pc.value == pytest.approx(10.0, rel=0.01)
    assert r.distance_pc.low == pytest.approx(1000 / 110, rel=0.01) and r.distance_pc.high == pytest.approx(1000 / 90, rel=0.01)
    # 1 pc = 206,264.806 au (IAU 2015 Resolution B2); the au from the campaign's own Sun rung
    assert r.distance_km.value == pytest.approx(10.0 * AU_PER_PARSEC * 1.02 * 149_597_870.7, rel=0.01)
    assert ("the astronomical unit in km", "measured by the campaign (transit rung)") in r.steps
    (weak,) = parsec_rungs((("w", "W", "parallax", Draw("gaussian", -0.5, 2.0), None),), rng, 50_000, None, "half-moon")
    assert np.isnan(weak.distance_pc.value) and weak.distance_pc.high is None and weak.distance_pc.low > 0


def test_check_flags_hours_outliers_and_local_time(tmp_path, capsys, monkeypatch):
    c = tmp_path / "c.toml"
    c.write_text(CAMPAIGN)
    (tmp_path / "logs").mkdir()
    (tmp_path / "logs" / "astrometry.csv").write_text(
        "star,time_utc,ra_deg,dec_deg,sigma_arcsec,site,observer\n"
        "cyg61,2027-09-10T21:00:00Z,316.7651,38.7741,0.05,ridge,A\n"
        "cyg61,2027-09-24T21:00:00Z,21.11767,38.7741,0.05,ridge,A\n"     # RA typed in hours
        "cyg61,2027-10-08T21:00:00Z,316.9,38.7741,0.05,ridge,A\n"        # another star
        "cyg61,2027-06-20T12:00:00Z,316.7651,38.7741,0.05,ridge,A\n"     # noon in June: daylight either way, no zone mistake
        "cyg61,2027-12-20T17:30:00Z,316.7651,38.7741,0.05,ridge,A\n"
        "cyg61,2027-10-20T08:30:00Z,316.7651,38.7741,x,ridge,A\n"
        "cyg61,2027-09-10T06:00:00Z,316.7651,38.7741,0.05,ridge,A\n")   # 06:00 CEST typed as UTC: the Sun is up
    code, out, _ = run_cli(["check", c, "--json"], capsys, monkeypatch)
    assert code == 1
    flags = {(f["row"], f["code"]) for f in json.loads(out)["flags"]}
    assert (2, "ra-hours") in flags and (3, "outlier") in flags and (6, "bad-value") in flags
    assert (7, "local-time-as-utc") in flags
    assert next(f for f in json.loads(out)["flags"] if f["row"] == 7)["hours"] == -2
    assert not any(r in (1, 4, 5) for r, _ in flags)


def test_star_sheets_for_a_night(tmp_path, capsys, monkeypatch):
    c = tmp_path / "c.toml"
    c.write_text(CAMPAIGN.replace("[logs]", 'period_days = 5.366\n[logs]'))
    code, _, _ = run_cli(["sheet", c, "--site", "ridge", "--date", "2027-09-10", "--kind", "parallax", "-o",
                          tmp_path / "p.html"], capsys, monkeypatch)
    assert code == 0
    html = (tmp_path / "p.html").read_text()
    assert "61 Cygni A" in html and "Dark sky" in html and "parallax shift RA" in html and "never slew towards the Sun" in html
    code, _, _ = run_cli(["sheet", c, "--site", "ridge", "--date", "2027-09-10", "--kind", "parallax", "--blind", "-o",
                          tmp_path / "b.html"], capsys, monkeypatch)
    assert "parallax shift RA" not in (tmp_path / "b.html").read_text()
    code, _, _ = run_cli(["sheet", c, "--site", "ridge", "--date", "2027-09-10", "--kind", "cepheids", "-o",
                          tmp_path / "c.html"], capsys, monkeypatch)
    assert code == 0 and "magnitude_sigma" in (tmp_path / "c.html").read_text()
    code, _, err = run_cli(["sheet", c, "--site", "ridge", "--date", "2027-06-21", "--kind", "parallax", "-o",
                            tmp_path / "x.html"], capsys, monkeypatch)
    assert code == 0  # at 46 deg N the sky is dark (Sun below -12 deg) even at midsummer
