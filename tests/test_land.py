"""Where the land is (``firstrung.land``): GSHHG's coastlines and land-sea mask as a dependency ships them,
the invented schools placed on that land, and the network map drawn from the same coastlines.

References outside the project:
- the GSHHG polygons themselves, tested point by point with matplotlib's ``Path.contains_points`` (an
  independent point-in-polygon test), for the mask's orientation and agreement;
- the share of the Earth's surface that is land, about 29 % (29.2 % in the CIA World Factbook's
  "World" entry, land 148.94 million km2 of 510.072 million km2; from memory);
- places whose land or water no map disputes (common practice).
"""

from __future__ import annotations

import numpy as np
import pytest

from firstrung.land import (
    LAND_LEVELS,
    LAND_SOURCE,
    coastline_polygons,
    land_mask,
    on_land,
    random_land_points,
)

#: (latitude, longitude, on land?) well away from any coast (common practice).
PLACES = [
    (46.5, 8.0, True),      # the Alps
    (-25.0, 134.0, True),   # central Australia
    (-19.0, 46.7, True),    # Madagascar's highlands
    (64.9, -18.5, True),    # Iceland's interior
    (7.8, 80.7, True),      # Sri Lanka
    (39.0, -100.0, True),   # Kansas
    (-15.0, -55.0, True),   # Mato Grosso
    (0.0, -30.0, False),    # the equatorial Atlantic
    (0.0, -150.0, False),   # the central Pacific
    (-30.0, 80.0, False),   # the southern Indian Ocean
    (42.0, 50.5, False),    # the Caspian Sea (a lake in GSHHG's hierarchy: water, no school)
    (-1.0, 33.0, False),    # Lake Victoria
    (-82.0, 0.0, True),     # the Antarctic ice sheet
]


def test_well_known_places_are_on_land_or_water_as_every_map_has_them():
    lat, lon, expected = map(np.array, zip(*PLACES, strict=True))
    assert on_land(lat, lon).tolist() == expected.tolist()
    assert on_land(46.5, 8.0).tolist() == [True]  # a scalar
    assert on_land(46.5, 8.0 + 360.0).tolist() == [True]  # a longitude past 180 wraps


def _polygon_truth(lat, lon):
    """Land by GSHHG's crude polygons and its hierarchy (a lake cuts its land, an island in it is land again)."""
    from matplotlib.path import Path

    points = np.c_[lon, lat]
    land = np.zeros(lat.size, bool)
    for level, _, xy in sorted(coastline_polygons("c"), key=lambda p: p[0]):
        inside = Path(xy).contains_points(points)
        land = land | inside if level in LAND_LEVELS else land & ~inside
    return land


def test_the_mask_agrees_with_the_coastline_polygons_and_land_covers_29_percent_of_the_earth():
    rng = np.random.default_rng(11)
    n = 6000
    lat = np.degrees(np.arcsin(rng.uniform(-1.0, 1.0, n)))  # uniform over the sphere
    lon = rng.uniform(-180.0, 180.0, n)
    mask = on_land(lat, lon)
    # the 5' mask against the polygons it was made from: only points within a cell of a coast differ
    assert np.mean(mask == _polygon_truth(lat, lon)) > 0.99
    # land 29.2 % of the surface (CIA World Factbook); 6,000 draws give +-0.6 % (one sigma)
    assert np.mean(mask) == pytest.approx(0.292, abs=0.02)


def test_the_data_come_from_the_package_and_are_read_once_per_process():
    polygons = coastline_polygons("c")
    assert len(polygons) == 1767 and coastline_polygons("c") is polygons
    eurasia = max(polygons, key=lambda p: p[2].shape[0])[2]
    assert eurasia[:, 0].min() >= -180.0 and eurasia[:, 0].max() <= 180.0  # split at the 180th meridian
    assert land_mask().shape == (2160, 4320) and land_mask() is land_mask()
    assert len(coastline_polygons("l")) > 5 * len(polygons)  # the low resolution: more, smaller polygons
    with pytest.raises(ValueError, match="'c' or 'l'"):
        coastline_polygons("f")
    assert "GSHHG" in LAND_SOURCE and "LGPL" in LAND_SOURCE


