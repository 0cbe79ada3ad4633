"""Invented open networks: schools at random land positions, one noon reading each, with the usual blunders.

Each school reads one shadow within :data:`WITHIN_MIN` minutes of its local
apparent noon, with a gnomon of its own, and sends one row carrying its
name, position, time and reading. The errors are those of a school at work
(:data:`SCHOOL_ERRORS`); the blunders are the ones a network always has
(:data:`NETWORK_BLUNDERS`), each at a random school, about
:data:`BLUNDER_FRACTION` of them in all (the published 2015 equinox network
discarded about 15 % of its rows as out of range).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from firstrung import blunders as blunder_kit
from firstrung import ephemeris
from firstrung.land import random_land_points
from firstrung.methods.shadows.inputs import ShadowReadings, SiteInput
from firstrung.methods.shadows.rehearsal import ShadowErrors, simulate_shadow_readings

#: Readings are taken at most this far from the school's apparent noon [min].
WITHIN_MIN = 20.0
#: Share of schools whose row holds a blunder.
BLUNDER_FRACTION = 0.15
#: What a school's reading suffers (one sigma): 5 mm on the shadow's tip, 5 mm on the gnomon's
#: height, a board level to 0.5 deg and a rod plumb to 0.5 deg, the edge placed as firstrung states,
#: refraction 10 % off, a clock a minute off (common practice for a class with a metre stick).
SCHOOL_ERRORS = ShadowErrors(
    shadow_sigma_m=0.005, gnomon_sigma_m=0.005, edge_fraction=None, refraction_fraction=0.1,
    clock_sigma_s=60.0, board_level_rad=np.radians(0.5), gnomon_plumb_rad=np.radians(0.5),
)
#: The blunders of a network, one kind per blundering school.
NETWORK_BLUNDERS = {
    "unit": "millimetres typed in the centimetre column (a length ten times too long)",
    "local-time": "the local clock time logged as UTC",
    "longitude-sign": "the school's longitude with the wrong sign (a latitude's sign cannot show at an "
                      "equinox, when the Sun stands as high at -phi as at phi)",
    "wild": "a mistyped reading, 15-40 % off",
    "gnomon": "the gnomon's height of another school's rod (a quarter to a half off)",
}
_GNOMONS_M = np.array([0.5, 0.8, 1.0, 1.0, 1.2, 1.5, 2.0])
_WORDS = ("Harbour", "Hillside", "Riverside", "Meadow", "Cedar", "Lakeview", "Northgate", "Southfield",
          "Westbrook", "Eastwood", "Stonebridge", "Maple", "Orchard", "Summit", "Valley", "Coral", "Sunrise",
          "Willow", "Granite", "Pinecrest")


@dataclass(frozen=True)
class SyntheticNetwork:
    """An invented network: one row per school, as logged, with the truth beside it."""

    name: np.ndarray
    latitude_deg: np.ndarray
    longitude_deg: np.ndarray  # as logged (a blunder may flip its sign)
    elevation_m: np.ndarray
    time_utc: np.ndarray  # logged, datetime64[ms]
    shadow_m: np.ndarray  # logged
    gnomon_m: np.ndarray  # logged
    blunder: np.ndarray  # the blunder's kind, '' for a good row
    true_latitude_deg: np.ndarray

    def part(self, start: int, stop: int) -> SyntheticNetwork:
        """The schools ``start`` to ``stop - 1`` as a network of their own (many networks from one draw)."""
        from dataclasses import fields

        return SyntheticNetwork(**{f.name: getattr(self, f.name)[start:stop] for f in fields(self)})


def school_names(n: int) -> np.ndarray:
    """Invented school names, unique: ``Harbour School 1`` ... (a word and a number)."""
    k = np.arange(n)
    return np.array([f"{_WORDS[i % len(_WORDS)]} School {i // len(_WORDS) + 1}" for i in k], dtype=object)


def simulate_network(n: int, date, seed: int, *, errors: ShadowErrors | None = SCHOOL_ERRORS,
                     blunder_fraction: float = BLUNDER_FRACTION, within_min: float = WITHIN_MIN) -> SyntheticNetwork:
    """``n`` schools on land between 47 S and 62 N, each with one reading on ``date``.

    ``errors=None`` gives noise-free readings; ``blunder_fraction`` 0 gives none.
    """
    rng = np.random.default_rng(seed)
    lat, lon = random_land_points(n, rng)
    elev = np.round(rng.uniform(0.0, 800.0, n), 0)
    day = np.datetime64(date, "D")
    transit = ephemeris.solar_transit(np.full(n, day), lat, lon, elev)
    offset_s = rng.uniform(-within_min * 60.0, within_min * 60.0, n)
    t_true = transit.time_utc.astype("datetime64[ms]") + np.round(offset_s * 1000).astype("timedelta64[ms]")
    gnomon = rng.choice(_GNOMONS_M, n)
    syn = simulate_shadow_readings(np.arange(n), t_true, lat, lon, elev, gnomon, np.full(n, "umbra", dtype=object),
                                   errors if errors is not None else ShadowErrors(), rng)
    t = syn.time_utc.astype("datetime64[ms]")
    if errors is not None:  # logged to the second
        t = t.astype("datetime64[s]").astype("datetime64[ms]")
    length = np.abs(syn.shadow_m)
    kinds = np.full(n, "", dtype=object)
    count = int(round(blunder_fraction * n))
    if count:
        chosen = rng.choice(n, count, replace=False)
        names = list(NETWORK_BLUNDERS)
        kinds[chosen] = [names[k % len(names)] for k in range(count)]
    logged_gnomon = gnomon.copy()
    length = blunder_kit.length_unit(length, kinds == "unit", 10.0)
    zone_hours = np.where(np.round(lon / 15.0) == 0, 1.0, np.round(lon / 15.0))
    t = np.where(kinds == "local-time", t + (zone_hours * 3600e3).astype(np.int64).astype("timedelta64[ms]"), t)
    logged_lon = np.where(kinds == "longitude-sign", -lon, lon)
    wild = kinds == "wild"
    length = np.where(wild, length * (1.0 + rng.uniform(0.15, 0.4, n) * rng.choice([-1.0, 1.0], n)), length)
    rod = kinds == "gnomon"
    logged_gnomon = np.where(rod, gnomon * (1.0 + rng.uniform(0.25, 0.5, n) * rng.choice([-1.0, 1.0], n)),
                             logged_gnomon)
    return SyntheticNetwork(school_names(n), lat, logged_lon, elev, t, length,
                            np.round(logged_gnomon, 3), kinds.astype(str), lat)


def network_readings(net: SyntheticNetwork) -> tuple[tuple[SiteInput, ...], ShadowReadings]:
    """The network as the reduction takes it (one site per school, one reading each), no files."""
    from firstrung.campaign_model import DEFAULT_HEIGHT_SIGMA_M, DEFAULT_SHADOW_SIGMA_M
    from firstrung.open_sites import site_id_for

    taken: set[str] = set()
    ids = []
    for name in net.name:
        ids.append(site_id_for(str(name), taken))
        taken.add(ids[-1])
    n = net.name.size
    sites = tuple(SiteInput(ids[i], str(net.name[i]), float(net.latitude_deg[i]), float(net.longitude_deg[i]),
                            float(net.elevation_m[i])) for i in range(n))
    readings = ShadowReadings(
        site_index=np.arange(n), time_utc=net.time_utc, shadow_m=np.asarray(net.shadow_m, float),
        gnomon_m=net.gnomon_m, edge=np.full(n, "umbra", dtype=object),
        shadow_sigma_m=np.full(n, DEFAULT_SHADOW_SIGMA_M), gnomon_sigma_m=np.full(n, DEFAULT_HEIGHT_SIGMA_M),
        temperature_c=np.full(n, np.nan), pressure_hpa=np.full(n, np.nan),
    )
    return sites, readings


NETWORK_LOG_COLUMNS = ("site", "latitude_deg", "longitude_deg", "elevation_m", "time_utc", "shadow_cm", "gnomon_m",
                       "observer", "note")


def network_log_rows(net: SyntheticNetwork) -> list[dict]:
    """The network's log: one row per school, as the coordinator receives them."""
    from firstrung.jsonout import time_z

    return [
        {"site": str(net.name[i]), "latitude_deg": f"{net.latitude_deg[i]:.4f}",
         "longitude_deg": f"{net.longitude_deg[i]:.4f}", "elevation_m": f"{net.elevation_m[i]:.0f}",
         "time_utc": time_z(net.time_utc[i]), "shadow_cm": f"{net.shadow_m[i] * 100.0:.2f}",
         "gnomon_m": f"{net.gnomon_m[i]:.3f}", "observer": f"class of {net.name[i]}", "note": "synthetic"}
        for i in range(net.name.size)
    ]
