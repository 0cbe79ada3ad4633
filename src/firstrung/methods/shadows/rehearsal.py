"""Synthetic observations from the ephemeris, with stated errors: rehearsal data and tests.

The forward model is the exact reverse of the reduction: the Sun's true
(airless) centre from DE421 at the true time, moved to the limb that casts
the marked edge, refracted with Bennett's formula inverted, and projected by
the real gnomon onto a level board. Every error the reduction models can be
injected at its stated size: reading noise, the gnomon's real height, the
observer's edge placement, the real refraction, and the clock.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from firstrung import blunders as blunder_kit
from firstrung import ephemeris
from firstrung.constants import STANDARD_TEMPERATURE_C
from firstrung.jsonout import time_z as _z
from firstrung.methods.shadows.altitude import (
    EDGE_LIMB_SIGN,
    EDGE_LOCATION_FRACTION,
    REFRACTION_SIGMA_FRACTION_STANDARD,
    penumbra_width_m,
)
from firstrung.refraction import apparent_from_true_altitude_deg, standard_pressure_hpa


@dataclass(frozen=True)
class ShadowErrors:
    """Sizes of the errors to inject (one sigma); zero gives noise-free data."""

    shadow_sigma_m: float = 0.0
    gnomon_sigma_m: float = 0.0
    edge_fraction: float | None = 0.0  # None: firstrung's stated fraction for the edge
    refraction_fraction: float = 0.0
    clock_sigma_s: float = 0.0
    board_level_rad: float = 0.0
    gnomon_plumb_rad: float = 0.0

    @classmethod
    def stated(cls, shadow_sigma_m: float, gnomon_sigma_m: float, clock_sigma_s: float = 0.0) -> ShadowErrors:
        """The error model the reduction assumes, for calibration runs."""
        from firstrung.methods.shadows.altitude import BOARD_LEVEL_SIGMA_RAD, GNOMON_PLUMB_SIGMA_RAD

        return cls(shadow_sigma_m, gnomon_sigma_m, None, REFRACTION_SIGMA_FRACTION_STANDARD, clock_sigma_s,
                   BOARD_LEVEL_SIGMA_RAD, GNOMON_PLUMB_SIGMA_RAD)


@dataclass(frozen=True)
class SyntheticShadows:
    """Simulated readings, as a log would hold them (logged clock times)."""

    site_index: np.ndarray
    time_utc: np.ndarray  # logged, i.e. with the clock's offset
    shadow_m: np.ndarray
    gnomon_m: np.ndarray  # the nominal height the observer would log
    edge: np.ndarray
    altitude_deg: np.ndarray | None = None  # the Sun's centre, true (airless) [deg]


def reading_times_utc(
    dates, latitude_deg, longitude_deg, elevation_m, *, half_span_min: float = 30.0, step_min: float = 2.0
) -> tuple[np.ndarray, np.ndarray]:
    """Reading times around each site's transit on each date, on whole minutes.

    Returns the times (datetime64[s]) and, for each, the index of its (date, site) pair,
    flattened with sites varying fastest.
    """
    dates = np.atleast_1d(np.asarray(dates, dtype="datetime64[D]"))
    lat = np.atleast_1d(np.asarray(latitude_deg, float))
    lon = np.atleast_1d(np.asarray(longitude_deg, float))
    elev = np.atleast_1d(np.asarray(elevation_m, float))
    transit = ephemeris.solar_transit(dates[:, None], lat[None, :], lon[None, :], elev[None, :])
    centre = transit.time_utc.astype("datetime64[m]").ravel()
    offsets = np.arange(-half_span_min, half_span_min + 0.5 * step_min, step_min).astype(int)
    times = centre[:, None] + offsets[None, :].astype("timedelta64[m]")
    pair = np.repeat(np.arange(centre.size), offsets.size)
    return times.ravel().astype("datetime64[s]"), pair


def simulate_shadow_readings(
    site_index,
    time_utc,
    latitude_deg,
    longitude_deg,
    elevation_m,
    gnomon_m,
    edge,
    errors: ShadowErrors,
    rng: np.random.Generator,
) -> SyntheticShadows:
    """Shadow lengths a real observer would read at the given true times.

    ``latitude_deg`` … ``edge`` are per site (indexed by ``site_index``). The
    systematic errors (gnomon height, edge placement, refraction, clock) are
    drawn once per site; the reading error once per reading.
    """
    idx = np.asarray(site_index, int)
    n_sites = int(np.size(latitude_deg))
    lat, lon, elev = (np.asarray(x, float) for x in (latitude_deg, longitude_deg, elevation_m))
    h_nominal = np.asarray(gnomon_m, float)
    edge = np.asarray(edge, dtype=object)
    t_true = np.asarray(time_utc, dtype="datetime64[us]")
    pos = ephemeris.sun_position(t_true, lat[idx], lon[idx], elev[idx])
    sign = np.array([EDGE_LIMB_SIGN[e] for e in edge])[idx]
    limb_true = pos.altitude_deg + sign * pos.semidiameter_deg
    # a limb past the zenith casts its tip on the other side of the foot, at the altitude 180 - a
    limb_true = np.where(limb_true > 90.0, 180.0 - limb_true, limb_true)
    pressure = standard_pressure_hpa(elev[idx])
    refraction_scale = 1.0 + errors.refraction_fraction * rng.standard_normal(n_sites)
    limb_app_nominal = apparent_from_true_altitude_deg(limb_true, STANDARD_TEMPERATURE_C, pressure)
    limb_app = limb_true + (limb_app_nominal - limb_true) * refraction_scale[idx]
    h_true = h_nominal + errors.gnomon_sigma_m * rng.standard_normal(n_sites)
    length = h_true[idx] / np.tan(np.radians(limb_app))
    if errors.board_level_rad or errors.gnomon_plumb_rad:
        # a board tilted by tau along the shadow: the ray meets it at h / (tan a + tan tau); a rod
        # leaning by psi puts its tip h tan psi beyond the foot the length is read from
        tilt = errors.board_level_rad * rng.standard_normal(n_sites)
        lean = errors.gnomon_plumb_rad * rng.standard_normal(n_sites)
        length = h_true[idx] / (np.tan(np.radians(limb_app)) + np.tan(tilt[idx])) + h_true[idx] * np.tan(lean[idx])
    if errors.edge_fraction is None:
        fraction = np.array([EDGE_LOCATION_FRACTION[e] for e in edge])[idx]
    else:
        fraction = np.full(idx.size, errors.edge_fraction)
    width = penumbra_width_m(h_true[idx], pos.altitude_deg, pos.semidiameter_deg)
    edge_bias = rng.standard_normal(n_sites)[idx] * fraction * width
    length = length + edge_bias + errors.shadow_sigma_m * rng.standard_normal(idx.size)
    clock = errors.clock_sigma_s * rng.standard_normal(n_sites)
    logged = t_true + np.round(clock[idx] * 1e6).astype(np.int64).astype("timedelta64[us]")
    return SyntheticShadows(
        site_index=idx,
        time_utc=logged,
        shadow_m=length,
        gnomon_m=h_nominal[idx],
        edge=edge[idx],
        altitude_deg=np.asarray(pos.altitude_deg, float),
    )


#: Blunders ``simulate shadows --blunders`` can inject, each at one site:
SHADOW_BLUNDERS = {
    "clock": "a clock on daylight-saving time: logged times one hour late (last day, first site)",
    "unit": "centimetres typed in the millimetre column (second site, last day)",
    "longitude": "the campaign's longitude of the first site has the wrong sign",
    "edge": "the observer marked the other edge of the shadow than the campaign says (the last site "
    "that marks a sharp or faint edge)",
    "wild": "one mistyped reading (first site, first day)",
    "duplicate": "one row entered twice (second site, first day)",
}


#: Shadows are simulated only with the Sun's centre at least this high [deg] (the reduction's own floor).
MIN_SUN_ALTITUDE_DEG = 5.0


def _millimetres(value_mm: float) -> str:
    """A length in mm as an observer writes it: whole millimetres, or three significant digits below 100 mm.

    >>> _millimetres(1617.4), _millimetres(57.73), _millimetres(0.5774), _millimetres(0.0)
    ('1617', '57.7', '0.577', '1e-09')
    """
    if value_mm >= 99.5:
        return f"{value_mm:.0f}"
    if not value_mm > 0.0:  # exactly on the foot: the smallest length the reader takes
        return "1e-09"
    decimals = max(0, 2 - int(np.floor(np.log10(value_mm))))
    text = f"{value_mm:.{decimals}f}"
    return text if float(text) > 0.0 else f"{value_mm:.3g}"


def rehearsal_rows(campaign, first_date, last_date, seed: int, blunders=(), *, half_span_min=30.0, step_min=2.0):
    """Shadow readings every 2 minutes around each site's local apparent noon on every day.

    Errors: each site's stated reading and gnomon errors, the usual edge
    placement and refraction errors, and clocks about 30 s off
    (:meth:`firstrung.methods.shadows.rehearsal.ShadowErrors.stated`). ``blunders`` names keys
    of :data:`SHADOW_BLUNDERS`.
    """
    unknown = [b for b in blunders if b not in SHADOW_BLUNDERS]
    if unknown:
        from firstrung.errors import InputError

        raise InputError(f"--blunders: expected some of {', '.join(SHADOW_BLUNDERS)}, got {unknown[0]!r}")
    sites = [s for s in campaign.sites if s.gnomon is not None]
    if not sites:
        return []
    n = len(sites)
    lat = np.array([s.latitude_deg for s in sites])
    lon = np.array([s.longitude_deg for s in sites])
    true_lon = lon.copy()
    edges = np.array([s.gnomon.edge for s in sites], dtype=object)
    if "longitude" in blunders:
        true_lon[0] = blunder_kit.mirrored(lon[0])
    if "edge" in blunders:
        # umbra <-> outer is the blunder of the trade; middle -> umbra is a quarter of the step
        sharp = [i for i in range(n) if edges[i] != "middle"]
        i = sharp[-1] if sharp else n - 1
        edges[i] = blunder_kit.other_edge(edges[i])
    elev = np.array([s.elevation_m for s in sites])
    dates = np.arange(np.datetime64(first_date, "D"), np.datetime64(last_date, "D") + np.timedelta64(1, "D"))
    times, pair = reading_times_utc(dates, lat, true_lon, elev, half_span_min=half_span_min, step_min=step_min)
    index = pair % n
    day = pair // n
    rng = np.random.default_rng(seed)
    errors = ShadowErrors.stated(float(np.mean([s.gnomon.shadow_sigma_m for s in sites])),
                                 float(np.mean([s.gnomon.height_sigma_m for s in sites])), clock_sigma_s=30.0)
    syn = simulate_shadow_readings(index, times, lat, true_lon, elev, np.array([s.gnomon.height_m for s in sites]),
                                   edges, errors, rng)
    t, length = syn.time_utc.astype("datetime64[ms]"), syn.shadow_m
    last = day == day.max()
    if "clock" in blunders:
        t = blunder_kit.clock_shift(t, (index == 0) & last, 1.0)
    if "unit" in blunders and n >= 2:
        length = blunder_kit.length_unit(length, (index == 1) & last, 0.1)
    if "wild" in blunders:
        first_rows = np.flatnonzero((index == 0) & (day == 0))
        length = blunder_kit.wild_row(length, int(first_rows[len(first_rows) // 3]), rng)
    # what an observer can log: the Sun at least 5 deg up (as the reduction uses; lower, the shadow
    # runs off any board) and a shadow no longer than the reader takes
    from firstrung.methods.shadows.log import SHADOW_LIMIT_M

    loggable = (syn.altitude_deg >= MIN_SUN_ALTITUDE_DEG) & (np.abs(length) <= SHADOW_LIMIT_M)
    order = np.lexsort((t, index))
    order = order[loggable[order]]
    if "duplicate" in blunders and n >= 2 and np.count_nonzero(index[order] == 1) > 2:
        pos = int(np.flatnonzero(index[order] == 1)[2])
        order = order[blunder_kit.duplicate(order.size, pos)]
    # a shadow is a distance from the gnomon's foot: noise that carries the edge past the foot (the Sun
    # next to the zenith) is read on the other side, never as a negative length
    length = np.abs(length)
    return [
        {"site": sites[index[k]].id, "time_utc": _z(t[k]), "shadow_mm": _millimetres(length[k] * 1000.0),
         "observer": f"rehearsal {sites[index[k]].id}", "note": "synthetic"}
        for k in order
    ]


LOG_COLUMNS = ("site", "time_utc", "shadow_mm", "observer", "note")
