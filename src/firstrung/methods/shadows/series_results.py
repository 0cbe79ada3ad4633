"""One site on one day of the shadow reduction: its fitted latitude, culmination, clock and board, as a
result (:class:`SeriesResult`), from the series fit and the error terms of each series.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from firstrung.methods.shadows.forms import series_boards
from firstrung.uncertainty import Measured


def _group_sum(group, n, values):
    return np.bincount(group, weights=values, minlength=n)


@dataclass(frozen=True)
class SeriesResult:
    """One site on one day."""

    site_id: str
    date: str
    readings: int
    transit_utc: np.datetime64
    declination_deg: float
    latitude_deg: Measured
    culmination_altitude_deg: Measured
    zenith_distance_deg: Measured
    sun_side: str
    clock_offset_s: Measured
    apparent_noon_clock_utc: np.datetime64
    implied_longitude_deg: Measured
    chi2_per_dof: float | None
    budget_rad: dict
    board: object = None  # a timed trace's Board (orientation, handedness, tilt warning)


def _series_results(prep, fit, per_series, total, scale, chi2_dof):
    """Per series (site and day): the result with its budget, clock, implied longitude and board."""
    from firstrung import ephemeris

    n_groups = len(prep.group_site)
    site_lat = np.array([prep.sites[i].latitude_deg for i in prep.group_site])
    site_lon = np.array([prep.sites[i].longitude_deg for i in prep.group_site])
    site_elev = np.array([prep.sites[i].elevation_m for i in prep.group_site])
    transit = ephemeris.solar_transit(prep.group_date, site_lat, site_lon, site_elev)
    hour_angle_rate = _group_sum(prep.group, n_groups, prep.hour_angle_rate) / fit.count
    boards = series_boards(prep, fit.clock_correction_s, np.sqrt(fit.covariance[:, 1, 1]) * scale)
    out = []
    for g in range(n_groups):
        lat = float(np.degrees(fit.latitude_rad[g]))
        sig = float(np.degrees(total[g]))
        dec = float(transit.declination_deg[g])
        zenith = abs(lat - dec)
        offset = -float(fit.clock_correction_s[g])
        offset_sigma = float(np.sqrt(fit.covariance[g, 1, 1]) * scale[g])
        rate_deg_s = float(np.degrees(hour_angle_rate[g]))
        lon_implied = prep.sites[prep.group_site[g]].longitude_deg - rate_deg_s * offset
        noon_clock = transit.time_utc[g] + np.timedelta64(int(round(offset * 1e6)), "us")
        out.append(
            SeriesResult(
                site_id=prep.sites[prep.group_site[g]].id,
                date=str(prep.group_date[g]),
                readings=int(fit.count[g]),
                transit_utc=transit.time_utc[g],
                declination_deg=dec,
                latitude_deg=Measured(lat, sig, lat - sig, lat + sig, "deg"),
                culmination_altitude_deg=Measured(90.0 - zenith, sig, 90.0 - zenith - sig, 90.0 - zenith + sig, "deg"),
                zenith_distance_deg=Measured(zenith, sig, zenith - sig, zenith + sig, "deg"),
                sun_side="south" if lat > dec else "north",
                clock_offset_s=Measured(offset, offset_sigma, offset - offset_sigma, offset + offset_sigma, "s"),
                apparent_noon_clock_utc=noon_clock,
                implied_longitude_deg=Measured(
                    lon_implied, rate_deg_s * offset_sigma, lon_implied - rate_deg_s * offset_sigma,
                    lon_implied + rate_deg_s * offset_sigma, "deg",
                ),
                chi2_per_dof=None if not np.isfinite(chi2_dof[g]) else float(chi2_dof[g]),
                budget_rad={k: float(v[g]) for k, v in per_series.items()},
                board=boards.get(g),
            )
        )
    return out
