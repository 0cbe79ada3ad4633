"""Synthetic angle readings and shadow-tip traces with stated errors: rehearsals of the other forms.

The forward models are the reverse of :mod:`firstrung.methods.shadows.forms`:

- an angle: the Sun's true centre from DE421, moved to the limb the
  instrument is set on, refracted (Bennett inverted, standard conditions, the
  refraction scaled by a per-site error), less the instrument's index
  correction, plus the limb judgement (per site) and the reading error;
- a trace: the shadow of the tip (same forward model as a length) laid on a
  board whose x axis points to a given azimuth, right-handed or mirrored,
  measured from the plumb point (misplaced per site by the plumb error), with
  a reading error on each coordinate.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from firstrung import ephemeris
from firstrung.constants import STANDARD_TEMPERATURE_C
from firstrung.methods.shadows.altitude import REFRACTION_SIGMA_FRACTION_STANDARD
from firstrung.methods.shadows.forms import LIMB_JUDGEMENT_FRACTION, LIMB_SIGN, PLUMB_SIGMA_M
from firstrung.methods.shadows.log import SHADOW_LIMIT_M
from firstrung.methods.shadows.rehearsal import (
    MIN_SUN_ALTITUDE_DEG,
    ShadowErrors,
    simulate_shadow_readings,
)
from firstrung.refraction import apparent_from_true_altitude_deg, standard_pressure_hpa

#: Forms ``simulate shadows --form`` writes.
FORMS = ("length", "altitude", "trace")


@dataclass(frozen=True)
class AngleErrors:
    """Sizes of an angle instrument's errors to inject (one sigma) [deg]; zero gives noise-free readings."""

    reading_sigma_deg: float = 0.0
    index_sigma_deg: float = 0.0
    limb_fraction: float | None = 0.0  # None: firstrung's stated fraction for the limb
    refraction_fraction: float = 0.0

    @classmethod
    def stated(cls, reading_sigma_deg: float, index_sigma_deg: float = 0.0) -> AngleErrors:
        """The error model the reduction assumes, for calibration runs."""
        return cls(reading_sigma_deg, index_sigma_deg, None, REFRACTION_SIGMA_FRACTION_STANDARD)


def simulate_angle_readings(site_index, time_utc, latitude_deg, longitude_deg, elevation_m, limb,
                            index_correction_deg, errors: AngleErrors, rng: np.random.Generator) -> np.ndarray:
    """Altitudes an instrument would read at the given true times [deg] (before its index correction).

    ``latitude_deg`` ... ``index_correction_deg`` are per site. The index
    correction's own error, the limb judgement and the refraction error are
    drawn once per site; the reading error once per reading.
    """
    idx = np.asarray(site_index, int)
    n_sites = int(np.size(latitude_deg))
    lat, lon, elev = (np.asarray(x, float) for x in (latitude_deg, longitude_deg, elevation_m))
    limb = np.asarray(limb).astype(str)
    pos = ephemeris.sun_position(np.asarray(time_utc, dtype="datetime64[us]"), lat[idx], lon[idx], elev[idx])
    sign = np.array([LIMB_SIGN[x] for x in limb])[idx]
    limb_true = pos.altitude_deg + sign * pos.semidiameter_deg
    pressure = standard_pressure_hpa(elev[idx])
    refraction_scale = 1.0 + errors.refraction_fraction * rng.standard_normal(n_sites)
    nominal = apparent_from_true_altitude_deg(limb_true, STANDARD_TEMPERATURE_C, pressure)
    apparent = limb_true + (nominal - limb_true) * refraction_scale[idx]
    if errors.limb_fraction is None:
        fraction = np.array([LIMB_JUDGEMENT_FRACTION[x] for x in limb])[idx]
    else:
        fraction = np.full(idx.size, errors.limb_fraction)
    judgement = rng.standard_normal(n_sites)[idx] * fraction * pos.semidiameter_deg
    index_true = np.asarray(index_correction_deg, float) + errors.index_sigma_deg * rng.standard_normal(n_sites)
    reading = apparent + judgement - index_true[idx]
    return reading + errors.reading_sigma_deg * rng.standard_normal(idx.size)


