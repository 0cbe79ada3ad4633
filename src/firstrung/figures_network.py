"""Figures of an open network: the map of its sites and the histogram of its pairs' radii.

Each figure is one drawing whatever the number of sites (a scatter, a
histogram), so the report's time grows with the sites, never with a subplot
per site.
"""

from __future__ import annotations

import numpy as np

from firstrung.figures import _plt

#: A map wider than this in longitude draws the crude coastlines, a narrower one the low-resolution ones [deg].
CRUDE_WIDER_THAN_DEG = 90.0
#: Margin of the map around the sites [deg].
MAP_PAD_DEG = 8.0
#: Islands and lakes smaller than this share of the map's area are not drawn (less than a point at print size).
SMALLEST_SHOWN = 1e-5
#: A sphere's radius for the map's area, only to weigh the islands left out [km] (the IUGG mean radius).
EARTH_RADIUS_FOR_AREAS_KM = 6371.0


def map_extent(latitude_deg, longitude_deg, pad_deg: float = MAP_PAD_DEG):
    """The map's (west, east, south, north) [deg]: the sites with a margin, within the globe."""
    lat = np.asarray(latitude_deg, float)
    lon = np.asarray(longitude_deg, float)
    return (max(-180.0, lon.min() - pad_deg), min(180.0, lon.max() + pad_deg),
            max(-90.0, lat.min() - pad_deg), min(90.0, lat.max() + pad_deg))


def coastlines_in(extent, resolution: str):
    """The coastline polygons that reach into ``extent``, grouped by GSHHG level, lowest level first.

    Polygons smaller than :data:`SMALLEST_SHOWN` of the map's area are left out: a dot of a pixel
    or two at print size, but half the drawing's size on a regional map.
    """
    from firstrung.land import coastline_polygons

    west, east, south, north = extent
    map_km2 = (np.radians(east - west) * abs(np.sin(np.radians(north)) - np.sin(np.radians(south)))
               * EARTH_RADIUS_FOR_AREAS_KM**2)
    levels: dict[int, list] = {}
    for level, area_km2, xy in coastline_polygons(resolution):
        if area_km2 < SMALLEST_SHOWN * map_km2:
            continue
        x, y = xy[:, 0], xy[:, 1]
        if x.max() < west or x.min() > east or y.max() < south or y.min() > north:
            continue
        levels.setdefault(level, []).append(xy)
    return dict(sorted(levels.items()))


def network_map_figure(latitude_deg, longitude_deg, flagged):
    """The sites on a plain longitude-latitude map over GSHHG's coastlines (see :mod:`firstrung.land`):
    land grey, seas and lakes white; flagged sites as red crosses."""
    from matplotlib.collections import PolyCollection

    from firstrung.land import LAND_LEVELS, LAND_SOURCE

    plt = _plt()
    lat = np.asarray(latitude_deg, float)
    lon = np.asarray(longitude_deg, float)
    bad = np.asarray(flagged, bool)
    extent = map_extent(lat, lon)
    resolution = "c" if extent[1] - extent[0] > CRUDE_WIDER_THAN_DEG else "l"
    fig, ax = plt.subplots(figsize=(7.0, 3.9))
    ax.set_facecolor("white")
    for k, (level, polygons) in enumerate(coastlines_in(extent, resolution).items()):
        land = level in LAND_LEVELS
        ax.add_collection(PolyCollection(polygons, closed=True, facecolors="0.88" if land else "white",
                                         edgecolors="0.5", linewidths=0.35, zorder=1 + 0.1 * k))
    ax.plot(lon[~bad], lat[~bad], "o", ms=2.5, color="C0", zorder=3, label=f"sites ({int((~bad).sum())})")
    if bad.any():
        ax.plot(lon[bad], lat[bad], "x", ms=4, color="C3", zorder=4, label=f"not used ({int(bad.sum())})")
    ax.set_xlim(extent[0], extent[1])
    ax.set_ylim(extent[2], extent[3])
    ax.set_aspect("equal")
    ax.set_xlabel("longitude (deg)")
    ax.set_ylabel("latitude (deg)")
    ax.set_title("The network's sites")
    ax.legend(fontsize=7, loc="lower left", framealpha=0.9)
    ax.annotate(LAND_SOURCE[0].upper() + LAND_SOURCE[1:], xy=(0.0, 0.0), xycoords="axes fraction",
                xytext=(0.0, -30.0), textcoords="offset points", fontsize=6, color="0.35", ha="left", va="top")
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
