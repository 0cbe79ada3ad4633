"""Equinoxes and solstices from DE421 (skyfield's almanac search)."""

from __future__ import annotations

import numpy as np

from firstrung.ephemeris._core import _loaded, _utc_datetime64, check_in_span, ephemeris_span_utc

#: Names of the four events by skyfield's season index, in the order of the year.
SEASON_NAMES = ("March equinox", "June solstice", "September equinox", "December solstice")


def equinoxes_and_solstices(first_utc, last_utc) -> tuple[np.ndarray, np.ndarray]:
    """Instants [UTC] and names of the equinoxes and solstices between two times.

    The instants are those when the Sun's apparent geocentric ecliptic
    longitude of date is a multiple of 90 deg.

    >>> t, names = equinoxes_and_solstices(np.datetime64("2027-01-01"), np.datetime64("2028-01-01"))
    >>> [str(x.astype("datetime64[D]")) for x in t][:2], [str(n) for n in names[:2]]
    (['2027-03-20', '2027-06-21'], ['March equinox', 'June solstice'])
    """
    from skyfield import almanac

    first = np.datetime64(first_utc, "us")
    last = np.datetime64(last_utc, "us")
    check_in_span(np.array([first, last]))
    # the search's light-time corrections reach minutes before its first instant: stay a day inside
    # DE421's span (no equinox or solstice falls in its first or last day)
    span_first, span_last = ephemeris_span_utc()
    margin = np.timedelta64(1, "D")
    first = max(first, (span_first + margin).astype("datetime64[us]"))
    last = min(last, (span_last - margin).astype("datetime64[us]"))
    if last <= first:
        return np.array([], dtype="datetime64[us]"), np.array([], dtype=str)
    ts, eph, _, _ = _loaded()
    start = ts.from_datetime(first.astype("datetime64[us]").item().replace(tzinfo=_utc()))
    end = ts.from_datetime(last.astype("datetime64[us]").item().replace(tzinfo=_utc()))
    t, index = almanac.find_discrete(start, end, almanac.seasons(eph))
    return _utc_datetime64(t).reshape(-1), np.array([SEASON_NAMES[i] for i in np.asarray(index).reshape(-1)])


def _utc():
    import datetime as dt

    return dt.UTC
