"""Reading and writing times: ISO 8601 UTC, local wall-clock times in IANA zones.

Inside firstrung every time is UTC, held as ``numpy.datetime64`` with
millisecond resolution. Log files give either ``time_utc`` (ISO 8601, with no
offset, a trailing ``Z`` or a zero offset) or ``time_local`` (ISO 8601 without
offset, read in the site's IANA zone). A local time that falls in a
daylight-saving gap (it never happened) or overlap (it happened twice) is
refused, never guessed.
"""

from __future__ import annotations

import datetime as dt
import re
from zoneinfo import ZoneInfo

import numpy as np

from firstrung.constants import EPHEMERIS_FIRST_UTC, EPHEMERIS_LAST_UTC
from firstrung.errors import InputError
from firstrung.patterns import pattern

__all__ = [
    "TimeFormatError",
    "check_zone",
    "in_ephemeris_span",
    "parse_local",
    "parse_utc",
    "quoted",
    "to_iso_z",
]

#: Example shown in messages about UTC times.
_UTC_EXAMPLE = "2027-03-20T11:38:00Z"
#: Example shown in messages about local times.
_LOCAL_EXAMPLE = "2027-03-20T12:38:00"

_ISO_RE = pattern(
    r"""
    ^\s*
    (?P<year>\d{4})-(?P<month>\d{2})-(?P<day>\d{2})
    [Tt\ ]
    (?P<hour>\d{2}):(?P<minute>\d{2})
    (?::(?P<second>\d{2})(?:[.,](?P<fraction>\d+))?)?
    \s*
    (?P<offset>[Zz]|[+-]\d{2}(?::?\d{2})?)?
    \s*$
    """,
    re.VERBOSE,
)

_UTC = dt.UTC


#: Longest text quoted whole in a message; longer text is cut and its length given.
QUOTED_LIMIT = 40


class TimeFormatError(InputError):
    """A time that is not a valid ISO 8601 time of the expected kind."""


def quoted(text: object) -> str:
    """Text as a message quotes it: ``repr``, cut to its start when very long.

    Examples
    --------
    >>> quoted("2027-03-20")
    "'2027-03-20'"
    >>> quoted("9" * 400)
    "'99999999999999999999...' (400 characters)"
    """
    if isinstance(text, str) and len(text) > QUOTED_LIMIT:
        return f"{text[: QUOTED_LIMIT // 2] + '...'!r} ({len(text)} characters)"
    return repr(text)


def _split_iso(text: str, expected: str) -> tuple[dt.datetime, str | None]:
    """Read an ISO 8601 date-time into a naive datetime (whole ms) and its offset text.

    Parameters
    ----------
    text : str
        The text to read.
    expected : str
        The start of the message when the text is not a date-time.

    Returns
    -------
    datetime.datetime, str or None
        The naive wall-clock time, rounded to the millisecond, and the offset
        as written (``None`` when absent).

    Raises
    ------
    TimeFormatError
        When the text is not an ISO 8601 date-time or names an impossible date.
    """
    if not isinstance(text, str):
        raise TimeFormatError(f"{expected}, got {quoted(text)}")
    match = _ISO_RE().match(text)
    if match is None:
        raise TimeFormatError(f"{expected}, got {quoted(text)}")
    fraction = match["fraction"] or ""
    # Round to the nearest millisecond from the written digits (no float round-off).
    padded = (fraction + "0000")[:4]
    milliseconds = (int(padded) + 5) // 10 if fraction else 0
    try:
        wall = dt.datetime(
            int(match["year"]),
            int(match["month"]),
            int(match["day"]),
            int(match["hour"]),
            int(match["minute"]),
            int(match["second"] or 0),
        )
    except ValueError:
        raise TimeFormatError(f"{expected}, got {quoted(text)} (no such date or time)") from None
    wall += dt.timedelta(milliseconds=milliseconds)
    return wall, match["offset"]


