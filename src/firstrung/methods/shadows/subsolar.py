"""One site against the subsolar point: the Earth's radius from a single school's noon shadow.

On the day of a reading the Sun stands at the zenith where the geodetic
latitude equals its declination delta (the subsolar latitude). A site at
geodetic latitude phi that measures its astronomical latitude phi_a (from the
Sun's zenith distance at noon) is, in effect, one end of an Eratosthenes pair
whose other end is the subsolar point: the Earth's radius is the WGS84
meridian arc from delta to phi over the angle phi_a - delta. The declination
comes from DE421 at the site's own transit (see ``series_results``); the arc
from :func:`firstrung.geodesy.meridian_arc_m`.

Every site of every campaign gets this result (``sites[].subsolar_radius_km``);
a campaign with one site is reduced by it (the ``subsolar`` method). A site
less than :data:`~firstrung.methods.shadows.network_model.MIN_NORTH_SOUTH_KM`
from the subsolar latitude gets none: the angle is too small to read.
"""

from __future__ import annotations

import numpy as np

from firstrung.constants import IUGG_MEAN_RADIUS_KM
from firstrung.errors import ComputationError
from firstrung.geodesy import (
    mean_meridional_radius_km,
    meridian_arc_m,
    meridional_radius_of_curvature_km,
)
from firstrung.methods.shadows.inputs import POSITION_SIGMA_KM
from firstrung.methods.shadows.network_model import (
    MIN_NORTH_SOUTH_KM,
    NETWORK_CLOCK_SIGMA_S,
    NetworkFit,
)
from firstrung.uncertainty import Measured, budget_from_contributions

#: Why a site has no subsolar result.
NEAR_SUBSOLAR = "within 100 km of the subsolar latitude: the Sun's zenith distance is too small to give a radius"
WRONG_SIDE = "the reading puts the Sun on the other side of the zenith from the subsolar latitude"


def subsolar_slopes(site_latitude_deg, astronomical_latitude_deg, sigma_deg, declination_deg):
    """Per series: the arc to the subsolar point [km], and angle/arc with its sigma [rad/km].

    All arrays broadcast. The slope is 1/R; its sigma carries the latitude's
    error and the site's position error (:data:`POSITION_SIGMA_KM`).
    """
    phi = np.asarray(site_latitude_deg, float)
    dec = np.asarray(declination_deg, float)
    arc_km = (meridian_arc_m(phi) - meridian_arc_m(dec)) / 1000.0
    angle = np.radians(np.asarray(astronomical_latitude_deg, float) - dec)
    with np.errstate(divide="ignore", invalid="ignore"):
        slope = angle / arc_km
        sigma = np.hypot(np.radians(np.asarray(sigma_deg, float)), slope * POSITION_SIGMA_KM) / np.abs(arc_km)
    return arc_km, slope, sigma


def site_subsolar(sites) -> dict:
    """Each site's radius against the subsolar point: id -> (Measured or None, reason or None).

    A site observed on several days has one slope per day, combined by their
    weights before the reciprocal is taken.
    """
    ids, lat, phi_a, sig, dec = [], [], [], [], []
    for s in sites:
        for d in s.series:
            ids.append(s.id)
            lat.append(s.latitude_deg)
            phi_a.append(d.latitude_deg.value)
            sig.append(d.latitude_deg.sigma)
            dec.append(d.declination_deg)
    out: dict = {s.id: (None, NEAR_SUBSOLAR) for s in sites}
    if not ids:
        return out
    arc, slope, sigma = subsolar_slopes(np.array(lat), np.array(phi_a), np.array(sig), np.array(dec))
    far = np.abs(arc) >= MIN_NORTH_SOUTH_KM
    names, site_of = np.unique(np.array(ids, dtype=object).astype(str), return_inverse=True)
    w = np.where(far, 1.0 / np.where(far, sigma, 1.0) ** 2, 0.0)
    wsum = np.bincount(site_of, w, names.size)
    mean = np.bincount(site_of, w * np.where(far, slope, 0.0), names.size) / np.where(wsum > 0, wsum, 1.0)
    mean_sigma = 1.0 / np.sqrt(np.where(wsum > 0, wsum, 1.0))
    for k, name in enumerate(names):
        if wsum[k] <= 0:
            continue
        if mean[k] <= 0:
            out[name] = (None, WRONG_SIDE)
            continue
        out[name] = (_reciprocal(mean[k], mean_sigma[k]), None)
    return out


def _reciprocal(slope: float, sigma: float) -> Measured:
    """1/slope with the 68 % interval mapped (as ``uncertainty.reciprocal_of_gaussian``)."""
    from firstrung.uncertainty import reciprocal_of_gaussian

    return reciprocal_of_gaussian(1.0, float(slope), float(sigma), "km")


