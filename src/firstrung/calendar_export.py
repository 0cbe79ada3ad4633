"""Calendar files (RFC 5545) for planned observing sessions, via the icalendar library.

Events carry UTC start and end times (``DTSTART:...Z``), which every ordinary
calendar program imports without a VTIMEZONE; the site's local time goes in
the description. UIDs and DTSTAMPs are derived from the event itself, so the
same plan always gives a byte-identical file.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass

import numpy as np


@dataclass(frozen=True)
class CalendarEvent:
    """One observing session."""

    uid: str
    start_utc: np.datetime64
    end_utc: np.datetime64
    summary: str
    description: str
    location: str = ""
    geo: tuple[float, float] | None = None  # latitude, longitude [deg]


def _aware(t) -> dt.datetime:
    return np.datetime64(t, "s").astype(dt.datetime).replace(tzinfo=dt.UTC)


def events_to_ics(events, calendar_name: str) -> bytes:
    """RFC 5545 text of the events.

    ``DTSTAMP`` (when the event object was made) is set to the event's start,
    a deterministic stand-in that calendar programs accept.

    >>> e = CalendarEvent("x@firstrung", np.datetime64("2027-03-20T11:00"), np.datetime64("2027-03-20T12:00"), "Noon", "")
    >>> b"DTSTART:20270320T110000Z" in events_to_ics([e], "Plan")
    True
    """
    from icalendar import Calendar, Event

    cal = Calendar()
    cal.add("prodid", "-//firstrung//campaign planner//EN")
    cal.add("version", "2.0")
    cal.add("calscale", "GREGORIAN")
    cal.add("x-wr-calname", calendar_name)
    for e in events:
        ev = Event()
        ev.add("uid", e.uid)
        ev.add("dtstamp", _aware(e.start_utc))
        ev.add("dtstart", _aware(e.start_utc))
        ev.add("dtend", _aware(e.end_utc))
        ev.add("summary", e.summary)
        ev.add("description", e.description)
        if e.location:
            ev.add("location", e.location)
        if e.geo is not None:
            ev.add("geo", (float(e.geo[0]), float(e.geo[1])))
        cal.add_component(ev)
    return cal.to_ical()
