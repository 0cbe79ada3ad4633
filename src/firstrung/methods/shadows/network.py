"""Open school networks: many sites with one reading each, fitted robustly, and a result for every site.

A network is what a coordinator gets on an equinox day: a row per school,
usually with no error stated, and the blunders any network has (a length in
the wrong unit, a local time logged as UTC, a latitude of the wrong sign).
:func:`reduce_network` is the shadow reduction for it:

1. each site's astronomical latitude from its readings, as in
   :mod:`~firstrung.methods.shadows.reduction` (one reading: the logged
   time's hour angle, with a clock known to :data:`NETWORK_CLOCK_SIGMA_S`);
2. a robust start for the line latitude = a + position / R: the median
   slope of pairs of sites half the network apart in position (a
   Theil-Sen estimate on n/2 pairs, so the cost grows with the sites, never
   with their square), and the median intercept;
3. sites further than :data:`CLIP_SIGMA` from the line are flagged as
   blunders and left out; the line is refitted on the others, and the two
   steps repeat until the flagged set stops changing;
4. errors: when every site states its own (a ``[site.gnomon]`` with its
   sigmas), the stated errors, with the scatter beyond them added only when
   it is significant; otherwise each site's error is the network's own
   scatter about the line, and the result says so.

One site alone gives its radius against the subsolar point
(:mod:`~firstrung.methods.shadows.subsolar`); that is the ``subsolar``
method, used when a campaign has a single site with readings.
"""

from __future__ import annotations

import numpy as np

from firstrung.constants import IUGG_MEAN_RADIUS_KM
from firstrung.errors import ComputationError
from firstrung.geodesy import meridional_radius_of_curvature_km
from firstrung.methods.shadows.fits import fit_line, fit_series, north_south_positions
from firstrung.methods.shadows.inputs import BaselineInput, ShadowReadings, SiteInput
from firstrung.methods.shadows.network_model import NETWORK_CLOCK_SIGMA_S, NetworkFit
from firstrung.methods.shadows.reduction import (
    ShadowReduction,
    SiteResult,
    _combine_sites,
    _prepare,
    _radius_from,
    _series_scatter_scale,
)
from firstrung.methods.shadows.series_results import SeriesResult, _series_results
from firstrung.methods.shadows.subsolar import subsolar_reduction
from firstrung.uncertainty import Measured

#: A site further than this many sigma from the network's line is flagged as a blunder (a 3.5
#: sigma cut leaves about one good site in 2000 out; common practice for robust clipping).
CLIP_SIGMA = 3.5
#: Scale from the median absolute deviation to a Gaussian sigma (1 / Phi^-1(3/4)).
MAD_TO_SIGMA = 1.482602218505602
#: Smallest one-sigma error a site's latitude is given when flagging [rad]: one arcsecond, far
#: below any noon reading, so that noise-free data flag nothing.
FLOOR_RAD = np.radians(1.0 / 3600.0)
#: Largest number of passes of flag-and-refit (it settles in two or three).
_PASSES = 20
#: Name of the error term estimated from the network's scatter.
SCATTER_TERM = "scatter of the sites about the line (errors from the network)"
EXTRA_SCATTER_TERM = "scatter between sites beyond the stated errors"


