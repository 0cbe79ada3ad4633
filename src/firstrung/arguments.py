"""Small argument checks shared by the numeric modules."""

from __future__ import annotations

import numpy as np

from firstrung.errors import InputError


def checked(name: str, value, low: float, high: float, unit: str) -> np.ndarray:
    """``value`` as a float array, or InputError if any element is not finite in [low, high]."""
    try:
        array = np.asarray(value, dtype=float)
    except (TypeError, ValueError) as error:
        raise InputError(f"{name}: received {value!r}; expected a number [{unit}]") from error
    if array.size and np.isfinite(low) and np.isfinite(high) and array.min() >= low and array.max() <= high:
        return array  # every element finite and inside (a NaN fails both comparisons): no mask of the rows
    bad = ~np.isfinite(array) | (array < low) | (array > high)
    if np.any(bad):
        first = array[bad].flat[0] if array.ndim else array
        raise InputError(
            f"{name}: received {float(first)!r}; expected a finite value "
            f"from {low:g} to {high:g} [{unit}]"
        )
    return array


def scalar_or_array(array, *inputs):
    """A Python float when every input was a scalar, else the array."""
    if all(np.ndim(x) == 0 for x in inputs):
        return float(array)
    return np.asarray(array, dtype=float)
