"""The Sun's hourly grid computed in two halves at once (firstrung.ephemeris.sun._sun_grid) holds the
same numbers as the grid computed in one piece, to the last bit: each node's value is its own."""

from __future__ import annotations

import numpy as np
import pytest

from firstrung.ephemeris import sun


@pytest.mark.parametrize(("start_tt_jd", "nodes"), [(2461406.0, 8809), (2433000.5, 2049), (2470000.25, 3001)])
def test_halves_give_the_one_piece_grid(monkeypatch, start_tt_jd, nodes):
    monkeypatch.setattr(sun, "grid_table_nodes", lambda tt, step: None)  # computed, not read from the table
    halves = sun._sun_grid.__wrapped__(start_tt_jd, nodes, 1.0 / 24.0)
    monkeypatch.setattr(sun, "_GRID_SPLIT_NODES", 10**9)
    whole = sun._sun_grid.__wrapped__(start_tt_jd, nodes, 1.0 / 24.0)
    assert halves[0].shape == (3, nodes) and halves[1].shape == (nodes,)
    np.testing.assert_array_equal(halves[0], whole[0])
    np.testing.assert_array_equal(halves[1], whole[1])
    assert np.all(np.diff(halves[1]) > 0)  # GAST unwrapped across the join
