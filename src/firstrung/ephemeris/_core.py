"""Loading DE421 and the timescale once, offline, and converting times.

The JPL DE421 ephemeris comes from the ``skyfield-data`` package and the time
scale is skyfield's builtin one, so nothing is ever downloaded.
"""

from __future__ import annotations

import atexit
import functools
import os
import warnings

import numpy as np

from firstrung.constants import EPHEMERIS_FILE, EPHEMERIS_FIRST_UTC, EPHEMERIS_LAST_UTC
from firstrung.errors import EphemerisRangeError, InputError


@functools.lru_cache(maxsize=1)
def _loaded():
    """Load the timescale and DE421 once, with the data package's expiry warning silenced.

    ``skyfield_data.get_skyfield_data_path()`` warns when its bundled Earth
    orientation file is past its expiry date; firstrung uses skyfield's builtin
    timescale instead of that file, so the warning says nothing about our
    results and must never reach the user.
    """
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        import skyfield_data
        from skyfield.jpllib import SpiceKernel

        folder = os.path.join(os.path.dirname(skyfield_data.__file__), "data")
        if not os.path.exists(os.path.join(folder, EPHEMERIS_FILE)):  # pragma: no cover
            raise InputError(f"the ephemeris file {EPHEMERIS_FILE} is missing from skyfield-data")
        # what skyfield's Loader does for a local kernel and its builtin timescale, without its
        # module for downloads (never used here: its network libraries cost every command's start)
        ephemeris = SpiceKernel(os.path.join(folder, EPHEMERIS_FILE))
    atexit.register(ephemeris.close)
    return timescale(), ephemeris, ephemeris["earth"], ephemeris["sun"]


def _builtin_timescale():
    """skyfield's ``Loader.timescale(builtin=True)``: its bundled Delta T and leap-second tables."""
    from skyfield.functions import load_bundled_npy
    from skyfield.timelib import Timescale

    arrays = load_bundled_npy("iers.npz")
    daily_tt = arrays["tt_jd_minus_arange"]
    daily_tt += np.arange(len(daily_tt))
    daily_delta_t = (arrays["delta_t_1e7"] / 1e7).round(7)
    return Timescale((daily_tt, daily_delta_t), arrays["leap_dates"], arrays["leap_offsets"])


@functools.lru_cache(maxsize=1)
def timescale():
    """The one skyfield ``Timescale`` firstrung uses (builtin data, no download), loaded without the
    ephemeris (a plan served by the Sun's table needs only the time scale)."""
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return _builtin_timescale()


def ephemeris_span_utc() -> tuple[np.datetime64, np.datetime64]:
    """First and last UTC instants the bundled ephemeris covers."""
    return np.datetime64(EPHEMERIS_FIRST_UTC, "ms"), np.datetime64(EPHEMERIS_LAST_UTC, "ms")


def check_in_span(time_utc: np.ndarray, what: str = "time") -> None:
    """Raise EphemerisRangeError when any time lies outside DE421's span.

    >>> check_in_span(np.array(["2027-03-20T11:00"], dtype="datetime64[ms]"))
    """
    t = np.asarray(time_utc, dtype="datetime64[ms]")
    first, last = ephemeris_span_utc()
    bad = (t < first) | (t > last) | np.isnat(t)
    if np.any(bad):
        example = t[bad].ravel()[0]
        raise EphemerisRangeError(
            f"{what} {example} is outside the ephemeris: DE421 covers "
            f"{EPHEMERIS_FIRST_UTC[:10]} to {EPHEMERIS_LAST_UTC[:10]} (UTC)"
        )


