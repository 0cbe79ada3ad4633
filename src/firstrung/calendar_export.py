"""Calendar files (RFC 5545) for planned observing sessions, via the icalendar library.

Events carry UTC start and end times (``DTSTART:...Z``), which every ordinary
calendar program imports without a VTIMEZONE; the site's local time goes in
the description. UIDs and DTSTAMPs are derived from the event itself, so the
same plan always gives a byte-identical file.

Text from a campaign file (its name, site names and ids) is cleaned of
control characters before it reaches a calendar (:func:`calendar_text`), and
every file is checked line by line before it is returned
(:func:`checked_ical`): no raw line break, escape or bell can end up in it,
whatever a name holds, with or without Python's ``-O``.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass

import numpy as np

from firstrung.patterns import CONTROL_CHARACTERS, pattern


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


#: A physical content line of RFC 5545: a property name then ';' or ':', or a folded continuation.
_CONTENT_LINE = pattern(r"(?:[A-Za-z0-9-]+[;:]| )[^\x00-\x08\x0a-\x1f\x7f]*")


def calendar_text(value: str, *, one_line: bool = False) -> str:
    r"""Text fit for a calendar property: control characters dropped, line breaks kept only if wanted.

    >>> calendar_text("Club\x1b[2J dome\x07")
    'Club[2J dome'
    >>> calendar_text("Line 1\r\nINJECTED:1", one_line=True)
    'Line 1 INJECTED:1'
    """
    text = str(value).replace("\r\n", "\n").replace("\r", "\n")
    text = CONTROL_CHARACTERS().sub("", text.replace("\t", " "))
    if one_line:
        text = " ".join(text.split("\n"))
    return text


def checked_ical(calendar) -> bytes:
    """The calendar's bytes, after checking that every line is a content line (RFC 5545 3.1).

    Raises
    ------
    RuntimeError
        When a line is not a property or a folded continuation, or holds a
        control character (a fault of firstrung: text is cleaned before).
    """
    data = calendar.to_ical()
    lines = data.decode("utf-8").split("\r\n")
    if lines and lines[-1] == "":
        lines.pop()
    for number, line in enumerate(lines, start=1):
        if not _CONTENT_LINE().fullmatch(line):
            raise RuntimeError(f"calendar line {number} is not an RFC 5545 content line: {line[:40]!r}")
    return data


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
    from icalendar import Calendar, Event, vText

    cal = Calendar()
    cal.add("prodid", "-//firstrung//campaign planner//EN")
    cal.add("version", "2.0")
    cal.add("calscale", "GREGORIAN")
    cal.add("x-wr-calname", vText(calendar_text(calendar_name, one_line=True)))
    for e in events:
        ev = Event()
        ev.add("uid", vText(calendar_text(e.uid, one_line=True)))
        ev.add("dtstamp", _aware(e.start_utc))
        ev.add("dtstart", _aware(e.start_utc))
        ev.add("dtend", _aware(e.end_utc))
        ev.add("summary", calendar_text(e.summary, one_line=True))
        ev.add("description", calendar_text(e.description))
        if e.location:
            ev.add("location", calendar_text(e.location, one_line=True))
        if e.geo is not None:
            ev.add("geo", (float(e.geo[0]), float(e.geo[1])))
        cal.add_component(ev)
    return checked_ical(cal)
