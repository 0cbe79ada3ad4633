"""Figures of an open network: the map of its sites and the histogram of its pairs' radii.

Each figure is one drawing whatever the number of sites (a scatter, a
histogram), so the report's time grows with the sites, never with a subplot
per site.
"""

from __future__ import annotations

import numpy as np

from firstrung.figures import _plt
from firstrung.land import LAND


def network_map_figure(latitude_deg, longitude_deg, flagged):
    """The sites on a plain longitude-latitude map over the coarse land outline; flagged sites as crosses."""
    plt = _plt()
    lat = np.asarray(latitude_deg, float)
    lon = np.asarray(longitude_deg, float)
    bad = np.asarray(flagged, bool)
    fig, ax = plt.subplots(figsize=(7.0, 3.6))
    for poly in LAND.values():
        ax.fill(poly[:, 0], poly[:, 1], color="0.9", ec="0.55", lw=0.4, zorder=1)
    ax.plot(lon[~bad], lat[~bad], "o", ms=2.5, color="C0", zorder=3, label=f"sites ({int((~bad).sum())})")
    if bad.any():
        ax.plot(lon[bad], lat[bad], "x", ms=4, color="C3", zorder=4, label=f"flagged, left out ({int(bad.sum())})")
    pad = 8.0
    ax.set_xlim(max(-180.0, lon.min() - pad), min(180.0, lon.max() + pad))
    ax.set_ylim(max(-90.0, lat.min() - pad), min(90.0, lat.max() + pad))
    ax.set_aspect("equal")
    ax.set_xlabel("longitude (deg)")
    ax.set_ylabel("latitude (deg)")
    ax.set_title("The network's sites (coarse land outline drawn by hand)")
    ax.legend(fontsize=7, loc="lower left")
    fig.tight_layout()
    return fig


def pairs_histogram_figure(radius_km, flagged, network_km: float, expected_km: float):
    """Histogram of the pairs' radii (flagged pairs left out), with the network's and the expected radius."""
    plt = _plt()
    r = np.asarray(radius_km, float)
    good = r[~np.asarray(flagged, bool) & np.isfinite(r)]
    fig, ax = plt.subplots(figsize=(7.0, 3.0))
    if good.size:
        low, high = np.quantile(good, [0.02, 0.98])
        ax.hist(np.clip(good, low, high), bins=min(60, max(10, good.size // 20)), range=(low, high), color="C0",
                alpha=0.8, label=f"pairs ({good.size:,}; the 2 % at each end piled at the edges)")
    ax.axvline(network_km, color="C3", lw=1.5, label=f"network: {network_km:,.0f} km")
    ax.axvline(expected_km, color="0.3", lw=1, ls="--", label=f"WGS84 over the sites: {expected_km:,.0f} km")
    ax.set_xlabel("Earth's radius from one pair of sites (km)")
    ax.set_ylabel("pairs")
    ax.set_title("Every pair's own result")
    ax.legend(fontsize=7)
    fig.tight_layout()
    return fig
