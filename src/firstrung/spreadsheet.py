"""Cells as a spreadsheet types them: header names with their unit in brackets, dates in their own
column in the order a locale writes them, and times of day on a 24-hour or a 12-hour clock.

Each function reads one cell and either returns the ISO 8601 form the rest of
the readers understand or raises :class:`~firstrung.times.TimeFormatError`
with the message for the one-line problem.
"""

from __future__ import annotations

import re

import numpy as np

from firstrung.constants import EPHEMERIS_FIRST_UTC, EPHEMERIS_LAST_UTC
from firstrung.patterns import pattern
from firstrung.times import TimeFormatError, in_ephemeris_span, quoted

__all__ = [
    "date_and_time_text", "header_name", "iso_date", "iso_time_of_day", "joined_date_time", "mean_noon_utc",
]

#: A unit in parentheses or brackets at the end of a header cell: ``Shadow (cm)``.
_BRACKETED_RE = pattern(r"\s*[\(\[]\s*([^\)\]]*?)\s*[\)\]]\s*$")
#: Units as typed in a header and the name they stand for in a column name.
_UNIT_WORDS = {"°": "deg", "degrees": "deg", "degree": "deg", "metres": "m", "meters": "m"}

_ISO_DATE_RE = pattern(r"^(\d{4})-(\d{1,2})-(\d{1,2})$")
_NUMERIC_DATE_RE = pattern(r"^(\d{1,2})([./-])(\d{1,2})\2(\d{4})$")
_TIME_OF_DAY_RE = pattern(
    r"^(?P<hour>\d{1,2}):(?P<minute>\d{2})(?::(?P<second>\d{2})(?:[.,](?P<fraction>\d{1,6}))?)?"
    r"\s*(?P<half>[AaPp]\.?\s*[Mm]\.?)?\s*(?P<zone>Z|\+00:?00)?$"
)
_MONTH_FIRST = "month-first"
_DAY_FIRST = "day-first"


def header_name(cell: str) -> str:
    """A header cell as a column name: lower case, unit in brackets joined with ``_``.

    >>> header_name(" Shadow (cm) "), header_name("Altitude [deg]"), header_name("Time (local)")
    ('shadow_cm', 'altitude_deg', 'time_local')
    >>> header_name("Time UTC")
    'time_utc'
    """
    name = cell.replace("\ufeff", "").strip().lower()
    match = _BRACKETED_RE().search(name)
    if match is not None and match.group(1):
        unit = _UNIT_WORDS.get(match.group(1), match.group(1))
        name = f"{name[: match.start()].strip()}_{unit}"
    return re.sub(r"\s+", "_", name)


def iso_date(text: str, order: str = "iso") -> str:
    """A date cell as ``YYYY-MM-DD``.

    ISO dates are always read. ``22/09/2027`` and ``22.09.2027`` are read
    day-first when ``order`` is ``"day-first"``, month-first when it is
    ``"month-first"``; with ``"iso"`` such a date is read only when it cannot
    be read two ways (a day above 12).

    >>> iso_date("22.09.2027"), iso_date("03/04/2027", "day-first"), iso_date("09/22/2027")
    ('2027-09-22', '2027-04-03', '2027-09-22')
    """
    text = text.strip()
    match = _ISO_DATE_RE().match(text)
    if match is not None:
        year, month, day = (int(part) for part in match.groups())
    else:
        match = _NUMERIC_DATE_RE().match(text)
        if match is None:
            raise TimeFormatError(f"expected a date such as 2027-09-22, got {quoted(text)}")
        first, second, year = int(match.group(1)), int(match.group(3)), int(match.group(4))
        if order == _DAY_FIRST or (order != _MONTH_FIRST and first > 12 >= second):
            day, month = first, second
        elif order == _MONTH_FIRST or (second > 12 >= first):
            day, month = second, first
        else:
            raise TimeFormatError(
                f"ambiguous date {quoted(text)}: day {first} of month {second} or day {second} of "
                f"month {first}? set [logs] date_order = \"day-first\" or \"month-first\" in the "
                "campaign file, or write 2027-09-22"
            )
    if not (1 <= month <= 12 and 1 <= day <= _days_in_month(year, month)):
        raise TimeFormatError(f"expected a date such as 2027-09-22, got {quoted(text)} (no such date)")
    return f"{year:04d}-{month:02d}-{day:02d}"


