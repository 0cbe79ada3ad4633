"""Site positions and leave-one-out residuals computed group by group, against the dense textbook forms.

The reference for the positions is the plain weighted least-squares solution
of every baseline and every group's map position in one dense system (the
normal equations, e.g. Press et al., Numerical Recipes, 3rd ed., section
15.4); for the leave-one-out residuals, refitting the line without each site
in turn.
"""

from __future__ import annotations

import numpy as np
import pytest

from firstrung.methods.shadows.fits import fit_line, north_south_positions
from firstrung.methods.shadows.inputs import POSITION_SIGMA_KM, BaselineInput, SiteInput
from firstrung.methods.shadows.reduction import _leave_one_out


def _sites(n, seed=3):
    rng = np.random.default_rng(seed)
    lat = rng.uniform(-50.0, 60.0, n)
    lon = rng.uniform(-20.0, 20.0, n)
    return tuple(SiteInput(f"s{i}", f"s{i}", float(lat[i]), float(lon[i]), 100.0) for i in range(n))


def _dense(sites, baselines):
    """One dense system: a row per baseline, then a map row for the first site of each connected group."""
    from firstrung.geodesy import baseline_north_south_km, geodesic_inverse, meridian_arc_m

    n = len(sites)
    map_km = meridian_arc_m(np.array([s.latitude_deg for s in sites])) / 1000.0
    rows, values, sigmas = [], [], []
    for b in baselines:
        if b.bearing_deg is not None:
            ns = float(baseline_north_south_km(b.distance_km, b.bearing_deg))
        else:
            s1, s2 = sites[b.first], sites[b.second]
            d, _, _ = geodesic_inverse(s1.latitude_deg, s1.longitude_deg, s2.latitude_deg, s2.longitude_deg)
            ns = b.distance_km * (map_km[b.second] - map_km[b.first]) / float(d)
        row = np.zeros(n)
        row[b.second], row[b.first] = 1.0, -1.0
        rows.append(row)
        values.append(ns)
        sigmas.append(b.sigma_km)
    # connected groups by repeated relaxation (slow and obvious)
    label = list(range(n))
    changed = True
    while changed:
        changed = False
        for b in baselines:
            low = min(label[b.first], label[b.second])
            for i in (b.first, b.second):
                if label[i] != low:
                    label[i], changed = low, True
    anchors = sorted(set(label))
    for a in anchors:
        row = np.zeros(n)
        row[a] = 1.0
        rows.append(row)
        values.append(map_km[a])
        sigmas.append(POSITION_SIGMA_KM)
    design, w = np.array(rows), 1.0 / np.array(sigmas) ** 2
    operator = np.linalg.solve(design.T @ (w[:, None] * design), design.T * w)
    cov = operator @ np.diag(1.0 / w) @ operator.T
    nb = len(baselines)
    map_cov = operator[:, nb:] @ np.diag(1.0 / w[nb:]) @ operator[:, nb:].T
    base_cov = operator[:, :nb] @ np.diag(1.0 / w[:nb]) @ operator[:, :nb].T
    return operator @ np.array(values), cov, map_cov, base_cov


NETWORK = (  # a loop of three, a chain of two, a surveyed pair with a bearing; the other sites alone
    BaselineInput(0, 1, 800.0, 0.5, None),
    BaselineInput(1, 2, 650.0, 0.3, None),
    BaselineInput(2, 0, 1300.0, 0.8, None),
    BaselineInput(4, 5, 400.0, 0.2, 10.0),
    BaselineInput(5, 7, 300.0, 0.4, None),
    BaselineInput(9, 3, 500.0, 0.1, 170.0),
)


@pytest.mark.parametrize("baselines", [(), NETWORK])
def test_positions_and_their_covariance_match_the_dense_solution(baselines):
    sites = _sites(12)
    p = north_south_positions(sites, baselines)
    position, cov, map_cov, base_cov = _dense(sites, baselines)
    np.testing.assert_allclose(p.position_km, position, rtol=0, atol=1e-9)
    np.testing.assert_allclose(p.variance_km2(), np.diag(cov), rtol=1e-9, atol=1e-15)
    g = np.random.default_rng(4).normal(size=(5, 12))
    np.testing.assert_allclose(p.map_quadratic(g), np.einsum("di,ij,dj->d", g, map_cov, g), rtol=1e-9)
    np.testing.assert_allclose(p.baseline_quadratic(g), np.einsum("di,ij,dj->d", g, base_cov, g), rtol=1e-9, atol=1e-18)
    assert p.surveyed.tolist() == [i in {0, 1, 2, 3, 4, 5, 7, 9} for i in range(12)] if baselines else not p.surveyed.any()


def test_drawn_positions_have_the_dense_covariance():
    sites = _sites(12)
    p = north_south_positions(sites, NETWORK)
    _, cov, _, _ = _dense(sites, NETWORK)
    draws = p.draw(np.random.default_rng(5), 40_000)
    # sample covariance of 40,000 draws: within about 3 % of the model's for these variances
    np.testing.assert_allclose(np.cov(draws.T), cov, rtol=0, atol=0.04 * np.max(np.diag(cov)))


def test_positions_without_baselines_hold_no_site_by_site_matrix():
    sites = _sites(3_000)
    p = north_south_positions(sites, ())
    assert p.map_gain.shape == (3_000,) and p.baseline_blocks == ()
    assert np.array_equal(p.anchor, np.arange(3_000)) and np.all(p.map_gain == 1.0)


def test_leave_one_out_matches_refitting_without_each_site():
    rng = np.random.default_rng(6)
    for n in (4, 7, 40):
        pos = rng.uniform(-3000.0, 5000.0, n)
        lat = pos / 6371.0 + rng.normal(0.0, 1e-4, n)
        var = rng.uniform(0.5, 2.0, n) * 1e-8
        active = rng.random(n) < 0.85
        active[:4] = True
        got = _leave_one_out(pos, lat, var, active)
        for i in range(n):
            if not active[i]:
                assert np.isnan(got[i])
                continue
            others = np.flatnonzero(active & (np.arange(n) != i))
            f = fit_line(pos[others], lat[others], var[others])
            x = np.array([1.0, pos[i]])
            want = (lat[i] - f.intercept_rad - f.slope_rad_per_km * pos[i]) / np.sqrt(var[i] + x @ f.covariance @ x)
            assert got[i] == pytest.approx(want, rel=1e-7)
    assert np.isnan(_leave_one_out(pos[:3], lat[:3], var[:3], np.ones(3, bool))).all()
