"""Checks of timed events: lunar-eclipse contacts and crater timings, half-moon timings.

Each logged time is compared with the ephemeris's prediction for that
event at that site: an eclipse contact or crater timing far from its
predicted instant, or a half moon far from the site's predicted true half
moon, is flagged ``event-time-mismatch`` with the likely cause when the
difference is a whole number of hours (a clock on the wrong zone or on
daylight-saving time) or the site's own UTC offset (local time typed as
UTC). A Moon below the horizon at the logged time is an error too.
"""

from __future__ import annotations

import numpy as np

from firstrung.flags import (
    Flag,
    KindCheck,
    has_column,
    problem_flags,
    timing_mismatch_flag,
    zone_offset_h,
)

#: Beyond this the logged time of an umbral contact is no timing error [s]: the umbra's edge
#: is fuzzy (about a minute) and the enlargement varies from eclipse to eclipse (common practice).
CONTACT_TOLERANCE_S = 300.0
#: The same for a crater's immersion or emersion, which the eye times better [s] (common practice).
CRATER_TOLERANCE_S = 180.0


def log_flags(campaign, log) -> list[Flag]:
    """Flags for eclipse timings far from their predicted instants or with the Moon down."""
    from firstrung.ephemeris import moon_position
    from firstrung.methods.eclipse.craters import load_craters
    from firstrung.methods.eclipse.prediction import feature_edge_times, lunar_eclipses

    if len(log) == 0:
        return []
    t = np.asarray(log.time_utc, dtype="datetime64[ms]")
    eclipses = lunar_eclipses(t.min() - np.timedelta64(1, "D"), t.max() + np.timedelta64(1, "D"))
    flags: list[Flag] = []
    sites = {s.id: s for s in campaign.sites}
    lat = np.array([sites[s].latitude_deg for s in log.site])
    lon = np.array([sites[s].longitude_deg for s in log.site])
    elev = np.array([sites[s].elevation_m for s in log.site])
    moon_alt = moon_position(t, lat, lon, elev).altitude_deg
    greatest = np.asarray(eclipses.greatest_utc, dtype="datetime64[ms]")
    table = load_craters()
    predicted = np.full(t.size, np.datetime64("NaT", "ms"))
    nearest = np.full(t.size, -1)
    if greatest.size:
        gap = np.abs((t[:, None] - greatest[None, :]).astype(np.int64))
        nearest = np.argmin(gap, axis=1)
        near_enough = gap[np.arange(t.size), nearest] <= 12 * 3600e3
        nearest = np.where(near_enough, nearest, -1)
    for k in np.unique(nearest[nearest >= 0]):  # one pass per eclipse
        one = eclipses.select(np.arange(greatest.size) == k)
        mine = nearest == k
        for name in ("U1", "U2", "U3", "U4"):
            rows = mine & (log.event == name)
            contact = one.contacts_utc.get(name)
            if contact is not None and np.any(rows):
                predicted[rows] = np.asarray(contact, dtype="datetime64[ms]")[0]
        craters = mine & np.isin(log.event, ("immersion", "emersion"))
        known = np.array([has_column(table, f) for f in log.feature], bool)
        picked = np.flatnonzero(craters & known)
        if picked.size:
            idx = [table.index(f) for f in log.feature[picked]]
            times = feature_edge_times(one, table.latitude_deg[idx], table.longitude_deg[idx], log.event[picked],
                                       convention="danjon")
            predicted[picked] = np.asarray(times, dtype="datetime64[ms]")
    for i in range(t.size):  # flags are per row; the arithmetic above is vectorised
        site = log.site[i]
        observer = str(log.observer[i])
        what = f"{log.event[i]}" + (f" of {log.feature[i]}" if log.feature[i] else "") + f" at {site}"
        if nearest[i] < 0:
            flags.append(Flag(str(log.file[i]), int(log.row[i]), site, "event-time-mismatch", "error",
                              f"{what}: no lunar eclipse within 12 h of {np.datetime64(t[i], 's')}Z",
                              f"ask {observer or 'the observer'} for the date and time of this timing", observer,
                              {"seconds": None}))
            continue
        if moon_alt[i] < -0.5:
            flags.append(Flag(str(log.file[i]), int(log.row[i]), site, "moon-below-horizon", "error",
                              f"{what}: the Moon is {-moon_alt[i]:.1f} deg below the horizon at the logged time",
                              "ask the observer to check the date and the time (and its zone)", observer,
                              {"moon_altitude_deg": round(float(moon_alt[i]), 2)}))
            continue
        if np.isnat(predicted[i]):
            continue  # no prediction (an unknown crater, a contact the eclipse lacks): the reduction says so
        delta = float((t[i] - predicted[i]).astype(np.int64)) / 1e3
        tolerance = CONTACT_TOLERANCE_S if log.event[i].startswith("U") else CRATER_TOLERANCE_S
        sigma = float(log.time_sigma_s[i]) if np.isfinite(log.time_sigma_s[i]) else 0.0
        if abs(delta) > max(tolerance, 5 * sigma):
            zone = sites[site].timezone
            flags.append(timing_mismatch_flag(str(log.file[i]), int(log.row[i]), site, observer, what, delta,
                                   max(tolerance, 5 * sigma), zone_offset_h(zone, t[i]), str(log.time_column[i])))
    return flags


def check_campaign(campaign) -> KindCheck:
    """Read the campaign's eclipse logs and check them: flags and refused rows."""
    from firstrung.methods.eclipse.craters import load_craters
    from firstrung.methods.eclipse.log import read_eclipse_logs

    log = read_eclipse_logs(campaign)
    unknown, _ = load_craters().unknown_features(log)  # the reduction's own lookup: both refuse the same rows
    return KindCheck(tuple(log_flags(campaign, log)) + tuple(problem_flags(tuple(log.problems) + tuple(unknown))))