def test_invented_schools_fall_on_land_in_their_band_and_the_same_seed_gives_the_same_schools():
    lat, lon = random_land_points(500, np.random.default_rng(5))
    assert lat.shape == lon.shape == (500,)
    assert on_land(lat, lon).all()
    assert _polygon_truth(lat, lon).mean() > 0.98  # on the coastlines' land too, bar a cell at a coast
    assert lat.min() >= -47.0 and lat.max() <= 62.0
    again = random_land_points(500, np.random.default_rng(5))
    assert np.array_equal(lat, again[0]) and np.array_equal(lon, again[1])


def test_the_network_map_draws_the_coastlines_that_reach_into_it_at_a_resolution_for_its_width():
    from matplotlib.collections import PolyCollection

    from firstrung.figures import to_svg
    from firstrung.figures_network import coastlines_in, map_extent, network_map_figure

    world = network_map_figure([-40.0, 10.0, 55.0], [-70.0, 20.0, 140.0], [False, True, False])
    drawn = sum(len(c.get_paths()) for c in world.axes[0].collections if isinstance(c, PolyCollection))
    assert drawn == sum(len(v) for v in coastlines_in(map_extent([-40.0, 55.0], [-70.0, 140.0]), "c").values())
    assert drawn > 100  # the continents, the large islands and lakes (the smallest left out)
    svg = to_svg(world)
    assert "GSHHG" in svg and svg == to_svg(network_map_figure([-40.0, 10.0, 55.0], [-70.0, 20.0, 140.0],
                                                                  [False, True, False]))
    # a network of one region: the low-resolution coastlines, only those near it
    europe = network_map_figure([40.0, 52.0, 60.0], [-5.0, 10.0, 25.0], [False, False, False])
    near = coastlines_in(map_extent([40.0, 60.0], [-5.0, 25.0]), "l")
    drawn = sum(len(c.get_paths()) for c in europe.axes[0].collections if isinstance(c, PolyCollection))
    assert drawn == sum(len(v) for v in near.values()) and drawn < len(coastline_polygons("l")) / 4


def test_simulate_network_puts_schools_on_land_and_the_same_seed_writes_the_same_bytes(tmp_path, capsys, monkeypatch):
    import csv

    from tests.helpers import run_cli

    camp = tmp_path / "network.toml"
    camp.write_text('[campaign]\nname = "Equinox network"\n[logs]\nshadows = ["logs/shadows.csv"]\n')
    logs = []
    for k in range(2):
        out = tmp_path / f"logs{k}"
        code, _, err = run_cli(["simulate", "shadows", camp, "--from", "2027-03-20", "--to", "2027-03-20", "-o", out,
                                "--network", "80", "--seed", "9"], capsys, monkeypatch)
        assert code == 0, err
        logs.append((out / "shadows.csv").read_bytes())
    assert logs[0] == logs[1]
    rows = list(csv.DictReader(logs[0].decode().splitlines()))
    lat = np.array([float(r["latitude_deg"]) for r in rows])
    lon = np.array([float(r["longitude_deg"]) for r in rows])
    # every school on land; a blunder that flips a longitude's sign is logged as sent
    from firstrung.methods.shadows.rehearsal_network import simulate_network

    net = simulate_network(80, "2027-03-20", 9)
    flipped = net.blunder == "longitude-sign"
    assert np.allclose(lat, net.latitude_deg, rtol=0, atol=1e-9) and np.allclose(lon, net.longitude_deg, rtol=0, atol=1e-9)
    assert flipped.any() and on_land(lat, np.where(flipped, -lon, lon)).all()
