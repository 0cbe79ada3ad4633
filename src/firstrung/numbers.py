"""Numbers rounded to what their uncertainty supports, in one style everywhere.

Thousands separated by commas (``6,396``); values of a million or more in powers of ten
(``2.3×10⁸``); a value with its 68 % interval rounded where the interval's half-width has
its second significant figure, and to two significant figures when the interval spans a
factor of two or more (a half-moon Sun distance is known to a factor, not to nine figures).
"""

from __future__ import annotations

import math

_SUPERSCRIPT = str.maketrans("-0123456789", "⁻⁰¹²³⁴⁵⁶⁷⁸⁹")


def _place(value: float, low: float | None, high: float | None) -> int:
    """The power of ten the value is rounded to."""
    spread = [abs(value - x) for x in (low, high) if x is not None and math.isfinite(x)]
    u = max(spread) if spread else 0.0
    wide = high is None or (low is not None and low > 0 and high / low >= 2.0)
    if wide or u <= 0:
        return math.floor(math.log10(abs(value))) - 1 if value else 0
    return math.floor(math.log10(u)) - 1


def _plain(x: float, place: int) -> str:
    decimals = max(0, -place)
    return f"{round(x, -place) if place > 0 else x:,.{decimals}f}"


def rounded(value: float, low: float | None = None, high: float | None = None, *,
            space: str = "") -> tuple[str, str]:
    """(value, 68 % interval) as text, rounded to what the interval supports.

    ``high`` None means no upper bound. ``space`` goes around the ``×`` of a power of ten
    (none in a terminal, where a space could wrap a number in two).

    >>> rounded(6396.2, 6363.1, 6429.8)
    ('6,396', '6,363 to 6,430')
    >>> rounded(233_339_694.0, 142_125_657.0, 630_801_588.0)
    ('2.3×10⁸', '1.4 to 6.3×10⁸')
    >>> rounded(1.5601, 0.9502, 4.2171)
    ('1.6', '0.95 to 4.2')
    >>> rounded(584.0, 357.0, None)
    ('580', '360 to no upper bound')
    """
    if value is None or not math.isfinite(value):
        return "not measured", ""
    place = _place(value, low, high)
    if abs(value) >= 1e6:
        exp = math.floor(math.log10(abs(value)))
        power = f"{space}×{space}10{str(exp).translate(_SUPERSCRIPT)}"
        digits = max(0, exp - place)

        def mant(x):
            return f"{x / 10**exp:.{digits}f}"
        hi = "no upper bound" if high is None else mant(high)
        interval = "" if low is None else f"{mant(low)} to {hi}{power if high is not None else ''}"
        if high is None and low is not None:
            interval = f"{mant(low)}{power} to no upper bound"
        return mant(value) + power, interval
    text = _plain(value, place)
    if low is None:
        return text, ""
    low_place = place if low == 0 or abs(low) >= 10**(place + 1) else math.floor(math.log10(abs(low))) - 1
    hi = "no upper bound" if high is None else _plain(high, place)
    return text, f"{_plain(low, min(place, low_place))} to {hi}"


def latitude_text(latitude_deg: float, decimals: int = 4) -> str:
    """A latitude for its hemisphere, never a signed number beside a letter.

    >>> latitude_text(-33.92487)
    '33.9249° S'
    >>> latitude_text(58.95)
    '58.9500° N'
    """
    return f"{abs(latitude_deg):.{decimals}f}° {'S' if latitude_deg < 0 else 'N'}"


def longitude_text(longitude_deg: float, decimals: int = 4) -> str:
    """A longitude for its hemisphere.

    >>> longitude_text(-77.0)
    '77.0000° W'
    """
    return f"{abs(longitude_deg):.{decimals}f}° {'W' if longitude_deg < 0 else 'E'}"


def row_ranges(rows) -> str:
    """Row numbers as ranges.

    >>> row_ranges([32, 33, 34, 40, 11])
    '11, 32-34, 40'
    """
    rows = sorted({int(r) for r in rows})
    out = []
    start = prev = None
    for r in rows + [None]:
        if r is not None and prev is not None and r == prev + 1:
            prev = r
            continue
        if start is not None:
            out.append(str(start) if start == prev else f"{start}-{prev}")
        start = prev = r
    return ", ".join(out)


def plural(n: int, word: str, many: str | None = None) -> str:
    """``n`` and the word, singular for one.

    >>> plural(1, "error"), plural(33, "error"), plural(2, "eclipse")
    ('1 error', '33 errors', '2 eclipses')
    """
    return f"{n:,} {word if n == 1 else (many or word + 's')}"


def median(values) -> float:
    """The median, the same number as ``numpy.median`` gives, without loading numpy's masked arrays for it.

    >>> median([3.0, 1.0, 2.0, 10.0])
    2.5
    """
    import numpy as np

    ordered = np.sort(np.asarray(values, dtype=float).ravel())
    n = ordered.size
    if n == 0 or np.isnan(ordered[-1]):  # numpy's own answer (NaN) and its warning
        return float(np.median(ordered))
    return float(ordered[(n - 1) // 2]) if n % 2 else float((ordered[n // 2 - 1] + ordered[n // 2]) / 2.0)


def quantiles(values, probabilities):
    """numpy.quantile's quantiles (its default, linear method) of finite values: the same numbers, bit
    for bit, without loading numpy's masked arrays for them (a command's start; a test compares the two).

    >>> [float(q) for q in quantiles([4.0, 1.0, 3.0, 2.0], [0.0, 0.25, 0.5, 1.0])]
    [1.0, 1.75, 2.5, 4.0]
    """
    import numpy as np

    ordered = np.sort(np.asarray(values, dtype=float).ravel())
    q = np.asarray(probabilities, dtype=float)
    n = ordered.size
    if n == 0 or np.isnan(ordered[-1]) or q.ndim != 1 or np.isnan(q).any():  # numpy's own answer
        return np.quantile(ordered, q)
    # numpy's steps: the virtual index (n - 1) q, its neighbours, and the interpolation between them
    # taken from the nearer end
    virtual = (n - 1) * q
    previous = np.floor(virtual)
    following = previous + 1
    above, below = virtual >= n - 1, virtual < 0
    previous[above] = following[above] = -1
    previous[below] = following[below] = 0
    previous, following = previous.astype(np.intp), following.astype(np.intp)
    gamma = virtual - previous
    low, high = ordered[previous], ordered[following]
    step = high - low
    out = low + step * gamma
    np.subtract(high, step * (1 - gamma), out=out, where=gamma >= 0.5)
    return out


__all__ = ["median", "quantiles", "plural", "latitude_text", "longitude_text", "rounded", "row_ranges"]
