"""What a transit campaign can reach before anyone observes: the expected precision of the solar
parallax from a set of sites and stated errors, and the coverage of its 68 % interval in
simulated campaigns.

A :class:`ContactDesign` holds every contact a set of sites can time (the Sun's centre at least
``min_sun_deg`` high), predicted from the ephemeris at three parallax scales; between them each
contact is a quadratic in the scale (exact to well under a millisecond within 5 % of DE421's
distances, where the curvature term itself is a few milliseconds), so thousands of campaigns
are reduced without solving the contacts again. The reduction is :func:`reduce_transit_contacts`
itself, given the design's predictions.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from firstrung.methods.transit.prediction import (
    CONTACTS,
    SECONDS_PER_DAY,
    Transits,
    contacts_at_sites,
    predicted_contacts_tt_jd,
    site_itrs_km,
)
from firstrung.methods.transit.reduction import TransitReduction, reduce_transit_contacts

#: A site times a contact only with the Sun's centre this high [deg] (as the rehearsal logs do).
MIN_SUN_DEG = 5.0
#: The scale steps the quadratic in the parallax scale is fitted through [1].
_STEP = 0.02


@dataclass(frozen=True)
class ContactDesign:
    """The contacts a set of sites can time in one transit, and their predictions.

    Attributes
    ----------
    transit, contact, site : numpy.ndarray of int, shape (m,)
        Each row's transit (always 0 here), contact (0-3 for C1-C4) and site (index into the
        sites given).
    predicted_s : numpy.ndarray, shape (3, m)
        Each row's contact at scales 1 - step, 1 and 1 + step [s from ``origin_tt_jd``].
    origin_tt_jd : float
    planet : str
    """

    transit: np.ndarray
    contact: np.ndarray
    site: np.ndarray
    predicted_s: np.ndarray
    origin_tt_jd: float
    planet: str

    @property
    def sites(self) -> int:
        """How many sites time at least one contact."""
        return int(np.unique(self.site).size)

    def predict(self, scale: float) -> tuple[np.ndarray, np.ndarray]:
        """Each row's contact [s] and its rate with the scale [s per unit scale], at ``scale``."""
        lo, mid, hi = self.predicted_s
        x = (scale - 1.0) / _STEP
        slope = (hi - lo) / 2.0
        curve = (hi - 2.0 * mid + lo) / 2.0
        return mid + slope * x + curve * x**2, (slope + 2.0 * curve * x) / _STEP


def contact_design(transits: Transits, k: int, latitude_deg, longitude_deg, elevation_m=0.0, *,
                   contacts=CONTACTS, min_sun_deg: float = MIN_SUN_DEG) -> ContactDesign:
    """Every contact of transit ``k`` that each site sees with the Sun at least ``min_sun_deg`` high.

    Parameters
    ----------
    transits : Transits
    k : int
        Which transit.
    latitude_deg, longitude_deg, elevation_m : array_like, shape (n,)
        The sites [deg, deg, m].
    contacts : iterable of str
        Which of C1-C4 the observers time.
    min_sun_deg : float
        Least altitude of the Sun's centre for a timing [deg].
    """
    lat, lon, elev = np.broadcast_arrays(*(np.asarray(v, dtype=float).reshape(-1)
                                           for v in (latitude_deg, longitude_deg, elevation_m)))
    view = contacts_at_sites(transits, k, lat, lon, elev)
    site, contact = [], []
    for c in contacts:
        ok = np.flatnonzero(np.isfinite(view.tt_jd[c]) & (view.sun_altitude_deg[c] >= min_sun_deg))
        site.append(ok)
        contact.append(np.full(ok.size, CONTACTS.index(c)))
    site_i, contact_i = np.concatenate(site), np.concatenate(contact)
    order = np.lexsort((contact_i, site_i))
    site_i, contact_i = site_i[order], contact_i[order]
    transit_i = np.full(site_i.size, k)
    itrs = site_itrs_km(lat[site_i], lon[site_i], elev[site_i])
    origin = float(np.nanmin(transits.contacts_tt_jd["C1"][k])) if site_i.size else 0.0
    predicted = np.stack([(predicted_contacts_tt_jd(transits, transit_i, contact_i, itrs, 1.0 + d) - origin)
                          * SECONDS_PER_DAY for d in (-_STEP, 0.0, _STEP)])
    return ContactDesign(np.zeros(site_i.size, dtype=int), contact_i, site_i, predicted, origin,
                         transits.planet[k])