def _offset_minutes(offset: str) -> int:
    """Minutes east of UTC of an ISO 8601 offset such as ``+01:00``, ``-0530`` or ``Z``."""
    if offset in ("Z", "z"):
        return 0
    digits = offset[1:].replace(":", "")
    minutes = int(digits[:2]) * 60 + (int(digits[2:]) if len(digits) > 2 else 0)
    return -minutes if offset[0] == "-" else minutes


def _to_datetime64(utc: dt.datetime) -> np.datetime64:
    """A naive or aware UTC datetime as ``numpy.datetime64[ms]``."""
    if utc.tzinfo is not None:
        utc = utc.astimezone(_UTC).replace(tzinfo=None)
    return np.datetime64(utc, "ms")


def parse_utc(text: str) -> np.datetime64:
    """Read an ISO 8601 UTC time.

    Parameters
    ----------
    text : str
        ``YYYY-MM-DDTHH:MM[:SS[.fff]]`` with ``T`` or a space between date and
        time, optionally followed by ``Z`` or a zero offset (``+00:00``).
        Without an offset the time is taken as UTC (the column is
        ``time_utc``). Fractional seconds are rounded to the millisecond;
        ISO 8601 allows a comma as their decimal sign (``11:38:00,5``).

    Returns
    -------
    numpy.datetime64
        The instant, unit ``ms``.

    Raises
    ------
    TimeFormatError
        When the text is not such a time, or carries a non-zero offset.

    Examples
    --------
    >>> parse_utc("2027-03-20T11:38:00Z")
    np.datetime64('2027-03-20T11:38:00.000')
    >>> parse_utc("2027-03-20 11:38")
    np.datetime64('2027-03-20T11:38:00.000')
    """
    expected = f"expected an ISO 8601 UTC time such as {_UTC_EXAMPLE}"
    wall, offset = _split_iso(text, expected)
    if offset is not None and _offset_minutes(offset) != 0:
        raise TimeFormatError(
            f"{expected}, got {quoted(text)} (offset {offset} is not UTC; "
            "convert it to UTC or give time_local)"
        )
    return _to_datetime64(wall)


def check_zone(name: str) -> ZoneInfo:
    """Return the IANA time zone of that name.

    Parameters
    ----------
    name : str
        An IANA zone name such as ``Europe/Zurich``.

    Returns
    -------
    zoneinfo.ZoneInfo

    Raises
    ------
    InputError
        When no such zone exists.

    Examples
    --------
    >>> check_zone("Europe/Zurich").key
    'Europe/Zurich'
    """
    if not isinstance(name, str) or not name.strip():
        raise InputError(f"unknown IANA time zone {name!r}")
    try:
        return ZoneInfo(name)
    except (ValueError, KeyError, OSError, TypeError):
        # ZoneInfoNotFoundError is a KeyError; malformed keys raise ValueError,
        # and a folder of the zone database (e.g. "Europe") an OSError.
        raise InputError(f"unknown IANA time zone {name!r}") from None


