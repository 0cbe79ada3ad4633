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

#: Days with at most this many sites list every pair of them.
ALL_PAIRS_MAX_SITES = 200
#: Larger days pair each site with this many neighbours in longitude (on each side, half).
NEIGHBOURS = 10

EVERY_PAIR = "every pair of sites observed on the same day at least 100 km apart north-south"
NEIGHBOUR_PAIRS = (f"each site with its {NEIGHBOURS} neighbours in longitude observed the same day at least "
                   f"100 km apart north-south (days with more than {ALL_PAIRS_MAX_SITES} sites)")


@dataclass(frozen=True)
class NetworkPairs:
    """Every pair, as equal-length arrays; ``first`` is the southern site of each pair."""

    first: np.ndarray  # site ids
    second: np.ndarray
    date: np.ndarray  # ISO dates
    north_south_km: np.ndarray
    radius_km: np.ndarray
    sigma_km: np.ndarray
    low_km: np.ndarray
    high_km: np.ndarray  # NaN when only a lower bound exists
    flagged: np.ndarray  # bool: a site of the pair was flagged as a blunder
    selection: str

    def __len__(self) -> int:
        return int(self.radius_km.size)


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


def network_pairs(sites, flagged=()) -> NetworkPairs:
    """The pairs of a reduction's sites (``SiteResult``s with their series), one per pair and day."""
    flagged = set(flagged)
    ids, day, lat, sig, pos, lon, bad = [], [], [], [], [], [], []
    for s in sites:
        for d in s.series:
            ids.append(s.id)
            day.append(d.date)
            lat.append(d.latitude_deg.value)
            sig.append(d.latitude_deg.sigma)
            pos.append(s.north_south_km)
            lon.append(s.longitude_deg)
            bad.append(s.outlier or s.id in flagged)
    ids_a = np.array(ids, dtype=object).astype(str) if ids else np.zeros(0, str)
    days = np.array(day, dtype=object).astype(str) if day else np.zeros(0, str)
    _, day_of = np.unique(days, return_inverse=True)
    i, j, every = _candidates(day_of, np.array(lon, float))
    x, phi, sigma = np.array(pos, float), np.radians(np.array(lat, float)), np.radians(np.array(sig, float))
    dx = x[j] - x[i] if i.size else np.zeros(0)
    far = np.abs(dx) >= MIN_NORTH_SOUTH_KM
    i, j, dx = i[far], j[far], dx[far]
    south = dx > 0
    i, j = np.where(south, i, j), np.where(south, j, i)
    dx = np.abs(dx)
    slope = (phi[j] - phi[i]) / dx
    slope_sigma = np.hypot(sigma[i], sigma[j]) / dx
    with np.errstate(divide="ignore", invalid="ignore"):
        radius = 1.0 / slope
        high = np.where(slope - slope_sigma > 0, 1.0 / (slope - slope_sigma), np.nan)
        low = 1.0 / (slope + slope_sigma)
    bad_a = np.array(bad, bool)
    order = np.lexsort((ids_a[j], ids_a[i], days[i])) if i.size else np.zeros(0, int)
    return NetworkPairs(
        first=ids_a[i][order], second=ids_a[j][order], date=days[i][order], north_south_km=dx[order],
        radius_km=radius[order], sigma_km=(slope_sigma / slope**2)[order], low_km=low[order], high_km=high[order],
        flagged=(bad_a[i] | bad_a[j])[order],
        selection=EVERY_PAIR if every else NEIGHBOUR_PAIRS,
    )


def pairs_summary(pairs: NetworkPairs) -> dict:
    """The robust summary of the unflagged pairs: their count, median and central 68 % of radii [km]."""
    good = pairs.radius_km[~pairs.flagged & np.isfinite(pairs.radius_km)]
    if good.size == 0:
        return {"count": 0, "median_km": None, "low_km": None, "high_km": None}
    low, mid, high = np.quantile(good, [0.158655, 0.5, 0.841345])
    return {"count": int(good.size), "median_km": float(mid), "low_km": float(low), "high_km": float(high)}


def partners_of(pairs: NetworkPairs) -> dict:
    """Each site's partners: id -> (count, median radius of its unflagged pairs [km] or None)."""
    ids = np.concatenate([pairs.first, pairs.second])
    radius = np.concatenate([pairs.radius_km, pairs.radius_km])
    good = ~np.concatenate([pairs.flagged, pairs.flagged]) & np.isfinite(radius)
    out: dict = {}
    if ids.size == 0:
        return out
    names, site_of = np.unique(ids, return_inverse=True)
    count = np.bincount(site_of, minlength=names.size)
    order = np.lexsort((radius, ~good, site_of))
    starts = np.searchsorted(site_of[order], np.arange(names.size))
    n_good = np.bincount(site_of, good, names.size).astype(int)
    for k, name in enumerate(names):
        if n_good[k] == 0:
            out[str(name)] = (int(count[k]), None)
            continue
        block = radius[order][starts[k]:starts[k] + n_good[k]]
        out[str(name)] = (int(count[k]), float(np.median(block)))
    return out
