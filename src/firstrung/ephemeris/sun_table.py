"""The geocentric apparent Sun and GAST at every hour of 2026-2035 (TT), computed once from DE421.

A long plan interpolates the Sun on an hourly grid (:func:`firstrung.ephemeris.sun._sun_grid`);
computing a year of its nodes costs a command about 0.3 s of CPU. The nodes of these years are
computed once (``python -m firstrung.ephemeris.sun`` writes the file again, :func:`write_table`),
with the same skyfield calls on the same TT instants, and shipped in ``data/``. Each node's value
depends only on its instant (a test computes random stretches again and finds every bit the same),
so a grid read from the table is the grid computed: :func:`grid_nodes` serves it only when every
instant asked for is a node of the table to the last bit, and otherwise the grid is computed.

Rows of the table: x, y, z [km] of the Sun in the true equator and equinox of date, and GAST [rad]
in [0, 2 pi) (not unwrapped), one column an hour from :data:`FIRST_TT_JD`.
"""

from __future__ import annotations

import functools
import os

import numpy as np

#: First node: 2025-12-31 12:00 TT (a grid's days start at a whole Julian date, see _geocentric_sun).
FIRST_TT_JD = 2461041.0
#: Days the table covers from its first node (to 2036-01-02 12:00 TT), 24 nodes a day and a last one.
DAYS = 3_654
#: Nodes a day (the grid's step of one hour).
PER_DAY = 24
#: The package's data folder, where the tables computed once are kept.
DATA_FOLDER = os.path.join(os.path.dirname(os.path.dirname(os.path.abspath(__file__))), "data")
#: The file, in the package's data folder.
FILE = os.path.join(DATA_FOLDER, "sun_hourly_2026_2035.npy")


def kept_table(path: str, mapped: bool = False) -> np.ndarray | None:
    """A table computed once and kept in the package (this one, the seasons'), or None without its file
    (the caller then computes what it needs); ``mapped``: only the parts read are loaded."""
    try:
        return np.load(path, mmap_mode="r" if mapped else None)
    except OSError:
        return None


def node_times(first: int, count: int, step_days: float) -> np.ndarray:
    """TT Julian dates of the nodes ``first`` to ``first + count - 1`` of the table: each the start of
    its day plus its hours, the same arithmetic a grid starting on any whole day gives that instant."""
    index = np.arange(first, first + count)
    return (FIRST_TT_JD + index // PER_DAY) + step_days * (index % PER_DAY)


@functools.lru_cache(maxsize=1)
def _table() -> np.ndarray | None:
    """The table, mapped from its file (only the columns read are loaded), or None without the file."""
    table = kept_table(FILE, mapped=True)
    return table if table is not None and table.shape == (4, DAYS * PER_DAY + 1) and table.dtype == np.float64 else None


def covers(start_tt_jd: float, nodes: int, step_days: float) -> bool:
    """Whether a grid of ``nodes`` from ``start_tt_jd`` (a whole Julian date) at ``step_days`` is read
    from the table rather than computed (then the grid costs no Sun computation however few the
    times it serves)."""
    if step_days != 1.0 / PER_DAY or _table() is None:
        return False
    first = (start_tt_jd - FIRST_TT_JD) * PER_DAY
    return first >= 0 and first + nodes <= DAYS * PER_DAY + 1


def grid_nodes(tt: np.ndarray, step_days: float):
    """(xyz_km (3, n), gast_rad (n,)) at the TT instants ``tt`` from the table, or None when the table
    does not hold every one of them bit for bit (a step other than an hour, an instant outside
    2026-2035 or between its nodes)."""
    table = _table()
    if table is None or tt.size == 0 or step_days != 1.0 / PER_DAY:
        return None
    first = int(np.rint((tt[0] - FIRST_TT_JD) * PER_DAY))
    if first < 0 or first + tt.size > table.shape[1]:
        return None
    if not np.array_equal(node_times(first, tt.size, step_days), tt):
        return None
    values = np.array(table[:, first:first + tt.size])
    return values[:3], values[3]
