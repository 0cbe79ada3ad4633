"""The Sun's (and, in later rungs, the Moon's) apparent place from DE421, offline.

This package is the only part of firstrung that calls skyfield. Loading and
time conversion live in ``_core``; each body has its own module.
"""

import importlib

#: Each public name and the module of this package that defines it: a module is imported when one
#: of its names is first used (the Sun's commands never load the Moon's module, nor the seasons').
_WHERE = {
    **dict.fromkeys(("_days_to_civil", "_loaded", "_skyfield_time", "_utc_datetime64", "as_utc_datetime64",
                     "check_in_span", "ephemeris_span_utc", "timescale"), "_core"),
    **dict.fromkeys(("MoonPosition", "SunMoonGeocentric", "moon_position", "sun_moon_geocentric"), "moon"),
    **dict.fromkeys(("SEASON_NAMES", "equinox_and_solstice_dates", "equinoxes_and_solstices"), "seasons"),
    **dict.fromkeys(("SolarTransit", "SunPosition", "SunTrack", "_geocentric_sun", "_topocentric",
                     "solar_transit", "sun_greenwich_hour_angle_deg", "sun_position", "sun_track"), "sun"),
}
#: The package's modules, reachable as attributes (``ephemeris.sun``) as when all were imported at once.
_MODULES = frozenset(("_core", "libration", "moon", "observer_moon", "planets", "seasons", "stars", "sun", "sun_table"))


def __getattr__(name: str):
    if name in _MODULES:
        return importlib.import_module(f"{__name__}.{name}")
    module = _WHERE.get(name)
    if module is None:
        raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
    value = getattr(importlib.import_module(f"{__name__}.{module}"), name)
    globals()[name] = value
    return value


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(_WHERE) | _MODULES)


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