def _days_in_month(year: int, month: int) -> int:
    if month == 2:
        return 29 if (year % 4 == 0 and year % 100 != 0) or year % 400 == 0 else 28
    return 30 if month in (4, 6, 9, 11) else 31


def iso_time_of_day(text: str) -> str:
    """A time-of-day cell as ``HH:MM:SS[.fff]`` on a 24-hour clock.

    >>> iso_time_of_day("13:14"), iso_time_of_day("1:14:10 PM"), iso_time_of_day("12:05 am")
    ('13:14:00', '13:14:10', '00:05:00')
    """
    match = _TIME_OF_DAY_RE().match(text.strip())
    if match is None:
        raise TimeFormatError(
            f"expected a time of day such as 13:14, 13:14:10 or 1:14 PM (the date is in the "
            f"date column), got {quoted(text)}"
        )
    hour, minute = int(match["hour"]), int(match["minute"])
    second = int(match["second"] or 0)
    half = match["half"]
    if half is not None:
        if not 1 <= hour <= 12:
            raise TimeFormatError(f"expected an hour from 1 to 12 before AM or PM, got {quoted(text)}")
        hour = hour % 12 + (12 if half[0] in "Pp" else 0)
    if hour > 23 or minute > 59 or second > 59:
        raise TimeFormatError(f"expected a time of day such as 13:14, got {quoted(text)} (no such time)")
    fraction = f".{match['fraction']}" if match["fraction"] else ""
    return f"{hour:02d}:{minute:02d}:{second:02d}{fraction}"


def joined_date_time(date_text: str, time_text: str, order: str = "iso") -> str:
    """A date cell and a time-of-day cell as one ISO 8601 date-time (no offset).

    >>> joined_date_time("22/09/2027", "1:14 PM", "day-first")
    '2027-09-22T13:14:00'
    """
    return f"{iso_date(date_text, order)}T{iso_time_of_day(time_text)}"


def date_and_time_text(date_text: str, time_text: str, order: str = "iso") -> tuple[str, str | None, str | None]:
    """The ISO date-time of a date cell and a time cell, or which cell is wrong and why.

    Returns ``(text, None, None)`` or ``(time_text, "date" | "time", message)``.

    >>> date_and_time_text("03/04/2027", "12:00")[1]
    'date'
    """
    try:
        iso_date(date_text, order)
    except TimeFormatError as error:
        return time_text, "date", error.message
    try:
        return joined_date_time(date_text, time_text, order), None, None
    except TimeFormatError as error:
        return time_text, "time", error.message


def mean_noon_utc(date_text: str, order: str, site) -> tuple[np.datetime64, str | None]:
    """12:00 local mean time at the site on the date of a cell, as UTC, or why it cannot be had.

    A reading without a time (a shadow-tip trace) is placed there; its
    reduction finds the true noon itself.

    >>> from types import SimpleNamespace
    >>> mean_noon_utc("2027-09-22", "iso", SimpleNamespace(longitude_deg=15.0))[0]
    np.datetime64('2027-09-22T11:00:00.000')
    """
    nat = np.datetime64("NaT", "ms")
    try:
        day = iso_date(date_text, order)
    except TimeFormatError as error:
        return nat, error.message
    if site is None:
        return nat, None  # the site problem says why
    shift_ms = int(round(site.longitude_deg / 15.0 * 3600e3))
    t = np.datetime64(f"{day}T12:00", "ms") - np.timedelta64(shift_ms, "ms")
    if not in_ephemeris_span(t):
        span = f"{EPHEMERIS_FIRST_UTC[:10]} and {EPHEMERIS_LAST_UTC[:10]}"
        return nat, f"expected a date between {span} (the span of the bundled ephemeris), got {quoted(date_text)}"
    return t, None
