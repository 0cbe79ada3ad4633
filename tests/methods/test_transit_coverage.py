"""The transit reduction's 68 % interval holds the truth 60-76 % of the time over simulated
campaigns (600 each here; notes/transit_coverage.md runs 1,000 per scenario), and the expected
precision of a design is the reduction's own sigma.

Truth: the contacts DE421 predicts for each site at a chosen parallax scale (the ephemeris is
the outside reference for positions; its contacts are checked against published values and an
independent skyfield computation in test_transit_prediction.py).
"""

from __future__ import annotations

import numpy as np
import pytest

from firstrung.methods.transit.precision import (
    contact_design,
    expected_precision,
    simulate_coverage,
)
from firstrung.methods.transit.prediction import (
    SECONDS_PER_DAY,
    inferior_planet_transits,
    predicted_contacts_tt_jd,
    site_itrs_km,
)

#: Six sites that see all of the 2012 transit of Venus (as in test_transit_reduction.py).
VENUS_2012 = np.array([[64.8, -147.7, 150.0], [13.4, 144.8, 10.0], [-33.9, 151.2, 50.0],
                       [35.7, 139.7, 40.0], [14.6, 121.0, 10.0], [22.3, 114.2, 30.0]])
#: Six sites from Helsinki to Cape Town for the 2032 transit of Mercury (our own plan).
MERCURY_2032 = np.array([[60.2, 24.9, 0.0], [41.9, 12.5, 0.0], [30.0, 31.2, 0.0], [-1.3, 36.8, 0.0],
                         [-20.2, 57.5, 0.0], [-33.9, 18.4, 0.0]])
CAMPAIGNS = 600


@pytest.fixture(scope="module")
def designs():
    venus = inferior_planet_transits("2012-06-05T00:00Z", "2012-06-06T23:00Z")
    mercury = inferior_planet_transits("2032-11-13T00:00Z", "2032-11-13T23:59Z")
    return {"venus": (venus, contact_design(venus, 0, *VENUS_2012.T)),
            "mercury": (mercury, contact_design(mercury, 0, *MERCURY_2032.T))}


def _in_band(c):
    # an honest 68 % interval: 60-76 % (the project's band; one binomial sigma at 600 is 1.9 %)
    assert 0.60 <= c.fraction <= 0.76, c
    # and the stated sigma is the scatter: rms error within 12 % of the median sigma
    assert abs(c.rms_error / c.median_sigma - 1) < 0.12, c


def test_venus_2012_five_second_timings_cover_the_truth(designs):
    _, design = designs["venus"]
    assert design.site.size == 24 and design.sites == 6  # every site times all four contacts
    c = simulate_coverage(design, CAMPAIGNS, 1, time_sigma_s=5.0)
    _in_band(c)
    assert c.median_sigma < 0.01  # Venus's large parallax: under 1 % from six sites at 5 s


def test_mercury_2032_with_shared_black_drops_and_clocks_covers_the_truth(designs):
    """One drop per instrument shared by its C2 (late) and C3 (early), a 30 s clock error per site
    (fitted), a true parallax 3 % above DE421's."""
    _, design = designs["mercury"]
    c = simulate_coverage(design, CAMPAIGNS, 3, time_sigma_s=5.0, black_drop_mean_s=2.0, black_drop_sigma_s=3.0,
                          clock_sigma_s=30.0, fit_clocks=True, truth_scale=1.03)
    _in_band(c)


def test_a_shared_drop_modelled_as_independent_would_understate_the_error(designs):
    """The black drop of one instrument moves its C2 and C3 apart: the duration carries twice the
    drop, so with clocks fitted the sigma must grow beyond the independent-contacts value."""
    _, design = designs["mercury"]
    with_drop = expected_precision(design, 5.0, 3.0, fit_clocks=True).parallax_scale.sigma
    each_its_own = np.arange(design.site.size).astype(object)  # every contact its own instrument
    independent = expected_precision(design, 5.0, 3.0, fit_clocks=True, instrument=each_its_own).parallax_scale.sigma
    assert with_drop > 1.03 * independent  # 4.8 % larger for these six sites


def test_the_design_predicts_the_ephemeris_contacts(designs):
    transits, design = designs["mercury"]
    sites = MERCURY_2032[design.site]
    itrs = site_itrs_km(sites[:, 0], sites[:, 1], sites[:, 2])
    for scale in (0.96, 1.0, 1.05):
        exact = (predicted_contacts_tt_jd(transits, design.transit, design.contact, itrs, scale)
                 - design.origin_tt_jd) * SECONDS_PER_DAY
        assert np.max(np.abs(design.predict(scale)[0] - exact)) < 0.005  # seconds


def test_expected_precision_of_the_2032_networks(designs):
    """The closing note's figures: six sites at 5 s with a time signal, the budget led by timing."""
    _, design = designs["mercury"]
    r = expected_precision(design, 5.0, 3.0, fit_clocks=False)
    rel = r.solar_parallax_arcsec.sigma / r.solar_parallax_arcsec.value
    assert 0.04 < rel < 0.08
    budget = {b.source: b.sigma for b in r.budget}
    assert max(budget, key=budget.get) == "timing (stated errors)"
    # timing to 1 s shrinks it about five times: the timing error is the limit
    r1 = expected_precision(design, 1.0, 3.0, fit_clocks=False)
    assert r1.solar_parallax_arcsec.sigma < 0.35 * r.solar_parallax_arcsec.sigma
