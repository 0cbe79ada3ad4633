"""The dates of the equinoxes and solstices from the search to the minute are the dates of the full
search (firstrung.ephemeris.seasons), and the published dates."""

from __future__ import annotations

import numpy as np
import pytest

from firstrung.ephemeris import seasons


@pytest.mark.parametrize("year", [1901, 1950, 1999, 2024, 2027, 2031, 2048])
def test_dates_are_the_full_searchs_dates(year):
    first, last = np.datetime64(f"{year}-01-01"), np.datetime64(f"{year + 1}-01-01")
    t, names = seasons.equinoxes_and_solstices(first, last)
    days, day_names = seasons.equinox_and_solstice_dates(first, last)
    assert [str(d) for d in days] == [str(x) for x in t.astype("datetime64[D]")]
    assert list(day_names) == list(names) and len(days) == 4


def test_published_dates_2027():
    # the dates (UT) of the 2027 equinoxes and solstices as the almanacs list them (USNO's "Earth's
    # Seasons"), from memory: Mar 20, Jun 21, Sep 23 (just after midnight), Dec 22
    days, names = seasons.equinox_and_solstice_dates(np.datetime64("2027-01-01"), np.datetime64("2028-01-01"))
    assert [str(d) for d in days] == ["2027-03-20", "2027-06-21", "2027-09-23", "2027-12-22"]
    assert list(names) == list(seasons.SEASON_NAMES)


def test_a_midnight_near_the_instant_takes_the_full_search(monkeypatch):
    """When the minute found could straddle a UTC midnight, the date comes from the full search
    (forced here with a day-long 'minute': every event then straddles one)."""
    calls = []
    full = seasons.equinoxes_and_solstices
    monkeypatch.setattr(seasons, "equinoxes_and_solstices", lambda *a: calls.append(a) or full(*a))
    monkeypatch.setattr(seasons, "_TO_THE_DATE_DAYS", 1.0)
    monkeypatch.setattr(seasons, "_dates_from_table", lambda first, last: None)  # searched, not read
    days, _ = seasons.equinox_and_solstice_dates(np.datetime64("2027-01-01"), np.datetime64("2028-01-01"))
    assert calls and [str(d) for d in days] == ["2027-03-20", "2027-06-21", "2027-09-23", "2027-12-22"]
