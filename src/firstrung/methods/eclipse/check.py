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

import datetime as dt
from zoneinfo import ZoneInfo

import numpy as np

from firstrung.checks import Flag

#: Beyond this the logged time of an umbral contact is no timing error [s]: the umbra's edge
#: is fuzzy (about a minute) and the enlargement varies from eclipse to eclipse (common practice).
CONTACT_TOLERANCE_S = 300.0
#: The same for a crater's immersion or emersion, which the eye times better [s] (common practice).
CRATER_TOLERANCE_S = 180.0
#: A half moon judged by eye is often 30-60 min off; beyond this it is not a judgement error [s].
HALF_MOON_TOLERANCE_S = 3.0 * 3600.0
#: A difference this close to a whole number of hours is taken as a clock or zone mistake [s].
WHOLE_HOUR_MARGIN_S = 150.0


def _zone_offset_h(zone: str | None, t_utc) -> float | None:
    if zone is None:
        return None
    aware = np.datetime64(t_utc, "s").astype(dt.datetime).replace(tzinfo=dt.UTC)
    return aware.astimezone(ZoneInfo(zone)).utcoffset().total_seconds() / 3600.0


def likely_cause(delta_s: float, zone_offset_h: float | None, time_column: str, margin_s: float = WHOLE_HOUR_MARGIN_S):
    """The clock or zone mistake a time difference points to: (cause, hours), or (None, None).

    ``delta_s`` is logged minus predicted. Local time typed as UTC is
    preferred when the difference equals the site's UTC offset on that date.

    >>> likely_cause(3605.0, 1.0, "time_utc")
    ('local-time-as-utc', -1)
    >>> likely_cause(-7190.0, None, "time_utc")
    ('time-shift-hours', 2)
    >>> likely_cause(900.0, 1.0, "time_utc")
    (None, None)
    """
    if time_column == "time_utc" and zone_offset_h and abs(delta_s - zone_offset_h * 3600.0) <= margin_s:
        return "local-time-as-utc", -int(round(zone_offset_h))
    hours = round(delta_s / 3600.0)
    if 1 <= abs(hours) <= 3 and abs(delta_s - hours * 3600.0) <= margin_s:
        return "time-shift-hours", -int(hours)
    return None, None
    if time_column == "time_utc" and zone_offset_h and abs(delta_s - zone_offset_h * 3600.0) <= margin_s:
        return "local-time-as-utc", -int(round(zone_offset_h))
    if abs(hours) <= 3:
        return "time-shift-hours", -int(hours)
    return None, None


def _mismatch(file, row, site, observer, what, delta_s, tolerance_s, zone_h, column, severity="error") -> Flag:
    cause, hours = likely_cause(delta_s, zone_h, column)
    minutes = delta_s / 60.0
    message = f"{what} is logged {abs(minutes):.1f} min {'after' if delta_s > 0 else 'before'} its predicted time"
    if cause == "local-time-as-utc":
        message += f": local clock time (UTC{zone_h:+g} h) was probably typed in the time_utc column"
        fix = f"ask {observer or 'the observer'} to confirm; then give the time as time_local, or subtract {zone_h:g} h"
    elif cause == "time-shift-hours":
        message += f": a clock {abs(hours)} h {'fast' if hours < 0 else 'slow'}, on another zone or on daylight-saving time?"
        fix = f"ask {observer or 'the observer'} which clock was used; then shift the time by {hours:+d} h"
    else:
        message += f" (more than the {tolerance_s / 60:.0f} min a timing may be off): a typing error, another date?"
        fix = f"ask {observer or 'the observer'} to check the time against the field sheet"
    fields = {"seconds": round(float(delta_s), 1)}
    if cause is not None:
        fields.update({"cause": cause, "hours": hours})
    return Flag(file, row, site, "event-time-mismatch", severity, message, fix, observer, fields)


def check_eclipse_log(campaign, log) -> list[Flag]:
    """Flags for eclipse timings far from their predicted instants or with the Moon down."""
    from firstrung.ephemeris import moon_position
    from firstrung.methods.eclipse.prediction import feature_edge_times, lunar_eclipses
    from firstrung.methods.eclipse.run import load_craters

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
        known = np.array([_has(table, f) for f in log.feature], bool)
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
            flags.append(_mismatch(str(log.file[i]), int(log.row[i]), site, observer, what, delta,
                                   max(tolerance, 5 * sigma), _zone_offset_h(zone, t[i]), str(log.time_column[i])))
    return flags


def _has(table, name) -> bool:
    """Whether the crater table knows the feature (an unknown one is the reduction's to report)."""
    return bool(name) and table.index(name) is not None


def check_phase_log(campaign, log) -> list[Flag]:
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
            flags.append(_mismatch(str(log.file[i]), int(log.row[i]), site, observer, what, float(delta_s[i]),
                                   HALF_MOON_TOLERANCE_S, _zone_offset_h(sites[site].timezone, t[i]),
                                   str(log.time_column[i]), severity))
    return flags

