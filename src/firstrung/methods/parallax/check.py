"""Checks of astrometry logs.

- ``ra-hours`` (error): a right ascension typed in hours (the star's RA over 15); field ``factor``;
- ``outlier`` (error): a place far from the star's (more than 2 arcmin plus ten stated sigmas,
  after the star's catalogue proper motion): another star measured, or a typing error;
- ``local-time-as-utc`` (error): local clock time typed as UTC (see :mod:`firstrung.star_checks`).
"""

from __future__ import annotations

import numpy as np

from firstrung.flags import Flag, KindCheck, problem_flags

#: Beyond this from the star's place a measured position is another star or a typing error [arcsec]
#: (plus ten stated sigmas): a parallax and a few years of proper motion stay within it for all but
#: the fastest stars, whose catalogue motion is applied first.
OUTLIER_ARCSEC = 120.0
#: An RA within this of the star's RA over 15 was typed in hours [deg].
HOURS_MATCH_DEG = 0.5


def _expected_place(star, epoch_jyear):
    """The star's place at the rows' epochs: the campaign's place moved by the catalogue's proper motion
    from J2000 (the place a campaign file copies)."""
    from firstrung.star_catalogue import campaign_star_entry

    entry = campaign_star_entry(star)
    years = epoch_jyear - 2000.0
    pm_ra, pm_dec = (entry.pm_ra_mas_per_yr, entry.pm_dec_mas_per_yr) if entry is not None else (0.0, 0.0)
    dec = star.dec_deg + pm_dec * years / 3.6e6
    ra = star.ra_deg + pm_ra * years / 3.6e6 / max(np.cos(np.radians(star.dec_deg)), 1e-6)
    return ra, dec


def log_flags(campaign, log) -> list[Flag]:
    """Flags for positions typed in hours, far from their star, or timed in local clock time."""
    from firstrung.methods.parallax.reduction import tangent_offsets_mas
    from firstrung.star_checks import local_time_flags

    flags: list[Flag] = []
    if len(log) == 0:
        return flags
    from firstrung.ephemeris.stars import julian_year_tt

    stars = {s.id: s for s in campaign.stars}
    epochs = julian_year_tt(np.asarray(log.time_utc, dtype="datetime64[ms]"))  # once for every row
    for sid in np.unique(np.asarray(log.star, dtype=str)):
        rows = np.flatnonzero(log.star == sid)
        star = stars[sid]
        ra, dec = _expected_place(star, epochs[rows])
        dx, dy = tangent_offsets_mas(log.ra_deg[rows], log.dec_deg[rows], float(star.ra_deg), float(star.dec_deg))
        ex, ey = tangent_offsets_mas(ra, dec, float(star.ra_deg), float(star.dec_deg))
        sep_arcsec = np.hypot(dx - ex, dy - ey) / 1000.0
        hours = np.abs(((log.ra_deg[rows] * 15.0 - star.ra_deg + 180.0) % 360.0) - 180.0) <= HOURS_MATCH_DEG
        for k, i in enumerate(rows):
            file, row, site, observer = str(log.file[i]), int(log.row[i]), str(log.site[i]) or None, str(log.observer[i])
            if hours[k] and star.ra_deg >= 24.0:
                flags.append(Flag(
                    file, row, site, "ra-hours", "error",
                    f"ra_deg {log.ra_deg[i]:g} for {sid} is its right ascension in hours ({star.ra_deg / 15.0:.4f} h "
                    f"= {star.ra_deg:.4f} deg): typed in hours?",
                    "multiply the right ascension by 15 (hours to degrees), or ask the observer", observer,
                    {"factor": 15.0}))
            elif sep_arcsec[k] > OUTLIER_ARCSEC + 10.0 * log.sigma_arcsec[i]:
                flags.append(Flag(
                    file, row, site, "outlier", "error",
                    f"{sid} measured {sep_arcsec[k]:.0f}\" from its place (expected within "
                    f"{OUTLIER_ARCSEC + 10.0 * log.sigma_arcsec[i]:.0f}\"): another star, or a typing error?",
                    "ask the observer to check the star identified on the image and the typed coordinates", observer,
                    {"separation_arcsec": round(float(sep_arcsec[k]), 1)}))
    return flags + local_time_flags(campaign, log, "position")


def check_campaign(campaign) -> KindCheck:
    """Read the campaign's astrometry logs and check them: flags and refused rows."""
    from firstrung.methods.parallax.log import read_astrometry_logs

    log = read_astrometry_logs(campaign)
    return KindCheck(tuple(log_flags(campaign, log)) + tuple(problem_flags(tuple(log.problems))))