def as_utc_datetime64(time_utc) -> np.ndarray:
    """Times as a numpy ``datetime64[us]`` array in UTC.

    Accepts numpy datetime64 (taken as UTC), timezone-aware ``datetime``
    objects and ISO 8601 strings with an explicit offset or ``Z``. A naive
    ``datetime`` or a string without an offset is refused.

    >>> as_utc_datetime64("2027-03-20T12:38:00+01:00")
    array('2027-03-20T11:38:00.000000', dtype='datetime64[us]')
    """
    import datetime as _dt

    if isinstance(time_utc, np.ndarray) and np.issubdtype(time_utc.dtype, np.datetime64):
        return time_utc.astype("datetime64[us]")
    if isinstance(time_utc, np.datetime64):
        return np.asarray(time_utc, dtype="datetime64[us]")
    items = [time_utc] if isinstance(time_utc, (str, _dt.datetime)) else list(time_utc)
    out = []
    for item in items:
        if isinstance(item, np.datetime64):
            out.append(item.astype("datetime64[us]"))
            continue
        if isinstance(item, str):
            text = item.strip().replace("Z", "+00:00").replace("z", "+00:00")
            try:
                item = _dt.datetime.fromisoformat(text)
            except ValueError:
                raise InputError(f"time: expected ISO 8601 with an offset, got {item!r}") from None
        if not isinstance(item, _dt.datetime) or item.tzinfo is None or item.utcoffset() is None:
            raise InputError(f"time: expected a timezone-aware time, got {item!r} (naive times are refused)")
        naive_utc = item.astimezone(_dt.UTC).replace(tzinfo=None)
        out.append(np.datetime64(naive_utc, "us"))
    arr = np.array(out, dtype="datetime64[us]")
    return arr if not isinstance(time_utc, (str, _dt.datetime)) else arr.reshape(())


def _skyfield_time(time_utc: np.ndarray):
    """skyfield ``Time`` for a datetime64 UTC array (leap seconds honoured by the timescale)."""
    t = np.asarray(time_utc, dtype="datetime64[us]")
    days = t.astype("datetime64[D]")
    seconds = (t - days).astype(np.int64) / 1e6
    day_number = days.astype(np.int64)
    return timescale().utc(1970, 1, 1 + day_number, 0, 0, seconds)


def _days_to_civil(day_number: np.ndarray):
    """Proleptic Gregorian (year, month, day) from days since 1970-01-01 (H. Hinnant's algorithm)."""
    z = day_number + 719468
    era = np.floor_divide(z, 146097)
    doe = z - era * 146097
    yoe = (doe - doe // 1460 + doe // 36524 - doe // 146096) // 365
    y = yoe + era * 400
    doy = doe - (365 * yoe + yoe // 4 - yoe // 100)
    mp = (5 * doy + 2) // 153
    d = doy - (153 * mp + 2) // 5 + 1
    m = np.where(mp < 10, mp + 3, mp - 9)
    return y + (m <= 2), m, d


def _utc_datetime64(t) -> np.ndarray:
    """datetime64[us] UTC from a skyfield Time (a leap second maps to the next second)."""
    year, month, day, hour, minute, second = (np.asarray(x) for x in t.utc)
    years = (year - 1970).astype("timedelta64[Y]")
    base = (np.datetime64("1970", "Y") + years).astype("datetime64[M]")
    base = base + (month - 1).astype("timedelta64[M]")
    date = base.astype("datetime64[D]") + (day - 1).astype("timedelta64[D]")
    micro = np.round(((hour * 60 + minute) * 60 + second) * 1e6).astype(np.int64)
    return date.astype("datetime64[us]") + micro.astype("timedelta64[us]")


@functools.lru_cache(maxsize=8)
def _body(name: str):
    """A DE421 body by name ("earth", "sun", "moon"), built once."""
    return _loaded()[1][name]


def _prepared_time(time_utc: np.ndarray):
    """skyfield Time for UTC datetime64 values, with the IAU 2000B nutation (<= 0.001" from 2000A)."""
    from skyfield.nutationlib import iau2000b_radians

    t = _skyfield_time(time_utc)
    t._nutation_angles_radians = iau2000b_radians(t)
    return t


def apparent_moon_and_sun_of_date_km(time_utc: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Geocentric apparent Moon and Sun, true equator and equinox of date, for a flat datetime64 array.

    Returns
    -------
    moon_km, sun_km : numpy.ndarray, shape (3, n)
        Position vectors [km] (light time, aberration and deflection as skyfield's ``apparent``).
    """
    return apparent_moon_and_sun_at(_prepared_time(time_utc))


def apparent_moon_and_sun_at(t) -> tuple[np.ndarray, np.ndarray]:
    """:func:`apparent_moon_and_sun_of_date_km` at an already prepared skyfield Time ``t`` [km], (3, n)."""
    from skyfield.functions import mxv

    from firstrung.constants import ASTRONOMICAL_UNIT_KM

    e = _body("earth").at(t)
    moon = e.observe(_body("moon")).apparent()
    sun = e.observe(_body("sun")).apparent()
    moon_km = np.asarray(mxv(t.M, moon.position.au)).reshape(3, -1) * ASTRONOMICAL_UNIT_KM
    sun_km = np.asarray(mxv(t.M, sun.position.au)).reshape(3, -1) * ASTRONOMICAL_UNIT_KM
    return moon_km, sun_km
