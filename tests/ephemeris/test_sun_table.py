"""The table of the Sun's hourly nodes for 2026-2035 (firstrung.ephemeris.sun_table) holds the numbers
the grid computes with skyfield and DE421, bit for bit: stretches of it computed again here, a year's
grid and a year's plan taken both ways. The outside reference is skyfield's own computation (the
grid's function), run again here on the same instants."""

from __future__ import annotations

import contextlib
import io
import json
from pathlib import Path

import numpy as np
import pytest

from firstrung.ephemeris import sun, sun_table

STEP = sun._GRID_STEP_H / 24.0
EXAMPLE = Path(__file__).resolve().parents[2] / "examples" / "campaign.toml"


@pytest.mark.parametrize("first", [0, 1, 23, 24 * 400 + 7, 24 * 1827 + 12, 24 * sun_table.DAYS - 40])
def test_stretches_of_the_table_are_the_computed_nodes(first):
    count = min(41, 24 * sun_table.DAYS + 1 - first)
    tt = sun_table.node_times(first, count, STEP)
    table = sun_table.grid_nodes(tt, STEP)
    computed = sun._grid_nodes(tt)
    assert table is not None
    assert table[0].tobytes() == computed[0].tobytes() and table[1].tobytes() == computed[1].tobytes()


def test_a_years_grid_is_the_same_from_the_table(monkeypatch):
    start, nodes = 2461406.0, 8809  # 2027, as a year's plan asks for it
    from_table = sun._sun_grid.__wrapped__(start, nodes, STEP)
    assert sun_table.grid_nodes(start + STEP * np.arange(nodes), STEP) is not None  # the table served it
    monkeypatch.setattr(sun, "grid_table_nodes", lambda tt, step: None)
    computed = sun._sun_grid.__wrapped__(start, nodes, STEP)
    for a, b in zip(from_table, computed, strict=True):
        assert a.tobytes() == b.tobytes()


def test_what_the_table_does_not_hold_is_computed():
    assert sun_table.grid_nodes(2470000.25 + STEP * np.arange(10), STEP) is None  # after 2035
    assert sun_table.grid_nodes(2461040.0 + STEP * np.arange(10), STEP) is None  # before 2026
    assert sun_table.grid_nodes(2461406.01 + STEP * np.arange(10), STEP) is None  # between its nodes
    assert sun_table.grid_nodes(2461406.0 + 0.5 * STEP * np.arange(10), STEP / 2) is None  # another step
    end = 24 * sun_table.DAYS + 1
    assert sun_table.grid_nodes(sun_table.node_times(end - 5, 6, STEP), STEP) is None  # one past the end


def _plan_json(args: list[str]) -> dict:
    from firstrung.cli import main

    out = io.StringIO()
    with contextlib.redirect_stdout(out), pytest.raises(SystemExit) as stop:
        main(args)
    assert stop.value.code in (0, None)
    return json.loads(out.getvalue())


def test_a_years_plan_prints_the_same_with_or_without_the_table(monkeypatch):
    args = ["plan", "shadows", str(EXAMPLE), "--from", "2027-01-01", "--to", "2027-12-31", "--json"]
    sun._sun_grid.cache_clear()
    sun._sun_grid_stacked.cache_clear()
    with_table = _plan_json(args)
    sun._sun_grid.cache_clear()
    sun._sun_grid_stacked.cache_clear()
    monkeypatch.setattr(sun, "grid_table_nodes", lambda tt, step: None)
    without = _plan_json(args)
    sun._sun_grid.cache_clear()
    sun._sun_grid_stacked.cache_clear()
    assert with_table == without and len(with_table["days"]) == 365


def test_a_few_sites_years_noons_come_from_the_table_within_microarcseconds_of_skyfield(monkeypatch):
    """A year's noons at 10 sites (3,650 times) were computed directly, slower than the grid of 30 sites
    (issue 18: fewer sites must not cost more). Within the table's years they are read from it, and
    agree with skyfield's direct computation (the outside reference) within 1e-5" (1.6e-6" measured; the
    interpolation's own error, far below anything a plan prints)."""
    days = np.arange(np.datetime64("2027-01-01"), np.datetime64("2028-01-01"))
    times = (days[:, None] + np.timedelta64(12, "h") + (np.arange(10) * np.timedelta64(37, "m"))).ravel()
    direct_xyz, direct_gast = sun._geocentric_sun(times, grid=False)
    calls = []
    original = sun._direct_geocentric_sun
    monkeypatch.setattr(sun, "_direct_geocentric_sun", lambda t: calls.append(1) or original(t))
    xyz, gast = sun._geocentric_sun(times.astype("datetime64[us]"))
    assert calls == []  # no skyfield Sun: the table's nodes, interpolated
    angle_rad = np.arctan2(np.linalg.norm(np.cross(xyz, direct_xyz, axis=0), axis=0), np.sum(xyz * direct_xyz, axis=0))
    assert np.degrees(angle_rad).max() * 3600.0 < 1e-5
    # sidereal time within 1e-8 rad (0.002", 0.14 ms of time; 2.8e-9 rad measured)
    assert np.max(np.abs(np.angle(np.exp(1j * (gast - direct_gast))))) < 1e-8
    monkeypatch.setattr(sun, "_RECENT_DIRECT", {})
    few = times[:3]  # a few times (a small check) are still computed directly, the same numbers as before
    sun._geocentric_sun(few.astype("datetime64[us]"))
    assert calls == [1]
