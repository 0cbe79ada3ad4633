"""Readings without a time: taken at apparent noon, with the error of a noon judged without a clock.

A school that reads "the shadow at noon" and sends a date but no time is
placed at its apparent noon (the Sun's transit over its meridian that day,
DE421). Near noon the Sun's altitude falls off as the square of the hour
angle H, ``a = a0 - cos(phi) cos(dec) H^2 / (2 cos a0)``, so a reading up
to :data:`NOON_BY_EYE_SIGMA_S` from the real noon reads the Sun low by that
amount. No correction is made (the shortest shadow is what the eye picks);
the error is stated instead, as the root mean square of that fall for a
Gaussian timing error, ``sqrt(3) * k * (omega sigma_t)^2``, added to the
reading's own error (a length's through ``dL/da = h / sin^2 a``).
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np

#: One-sigma error of a noon judged without a clock [s] (by the shortest shadow, by eye, or by
#: the school bell: within about ten minutes, common practice).
NOON_BY_EYE_SIGMA_S = 600.0
#: The Earth's rotation rate relative to the Sun [rad/s] (360 deg per mean solar day).
_SOLAR_RATE_RAD_S = 2.0 * np.pi / 86400.0


def at_apparent_noon(sites, readings):
    """The readings with every untimed length or angle placed at apparent noon, and each reading's added
    altitude error [rad] (0 for timed readings).

    Traces without times are left as they are (their reduction finds the
    shortest shadow itself).
    """
    from firstrung import ephemeris

    form = np.asarray(readings.form).astype(str)
    untimed = ~np.asarray(readings.timed, bool) & (form != "trace")
    extra = np.zeros(len(readings))
    if not untimed.any():
        return readings, extra
    idx = np.asarray(readings.site_index, int)[untimed]
    lat = np.array([s.latitude_deg for s in sites])[idx]
    lon = np.array([s.longitude_deg for s in sites])[idx]
    elev = np.array([s.elevation_m for s in sites])[idx]
    t = np.asarray(readings.time_utc, dtype="datetime64[ms]")
    local_day = (t[untimed] + np.round(lon / 15.0 * 3600e3).astype(np.int64).astype("timedelta64[ms]")
                 ).astype("datetime64[D]")
    transit = ephemeris.solar_transit(local_day, lat, lon, elev)
    a0 = np.radians(np.clip(transit.altitude_deg, 1.0, 89.9))
    dec = np.radians(transit.declination_deg)
    k = np.cos(np.radians(lat)) * np.cos(dec) / (2.0 * np.cos(a0))
    sigma_alt = np.sqrt(3.0) * k * (_SOLAR_RATE_RAD_S * NOON_BY_EYE_SIGMA_S) ** 2
    extra[untimed] = sigma_alt
    times = t.copy()
    times[untimed] = transit.time_utc.astype("datetime64[ms]")
    length_sigma = np.array(readings.shadow_sigma_m, float)
    h = np.asarray(readings.gnomon_m, float)[untimed]
    lengths = form[untimed] == "length"
    added = np.where(lengths, h / np.sin(a0) ** 2 * sigma_alt, 0.0)
    length_sigma[untimed] = np.hypot(length_sigma[untimed], added)
    changes = {"time_utc": times, "shadow_sigma_m": length_sigma, "timed": np.ones(len(readings), bool)}
    if (form[untimed] == "angle").any():
        angle_sigma = np.array(readings.angle_sigma_deg, float)
        angles = np.flatnonzero(untimed)[form[untimed] == "angle"]
        angle_sigma[angles] = np.hypot(angle_sigma[angles], np.degrees(sigma_alt[form[untimed] == "angle"]))
        changes["angle_sigma_deg"] = angle_sigma
    return replace(readings, **changes), extra