def simulate_trace_points(site_index, time_utc, latitude_deg, longitude_deg, elevation_m, gnomon_m, edge,
                          board_azimuth_deg, mirrored, errors: ShadowErrors, rng: np.random.Generator,
                          plumb_sigma_m: float = 0.0):
    """Tip positions ``(x_m, y_m)`` on each site's board, from the plumb point, at the given true times.

    ``board_azimuth_deg`` (where the board's x axis points) and ``mirrored``
    are per site. ``errors.shadow_sigma_m`` is each coordinate's reading error.
    """
    idx = np.asarray(site_index, int)
    lat, lon, elev = (np.asarray(x, float) for x in (latitude_deg, longitude_deg, elevation_m))
    no_reading = ShadowErrors(0.0, errors.gnomon_sigma_m, errors.edge_fraction, errors.refraction_fraction, 0.0)
    syn = simulate_shadow_readings(idx, time_utc, lat, lon, elev, gnomon_m, edge, no_reading, rng)
    pos = ephemeris.sun_position(np.asarray(time_utc, dtype="datetime64[us]"), lat[idx], lon[idx], elev[idx])
    shadow_azimuth = pos.azimuth_deg + 180.0
    sign = np.where(np.asarray(mirrored, bool), -1.0, 1.0)[idx]
    board_angle = np.radians(sign * (np.asarray(board_azimuth_deg, float)[idx] - shadow_azimuth))
    n_sites = int(np.size(latitude_deg))
    plumb = plumb_sigma_m * rng.standard_normal((2, n_sites))
    x = syn.shadow_m * np.cos(board_angle) + plumb[0][idx] + errors.shadow_sigma_m * rng.standard_normal(idx.size)
    y = syn.shadow_m * np.sin(board_angle) + plumb[1][idx] + errors.shadow_sigma_m * rng.standard_normal(idx.size)
    return x, y


def form_rows(campaign, form: str, first_date, last_date, seed: int, *, half_span_min=30.0, step_min=2.0):
    """Rows of a rehearsal log in one form: ``altitude`` (each site's angle instrument, or a quarter-degree
    quadrant on the Sun's centre) or ``trace`` (tip positions on a board turned by a site-specific angle,
    with times, every 10 minutes over two hours around noon).
    """
    from firstrung.campaign_model import AngleInstrument
    from firstrung.jsonout import time_z
    from firstrung.methods.shadows.rehearsal import reading_times_utc

    sites = [s for s in campaign.sites if form == "altitude" or s.gnomon is not None]
    if not sites:
        return []
    lat, lon, elev = (np.array([getattr(s, k) for s in sites]) for k in ("latitude_deg", "longitude_deg", "elevation_m"))
    dates = np.arange(np.datetime64(first_date, "D"), np.datetime64(last_date, "D") + np.timedelta64(1, "D"))
    if form == "trace":
        half_span_min, step_min = 60.0, 10.0
    times, pair = reading_times_utc(dates, lat, lon, elev, half_span_min=half_span_min, step_min=step_min)
    index = pair % len(sites)
    rng = np.random.default_rng(seed)
    clock = 30.0 * rng.standard_normal(len(sites))
    logged = (times.astype("datetime64[ms]") + np.round(clock[index] * 1e3).astype(np.int64).astype("timedelta64[ms]"))
    order = np.lexsort((logged, index))
    if form == "altitude":
        instruments = [s.angle_instrument or AngleInstrument() for s in sites]
        errors = AngleErrors.stated(float(np.mean([i.sigma_deg for i in instruments])),
                                    float(np.mean([i.index_correction_sigma_deg for i in instruments])))
        reading = simulate_angle_readings(index, times, lat, lon, elev, [i.limb for i in instruments],
                                          [i.index_correction_deg for i in instruments], errors, rng)
        # as for lengths: no reading with the Sun this low (nor one the reader refuses, past the zenith)
        shown = np.round(reading, 2)
        loggable = (shown >= MIN_SUN_ALTITUDE_DEG) & (shown <= 90.0)
        return [{"site": sites[index[k]].id, "time_utc": time_z(logged[k]), "altitude_deg": f"{reading[k]:.2f}",
                 "limb": instruments[index[k]].limb, "observer": f"rehearsal {sites[index[k]].id}",
                 "note": "synthetic"} for k in order if loggable[k]]
    errors = ShadowErrors.stated(float(np.mean([s.gnomon.shadow_sigma_m for s in sites])) / np.sqrt(2.0),
                                 float(np.mean([s.gnomon.height_sigma_m for s in sites])))
    board = rng.uniform(0.0, 360.0, len(sites))
    x, y = simulate_trace_points(index, times, lat, lon, elev, np.array([s.gnomon.height_m for s in sites]),
                                 np.array([s.gnomon.edge for s in sites], dtype=object), board,
                                 np.zeros(len(sites), bool), errors, rng, PLUMB_SIGMA_M)
    # no point with the Sun this low, nor one off the board the reader takes
    altitude = np.degrees(np.arctan2(np.array([s.gnomon.height_m for s in sites])[index], np.hypot(x, y)))
    loggable = ((altitude >= MIN_SUN_ALTITUDE_DEG) & np.isfinite(x) & np.isfinite(y)
                & (np.abs(np.round(x * 1000)) <= SHADOW_LIMIT_M * 1000) & (np.abs(np.round(y * 1000)) <= SHADOW_LIMIT_M * 1000))
    return [{"site": sites[index[k]].id, "time_utc": time_z(logged[k]), "tip_x_mm": f"{x[k] * 1000:.0f}",
             "tip_y_mm": f"{y[k] * 1000:.0f}", "observer": f"rehearsal {sites[index[k]].id}", "note": "synthetic"}
            for k in order if loggable[k]]


