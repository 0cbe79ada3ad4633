"""The check's one series fit gives the same numbers on rows laid out by series as on the rows as they are
(sums by bincount), and the bound that spares hopeless fits never passes the statistic it bounds."""

import numpy as np
import pytest

from firstrung.methods.shadows.check_statistics import hopeless, series_statistic
from firstrung.methods.shadows.series_layout import SeriesLayout, column_sums

FIELDS = ("statistic", "level_rad", "level_sigma_rad", "clock_s", "mean_square", "z")


def _series(rng, n_groups, longest, shuffled):
    sizes = rng.integers(1, longest + 1, n_groups)
    group = np.repeat(np.arange(n_groups), sizes)
    if shuffled:
        rng.shuffle(group)
    n = group.size
    scale = 10.0 ** rng.uniform(-5, -1)
    residual = rng.normal(0.0, scale, n) * np.where(rng.random(n) < 0.1, 50.0, 1.0)
    rate = rng.normal(0.0, 3e-5, n)
    sigma = 10.0 ** rng.uniform(-4, -2, n)
    systematic = rng.random(n) * 1e-6
    return group, residual, rate, sigma, systematic


@pytest.mark.parametrize("seed", range(16))
def test_laid_out_fit_is_the_bincount_fit_to_the_last_bit(seed):
    rng = np.random.default_rng(seed)
    n_groups = int(rng.integers(1, 20)) if seed % 3 == 0 else int(rng.integers(20, 400))
    group, residual, rate, sigma, systematic = _series(rng, n_groups, int(rng.integers(1, 30)), seed % 2 == 1)
    if seed % 5 == 0:
        residual = np.round(residual * 1e3) / 1e3  # ties for the median
    if seed % 7 == 0:
        rate[:] = 0.0
    layout = SeriesLayout(group, n_groups)
    assert layout.usable
    some = rng.random(n_groups) < 0.5
    for robust in (True, False):
        by_bincount = series_statistic(group, n_groups, residual, rate, sigma, systematic, robust=robust)
        if not robust:  # least squares: each level is the weighted mean of residual less rate times clock
            w = 1.0 / sigma**2
            mean = np.bincount(group, w * (residual - rate * by_bincount.clock_s[group]), n_groups) / np.bincount(
                group, w, n_groups)
            assert np.allclose(by_bincount.level_rad, mean, rtol=1e-6, atol=1e-12)
        laid_out = series_statistic(layout, n_groups, residual, rate, sigma, systematic, robust=robust)
        for name in FIELDS:
            a, b = getattr(by_bincount, name), getattr(laid_out, name)
            assert np.array_equal(a, b) and np.array_equal(np.signbit(a), np.signbit(b)), name
        part = series_statistic(layout, n_groups, residual, rate, sigma, systematic, robust=robust, columns=some)
        for name in FIELDS[:-1]:
            assert np.array_equal(getattr(part, name)[some], getattr(by_bincount, name)[some]), name
        assert np.array_equal(part.z[some[group]], by_bincount.z[some[group]])
        assert np.isinf(part.statistic[~some]).all() and np.isnan(part.z[~some[group]]).all()


def test_column_sums_add_in_row_order():
    # in row order 1e16 + 1 rounds to 1e16, less 1e16 is 0, plus 1 is 1 (bincount's sum); added in pairs
    # (1e16 + 1) + (-1e16 + 1) the sum would be 0
    values = np.array([[1e16] * 20, [1.0] * 20, [-1e16] * 20, [1.0] * 20])
    assert np.bincount([0, 0, 0, 0], weights=values[:, 0])[0] == 1.0
    np.testing.assert_array_equal(column_sums(values), np.ones(20))
    np.testing.assert_array_equal(column_sums(values[:, :1]), [1.0])
    assert not np.signbit(column_sums(np.array([[-0.0] * 20, [-0.0] * 20]))).any()


@pytest.mark.parametrize("seed", range(12))
def test_hopeless_never_passes_the_statistic(seed):
    rng = np.random.default_rng(100 + seed)
    n_groups = int(rng.integers(20, 300))
    group, residual, rate, sigma, systematic = _series(rng, n_groups, int(rng.integers(2, 25)), seed % 2 == 1)
    # what the hypotheses do to a series: a level far off, a level along the rate (a clock), a slope
    offset = rng.normal(0.0, 10.0 ** rng.uniform(-4, 0), n_groups)[group]
    clock = rng.normal(0.0, 10.0 ** rng.uniform(0, 4), n_groups)[group]
    residual = residual + offset + rate * clock
    layout = SeriesLayout(group, n_groups)
    fit = series_statistic(group, n_groups, residual, rate, sigma, systematic)
    for beyond in (fit.statistic - 1e-9, fit.statistic * 0.5, np.full(n_groups, 20.0)):
        sure = hopeless(layout, residual, rate, sigma, systematic, beyond)
        assert (fit.statistic[sure] > beyond[sure]).all()
    # and it is not idle: a level a thousand sigma off and no clock to take it is hopeless
    far = 1.0 + rng.normal(0.0, 1e-3, residual.size)
    sure = hopeless(layout, far, np.zeros_like(rate), sigma, systematic, np.full(n_groups, 50.0))
    assert sure.all()


def test_hopeless_is_never_sure_of_rows_that_are_not_finite():
    group = np.repeat(np.arange(30), 5)
    residual = np.full(150, 1.0)
    residual[7] = np.nan
    sure = hopeless(SeriesLayout(group, 30), residual, np.zeros(150), np.full(150, 1e-3), np.full(150, 1e-8),
                    np.full(30, 10.0))
    assert not sure.any()


@pytest.mark.parametrize("seed", range(6))
def test_hopeless_by_runs_of_rows_agrees_with_the_layout(seed):
    """Rows that come series by series are bounded over each run of rows (sums added pairwise); the series
    found hopeless are those the laid-out bound finds, on the statistic's own thresholds and near them."""
    rng = np.random.default_rng(300 + seed)
    n_groups = int(rng.integers(20, 300))
    group, residual, rate, sigma, systematic = _series(rng, n_groups, int(rng.integers(2, 25)), False)
    order = np.argsort(group, kind="stable")
    group, residual, rate, sigma, systematic = (x[order] for x in (group, residual, rate, sigma, systematic))
    residual = residual + rng.normal(0.0, 10.0 ** rng.uniform(-4, 0), n_groups)[group]
    residual[group % 3 == 0] += 1.0  # a third of the series a radian off: hopeless
    by_runs = SeriesLayout(group, n_groups)
    laid_out = SeriesLayout(group, n_groups)
    laid_out.starts = None
    assert by_runs.starts is not None
    fit = series_statistic(group, n_groups, residual, rate, sigma, systematic)
    found = 0
    for beyond in (fit.statistic - 1e-9, fit.statistic * 0.5, fit.statistic * 0.9, np.full(n_groups, 20.0)):
        sure = hopeless(by_runs, residual, rate, sigma, systematic, beyond)
        assert sure.tolist() == hopeless(laid_out, residual, rate, sigma, systematic, beyond).tolist()
        assert (fit.statistic[sure] > beyond[sure]).all()
        found += int(sure.sum())
    assert found > 0
