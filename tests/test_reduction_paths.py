"""The shadow reduction's faster paths give what the plain ones gave: the series fit written with each
product once and its arrays reused, the pairs made in their final order, the edge names looked up by
comparison, the records made without the cycle collector's searches.

No test here times anything (speed is measured by ``benchmarks/run.py``); each compares the fast path's
result with the formula written out plainly or the definition written out row by row.
"""

from __future__ import annotations

import gc
import weakref
from types import SimpleNamespace

import numpy as np
import pytest

from firstrung.errors import InputError
from firstrung.memory import no_cycle_collection
from firstrung.methods.shadows.altitude import EDGE_LOCATION_FRACTION, _per_edge
from firstrung.methods.shadows.fits import fit_series
from firstrung.methods.shadows.network_model import MIN_NORTH_SOUTH_KM
from firstrung.methods.shadows.pairs import EVERY_PAIR, network_pairs


def _plain_fit(group, n_groups, altitude_rad, sigma_rad, dec0, ha0, dec_rate, ha_rate, lat0, prior_sigma_s, steps):
    """Gauss-Newton on sin a = sin(phi) sin(dec) + cos(phi) cos(dec) cos(H), every term written out."""
    alt = np.atleast_2d(altitude_rad)
    s = alt.shape[0]
    weight = 1.0 / np.broadcast_to(sigma_rad, alt.shape) ** 2
    lat = np.broadcast_to(lat0, (s, n_groups)).copy()
    u = np.zeros((s, n_groups))
    flat = (np.arange(s)[:, None] * n_groups + group[None, :]).ravel()
    prior = 1.0 / prior_sigma_s**2

    def sums(v):
        return np.bincount(flat, weights=v.ravel(), minlength=s * n_groups).reshape(s, n_groups)

    def terms(lat, u):
        uk = u[:, group]
        dec, ha = dec0 + dec_rate * uk, ha0 + ha_rate * uk
        sl, cl = np.sin(lat)[:, group], np.cos(lat)[:, group]
        sd, cd, ch = np.sin(dec), np.cos(dec), np.cos(ha)
        model = np.arcsin(np.clip(sl * sd + cl * cd * ch, -1.0, 1.0))
        ca = np.maximum(np.cos(model), 1e-9)
        d_lat = (cl * sd - sl * cd * ch) / ca
        d_dec = (sl * cd - cl * sd * ch) / ca
        d_ha = -cl * cd * np.sin(ha) / ca
        d_u = d_ha * ha_rate + d_dec * dec_rate
        return (alt - model, d_lat, d_u, sums(weight * d_lat * d_lat), sums(weight * d_lat * d_u),
                sums(weight * d_u * d_u) + prior)

    for _ in range(steps):
        r, d_lat, d_u, n11, n12, n22 = terms(lat, u)
        b1, b2 = sums(weight * d_lat * r), sums(weight * d_u * r) - prior * u
        det = n11 * n22 - n12**2
        lat = lat + (n22 * b1 - n12 * b2) / det
        u = u + (n11 * b2 - n12 * b1) / det
    r, d_lat, d_u, n11, n12, n22 = terms(lat, u)
    det = n11 * n22 - n12**2
    gain = ((n22 / det)[:, group] * d_lat + (-n12 / det)[:, group] * d_u) * weight
    chi2 = sums(weight * r**2) + prior * u**2
    return lat, u, n11, n12, n22, gain, chi2


@pytest.mark.parametrize("samples", [None, 7])
def test_series_fit_gives_the_numbers_of_the_formula_written_out(samples):
    from firstrung.methods.shadows.inputs import _FIT_ITERATIONS, CLOCK_PRIOR_SIGMA_S

    rng = np.random.default_rng(11)
    n, n_groups = 3_000, 40
    group = rng.integers(0, n_groups, n)
    lat0 = np.radians(rng.uniform(-60.0, 60.0, n_groups))
    dec0 = np.radians(rng.uniform(-23.4, 23.4, n))
    ha0 = np.radians(rng.uniform(-40.0, 40.0, n))
    dec_rate, ha_rate = np.full(n, 4e-9), np.full(n, 7.29e-5)
    true_alt = np.arcsin(np.sin(lat0[group]) * np.sin(dec0) + np.cos(lat0[group]) * np.cos(dec0) * np.cos(ha0))
    sigma = np.full(n, 3e-4)
    alt = true_alt + sigma * rng.standard_normal(n if samples is None else (samples, n))
    fit = fit_series(group, n_groups, alt, sigma, dec0, ha0, dec_rate, ha_rate, lat0)
    lat, u, n11, n12, n22, gain, chi2 = _plain_fit(group, n_groups, alt, sigma, dec0, ha0, dec_rate, ha_rate, lat0,
                                                   CLOCK_PRIOR_SIGMA_S, _FIT_ITERATIONS)
    pick = (lambda a: a[0]) if samples is None else (lambda a: a)
    assert np.array_equal(fit.latitude_rad, pick(lat))
    assert np.array_equal(fit.clock_correction_s, pick(u))
    assert np.array_equal(fit.latitude_information, pick(n11))
    assert np.array_equal(fit.covariance[..., 0, 1], pick(-n12 / (n11 * n22 - n12**2)))
    assert np.array_equal(fit.gain_latitude, pick(gain))
    assert np.array_equal(fit.chi2, pick(chi2))
    # and the fit finds the latitudes it was made from (to the readings' scatter)
    assert np.max(np.abs(pick(lat) - lat0)) < 1e-3


