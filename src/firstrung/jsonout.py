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


#: Pieces of JSON text gathered before each write of :func:`write_json`.
_PIECES_PER_WRITE = 16384


def write_json(obj: dict, stream) -> None:
    """``dumps(obj)`` and a line feed written to ``stream`` as it is made, never held as one text.

    The same encoder and settings as :func:`dumps`, so the same characters; a result with millions
    of rows (``reduce shadows --json`` lists every pair of sites) is written in bounded memory,
    above all with its long arrays as :class:`JsonRows`.
    """
    encoder = json.JSONEncoder(ensure_ascii=False, indent=2, allow_nan=False)
    pieces: list[str] = []
    for piece in encoder.iterencode(obj):
        pieces.append(piece)
        if len(pieces) >= _PIECES_PER_WRITE:
            stream.write("".join(pieces))
            pieces.clear()
    pieces.append("\n")
    stream.write("".join(pieces))


class JsonRows(list):
    """A JSON array whose rows are made one at a time as it is written (:func:`write_json`).

    For writing only: it has a length and can be iterated (each time anew); nothing is stored.

    >>> rows = JsonRows(3, lambda: ({"k": k} for k in range(3)))
    >>> len(rows), [r["k"] for r in rows], dumps({"a": rows}) == dumps({"a": [{"k": 0}, {"k": 1}, {"k": 2}]})
    (3, [0, 1, 2], True)
    """

    def __init__(self, count: int, make) -> None:
        super().__init__()
        self._count, self._make = count, make

    def __len__(self) -> int:
        return self._count

    def __bool__(self) -> bool:
        return self._count > 0

    def __iter__(self):
        return iter(self._make())

    def __getitem__(self, k):
        return list(self)[k]

    def __eq__(self, other) -> bool:
        return list(self) == other

    __hash__ = None


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


__all__ = ["JsonRows", "dumps", "number", "quantity", "time_z", "write_json"]