def parse_local(text: str, zone: str) -> np.datetime64:
    """Read an ISO 8601 wall-clock time in an IANA zone and return it in UTC.

    Parameters
    ----------
    text : str
        ``YYYY-MM-DDTHH:MM[:SS[.fff]]`` without any offset.
    zone : str
        IANA zone name of the clock, e.g. ``Europe/Zurich``.

    Returns
    -------
    numpy.datetime64
        The instant in UTC, unit ``ms``.

    Raises
    ------
    TimeFormatError
        When the text is not such a time, carries an offset, falls in a
        daylight-saving gap (a time the clocks skipped) or in an overlap (a
        time that happened twice; the message gives both UTC readings).
    InputError
        When the zone is unknown.

    Notes
    -----
    Gaps and overlaps are found with the ``fold`` round trip of PEP 495: the
    two readings of a wall time (``fold=0`` and ``fold=1``) give different UTC
    instants exactly when the time is in a gap or an overlap; in a gap the
    UTC instant does not convert back to the same wall time.

    Examples
    --------
    >>> parse_local("2027-03-20T12:38:00", "Europe/Zurich")
    np.datetime64('2027-03-20T11:38:00.000')
    """
    tz = check_zone(zone)
    expected = f"expected an ISO 8601 local time without offset such as {_LOCAL_EXAMPLE}"
    wall, offset = _split_iso(text, expected)
    if offset is not None:
        raise TimeFormatError(
            f"{expected}, got {quoted(text)} (time_local must have no offset; "
            "give times with an offset as time_utc in UTC)"
        )
    first = wall.replace(tzinfo=tz, fold=0).astimezone(_UTC)
    second = wall.replace(tzinfo=tz, fold=1).astimezone(_UTC)
    if first != second:
        shown = wall.isoformat(timespec="seconds")
        if first.astimezone(tz).replace(tzinfo=None) != wall:
            raise TimeFormatError(
                f"local time {shown} does not exist in {zone}: the clocks jump "
                "forward over it (daylight saving starts); check the clock, or give time_utc"
            )
        earlier, later = sorted((first, second))
        raise TimeFormatError(
            f"local time {shown} is ambiguous in {zone}: the clocks go back "
            f"and it happens twice (daylight saving ends), at {to_iso_z(_to_datetime64(earlier))} and "
            f"{to_iso_z(_to_datetime64(later))}; give time_utc"
        )
    return _to_datetime64(first)


def in_ephemeris_span(t_utc) -> np.ndarray:
    """Whether times fall within the span of the bundled ephemeris.

    Parameters
    ----------
    t_utc : numpy.datetime64 or array of them
        UTC instants [any datetime64 unit]; ``NaT`` is outside.

    Returns
    -------
    numpy.ndarray of bool
        Same shape as the input; the span's ends
        (:data:`~firstrung.constants.EPHEMERIS_FIRST_UTC`,
        :data:`~firstrung.constants.EPHEMERIS_LAST_UTC`) count as inside.

    Examples
    --------
    >>> in_ephemeris_span(np.array(["1850-01-01", "2027-03-20"], dtype="datetime64[ms]"))
    array([False,  True])
    """
    t = np.asarray(t_utc, dtype="datetime64[ms]")
    first = np.datetime64(EPHEMERIS_FIRST_UTC, "ms")
    last = np.datetime64(EPHEMERIS_LAST_UTC, "ms")
    return (t >= first) & (t <= last)


def to_iso_z(t_utc, *, milliseconds: bool = False) -> str:
    """Write a UTC instant as ISO 8601 ending in ``Z``.

    Parameters
    ----------
    t_utc : numpy.datetime64
        A UTC instant [any datetime64 unit].
    milliseconds : bool, optional
        Keep milliseconds (``...:SS.fffZ``); by default the time is rounded
        to the nearest second (half a second rounds up).

    Returns
    -------
    str
        ``YYYY-MM-DDTHH:MM:SSZ`` or ``YYYY-MM-DDTHH:MM:SS.fffZ``.

    Raises
    ------
    InputError
        When the value is ``NaT``.

    Examples
    --------
    >>> to_iso_z(np.datetime64("2027-03-20T11:37:59.600"))
    '2027-03-20T11:38:00Z'
    >>> to_iso_z(np.datetime64("2027-03-20T11:37:59.600"), milliseconds=True)
    '2027-03-20T11:37:59.600Z'
    """
    t = np.datetime64(t_utc, "ms")
    if np.isnat(t):
        raise InputError("expected a time, got NaT (not a time)")
    if milliseconds:
        return str(np.datetime_as_string(t, unit="ms")) + "Z"
    ms = int(t.astype(np.int64))
    seconds = np.datetime64((ms + 500) // 1000, "s")
    return str(np.datetime_as_string(seconds, unit="s")) + "Z"