def _site(rng, k, days):
    series = tuple(SimpleNamespace(date=d, latitude_deg=SimpleNamespace(value=float(rng.uniform(-60, 60)),
                                                                         sigma=float(rng.uniform(1e-3, 0.1))))
                   for d in days if rng.random() < 0.8)
    north = float(rng.choice([rng.uniform(-4000.0, 4000.0), 0.0, 60.0, 160.0]))
    return SimpleNamespace(id=f"site-{rng.integers(10**6)}-{k}", series=series, north_south_km=north,
                           longitude_deg=float(rng.uniform(-180, 180)), outlier=bool(rng.random() < 0.1))


def test_pairs_are_every_pair_far_enough_in_the_order_of_day_then_ids():
    rng = np.random.default_rng(4)
    days = [f"2027-03-{d:02d}" for d in range(1, 13)]
    sites = tuple(_site(rng, k, days) for k in range(60))
    flagged = {sites[3].id}
    pairs = network_pairs(sites, flagged)
    # the definition, pair by pair: each two sites observed on the same day at least 100 km apart
    # north-south, the southern one first; by day, then the southern site's id, then the northern's
    expected = []
    for a in sites:
        for b in sites:
            for sa in a.series:
                for sb in b.series:
                    separation = b.north_south_km - a.north_south_km
                    if sa.date == sb.date and separation >= MIN_NORTH_SOUTH_KM:
                        slope = (np.radians(sb.latitude_deg.value) - np.radians(sa.latitude_deg.value)) / separation
                        bad = a.outlier or b.outlier or a.id in flagged or b.id in flagged
                        expected.append((sa.date, a.id, b.id, separation, 1.0 / slope, bad))
    expected.sort(key=lambda e: e[:3])
    assert pairs.selection == EVERY_PAIR
    assert len(pairs) == len(expected) > 1_000
    assert pairs.date.tolist() == [e[0] for e in expected]
    assert pairs.first.tolist() == [e[1] for e in expected]
    assert pairs.second.tolist() == [e[2] for e in expected]
    assert pairs.north_south_km.tolist() == [e[3] for e in expected]
    assert np.allclose(pairs.radius_km, [e[4] for e in expected], rtol=1e-12)
    assert pairs.flagged.tolist() == [e[5] for e in expected]


def test_edge_names_looked_up_and_an_unknown_name_refused():
    edges = np.array(["outer", "umbra", "middle", "umbra"], dtype=object)
    assert _per_edge(edges, EDGE_LOCATION_FRACTION).tolist() == [0.25, 0.10, 0.15, 0.10]
    assert _per_edge(np.array(["umbra", "middle"]), EDGE_LOCATION_FRACTION).tolist() == [0.10, 0.15]
    assert float(_per_edge("outer", EDGE_LOCATION_FRACTION)) == 0.25
    with pytest.raises(InputError, match="got 'sharp'"):
        _per_edge(np.array(["umbra", "sharp", "tip"], dtype=object), EDGE_LOCATION_FRACTION)


def test_no_cycle_collection_pauses_the_collector_and_leaves_cycles_collectable():
    class Node:
        pass

    assert gc.isenabled()
    with no_cycle_collection():
        assert not gc.isenabled()
        a, b = Node(), Node()
        a.other, b.other = b, a  # a cycle made inside the block
        seen = weakref.ref(a)
    assert gc.isenabled()
    del a, b
    gc.collect()
    assert seen() is None  # freed by the next full search
    gc.disable()
    try:
        with no_cycle_collection():
            pass
        assert not gc.isenabled()  # left as it was
    finally:
        gc.enable()
