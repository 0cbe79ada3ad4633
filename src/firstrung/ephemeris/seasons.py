"""Equinoxes and solstices from DE421 (skyfield's almanac search)."""

from __future__ import annotations

import functools
import os

import numpy as np

from firstrung.ephemeris._core import _loaded, _utc_datetime64, check_in_span, ephemeris_span_utc
from firstrung.ephemeris.sun_table import DATA_FOLDER, kept_table

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
    searched = _search(first_utc, last_utc)
    if searched is None:
        return np.array([], dtype="datetime64[us]"), np.array([], dtype=str)
    t, index = searched
    return _utc_datetime64(t).reshape(-1), np.array([SEASON_NAMES[i] for i in np.asarray(index).reshape(-1)])


#: How closely :func:`equinox_and_solstice_dates` searches an event before checking its date [days].
_TO_THE_DATE_DAYS = 60.0 / 86400.0


def equinox_and_solstice_dates(first_utc, last_utc) -> tuple[np.ndarray, np.ndarray]:
    """The UTC dates (datetime64[D]) and names of the equinoxes and solstices between two times.

    The same dates as :func:`equinoxes_and_solstices` gives, from a search to the minute instead
    of the millisecond (half skyfield's work): the same search stops earlier, so the instant it
    would refine lies in the minute found; when that minute holds a UTC midnight, the events are
    searched to the millisecond.

    >>> d, names = equinox_and_solstice_dates(np.datetime64("2027-01-01"), np.datetime64("2028-01-01"))
    >>> [str(x) for x in d], [str(n) for n in names][:1]
    (['2027-03-20', '2027-06-21', '2027-09-23', '2027-12-22'], ['March equinox'])
    """
    kept = _dates_from_table(first_utc, last_utc)
    if kept is not None:
        return kept
    searched = _search(first_utc, last_utc, epsilon_days=_TO_THE_DATE_DAYS)
    if searched is None:
        return np.array([], dtype="datetime64[D]"), np.array([], dtype=str)
    t, index = searched
    ts = t.ts
    ends = np.asarray(t.tt).reshape(-1)
    late = _utc_datetime64(ts.tt_jd(ends)).reshape(-1).astype("datetime64[D]")
    early = _utc_datetime64(ts.tt_jd(ends - _TO_THE_DATE_DAYS)).reshape(-1).astype("datetime64[D]")
    if np.any(early != late):  # a midnight within the minute: the date needs the full search
        t_full, names = equinoxes_and_solstices(first_utc, last_utc)
        return t_full.astype("datetime64[D]"), names
    return late, np.array([SEASON_NAMES[i] for i in np.asarray(index).reshape(-1)])


def _search(first_utc, last_utc, epsilon_days: float | None = None):
    """skyfield's search for the seasons' changes between two times (its Time and season index),
    or None when the range holds no instant of DE421's span."""
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
        return None
    ts, eph, _, _ = _loaded()
    start = ts.from_datetime(first.astype("datetime64[us]").item().replace(tzinfo=_utc()))
    end = ts.from_datetime(last.astype("datetime64[us]").item().replace(tzinfo=_utc()))
    if epsilon_days is None:
        return almanac.find_discrete(start, end, almanac.seasons(eph))
    return almanac.find_discrete(start, end, almanac.seasons(eph), epsilon=epsilon_days)


def _utc():
    import datetime as dt

    return dt.UTC


# --- the events of 2026-2035, found once ------------------------------------------------------------

#: The events of these years, found once by :func:`equinoxes_and_solstices` (to the millisecond) and
#: kept in the package (``python -m firstrung.ephemeris.seasons`` writes the file again): instants
#: [us since 1970, UTC] and season indices, one column an event.
TABLE_FILE = os.path.join(DATA_FOLDER, "seasons_2026_2035.npy")
TABLE_FIRST_UTC = np.datetime64("2026-01-01T00:00", "us")
TABLE_LAST_UTC = np.datetime64("2036-01-01T00:00", "us")
#: An event this close to an end of the range asked for, or to a UTC midnight, is left to the search.
_TABLE_MARGIN = np.timedelta64(2, "m")


@functools.lru_cache(maxsize=1)
def _table():
    table = kept_table(TABLE_FILE)
    return None if table is None else (table[0].astype("datetime64[us]"), table[1])


def _dates_from_table(first_utc, last_utc):
    """:func:`equinox_and_solstice_dates` from the table, or None (the search then decides) for a range
    outside 2026-2035 or an event within two minutes of one of its ends or of a midnight."""
    table = _table()
    if table is None:
        return None
    first, last = np.datetime64(first_utc, "us"), np.datetime64(last_utc, "us")
    if first < TABLE_FIRST_UTC or last > TABLE_LAST_UTC or last <= first:
        return None
    instants, index = table
    days = instants.astype("datetime64[D]")
    keep = (instants >= first) & (instants <= last)
    at_an_end = (np.abs(instants - first) <= _TABLE_MARGIN) | (np.abs(instants - last) <= _TABLE_MARGIN)
    at_midnight = (instants - days.astype("datetime64[us]") <= _TABLE_MARGIN) | (
        (days + np.timedelta64(1, "D")).astype("datetime64[us]") - instants <= _TABLE_MARGIN)
    if np.any(at_an_end | (at_midnight & keep)):
        return None
    return days[keep], np.array([SEASON_NAMES[i] for i in index[keep]])


def write_table(path: str = TABLE_FILE) -> None:
    """Find every event of 2026-2035 to the millisecond and write the table."""
    instants, names = equinoxes_and_solstices(TABLE_FIRST_UTC, TABLE_LAST_UTC)
    index = [SEASON_NAMES.index(str(n)) for n in names]
    np.save(path, np.array([instants.astype(np.int64), index], dtype=np.int64))


if __name__ == "__main__":
    write_table()
