"""One site on one day of the shadow reduction: its fitted latitude, culmination, clock and board, as a
result (:class:`SeriesResult`), from the series fit and the error terms of each series.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from firstrung.memory import no_cycle_collection
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
    # every number a column at a time; the loop below only gathers each series' values
    lat = np.degrees(fit.latitude_rad)
    sig = np.degrees(total)
    dec = np.asarray(transit.declination_deg, float)
    zenith = np.abs(lat - dec)
    offset = -np.asarray(fit.clock_correction_s, float)
    offset_sigma = np.sqrt(fit.covariance[:, 1, 1]) * scale
    rate_deg_s = np.degrees(hour_angle_rate)
    lon_implied = site_lon - rate_deg_s * offset
    lon_sigma = rate_deg_s * offset_sigma
    noon_clock = transit.time_utc + np.round(offset * 1e6).astype(np.int64).astype("timedelta64[us]")
    altitude = 90.0 - zenith
    # some 400,000 records and tuples for a million readings, none of them in a cycle
    with no_cycle_collection():
        chi2 = [None if not np.isfinite(c) else c for c in np.asarray(chi2_dof, float).tolist()]
        budget_names = list(per_series)
        budgets = list(zip(*(np.asarray(per_series[k], float).tolist() for k in budget_names), strict=True)) \
            if budget_names else [()] * n_groups
        ids = [prep.sites[i].id for i in prep.group_site.tolist()]
        dates = prep.group_date.astype(str).tolist()
        counts = [int(c) for c in np.asarray(fit.count).tolist()]
        transit_times, noon_times = list(transit.time_utc), list(noon_clock)
        columns = zip(lat.tolist(), sig.tolist(), dec.tolist(), zenith.tolist(), altitude.tolist(), offset.tolist(),
                      offset_sigma.tolist(), lon_implied.tolist(), lon_sigma.tolist(), strict=True)
        out = []
        for g, (la, sg, de, ze, al, of, ofs, lo, los) in enumerate(columns):
            out.append(SeriesResult(
                site_id=ids[g],
                date=dates[g],
                readings=counts[g],
                transit_utc=transit_times[g],
                declination_deg=de,
                latitude_deg=Measured(la, sg, la - sg, la + sg, "deg"),
                culmination_altitude_deg=Measured(al, sg, al - sg, al + sg, "deg"),
                zenith_distance_deg=Measured(ze, sg, ze - sg, ze + sg, "deg"),
                sun_side="south" if la > de else "north",
                clock_offset_s=Measured(of, ofs, of - ofs, of + ofs, "s"),
                apparent_noon_clock_utc=noon_times[g],
                implied_longitude_deg=Measured(lo, los, lo - los, lo + los, "deg"),
                chi2_per_dof=chi2[g],
                budget_rad=dict(zip(budget_names, budgets[g], strict=True)),
                board=boards.get(g),
            ))
    return out
