"""The chi-square tail used by the scatter tests, against scipy.stats.chi2.sf (the reference)."""

from __future__ import annotations

import numpy as np
import pytest
from scipy.stats import chi2

from firstrung.uncertainty import chi2_survival


def test_chi2_survival_matches_scipy_over_a_wide_grid():
    rng = np.random.default_rng(0)
    dof = rng.integers(1, 400, 20_000)
    x = rng.uniform(0.0, 3.0, dof.size) * dof
    got, want = chi2_survival(x, dof), chi2.sf(x, dof)
    assert np.max(np.abs(got - want) / np.maximum(want, 1e-300)) < 1e-11


@pytest.mark.parametrize("dof", [1, 2, 3, 4, 7, 30])
def test_chi2_survival_at_the_five_percent_points(dof):
    # the 5 % upper points from scipy.stats.chi2.isf: the scatter tests' threshold
    assert chi2_survival(chi2.isf(0.05, dof), dof) == pytest.approx(0.05, rel=1e-12)
    assert chi2_survival(0.0, dof) == 1.0


def test_chi2_survival_refuses_no_degrees_of_freedom():
    with pytest.raises(ValueError):
        chi2_survival(1.0, 0)
