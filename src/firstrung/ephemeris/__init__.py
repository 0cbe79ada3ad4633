"""The Sun's (and, in later rungs, the Moon's) apparent place from DE421, offline.

This package is the only part of firstrung that calls skyfield. Loading and
time conversion live in ``_core``; each body has its own module.
"""

from firstrung.ephemeris._core import (
    _days_to_civil,
    _loaded,
    _skyfield_time,
    _utc_datetime64,
    as_utc_datetime64,
    check_in_span,
    ephemeris_span_utc,
    timescale,
)
from firstrung.ephemeris.moon import (
    MoonPosition,
    SunMoonGeocentric,
    moon_position,
    sun_moon_geocentric,
)
from firstrung.ephemeris.seasons import (
    SEASON_NAMES,
    equinox_and_solstice_dates,
    equinoxes_and_solstices,
)
from firstrung.ephemeris.sun import (
    SolarTransit,
    SunPosition,
    SunTrack,
    _geocentric_sun,
    _topocentric,
    solar_transit,
    sun_greenwich_hour_angle_deg,
    sun_position,
    sun_track,
)

__all__ = [
    "SEASON_NAMES",
    "equinox_and_solstice_dates",
    "equinoxes_and_solstices",
    "MoonPosition",
    "SunMoonGeocentric",
    "moon_position",
    "sun_moon_geocentric",
    "SolarTransit",
    "SunPosition",
    "SunTrack",
    "as_utc_datetime64",
    "check_in_span",
    "ephemeris_span_utc",
    "solar_transit",
    "sun_greenwich_hour_angle_deg",
    "sun_position",
    "sun_track",
    "timescale",
    "_days_to_civil",
    "_geocentric_sun",
    "_loaded",
    "_skyfield_time",
    "_topocentric",
    "_utc_datetime64",
]
