"""The equinoxes and solstices of 2026-2035 kept in the package (firstrung.ephemeris.seasons' table)
give the dates skyfield's search gives (the outside reference: skyfield's almanac on DE421, run
again here), for every year and many ranges; a range the table cannot answer for sure is searched."""

from __future__ import annotations

import numpy as np
import pytest

from firstrung.ephemeris import seasons


def _searched(first, last, monkeypatch):
    with monkeypatch.context() as m:
        m.setattr(seasons, "_dates_from_table", lambda a, b: None)
        return seasons.equinox_and_solstice_dates(first, last)


def test_the_table_is_the_search_to_the_microsecond():
    instants, names = seasons.equinoxes_and_solstices(seasons.TABLE_FIRST_UTC, seasons.TABLE_LAST_UTC)
    kept, index = seasons._table()
    assert instants.tobytes() == kept.tobytes() and instants.size == 40
    assert [str(n) for n in names] == [seasons.SEASON_NAMES[i] for i in index]


def _ranges():
    rng = np.random.default_rng(18)
    out = [(f"{y}-01-01", f"{y}-12-31") for y in range(2026, 2036)]
    out += [("2027-03-20", "2027-03-21"), ("2027-03-21", "2027-06-20"), ("2026-01-01", "2035-12-31")]
    days = np.datetime64("2026-01-01") + rng.integers(0, 3650, (12, 2))
    out += [(str(min(a, b)), str(max(a, b) + 1)) for a, b in days]
    return out


@pytest.mark.parametrize(("first", "last"), _ranges())
def test_dates_from_the_table_are_the_searched_dates(first, last, monkeypatch):
    first_us, last_us = np.datetime64(first, "us"), np.datetime64(last, "us")
    from_table = seasons._dates_from_table(first_us, last_us)
    assert from_table is not None  # the table answered (no event near these midnights)
    searched = _searched(first_us, last_us, monkeypatch)
    assert from_table[0].dtype == searched[0].dtype and from_table[0].tolist() == searched[0].tolist()
    assert from_table[1].tolist() == searched[1].tolist()


def test_what_the_table_cannot_answer_is_searched():
    equinox = np.datetime64("2026-03-20T14:45:57", "us")
    assert seasons._dates_from_table(equinox - np.timedelta64(60, "s"), equinox + np.timedelta64(9, "D")) is None
    assert seasons._dates_from_table(np.datetime64("2025-06-01", "us"), np.datetime64("2026-06-01", "us")) is None
    assert seasons._dates_from_table(np.datetime64("2035-06-01", "us"), np.datetime64("2036-06-01", "us")) is None
    days, names = seasons.equinox_and_solstice_dates(np.datetime64("2040-01-01", "us"), np.datetime64("2040-12-31", "us"))
    # searched (after the table's years); the dates (UT) of 2040's events, from memory
    assert [str(d) for d in days] == ["2040-03-20", "2040-06-20", "2040-09-22", "2040-12-21"]
