"""Pairs of sites observed on the same day: each pair's own Earth radius, as Eratosthenes had it.

Two sites observed on one day whose north-south separation is at least
:data:`~firstrung.methods.shadows.network_model.MIN_NORTH_SOUTH_KM` give a
radius of their own: the north-south distance between them over the
difference of their astronomical latitudes. These are the results a school
compares with its partners; the network's radius comes from the line fit.

A day with at most :data:`ALL_PAIRS_MAX_SITES` sites lists every pair. A
larger day would list a number of pairs growing with the square of its sites
(half a million for 1,000 schools), so each site is paired instead with its
:data:`NEIGHBOURS` neighbours in longitude (the sites nearest its meridian),
and the output says which selection was made.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from firstrung.methods.shadows.network_model import MIN_NORTH_SOUTH_KM
from firstrung.numbers import median as plain_median
from firstrung.numbers import quantiles

#: Days with at most this many sites list every pair of them.
ALL_PAIRS_MAX_SITES = 200
#: Larger days pair each site with this many neighbours in longitude (on each side, half).
NEIGHBOURS = 10

EVERY_PAIR = "every pair of sites observed on the same day at least 100 km apart north-south"
NEIGHBOUR_PAIRS = (f"each site with its {NEIGHBOURS} neighbours in longitude observed the same day at least "
                   f"100 km apart north-south (days with more than {ALL_PAIRS_MAX_SITES} sites)")


@dataclass(frozen=True)
class NetworkPairs:
    """Every pair, as equal-length arrays; ``first`` is the southern site of each pair.

    The sites and dates are held as indices into ``site_names`` and ``date_names`` (a
    network's millions of pairs share a few hundred ids and dates); ``first``, ``second``
    and ``date`` give them as text.
    """

    site_names: np.ndarray  # the sites' ids
    first_site: np.ndarray  # index into site_names
    second_site: np.ndarray
    date_names: np.ndarray  # ISO dates
    date_index: np.ndarray  # index into date_names
    north_south_km: np.ndarray
    radius_km: np.ndarray
    sigma_km: np.ndarray
    low_km: np.ndarray
    high_km: np.ndarray  # NaN when only a lower bound exists
    flagged: np.ndarray  # bool: a site of the pair was flagged as a blunder
    selection: str

    def __len__(self) -> int:
        return int(self.radius_km.size)

    @property
    def first(self) -> np.ndarray:
        """The southern site's id of each pair."""
        return self.site_names[self.first_site]

    @property
    def second(self) -> np.ndarray:
        return self.site_names[self.second_site]

    @property
    def date(self) -> np.ndarray:
        """Each pair's ISO date."""
        return self.date_names[self.date_index]


def _candidates(day_of, longitude):
    """Index pairs (i, j) of series on the same day: all of them on small days, neighbours on large."""
    firsts, seconds, every = [], [], True
    order = np.lexsort((longitude, day_of))
    starts = np.flatnonzero(np.r_[True, np.diff(day_of[order]) != 0, True])
    for a, b in zip(starts[:-1], starts[1:], strict=True):
        members = order[a:b]
        n = members.size
        if n < 2:
            continue
        if n <= ALL_PAIRS_MAX_SITES:
            i, j = np.triu_indices(n, 1)
        else:
            every = False
            step = np.arange(1, NEIGHBOURS // 2 + 1)
            i = np.repeat(np.arange(n), step.size)
            j = (i + np.tile(step, n)) % n
        firsts.append(members[i])
        seconds.append(members[j])
    if not firsts:
        return np.zeros(0, int), np.zeros(0, int), every
    return np.concatenate(firsts), np.concatenate(seconds), every


def _every_pair(day_of, code, position_km):
    """Every pair of series on the same day at least MIN_NORTH_SOUTH_KM apart north-south, as (southern,
    northern) indices, in the order of :func:`_pair_order` (day, then the southern site's code, then the
    northern's) as they are made: each day's series in the order of their codes, and its pairs read row by
    row from the table of their separations (no sort of millions of pairs). A site has one series a day.
    """
    if day_of.size == 0:
        return np.zeros(0, int), np.zeros(0, int)
    order = np.lexsort((code, day_of))
    starts = np.flatnonzero(np.r_[True, np.diff(day_of[order]) != 0, True])
    sizes = np.diff(starts)
    # filled day by day in place: at most every pair of each day (pieces per day and a joining copy
    # left a million-row reduction's heap 50 MB larger)
    bound = int(np.sum(sizes * (sizes - 1) // 2))
    firsts, seconds, filled = np.empty(bound, order.dtype), np.empty(bound, order.dtype), 0
    for a, b in zip(starts[:-1].tolist(), starts[1:].tolist(), strict=True):
        members = order[a:b]
        p = position_km[members]
        # row f, column s: how far the s-th series' site lies north of the f-th's (x[s] - x[f] = -(x[f] - x[s]))
        south, north = np.nonzero(p[None, :] - p[:, None] >= MIN_NORTH_SOUTH_KM)
        firsts[filled:filled + south.size] = members[south]
        seconds[filled:filled + south.size] = members[north]
        filled += south.size
    return firsts[:filled], seconds[:filled]


def _pair_order(day, first, second, n_sites: int, n_days: int) -> np.ndarray:
    """``np.lexsort((second, first, day))``: by day, then first, then second site (ties kept in order), as one
    sort of a single integer key when it fits in 63 bits (a few times sooner on millions of pairs)."""
    if day.size == 0:
        return np.zeros(0, int)
    if n_days * n_sites * n_sites >= 2**62:
        return np.lexsort((second, first, day))
    key = (day.astype(np.int64) * n_sites + first) * n_sites + second
    return np.argsort(key, kind="stable")


def network_pairs(sites, flagged=()) -> NetworkPairs:
    """The pairs of a reduction's sites (``SiteResult``s with their series), one per pair and day."""
    flagged = set(flagged)
    counts = [len(s.series) for s in sites]
    names = np.array([s.id for s in sites], dtype=object).astype(str) if sites else np.zeros(0, str)
    site_of = np.repeat(np.arange(len(counts)), counts)  # each series' site, in the sites' order
    day_text = [d.date for s in sites for d in s.series]
    days = np.array(day_text, dtype=object).astype(str) if day_text else np.zeros(0, str)
    lat = np.fromiter((d.latitude_deg.value for s in sites for d in s.series), float, site_of.size)
    sig = np.fromiter((d.latitude_deg.sigma for s in sites for d in s.series), float, site_of.size)
    pos = np.array([s.north_south_km for s in sites], float)[site_of]
    lon = np.array([s.longitude_deg for s in sites], float)[site_of]
    bad_a = np.array([s.outlier or s.id in flagged for s in sites], bool)[site_of]
    date_names, day_of = np.unique(days, return_inverse=True)
    day_of = day_of.reshape(-1)
    # sorted by day, then the ids as text: their ranks among the sorted ids sort the same way; every per-pair
    # value below is computed in that order (each pair's numbers are its own, whatever the order)
    _, rank = np.unique(names, return_inverse=True) if names.size else (None, np.zeros(0, int))
    code = rank.reshape(-1)[site_of]
    x, phi, sigma = pos, np.radians(lat), np.radians(sig)
    if day_of.size == 0 or np.bincount(day_of).max() <= ALL_PAIRS_MAX_SITES:
        i, j = _every_pair(day_of, code, x)
        every = True
        dx = x[j] - x[i]
    else:
        i, j, every = _candidates(day_of, lon)
        dx = x[j] - x[i] if i.size else np.zeros(0)
        far = np.flatnonzero(np.abs(dx) >= MIN_NORTH_SOUTH_KM)
        i, j, dx = i[far], j[far], dx[far]
        del far
        south = dx > 0
        i, j = np.where(south, i, j), np.where(south, j, i)
        del south
        order = _pair_order(day_of[i], code[i], code[j], max(names.size, 1), max(date_names.size, 1))
        i, j, dx = i[order], j[order], np.abs(dx[order])
        del order
    del code
    slope = (phi[j] - phi[i]) / dx
    slope_sigma = np.hypot(sigma[i], sigma[j]) / dx
    with np.errstate(divide="ignore", invalid="ignore"):
        radius = 1.0 / slope
        high = np.where(slope - slope_sigma > 0, 1.0 / (slope - slope_sigma), np.nan)
        low = 1.0 / (slope + slope_sigma)
    return NetworkPairs(
        site_names=names, first_site=site_of[i], second_site=site_of[j], date_names=date_names,
        date_index=day_of[i], north_south_km=dx,
        radius_km=radius, sigma_km=slope_sigma / slope**2, low_km=low, high_km=high,
        flagged=bad_a[i] | bad_a[j],
        selection=EVERY_PAIR if every else NEIGHBOUR_PAIRS,
    )


def pairs_summary(pairs: NetworkPairs) -> dict:
    """The robust summary of the unflagged pairs: their count, median and central 68 % of radii [km]."""
    good = pairs.radius_km[~pairs.flagged & np.isfinite(pairs.radius_km)]
    if good.size == 0:
        return {"count": 0, "median_km": None, "low_km": None, "high_km": None}
    low, mid, high = quantiles(good, [0.158655, 0.5, 0.841345])
    return {"count": int(good.size), "median_km": float(mid), "low_km": float(low), "high_km": float(high)}


def partners_of(pairs: NetworkPairs) -> dict:
    """Each site's partners: id -> (count, median radius of its unflagged pairs [km] or None)."""
    out: dict = {}
    if len(pairs) == 0:
        return out
    n_sites = pairs.site_names.size
    count = np.bincount(pairs.first_site, minlength=n_sites) + np.bincount(pairs.second_site, minlength=n_sites)
    present = np.flatnonzero(count)  # the sites in pairs, in the order of their ids as text
    present = present[np.argsort(pairs.site_names[present], kind="stable")]
    good = ~pairs.flagged & np.isfinite(pairs.radius_km)
    good_site = np.concatenate([pairs.first_site[good], pairs.second_site[good]])
    radius = pairs.radius_km[good]
    order = np.argsort(good_site.astype(np.int16) if n_sites < 2**15 else good_site, kind="stable")
    grouped = np.concatenate([radius, radius])[order]  # each site's unflagged radii together (a median needs no
    del order  # more order)
    ends = np.cumsum(np.bincount(good_site, minlength=n_sites))
    for k in present.tolist():  # one pass over sites, each its own block of the radii
        start = ends[k - 1] if k else 0
        median = plain_median(grouped[start:ends[k]]) if ends[k] > start else None
        out[str(pairs.site_names[k])] = (int(count[k]), median)
    return out
