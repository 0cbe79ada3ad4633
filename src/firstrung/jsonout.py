"""Results as plain JSON-ready dictionaries (the design's contract keys), one module per job.

Numbers are rounded to digits well below their uncertainties so that the
same inputs give byte-identical output on every machine; times are ISO 8601
UTC ending in ``Z``.
"""

from __future__ import annotations

import json
import math

import numpy as np

from firstrung.uncertainty import Measured

#: Decimal places kept in JSON, by unit (far below any uncertainty here).
_DIGITS = {"km": 3, "deg": 6, "s": 2, "arcmin": 4}


def dumps(obj: dict) -> str:
    """Deterministic JSON text (keys in construction order, fixed separators, no NaN)."""
    return json.dumps(obj, ensure_ascii=False, indent=2, allow_nan=False)


def time_z(t) -> str:
    """ISO 8601 UTC rounded to the nearest second (half a second up), ending in Z.

    >>> time_z(np.datetime64("2025-09-07T18:11:49.6"))
    '2025-09-07T18:11:50Z'
    >>> time_z(np.datetime64("2025-09-07T18:11:49.4"))
    '2025-09-07T18:11:49Z'
    """
    us = np.datetime64(t, "us")
    return str((us + np.timedelta64(500_000, "us")).astype("datetime64[s]")) + "Z"


def quantity(m: Measured) -> dict:
    """A measured quantity in the contract form, rounded by unit."""
    return m.to_json(_DIGITS.get(m.unit, 6))


def number(x, digits=6):
    """A float rounded for JSON, or None when missing or not finite."""
    if x is None or not math.isfinite(x):
        return None
    return round(float(x), digits)


__all__ = ["dumps", "number", "quantity", "time_z"]
