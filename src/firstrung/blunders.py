"""The usual mistakes of a field log, injected into synthetic readings (for tests and rehearsals).

Each function takes the logged values and a selection of rows (a boolean
mask or row indices) and returns new arrays; nothing is changed in place.
The check (each method's ``check`` module) should report each with the code and
field given in the function's docstring. Mistakes of the campaign file (a
longitude's or latitude's sign) and of the edge convention are made by
simulating the true site or edge and logging the stated one:
:func:`mirrored` and :func:`other_edge` give those.
"""

from __future__ import annotations

import datetime as _dt
from zoneinfo import ZoneInfo

import numpy as np

__all__ = [
    "clock_shift",
    "duplicate",
    "length_unit",
    "local_time_as_utc",
    "mirrored",
    "other_edge",
    "wild_row",
]


def _mask(n: int, rows) -> np.ndarray:
    picked = np.asarray(rows)
    if picked.dtype == bool:
        return picked
    mask = np.zeros(n, bool)
    mask[picked] = True
    return mask


def clock_shift(time_utc, rows, hours: float) -> np.ndarray:
    """Logged times with a clock ``hours`` fast (negative: slow) on the chosen rows.

    The check reports ``time-shift-hours`` with ``hours = -hours`` (the shift
    that brings the logged times back to the Sun).

    >>> t = np.array(["2027-03-20T11:38"], dtype="datetime64[ms]")
    >>> str(clock_shift(t, [0], 1)[0])
    '2027-03-20T12:38:00.000'
    """
    t = np.asarray(time_utc, dtype="datetime64[ms]")
    step = np.timedelta64(int(round(hours * 3600e3)), "ms")
    return np.where(_mask(t.size, rows), t + step, t)


def local_time_as_utc(time_utc, rows, timezone: str) -> np.ndarray:
    """Logged "UTC" times that are really the local wall-clock times in ``timezone``.

    The check reports ``local-time-as-utc``. The zone's offset is taken per
    distinct day (at noon UTC), as a site's observer would see it.

    >>> t = np.array(["2027-06-21T10:38"], dtype="datetime64[ms]")
    >>> str(local_time_as_utc(t, [0], "Europe/Zurich")[0])
    '2027-06-21T12:38:00.000'
    """
    t = np.asarray(time_utc, dtype="datetime64[ms]")
    days = t.astype("datetime64[D]")
    zone = ZoneInfo(timezone)
    offsets = {}
    for day in np.unique(days):  # one per day
        noon = _dt.datetime.fromisoformat(str(day)).replace(hour=12, tzinfo=_dt.UTC)
        offsets[day] = int(zone.utcoffset(noon.astimezone(zone)).total_seconds() * 1000)
    shift = np.array([offsets[d] for d in days], dtype=np.int64).astype("timedelta64[ms]")
    return np.where(_mask(t.size, rows), t + shift, t)


def length_unit(shadow_m, rows, factor: float) -> np.ndarray:
    """Logged lengths ``factor`` times the true ones (10: millimetres in a centimetre column).

    The check reports ``length-unit`` with the same ``factor``.

    >>> length_unit(np.array([1.2, 1.3]), [1], 10.0).tolist()
    [1.2, 13.0]
    """
    length = np.asarray(shadow_m, float)
    return np.where(_mask(length.size, rows), length * factor, length)


def wild_row(shadow_m, index: int, rng: np.random.Generator, low: float = 0.05, high: float = 0.3) -> np.ndarray:
    """One row's length off by a random 5-30 % (a misread or mistyped value).

    The check reports ``outlier`` on that row.

    >>> x = wild_row(np.ones(3), 1, np.random.default_rng(1))
    >>> bool(x[0] == 1.0 and 0.05 <= abs(x[1] - 1.0) <= 0.3)
    True
    """
    length = np.array(shadow_m, float)
    size = rng.uniform(low, high) * rng.choice([-1.0, 1.0])
    length[index] *= 1.0 + size
    return length


def duplicate(n: int, index: int) -> np.ndarray:
    """Row indices that repeat row ``index`` right after itself (a row entered twice).

    Apply to every column; the check reports ``duplicate-row`` on the copy.

    >>> duplicate(3, 1).tolist()
    [0, 1, 1, 2]
    """
    order = np.arange(n)
    return np.insert(order, index + 1, index)


def mirrored(value_deg: float) -> float:
    """The coordinate with its sign flipped: simulate at the truth, log the mirrored value.

    >>> mirrored(7.4)
    -7.4
    """
    return -float(value_deg)


def other_edge(edge: str) -> str:
    """The shadow edge most easily confused with ``edge``: the sharp and the faint end swap.

    >>> other_edge("umbra"), other_edge("outer"), other_edge("middle")
    ('outer', 'umbra', 'umbra')
    """
    return {"umbra": "outer", "outer": "umbra", "middle": "umbra"}[edge]
