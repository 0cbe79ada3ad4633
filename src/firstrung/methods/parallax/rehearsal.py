"""Rehearsal astrometry logs: each star's place as a camera would measure it through the range,
from skyfield's ``Star`` (the catalogue's proper motion and parallax, or a stated parallax) plus a
seeded Gaussian error (same campaign, range and seed, same rows)."""

from __future__ import annotations

import numpy as np

LOG_COLUMNS = ("site", "star", "time_utc", "ra_deg", "dec_deg", "sigma_arcsec", "observer")


def rehearsal_rows(campaign, first_date, last_date, seed: int, *, sigma_arcsec: float = 0.05,
                   cadence_days: int = 14, parallax_mas: float | None = None, star_id: str | None = None):
    """One position of every star every ``cadence_days`` when some site sees it in a dark sky.

    Each epoch is taken at the site with the most dark hours that night, when the star stands
    highest in its dark sky; a campaign without sites observes every date at 00:00 UTC.
    """
    from firstrung.ephemeris.stars import star_astrometric_radec_deg
    from firstrung.methods.parallax.run import plan_parallax
    from firstrung.star_catalogue import CATALOGUE_EPOCH_JYEAR, campaign_star_entry

    plan = plan_parallax(campaign, first_date, last_date, step_days=cadence_days, star_id=star_id)
    rng = np.random.default_rng(seed)
    rows = []
    for sp in plan.stars:
        star = sp.star
        entry = campaign_star_entry(star)
        usable = sp.rank > 0
        if not np.any(usable):
            continue
        dates = sp.dates[usable]
        if campaign.sites:
            best = np.argmax(sp.view.dark_hours[usable], axis=1)
            t = sp.view.best_time_utc[usable][np.arange(best.size), best]
            site_ids = [campaign.sites[j].id for j in best]
        else:
            t, site_ids = dates.astype("datetime64[ms]"), [""] * dates.size
        if entry is not None:
            p = entry.parallax_mas if parallax_mas is None else parallax_mas
            ra, dec = star_astrometric_radec_deg(entry.ra_deg, entry.dec_deg, entry.pm_ra_mas_per_yr,
                                                 entry.pm_dec_mas_per_yr, p, CATALOGUE_EPOCH_JYEAR, t)
        else:
            ra, dec = star_astrometric_radec_deg(star.ra_deg, star.dec_deg, 0.0, 0.0,
                                                 1.0 if parallax_mas is None else parallax_mas, 2000.0, t)
        err = rng.normal(0.0, sigma_arcsec, (2, t.size)) / 3600.0
        ra = (ra + err[0] / np.cos(np.radians(dec))) % 360.0
        dec = dec + err[1]
        for k in range(t.size):
            rows.append({"star": star.id, "time_utc": str(np.datetime64(t[k], "s")) + "Z",
                         "ra_deg": f"{ra[k]:.7f}", "dec_deg": f"{dec[k]:.7f}", "sigma_arcsec": f"{sigma_arcsec:g}",
                         "site": site_ids[k], "observer": f"rehearsal {site_ids[k] or 'camera'}"})
    rows.sort(key=lambda r: (r["time_utc"], r["star"]))
    return rows
