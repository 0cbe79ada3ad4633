"""Each logged contact beside its transit and its prediction for the row's site (for the check and the run)."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from firstrung.methods.transit.prediction import (
    CONTACTS,
    SECONDS_PER_DAY,
    Transits,
    inferior_planet_transits,
    predicted_contacts_tt_jd,
    site_itrs_km,
)

#: A timing belongs to the transit whose greatest phase is within this of it [h].
ASSIGN_WINDOW_H = 12.0


@dataclass(frozen=True)
class RowPredictions:
    """Per row of a transit log: its transit, its site's vector and the four predicted contacts.

    ``transit`` is -1 where no transit is within 12 h; ``predicted_tt_jd`` (m, 4) holds the
    site's C1-C4 at DE421's distances (NaN where absent); ``observed_tt_jd`` the logged instant.
    """

    transits: Transits
    transit: np.ndarray
    contact: np.ndarray
    itrs_km: np.ndarray
    observed_tt_jd: np.ndarray
    predicted_tt_jd: np.ndarray

    def mismatch_s(self) -> np.ndarray:
        """Logged minus predicted time of the logged contact [s] (NaN without a prediction)."""
        chosen = self.predicted_tt_jd[np.arange(self.contact.size), np.clip(self.contact, 0, 3)]
        return (self.observed_tt_jd - chosen) * SECONDS_PER_DAY


def row_predictions(campaign, log) -> RowPredictions:
    """Assign each row to a transit and predict every contact at the row's site."""
    from firstrung.ephemeris.planets import tt_jd_of_utc

    sites = {s.id: s for s in campaign.sites}
    m = len(log)
    lat = np.array([sites[s].latitude_deg for s in log.site], dtype=float)
    lon = np.array([sites[s].longitude_deg for s in log.site], dtype=float)
    elev = np.array([sites[s].elevation_m for s in log.site], dtype=float)
    itrs = site_itrs_km(lat, lon, elev) if m else np.zeros((3, 0))
    t = np.asarray(log.time_utc, dtype="datetime64[us]")
    observed = tt_jd_of_utc(t) if m else np.zeros(0)
    contact = np.array([CONTACTS.index(e) for e in log.event], dtype=int)
    first = t.min() - np.timedelta64(2, "D")
    last = t.max() + np.timedelta64(2, "D")
    from firstrung.ephemeris import ephemeris_span_utc

    span = ephemeris_span_utc()
    first, last = max(first, span[0].astype("datetime64[us]")), min(last, span[1].astype("datetime64[us]"))
    transits = inferior_planet_transits(first, last)
    transit = np.full(m, -1)
    if len(transits):
        gap_d = np.abs(observed[:, None] - transits.greatest_tt_jd[None, :])
        nearest = np.argmin(gap_d, axis=1)
        transit = np.where(gap_d[np.arange(m), nearest] <= ASSIGN_WINDOW_H / 24.0, nearest, -1)
    predicted = np.full((m, 4), np.nan)
    ok = transit >= 0
    if np.any(ok):
        rows = np.flatnonzero(ok)
        k = np.repeat(transit[rows], 4)
        c = np.tile(np.arange(4), rows.size)
        predicted[rows] = predicted_contacts_tt_jd(transits, k, c, itrs[:, np.repeat(rows, 4)]).reshape(-1, 4)
    return RowPredictions(transits, transit, contact, itrs, observed, predicted)
