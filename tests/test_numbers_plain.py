"""firstrung.numbers' median and quantiles are numpy's own numbers, bit for bit (the outside reference is
numpy.median and numpy.quantile, which load numpy's masked arrays at a command's start; ours do not)."""

from __future__ import annotations

import subprocess
import sys

import numpy as np
import pytest

from firstrung.numbers import median, quantiles

PROBABILITIES = [0.158655, 0.5, 0.841345]  # the central 68 % and the median, as the pairs' summary asks


def _samples():
    rng = np.random.default_rng(18)
    for n in (1, 2, 3, 4, 5, 7, 10, 11, 100, 1001):
        yield rng.normal(6371.0, 40.0, n)
        yield np.round(rng.normal(6371.0, 40.0, n), 1)  # ties
        yield rng.uniform(-1e-3, 1e-3, n) * 10.0 ** rng.integers(-5, 6)
    yield np.array([5.0, 5.0, 5.0])
    yield np.array([-0.0, 0.0, 1.0, 1e300, -1e300])


@pytest.mark.parametrize("values", list(_samples()), ids=lambda v: f"n{v.size}")
def test_median_and_quantiles_are_numpys(values):
    assert median(values) == np.median(values)
    probabilities = np.concatenate([PROBABILITIES, [0.0, 1.0, 0.25, 0.75, 1 / 3, 0.999999]])
    ours, theirs = quantiles(values, probabilities), np.quantile(values, probabilities)
    assert ours.dtype == theirs.dtype and ours.shape == theirs.shape
    assert ours.tobytes() == theirs.tobytes()  # bit for bit, signs of zero included


def test_what_they_do_not_take_is_numpys_own_answer():
    assert np.isnan(quantiles(np.array([1.0, np.nan]), PROBABILITIES)).all()
    with pytest.raises(IndexError):
        quantiles(np.array([]), PROBABILITIES)  # numpy's own refusal of no values


def test_neither_loads_numpys_masked_arrays():
    code = ("import sys; from firstrung.numbers import median, quantiles; "
            "median([1.0, 2.0]); quantiles([1.0, 2.0, 3.0], [0.2, 0.5]); print('numpy.ma' in sys.modules)")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "False"