def reduce_design(design: ContactDesign, observed_s: np.ndarray, time_sigma_s: float,
                  black_drop_sigma_s: float, *, fit_clocks: bool = True, **options) -> TransitReduction:
    """Reduce one campaign's timings of a design (the same reduction as ``reduce transit``)."""
    m = design.site.size
    return reduce_transit_contacts(design.predict, observed_s, design.transit, design.contact,
                                   design.site.astype(object), np.full(m, float(time_sigma_s)),
                                   np.full(m, float(black_drop_sigma_s)), fit_clocks=fit_clocks, **options)


def expected_precision(design: ContactDesign, time_sigma_s: float, black_drop_sigma_s: float, *,
                       fit_clocks: bool = True, **options) -> TransitReduction:
    """The reduction of noise-free timings: its sigma and budget are what the design can reach.

    The fit is linear in the timings, so its sigma does not depend on the timing errors drawn.
    """
    _, mid, _ = design.predicted_s
    return reduce_design(design, mid, time_sigma_s, black_drop_sigma_s, fit_clocks=fit_clocks, **options)


@dataclass(frozen=True)
class Coverage:
    """How often the 68 % interval held the truth over simulated campaigns."""

    campaigns: int
    inside: int
    median_sigma: float  # of the parallax scale, relative [1]
    rms_error: float  # of the fitted scale about the truth [1]
    rejected: int  # contacts rejected as wild over all campaigns

    @property
    def fraction(self) -> float:
        return self.inside / self.campaigns

    @property
    def binomial_sigma(self) -> float:
        """One sigma of the fraction for an honest 68 % interval [1]."""
        return math.sqrt(0.6827 * (1 - 0.6827) / self.campaigns)


def simulate_coverage(design: ContactDesign, campaigns: int, seed: int, *, time_sigma_s: float = 5.0,
                      black_drop_sigma_s: float = 0.0, black_drop_mean_s: float = 0.0,
                      clock_sigma_s: float = 0.0, truth_scale: float = 1.0, fit_clocks: bool = True,
                      **options) -> Coverage:
    """Simulate ``campaigns`` campaigns of the design and count how often the interval holds the truth.

    Each timing is the contact at ``truth_scale`` plus a Gaussian error of ``time_sigma_s``;
    internal contacts (C2, C3) gain a black drop (C2 late, C3 early) of
    ``black_drop_mean_s`` plus a scatter of ``black_drop_sigma_s`` per site; each site's clock is
    off by a draw of ``clock_sigma_s`` shared by its contacts. The reduction is told the timing
    error and the black drop's scatter as stated.
    """
    rng = np.random.default_rng(seed)
    truth, _ = design.predict(truth_scale)
    n_sites = int(design.site.max()) + 1 if design.site.size else 0
    sign = np.select([design.contact == 1, design.contact == 2], [1.0, -1.0], 0.0)
    inside = rejected = 0
    errors, sigmas = [], []
    for _ in range(campaigns):
        drop = black_drop_mean_s + rng.normal(0.0, black_drop_sigma_s, n_sites) if black_drop_sigma_s else \
            np.full(n_sites, black_drop_mean_s)
        clock = rng.normal(0.0, clock_sigma_s, n_sites) if clock_sigma_s else np.zeros(n_sites)
        observed = (truth + rng.normal(0.0, time_sigma_s, truth.size) + sign * drop[design.site]
                    + clock[design.site])
        r = reduce_design(design, observed, time_sigma_s, black_drop_sigma_s, fit_clocks=fit_clocks, **options)
        f = r.parallax_scale
        inside += abs(f.value - truth_scale) <= f.sigma
        rejected += int((~r.used).sum())
        errors.append(f.value / truth_scale - 1.0)
        sigmas.append(f.sigma / truth_scale)
    return Coverage(campaigns, inside, float(np.median(sigmas)), float(np.sqrt(np.mean(np.square(errors)))),
                    rejected)


__all__ = ["ContactDesign", "Coverage", "contact_design", "expected_precision", "reduce_design",
           "simulate_coverage"]
