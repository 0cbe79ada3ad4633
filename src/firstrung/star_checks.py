"""Checks that both star logs share: a time that is local clock time typed as UTC.

A star is observed at night with the star up. A row whose site has a time zone, logged
when the Sun is up or the star is down there, but which would be a dark night with the
star up once shifted by the site's UTC offset, was almost surely typed in local time:
``local-time-as-utc`` (field ``hours``: the shift to apply). Vectorised over the rows.
"""

from __future__ import annotations

import numpy as np

from firstrung.flags import Flag, zone_offset_h

#: The Sun above this leaves no sky for a star [deg] (civil twilight's end; common practice).
SKY_TOO_BRIGHT_SUN_DEG = -6.0


def local_time_flags(campaign, log, what: str) -> list[Flag]:
    """``local-time-as-utc`` flags for rows whose logged UTC is daylight or the star down at their site."""
    from firstrung.ephemeris import sun_position
    from firstrung.ephemeris.stars import star_altitude_deg

    sites = {s.id: s for s in campaign.sites}
    pick = np.array([bool(s) and s in sites and sites[s].timezone is not None and str(c) == "time_utc"
                     for s, c in zip(log.site, log.time_column, strict=True)], dtype=bool)
    flags: list[Flag] = []
    if not np.any(pick):
        return flags
    rows = np.flatnonzero(pick)
    t = np.asarray(log.time_utc, dtype="datetime64[ms]")[rows]
    lat = np.array([sites[str(log.site[i])].latitude_deg for i in rows])
    lon = np.array([sites[str(log.site[i])].longitude_deg for i in rows])
    offset_h = np.array([zone_offset_h(sites[str(log.site[i])].timezone, t[k]) for k, i in enumerate(rows)])
    shifted = t - (np.round(offset_h * 3600_000)).astype("timedelta64[ms]")
    stars = {s.id: s for s in campaign.stars}
    both_t = np.concatenate([t, shifted])
    both_lat, both_lon = np.concatenate([lat, lat]), np.concatenate([lon, lon])
    sun = sun_position(both_t, both_lat, both_lon).altitude_deg
    star_alt = np.full(both_t.size, np.nan)
    ids = np.asarray([str(log.star[i]) for i in rows])
    for sid in np.unique(ids):  # one call per star (a campaign has a few)
        mask = np.concatenate([ids == sid, ids == sid])
        s = stars[sid]
        star_alt[mask] = star_altitude_deg(s.ra_deg, s.dec_deg, both_t[mask], both_lat[mask], both_lon[mask])
    n = rows.size
    seen = (sun < SKY_TOO_BRIGHT_SUN_DEG) & (star_alt > 0.0)
    for k in np.flatnonzero(~seen[:n] & seen[n:] & (offset_h != 0)):
        i = rows[k]
        hours = -int(round(offset_h[k]))
        reason = "the Sun is up" if sun[k] >= SKY_TOO_BRIGHT_SUN_DEG else "the star is below the horizon"
        observer = str(log.observer[i])
        flags.append(Flag(
            str(log.file[i]), int(log.row[i]), str(log.site[i]), "local-time-as-utc", "error",
            f"{what} of {log.star[i]} at {log.site[i]} logged at {np.datetime64(t[k], 's')}Z, when {reason} there; "
            f"{hours:+d} h gives a dark sky with the star up: local clock time (UTC{offset_h[k]:+g} h) typed as UTC?",
            f"ask {observer or 'the observer'} to confirm; then give the time as time_local, or shift it by {hours:+d} h",
            observer, {"hours": hours, "sun_altitude_deg": round(float(sun[k]), 1)}))
    return flags
