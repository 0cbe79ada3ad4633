"""Rows laid out by series for the check's many fits: one column per series, its rows down the column.

The check fits a level and a clock offset to every series under a few dozen
hypotheses, each fit a few passes of sums per series. With the rows of each
series in a column of an (L, n_series) array (L the longest series, short
columns padded with rows that weigh nothing), a per-series value reaches its
rows by broadcasting instead of a gather, and a per-series sum is one
reduction down the columns instead of a :func:`numpy.bincount`.

The sums are the same numbers as :func:`numpy.bincount`'s: a reduction down
the first axis adds each column's rows in order, one after another, as
``bincount`` does; the padding adds zeros after the last row (a sum of only
negative zeros is made positive, as ``bincount``'s sum starting from zero is).
Each series' fit depends on its own rows alone, so a fit of some of the
series gives them the same numbers as a fit of all of them.
"""

from __future__ import annotations

import numpy as np

#: The layout is used when its padded cells are at most this many times the rows (series of
#: about equal length, as a campaign's are); otherwise the fits sum rows by ``bincount``.
MAX_PADDING_RATIO = 2.0

#: With fewer series than this the sums add the rows one at a time in Python (a reduction down a
#: single column is done pairwise, not in order).
_FEW_SERIES = 16

#: Arrays a layout keeps laid out (see :meth:`SeriesLayout.spread`).
_KEPT = 8


class SeriesLayout:
    """Where each row of ``group`` sits in the (longest, n_groups) series layout.

    ``group``: series of each row, 0..n_groups-1 (int array of n rows).
    """

    def __init__(self, group: np.ndarray, n_groups: int) -> None:
        group = np.asarray(group, np.int64)
        self.group, self.n_groups, self.n = group, int(n_groups), group.size
        self.count = np.bincount(group, minlength=self.n_groups)
        self.longest = int(self.count.max()) if self.count.size else 0
        cells = self.longest * self.n_groups
        self.usable = self.n > 0 and cells <= MAX_PADDING_RATIO * self.n + 1024
        if not self.usable:
            return
        start = np.concatenate([[0], np.cumsum(self.count)[:-1]])
        order = np.argsort(group, kind="stable")  # each series' rows in the order of the rows
        in_series = np.arange(self.n) - start[group[order]]
        self.row_cell = np.empty(self.n, np.int64)
        self.row_cell[order] = in_series * self.n_groups + group[order]
        padding = np.ones(cells, bool)
        padding[self.row_cell] = False
        self.padding = np.flatnonzero(padding)
        self.padding_source = self.padding % self.n_groups  # the first row of each padded cell's series
        # each cell's row; a padded cell's is its series' first row (a gather fills the layout faster
        # than a scatter, and the padding is then set)
        self.cell_row = np.empty(cells, np.intp)
        self.cell_row[self.row_cell] = np.arange(self.n)
        self.cell_row[self.padding] = order[start[self.padding_source]] if self.padding.size else 0
        self.shape = (self.longest, self.n_groups)
        self._kept: dict = {}
        # the rows come series by series, none empty: a per-series bound is a reduction over each run of
        # rows (:func:`hopeless_series`), nothing laid out
        self.starts = start if (self.count > 0).all() and (group[1:] >= group[:-1]).all() else None

    def spread(self, values, fill: float = 0.0, keep: bool = False) -> np.ndarray:
        """Per-row ``values`` in the layout; the padding holds ``fill``.

        With ``keep``, the last few arrays laid out are kept (by identity, read-only): the check's fits
        share their rates and errors between hypotheses.
        """
        key = (id(values), fill)
        kept = self._kept.get(key)
        if kept is not None and kept[0] is values:
            return kept[1]
        out = np.asarray(values, float).take(self.cell_row)
        out[self.padding] = fill
        out = out.reshape(self.shape)
        if keep and isinstance(values, np.ndarray):
            out.setflags(write=False)
            if len(self._kept) >= _KEPT:
                del self._kept[next(iter(self._kept))]
            self._kept[key] = (values, out)
        return out

    def columns(self, index: np.ndarray, inputs) -> list[np.ndarray]:
        """``spread(values, fill)[:, index]`` of each (values, fill) of ``inputs``, contiguous, without laying
        out the other columns."""
        rows = self.cell_row.reshape(self.shape)[:, index]
        padding = np.zeros(self.shape[0] * self.shape[1], bool)
        padding[self.padding] = True
        padding = np.flatnonzero(padding.reshape(self.shape)[:, index])
        out = []
        for values, fill in inputs:
            laid_out = np.asarray(values, float).take(rows)
            laid_out.reshape(-1)[padding] = fill
            out.append(laid_out)
        return out

    def rows(self, laid_out: np.ndarray) -> np.ndarray:
        """Back from the layout to one value per row."""
        return laid_out.reshape(-1)[self.row_cell]

    # what :func:`series_fit` asks of the rows' arrangement (:class:`FlatSeries` answers the same)
    @staticmethod
    def expand(per_series: np.ndarray) -> np.ndarray:
        """Per-series values against the laid-out rows (they broadcast down the columns)."""
        return per_series

    @staticmethod
    def sums(laid_out: np.ndarray) -> np.ndarray:
        return column_sums(laid_out)

    @staticmethod
    def medians(laid_out, count, columns, gap):
        return column_medians(laid_out, count, columns, gap)

    @staticmethod
    def unweight_padding(w: np.ndarray, count: np.ndarray) -> None:
        """The padding weighs nothing."""
        w[np.arange(w.shape[0])[:, None] >= count[None, :]] = 0.0