def _robust_start(x, y):
    """Slope and intercept of a robust line: the median slope of pairs half the sites apart, then the
    median intercept (Theil 1950, Sen 1968, on n/2 pairs)."""
    order = np.argsort(x, kind="stable")
    half = max(order.size // 2, 1)
    a, b = order[:-half] if order.size > 1 else order, order[half:]
    dx = x[b] - x[a]
    ok = np.abs(dx) > 1e-9
    slope = float(np.median((y[b] - y[a])[ok] / dx[ok])) if ok.any() else 1.0 / IUGG_MEAN_RADIUS_KM
    return slope, float(np.median(y - slope * x))


def _extra_variance(residual, variance, dof):
    """The common variance tau^2 to add so that chi2 = dof (Paule and Mandel 1982), 0 when not needed."""
    def chi2(t):
        return float(np.sum(residual**2 / np.maximum(variance + t, 1e-300)))

    if dof < 1 or chi2(0.0) <= dof:
        return 0.0
    low, high = 0.0, float(np.max(residual**2)) + 1e-30
    for _ in range(32):  # bisection: chi2 falls as tau^2 grows
        mid = 0.5 * (low + high)
        low, high = (mid, high) if chi2(mid) > dof else (low, mid)
    return 0.5 * (low + high)


def _clip(x, y, base, present, errors_from_scatter: bool):
    """Flag blunders and estimate the scatter: (kept mask, tau^2, per-site variance used, residuals).

    ``y`` is each site's astronomical minus its geodetic latitude [rad]: a
    line in the position for any Earth whose radius is off by a scale, and
    free of the WGS84 meridian's curvature, which a straight line of the
    astronomical latitudes would leave in the residuals (up to 0.1 deg over a
    network from 47 S to 62 N) and take for scatter. The same weights and
    sites give the radius's line, so its error is the error of this one.

    ``base`` is each site's variance before the scatter is added: every stated
    term, or (errors from the scatter) only the clock's, whose effect on the
    latitude depends on the Sun's place (large for one reading near the
    zenith); the common ``tau^2`` stands for the rest.
    """
    from firstrung.methods.shadows.reduction import _scatter_is_significant

    slope, intercept = _robust_start(x[present], y[present])
    r = y - (intercept + slope * x)
    mad = MAD_TO_SIGMA * float(np.median(np.abs(r[present] - np.median(r[present]))))
    tau2 = max(mad**2 - float(np.median(base[present])), 0.0) if errors_from_scatter else 0.0
    kept = present.copy()
    floor = FLOOR_RAD**2
    for _ in range(_PASSES):
        z = np.abs(r) / np.sqrt(np.maximum(base + tau2, floor))
        new = present & (z <= CLIP_SIGMA)
        if new.sum() < 2:
            new = present.copy()
        settled = np.array_equal(new, kept)
        kept = new
        line = fit_line(x[kept], y[kept], np.maximum(base[kept] + tau2, 1e-300))
        r = y - (line.intercept_rad + line.slope_rad_per_km * x)
        dof = int(kept.sum()) - 2
        chi2 = float(np.sum(r[kept] ** 2 / np.maximum(base[kept], 1e-300)))
        if dof >= 1 and (errors_from_scatter or _scatter_is_significant(chi2, dof)):
            tau2 = _extra_variance(r[kept], base[kept], dof)
        elif not errors_from_scatter:
            tau2 = 0.0
        if settled:
            break
    return kept, tau2, base + tau2, r


def reduce_network(
    sites: tuple[SiteInput, ...],
    readings: ShadowReadings,
    baselines: tuple[BaselineInput, ...] = (),
    *,
    errors_stated: bool = False,
    site_table: bool = True,
) -> tuple[ShadowReduction, NetworkFit]:
    """The Earth's radius from an open network (or from one site against the subsolar point).

    Parameters
    ----------
    sites, readings, baselines
        As :func:`~firstrung.methods.shadows.reduction.reduce_shadows` takes them.
    errors_stated : bool
        True when every site states its reading errors; else each site's
        error is estimated from the network's scatter.
    site_table : bool
        False leaves out the per-site results (``sites`` empty): the radius,
        its budget and the flagged sites are the same (calibration runs over
        many networks).

    Returns
    -------
    (ShadowReduction, NetworkFit)

    Raises
    ------
    ComputationError
        No site with a usable reading, or no north-south spread.
    """
    from firstrung.methods.shadows.untimed import at_apparent_noon

    readings, noon_sigma_rad = at_apparent_noon(sites, readings)
    prep = _prepare(tuple(sites), tuple(baselines), readings)
    lat_guess = np.radians(np.array([prep.sites[i].latitude_deg for i in prep.group_site]))
    fit = fit_series(prep.group, len(prep.group_site), prep.altitude_rad, prep.sigma_reading_rad,
                     prep.declination_rad, prep.hour_angle_rad, prep.declination_rate, prep.hour_angle_rate,
                     lat_guess, clock_prior_sigma_s=NETWORK_CLOCK_SIGMA_S)
    if fit.count.max() >= 4:
        chi2_dof, scale = _series_scatter_scale(fit)
    else:  # no series long enough to show its own scatter (what _series_scatter_scale gives then)
        chi2_dof, scale = np.full(fit.count.size, np.nan), np.ones(fit.count.size)
    present, latitude, contributions, per_series, total = _combine_sites(prep, fit, scale)
    if int(present.sum()) == 1:
        series = _series_results(prep, fit, per_series, total, scale, chi2_dof)
        return subsolar_reduction(prep, series, int(np.flatnonzero(present)[0]), contributions, errors_stated)
    if not present.any():
        raise ComputationError("no usable shadow reading")
    positions = north_south_positions(prep.sites, prep.baselines)
    x = positions.position_km
    clock = contributions.get("clock", np.zeros(len(prep.sites)))
    # a reading without a time: the error of its noon judged by eye (already in its stated reading error)
    noon = np.zeros(len(prep.sites))
    np.maximum.at(noon, np.asarray(readings.site_index, int), noon_sigma_rad)
    base = sum(c**2 for c in contributions.values()) if errors_stated else clock**2 + noon**2
    geodetic = np.radians(np.array([s.latitude_deg for s in prep.sites]))
    kept, tau2, variance, residual = _clip(x, latitude - geodetic, base, present, not errors_stated)
    if np.ptp(x[kept]) < 1.0:
        raise ComputationError("the sites are less than 1 km apart north-south; the method needs a north-south baseline")
    tau = np.full(len(prep.sites), np.sqrt(tau2))
    terms = {SCATTER_TERM: tau, "clock": clock} | ({"noon without a time": noon} if noon.any() else {}) if not errors_stated else dict(contributions) | (
        {EXTRA_SCATTER_TERM: tau} if tau2 > 0 else {})
    line, radius, budget, _, expected = _radius_from(prep, positions, latitude, terms, kept)
    flagged = present & ~kept
    sigma = np.sqrt(variance)
    # each day's latitude error: the network's when it comes from the scatter
    per_day = total if errors_stated else np.sqrt(tau2 + (per_series["clock"] if "clock" in per_series else 0.0) ** 2
                                                  + noon[prep.group_site] ** 2)
    by_site: dict[str, list[SeriesResult]] = {}
    for s in _series_results(prep, fit, per_series, per_day, scale, chi2_dof) if site_table else ():
        by_site.setdefault(s.site_id, []).append(s)
    results = []
    for i in np.flatnonzero(present) if site_table else ():
        s = prep.sites[i]
        lat_deg, sig_deg = float(np.degrees(latitude[i])), float(np.degrees(sigma[i]))
        results.append(SiteResult(
            id=s.id, name=s.name, latitude_deg=s.latitude_deg, longitude_deg=s.longitude_deg,
            north_south_km=float(x[i]),
            astronomical_latitude_deg=Measured(lat_deg, sig_deg, lat_deg - sig_deg, lat_deg + sig_deg, "deg"),
            residual_arcmin=float(np.degrees(residual[i]) * 60.0),
            normalized_residual=float(residual[i] / sigma[i]),
            outlier=bool(flagged[i]),
            series=tuple(by_site.get(s.id, ())),
        ))
    lat_kept = np.array([s.latitude_deg for s in prep.sites])[kept]
    mid = 0.5 * (lat_kept.min() + lat_kept.max())
    errors_line = ("errors: each site's from the network's own scatter about the line (the rows state none)"
                   if not errors_stated else "errors: as the sites state them, with the scatter beyond them "
                   "added when it is significant at 5 %")
    reduction = ShadowReduction(
        earth_radius_km=radius,
        circumference_km=radius.scaled(2.0 * np.pi, "km"),
        expected_radius_km=expected,
        mean_radius_km=IUGG_MEAN_RADIUS_KM,
        meridional_radius_mid_km=float(meridional_radius_of_curvature_km(mid)),
        sites=tuple(results),
        budget=budget,
        outliers=tuple(prep.sites[i].id for i in np.flatnonzero(flagged)),
        readings_used=int(np.sum(prep.keep)),
        readings_left_out=dict(prep.left_out),
        chi2_per_dof=None if line.dof <= 0 else line.chi2 / line.dof,
        scatter_scale=1.0,
        assumptions=NETWORK_ASSUMPTIONS + (errors_line,),
    )
    network = NetworkFit(
        method="network",
        errors_from_scatter=not errors_stated,
        scatter_deg=float(np.degrees(np.sqrt(tau2))),
        flagged=reduction.outliers,
        site_sigma_deg={prep.sites[i].id: float(np.degrees(sigma[i])) for i in np.flatnonzero(present)},
    )
    return reduction, network


NETWORK_ASSUMPTIONS = (
    "refraction: Bennett (1982) from the marked edge's apparent altitude; the log's temperature and "
    "pressure where given, else 10 C and 1010 hPa reduced to the site's elevation",
    "marked edge to the Sun's centre by the semi-diameter of the date (umbra edge = upper limb, "
    "outer edge = lower limb)",
    "declination and hour angle of the Sun from DE421 at each reading, topocentric; a single reading "
    f"uses its logged time's hour angle, the clock taken as right to {NETWORK_CLOCK_SIGMA_S:g} s (one sigma)",
    "positions along the meridian on WGS84, surveyed baselines replacing the map where given",
    f"robust line: median slope of pairs half the network apart, then sites more than {CLIP_SIGMA:g} sigma "
    "from the line flagged as blunders and left out, refitted until the flagged set settles",
    "expected value: the same fit on the sites' geodetic latitudes, i.e. the WGS84 meridional radius "
    "of curvature over the sites' span (not the 6371 km mean radius)",
)