#: The columns of each form's rehearsal log.
FORM_COLUMNS = {
    "altitude": ("site", "time_utc", "altitude_deg", "limb", "observer", "note"),
    "trace": ("site", "time_utc", "tip_x_mm", "tip_y_mm", "observer", "note"),
}


#: The sites of a calibration campaign of the angle form (invented): latitudes [deg], one meridian.
CALIBRATION_LATITUDES_DEG = (50.0, 44.0, 38.0)


def angle_calibration_trial(rng: np.random.Generator, *, reading_sigma_deg=0.1, index_sigma_deg=0.03,
                            limb="lower", clock_sigma_s=30.0):
    """One simulated angle campaign with the stated instrument errors: (its radius result, the true radius).

    Three sites on a meridian, one day drawn in 2027, readings every 4
    minutes for 40 minutes either side of noon; each site's instrument has an
    index correction known to ``index_sigma_deg``, is set on ``limb``
    (judged to firstrung's stated fraction of the semi-diameter), reads to
    ``reading_sigma_deg``, and its clock is off by ``clock_sigma_s``;
    refraction is off by the stated fraction. The true radius is the WGS84
    meridional one over the sites, as the reduction's ``expected_radius_km``.
    """
    from firstrung.methods.shadows.inputs import ShadowReadings, SiteInput
    from firstrung.methods.shadows.reduction import reduce_shadows
    from firstrung.methods.shadows.rehearsal import reading_times_utc

    lat = np.array(CALIBRATION_LATITUDES_DEG)
    lon, elev = np.full(lat.size, 8.0), np.zeros(lat.size)
    date = np.datetime64("2027-01-01") + np.timedelta64(int(rng.integers(0, 365)), "D")
    times, pair = reading_times_utc(np.array([date]), lat, lon, elev, half_span_min=40.0, step_min=4.0)
    index = pair % lat.size
    index_deg = rng.uniform(-0.5, 0.5, lat.size)
    errors = AngleErrors.stated(reading_sigma_deg, index_sigma_deg)
    read = simulate_angle_readings(index, times, lat, lon, elev, [limb] * lat.size, index_deg, errors, rng)
    clock = clock_sigma_s * rng.standard_normal(lat.size)
    logged = times.astype("datetime64[ms]") + np.round(clock[index] * 1e3).astype(np.int64).astype("timedelta64[ms]")
    k = index.size
    readings = ShadowReadings(
        index, logged, np.full(k, np.nan), np.full(k, np.nan), np.full(k, "umbra", dtype=object),
        np.full(k, 0.002), np.full(k, 0.001), np.full(k, np.nan), np.full(k, np.nan),
        form=np.full(k, "angle"), altitude_read_deg=np.round(read, 3), limb=np.full(k, limb),
        angle_sigma_deg=np.full(k, reading_sigma_deg), index_correction_deg=index_deg[index],
        index_sigma_deg=np.full(k, index_sigma_deg),
    )
    sites = tuple(SiteInput(f"s{i}", f"s{i}", lat[i], lon[i], 0.0) for i in range(lat.size))
    result = reduce_shadows(sites, readings)
    return result.earth_radius_km, result.expected_radius_km