class FlatSeries:
    """The rows as they are, each series' sums by :func:`numpy.bincount`: :func:`series_fit` for series too
    uneven in length to lay out (or given as a plain group array). The same numbers as a layout's."""

    def __init__(self, group: np.ndarray, n_groups: int) -> None:
        self.group, self.n_groups = np.asarray(group, np.int64), int(n_groups)
        self.count = np.bincount(self.group, minlength=self.n_groups)

    @staticmethod
    def spread(values, fill: float = 0.0, keep: bool = False) -> np.ndarray:
        return values

    @staticmethod
    def rows(values: np.ndarray) -> np.ndarray:
        return values

    def expand(self, per_series: np.ndarray) -> np.ndarray:
        return per_series[self.group]

    def sums(self, values: np.ndarray) -> np.ndarray:
        return np.bincount(self.group, weights=values, minlength=self.n_groups)

    def medians(self, values, count, columns, gap):
        start = np.concatenate([[0], np.cumsum(count)[:-1]])
        return group_median(values, self.group, self.n_groups, start, np.maximum(count, 0))

    @staticmethod
    def unweight_padding(w: np.ndarray, count: np.ndarray) -> None:
        """No padding."""


def group_median(values, group, n_groups, start, count):
    """Median of ``values`` within each group, by one sort of all values with the groups kept apart."""
    spread = float(np.max(np.abs(values))) if values.size else 0.0
    gap = 2.0 * spread + 1.0
    ordered = np.sort(group * gap + values) - np.repeat(np.arange(n_groups) * gap, count)
    low = ordered[start + (count - 1) // 2]
    high = ordered[start + count // 2]
    return 0.5 * (low + high)


def column_sums(laid_out: np.ndarray) -> np.ndarray:
    """Per-column sums, the same numbers as ``np.bincount(group, weights=values, minlength=n_groups)``."""
    laid_out = np.ascontiguousarray(laid_out)  # rows in memory one after another: the reduction adds row by row
    if laid_out.shape[1] < _FEW_SERIES:  # a reduction of one column would add its rows pairwise
        total = laid_out[0] + 0.0
        for row in laid_out[1:]:
            total += row
        return total
    return np.add.reduce(laid_out, axis=0) + 0.0


def column_medians(laid_out: np.ndarray, count: np.ndarray, columns: np.ndarray, gap: float) -> np.ndarray:
    """Per series (``laid_out`` holds the series ``columns``), the median that
    :func:`group_median` gives over all the series.

    That function sorts ``group * gap + value`` and subtracts ``group * gap`` again (``gap`` from
    all the rows); the same rounding is done here on each series' own order statistics.
    """
    sortable = laid_out.copy()
    sortable[np.arange(laid_out.shape[0])[:, None] >= count[None, :]] = np.inf
    sortable.sort(axis=0)
    at = np.arange(columns.size)
    offset = columns * gap
    low = (offset + sortable[(count - 1) // 2, at]) - offset
    high = (offset + sortable[count // 2, at]) - offset
    return 0.5 * (low + high)


def series_fit(layout: SeriesLayout | FlatSeries, residual_rad, rate_rad_s, sigma_random_rad,
               variance_systematic_rad2, *, robust: bool, prior: float, huber: float, iterations: int, cap: float,
               columns=None):
    """The fit of :func:`firstrung.methods.shadows.check_statistics.series_statistic`, on rows laid out by series
    (a :class:`SeriesLayout`) or as they are (a :class:`FlatSeries`): the same operations on each row, in the
    same order, and the same per-series sums.

    ``columns``: the series to fit (bool per series; default all; a layout only). Returns (statistic, level,
    level variance, clock, mean square, z in the arrangement's form) for those series.
    """
    residual = np.asarray(residual_rad, float)
    count = layout.count
    index = np.arange(layout.n_groups)
    gap = 2.0 * float(np.max(np.abs(residual))) + 1.0 if robust and residual.size else 0.0  # (the padding's zeros
    # never raise the maximum)
    inputs = ((residual, 0.0), (rate_rad_s, 0.0), (sigma_random_rad, 1.0), (variance_systematic_rad2, 0.0))
    if columns is not None and not columns.all():  # only these series' columns laid out
        index = np.flatnonzero(columns)
        r, d, sigma, v = layout.columns(index, inputs)
        count = count[index]
    else:
        r = layout.spread(residual)
        d, sigma, v = (layout.spread(np.asarray(x, float), fill=fill, keep=True) for x, fill in inputs[1:])
    w = 1.0 / sigma**2
    layout.unweight_padding(w, count)
    sqrt_w = np.sqrt(w)
    sums, expand = layout.sums, layout.expand
    m = layout.medians(r, count, index, gap) if robust else sums(w * r) / np.maximum(sums(w), 1e-300)
    u = np.zeros(index.size)
    weight = w
    for _ in range(iterations if robust else 1):
        if robust:
            z = (r - expand(m) - d * expand(u)) * sqrt_w
            weight = w * np.minimum(1.0, huber / np.maximum(np.abs(z), 1e-12))
        weight_d = weight * d
        a = sums(weight)
        b = sums(weight_d)
        c = sums(weight_d * d) + prior
        b1 = sums(weight * r)
        b2 = sums(weight_d * r)
        det = a * c - b * b
        m = (c * b1 - b * b2) / det
        u = (a * b2 - b * b1) / det
    var_m = c / det
    z = (r - expand(m) - d * expand(u)) * sqrt_w
    z2 = np.minimum(z * z, cap**2) if robust else z * z
    scatter = sums(z2)
    level_var = sums(v) / np.maximum(count, 1) + var_m
    statistic = scatter + m * m / level_var + u * u * prior
    return statistic, m, level_var, u, scatter / np.maximum(count, 1), z


def hopeless_series(layout: SeriesLayout, residual_rad, rate_rad_s, sigma_random_rad, variance_systematic_rad2,
                    beyond, *, prior: float, huber: float) -> np.ndarray:
    """Per series: whether the robust fit's statistic is sure to exceed ``beyond`` (a lower bound does).

    The bound needs no fit. In the fit's last pass the level m is a weighted mean of ``r - d u`` and the
    clock u has the prior ``prior``; with the rows' residuals r in [r_lo, r_hi] (spread s), rates
    |d| <= D, random weights w summing to W:

    - |u| <= s sqrt(W / prior) (the fit's sum of squares is at most that of u = 0 at the mean);
    - every normalised residual of the previous pass is at most sqrt(w) (s + 2 D |u|), so each Huber
      weight is at least w min(1, huber / that), and their sum a at least A;
    - the level's variance c / det is at most 1 / a + D^2 / prior (Cauchy-Schwarz on det);
    - |m| >= R - D |u| with R the distance of [r_lo, r_hi] from zero;

    so the statistic, at least m^2 / (V_sys + var m) + prior u^2, is at least
    R^2 / (V_sys + 2 D^2 / prior + 1 / A). A series any input of which is not finite is never hopeless.

    When the rows come series by series (``layout.starts``), each series' least, greatest and sums are
    taken over its run of rows (nothing laid out); the sums are then added pairwise, not row after row,
    which changes the bound by a rounding far inside its margin.
    """
    r = np.asarray(residual_rad, float)
    d = np.asarray(rate_rad_s, float)
    sigma = np.asarray(sigma_random_rad, float)
    v = np.asarray(variance_systematic_rad2, float)
    with np.errstate(over="ignore", invalid="ignore"):
        finite = np.isfinite(r.sum() + d.sum() + v.sum() + sigma.sum())  # (a sum too large only spares no fit)
    if not (finite and sigma.min() > 0.0):
        return np.zeros(layout.n_groups, bool)
    if layout.starts is not None:  # rows by series: each series' least, greatest and sums over its run of rows
        starts = layout.starts
        least, most, total = (lambda x: np.minimum.reduceat(x, starts), lambda x: np.maximum.reduceat(x, starts),
                              lambda x: np.add.reduceat(x, starts))
        r_lo, r_hi, rate_max = least(r), most(r), most(np.abs(d))
        w = 1.0 / sigma**2
        expand = layout.group
    else:
        r_pad = r.take(layout.cell_row).reshape(layout.shape)  # a padded cell repeats its series' first row
        least, most, total = (lambda x: x.min(axis=0), lambda x: x.max(axis=0), lambda x: x.sum(axis=0))
        r_lo, r_hi = least(r_pad), most(r_pad)
        rate_max = most(np.abs(layout.spread(d, keep=True)))
        w = layout.spread(1.0 / sigma**2)  # the padding weighs nothing
        v = layout.spread(v, keep=True)
        expand = (None, slice(None))
    reach = np.where(r_lo > 0.0, r_lo, np.where(r_hi < 0.0, -r_hi, 0.0))
    clock_max = (r_hi - r_lo) * np.sqrt(total(w) / prior)
    z_max = np.sqrt(w)
    z_max *= (r_hi - r_lo + 2.0 * rate_max * clock_max)[expand]
    np.maximum(z_max, 1e-300, out=z_max)
    weight_min = total(w * np.minimum(1.0, huber / z_max))
    v_sys = total(v) / np.maximum(layout.count, 1)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        bound = reach**2 / (v_sys + 2.0 * rate_max**2 / prior + 1.0 / weight_min)
    # a wide margin for the rounding of the fit and of this bound
    return np.isfinite(bound) & (bound > 1.01 * np.asarray(beyond, float) + 2.0) & (layout.count > 0)
