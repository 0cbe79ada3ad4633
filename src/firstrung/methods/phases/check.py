"""The half-moon log's check: each timing against the predicted half moon at its site."""

from __future__ import annotations

import numpy as np

from firstrung.flags import Flag, KindCheck, problem_flags, timing_mismatch_flag, zone_offset_h

#: Beyond this a half-moon timing is flagged as a warning (kept in the reduction) [s]: mostly a clock on
#: another zone. By eye the half moon is good to hours, 2 h one sigma assumed (``PhaseSettings``: the
#: terminator bows by only about 4" half an hour away), so an honest judgement passes it now and then;
#: the warning asks to check the clock, it does not call the judgement wrong.
HALF_MOON_TOLERANCE_S = 3.0 * 3600.0


def log_flags(campaign, log) -> list[Flag]:
    """Flags for half-moon rows far from the site's predicted true half moon or with the Moon down."""
    from firstrung.ephemeris import moon_position
    from firstrung.methods.phases.prediction import quarters_between, topocentric_dichotomy_utc

    if len(log) == 0:
        return []
    t = np.asarray(log.time_utc, dtype="datetime64[ms]")
    quarters = quarters_between(t.min() - np.timedelta64(5, "D"), t.max() + np.timedelta64(5, "D"))
    sites = {s.id: s for s in campaign.sites}
    lat = np.array([sites[s].latitude_deg for s in log.site])
    lon = np.array([sites[s].longitude_deg for s in log.site])
    elev = np.array([sites[s].elevation_m for s in log.site])
    moon_alt = moon_position(t, lat, lon, elev).altitude_deg
    kinds = np.asarray(quarters.quarter).astype(str)
    geo = np.asarray(quarters.dichotomy_utc, dtype="datetime64[ms]")
    flags: list[Flag] = []
    if geo.size == 0:
        return flags
    same_kind = kinds[None, :] == np.asarray(log.quarter).astype(str)[:, None]
    gap = np.where(same_kind, np.abs((t[:, None] - geo[None, :]).astype(np.int64)), np.iinfo(np.int64).max)
    nearest = np.argmin(gap, axis=1)
    site_half = np.asarray(topocentric_dichotomy_utc(geo[nearest], lat, lon, elev), dtype="datetime64[ms]")
    delta_s = (t - site_half).astype(np.int64) / 1e3
    for i in range(t.size):  # flags are per row
        site = log.site[i]
        observer = str(log.observer[i])
        what = f"the {log.quarter[i]}-quarter half moon at {site}"
        if moon_alt[i] < -0.5:
            flags.append(Flag(str(log.file[i]), int(log.row[i]), site, "moon-below-horizon", "error",
                              f"{what}: the Moon is {-moon_alt[i]:.1f} deg below the horizon at the logged time",
                              "ask the observer to check the date, the time and its zone", observer,
                              {"moon_altitude_deg": round(float(moon_alt[i]), 2)}))
            continue
        if abs(delta_s[i]) > HALF_MOON_TOLERANCE_S:
            severity = "error" if abs(delta_s[i]) > 24 * 3600 else "warning"
            flags.append(timing_mismatch_flag(str(log.file[i]), int(log.row[i]), site, observer, what, float(delta_s[i]),
                                   HALF_MOON_TOLERANCE_S, zone_offset_h(sites[site].timezone, t[i]),
                                   str(log.time_column[i]), severity))
    return flags


def check_campaign(campaign) -> KindCheck:
    """Read the campaign's phases logs and check them: flags and refused rows."""
    from firstrung.methods.phases.log import read_phase_logs

    log = read_phase_logs(campaign)
    return KindCheck(tuple(log_flags(campaign, log)) + tuple(problem_flags(tuple(log.problems))))
