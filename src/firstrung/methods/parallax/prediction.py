"""What planning a parallax campaign needs: each date's parallax displacement of a star and
whether the star is well placed in a dark sky at the campaign's sites (vectorised over
dates, hours and sites)."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

#: The Sun this far below the horizon makes the sky dark enough for astrometry [deg]
#: (nautical twilight's end; common practice for bright targets).
DARK_SUN_DEG = -12.0
#: The star this high is well placed (airmass below 2) [deg] (common practice).
GOOD_ALTITUDE_DEG = 30.0
#: Sampling of each night [min].
NIGHT_STEP_MIN = 20


@dataclass(frozen=True)
class NightView:
    """For each date (rows) and site (columns): hours the star is well placed in a dark sky, and
    its highest altitude then [deg] (NaN when never) and when [UTC] (NaT when never)."""

    dark_hours: np.ndarray
    best_altitude_deg: np.ndarray
    best_time_utc: np.ndarray


def dark_hours_up(ra_deg: float, dec_deg: float, dates, sites) -> NightView:
    """Hours each date that the star stands above 30 deg with the Sun below -12 deg, per site.

    Each date is the night that starts at the site's local noon of that date (by its longitude).
    """
    from firstrung.ephemeris import sun_position
    from firstrung.ephemeris.stars import star_altitude_deg

    dates = np.asarray(dates, dtype="datetime64[D]")
    n_sites = len(sites)
    if n_sites == 0 or dates.size == 0:
        empty = np.zeros((dates.size, n_sites))
        return NightView(empty, np.full_like(empty, np.nan), np.full(empty.shape, np.datetime64("NaT", "ms")))
    lat = np.array([s.latitude_deg for s in sites], dtype=float)
    lon = np.array([s.longitude_deg for s in sites], dtype=float)
    elev = np.array([s.elevation_m for s in sites], dtype=float)
    steps = np.arange(0, 24 * 60, NIGHT_STEP_MIN)
    hours_ms = (steps * 60_000).astype("timedelta64[ms]")
    noon_utc = (dates.astype("datetime64[ms]")[:, None] + np.timedelta64(12 * 3600_000, "ms")
                - (np.round(lon / 15.0 * 3600_000)).astype("timedelta64[ms]")[None, :])  # (days, sites)
    t = noon_utc[:, :, None] + hours_ms[None, None, :]  # (days, sites, steps)
    flat_t = t.reshape(-1)
    site_of = np.broadcast_to(np.arange(n_sites)[None, :, None], t.shape).reshape(-1)
    sun = sun_position(flat_t, lat[site_of], lon[site_of], elev[site_of]).altitude_deg.reshape(t.shape)
    star = star_altitude_deg(ra_deg, dec_deg, flat_t, lat[site_of], lon[site_of]).reshape(t.shape)
    good = (sun < DARK_SUN_DEG) & (star >= GOOD_ALTITUDE_DEG)
    hours = good.sum(axis=2) * NIGHT_STEP_MIN / 60.0
    scored = np.where(good, star, -np.inf)
    at = scored.argmax(axis=2)
    best = np.take_along_axis(scored, at[:, :, None], axis=2)[:, :, 0]
    when = np.take_along_axis(t, at[:, :, None], axis=2)[:, :, 0]
    found = np.isfinite(best)
    return NightView(hours, np.where(found, best, np.nan), np.where(found, when, np.datetime64("NaT", "ms")))