def subsolar_reduction(prep, series, site: int, contributions: dict, errors_stated: bool):
    """The one-site campaign: its radius against the subsolar point, as a shadow reduction.

    Parameters
    ----------
    prep, series
        The prepared readings and the per-day results of
        :mod:`~firstrung.methods.shadows.reduction`.
    site : int
        Index of the one site with readings.
    contributions : dict
        Each error source's one-sigma share of every site's latitude [rad].

    Returns
    -------
    (ShadowReduction, NetworkFit)
    """
    from firstrung.methods.shadows.reduction import ShadowReduction, SiteResult

    s = prep.sites[site]
    days = [d for d in series if d.site_id == s.id]
    phi_a = np.array([d.latitude_deg.value for d in days])
    sig = np.array([d.latitude_deg.sigma for d in days])
    dec = np.array([d.declination_deg for d in days])
    arc, slope, sigma = subsolar_slopes(s.latitude_deg, phi_a, sig, dec)
    if np.all(np.abs(arc) < MIN_NORTH_SOUTH_KM):
        raise ComputationError(f"one site ('{s.id}') {NEAR_SUBSOLAR}; a second site is needed")
    w = np.where(np.abs(arc) >= MIN_NORTH_SOUTH_KM, 1.0 / sigma**2, 0.0)
    k = float(np.sum(w * np.nan_to_num(slope)) / np.sum(w))
    if k <= 0:
        raise ComputationError(f"one site ('{s.id}'): {WRONG_SIDE}; check its edge, gnomon and coordinates")
    radius = _reciprocal(k, float(1.0 / np.sqrt(np.sum(w))))
    mean_arc = float(np.sum(w * np.abs(arc)) / np.sum(w))
    angle = k * mean_arc
    terms = {name: float(c[site]) * radius.value / angle for name, c in contributions.items()}
    terms["site positions"] = radius.value * POSITION_SIGMA_KM / mean_arc
    lat_sig = float(np.degrees(np.sqrt(sum(float(c[site]) ** 2 for c in contributions.values()))))
    lat_deg = float(np.sum(phi_a / sig**2) / np.sum(1.0 / sig**2))
    result = SiteResult(
        id=s.id, name=s.name, latitude_deg=s.latitude_deg, longitude_deg=s.longitude_deg,
        north_south_km=mean_arc, residual_arcmin=0.0, normalized_residual=0.0, outlier=False,
        astronomical_latitude_deg=Measured(lat_deg, lat_sig, lat_deg - lat_sig, lat_deg + lat_sig, "deg"),
        series=tuple(days),
    )
    expected = float(np.mean(mean_meridional_radius_km(np.full(dec.size, s.latitude_deg), dec)))
    reduction = ShadowReduction(
        earth_radius_km=radius,
        circumference_km=radius.scaled(2.0 * np.pi, "km"),
        expected_radius_km=expected,
        mean_radius_km=IUGG_MEAN_RADIUS_KM,
        meridional_radius_mid_km=float(meridional_radius_of_curvature_km(0.5 * (s.latitude_deg + float(np.mean(dec))))),
        sites=(result,),
        budget=budget_from_contributions(terms, "km"),
        outliers=(),
        readings_used=int(np.sum(prep.keep)),
        readings_left_out=dict(prep.left_out),
        chi2_per_dof=None,
        scatter_scale=1.0,
        assumptions=SUBSOLAR_ASSUMPTIONS + (
            "errors: as the site states them" if errors_stated else
            "errors: the defaults of a gnomon's reading (2 mm on the shadow, 1 mm on the height), since the "
            "rows state none and one site has no network to estimate them from",),
    )
    return reduction, NetworkFit("subsolar", False, None, (), {s.id: lat_sig})


SUBSOLAR_ASSUMPTIONS = (
    "one site: the Earth's radius against the subsolar point, the geodetic latitude equal to the Sun's "
    "declination that day (DE421 at the site's own transit), where the Sun stood at the zenith",
    "the WGS84 meridian arc from the subsolar latitude to the site's latitude, along the site's meridian",
    "the site's astronomical latitude from its reading(s): refraction by Bennett (1982) at standard conditions "
    "unless the log gives weather, the marked edge moved to the Sun's centre by the semi-diameter of the date",
    f"a single reading uses its logged time's hour angle, the clock taken as right to {NETWORK_CLOCK_SIGMA_S:g} s",
    "expected value: the WGS84 mean meridional radius of curvature between the subsolar latitude and the site's",
)
