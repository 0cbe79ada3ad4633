"""Checks of transit contact timings: each against its prediction for the row's site.

A contact far from its prediction is diagnosed: typed under the neighbouring
label (C1/C2, C3/C4: ``contact-label``, with ``likely_event``), a clock a whole
number of hours out or local time typed as UTC (``event-time-mismatch`` with
``cause`` and ``hours``, as for eclipse timings), or unexplained. A contact
timed with the Sun below the horizon is ``sun-below-horizon``: the site could
not have seen it.
"""

from __future__ import annotations

import numpy as np

from firstrung.flags import Flag, KindCheck, problem_flags, timing_mismatch_flag, zone_offset_h
from firstrung.methods.transit.prediction import CONTACTS, SECONDS_PER_DAY

#: Beyond this a contact is no timing error [s]: the black drop, the seeing and an observer's
#: reaction stay within a minute for Mercury, two for Venus, whose atmosphere blurs its
#: internal contacts (common practice; the 2004 and 2012 timings of Venus scattered by tens of seconds).
CONTACT_TOLERANCE_S = {"mercury": 60.0, "venus": 120.0}
#: The Sun's centre this far below the horizon (airless) hides the whole disc even with refraction [deg].
SUN_DOWN_ALTITUDE_DEG = -1.2
#: The label a swapped contact was probably meant to have.
_NEIGHBOUR = {0: 1, 1: 0, 2: 3, 3: 2}


def log_flags(campaign, log, predictions=None) -> list[Flag]:
    """Flags for contacts far from their predictions or timed with the Sun down."""
    from firstrung.ephemeris import sun_position
    from firstrung.methods.transit.rows import row_predictions

    if len(log) == 0:
        return []
    p = predictions if predictions is not None else row_predictions(campaign, log)
    sites = {s.id: s for s in campaign.sites}
    lat = np.array([sites[s].latitude_deg for s in log.site])
    lon = np.array([sites[s].longitude_deg for s in log.site])
    elev = np.array([sites[s].elevation_m for s in log.site])
    t = np.asarray(log.time_utc, dtype="datetime64[ms]")
    sun_alt = sun_position(t, lat, lon, elev).altitude_deg
    delta = p.mismatch_s()
    rows = np.arange(len(log))
    neighbour = np.array([_NEIGHBOUR[c] for c in p.contact], dtype=int)
    delta_other = (p.observed_tt_jd - p.predicted_tt_jd[rows, neighbour]) * SECONDS_PER_DAY
    flags: list[Flag] = []
    for i in range(len(log)):  # flags are per row; the arithmetic above is vectorised
        site, observer = str(log.site[i]), str(log.observer[i])
        file, row = str(log.file[i]), int(log.row[i])
        what = f"{log.event[i]} at {site}"
        if p.transit[i] < 0:
            flags.append(Flag(file, row, site, "event-time-mismatch", "error",
                              f"{what}: no transit of Mercury or Venus within 12 h of {np.datetime64(t[i], 's')}Z",
                              f"ask {observer or 'the observer'} for the date and time of this contact", observer,
                              {"seconds": None}))
            continue
        planet = p.transits.planet[p.transit[i]]
        sigma = float(log.time_sigma_s[i]) if np.isfinite(log.time_sigma_s[i]) else 0.0
        tolerance = max(CONTACT_TOLERANCE_S[planet], 5.0 * sigma)
        if np.isfinite(delta[i]) and abs(delta[i]) <= tolerance:
            if sun_alt[i] < SUN_DOWN_ALTITUDE_DEG:
                flags.append(_sun_down(file, row, site, observer, what, sun_alt[i]))
            continue
        if np.isfinite(delta_other[i]) and abs(delta_other[i]) <= tolerance:
            likely = CONTACTS[neighbour[i]]
            flags.append(Flag(
                file, row, site, "contact-label", "error",
                f"{what} is logged {abs(delta[i]):.0f} s {'after' if delta[i] > 0 else 'before'} its predicted time "
                f"but within {abs(delta_other[i]):.0f} s of {likely}: probably {likely} typed as {log.event[i]}",
                f"ask {observer or 'the observer'} which contact this was; then relabel it {likely}", observer,
                {"logged_event": str(log.event[i]), "likely_event": likely, "seconds": round(float(delta[i]), 1)}))
            continue
        if not np.isfinite(delta[i]):
            flags.append(Flag(file, row, site, "event-time-mismatch", "error",
                              f"{what}: the {planet} transit of {str(p.transits.greatest_utc[p.transit[i]])[:10]} "
                              f"has no {log.event[i]} at this site (a grazing transit)",
                              "ask the observer which contact was seen", observer, {"seconds": None}))
            continue
        flag = timing_mismatch_flag(file, row, site, observer, what, float(delta[i]), tolerance,
                                    zone_offset_h(sites[site].timezone, t[i]), str(log.time_column[i]))
        if "cause" not in flag.fields and sun_alt[i] < SUN_DOWN_ALTITUDE_DEG:
            flag = _sun_down(file, row, site, observer, what, sun_alt[i])
        flags.append(flag)
    return flags


def _sun_down(file, row, site, observer, what, altitude_deg) -> Flag:
    return Flag(file, row, site, "sun-below-horizon", "error",
                f"{what}: the Sun is {-altitude_deg:.1f} deg below the horizon at the logged time; "
                "this site could not see the contact",
                "ask the observer to check the date, the time and its zone", observer,
                {"sun_altitude_deg": round(float(altitude_deg), 2)})


def check_campaign(campaign) -> KindCheck:
    """Read the campaign's transit logs and check them: flags and refused rows."""
    from firstrung.methods.transit.log import read_transit_logs

    log = read_transit_logs(campaign)
    return KindCheck(tuple(log_flags(campaign, log)) + tuple(problem_flags(tuple(log.problems))))
