"""Noon gnomon shadows at separated sites: the Earth's radius.

The classical method (Eratosthenes, c. 240 BC): at local apparent noon the
Sun's zenith distance differs between two sites on one meridian by the angle
their verticals make at the Earth's centre, so the north-south distance
between them divided by that angle is the Earth's radius.

The reduction, one small step per function:

1. each shadow length L of a gnomon of height h gives the apparent altitude
   of the marked edge, ``atan2(h, L)`` (:func:`edge_altitude_deg`);
2. refraction is removed from that ray (Bennett 1982, with the row's or the
   standard atmosphere at the site's elevation), and the marked edge moved to
   the Sun's centre by the semi-diameter of the date: the sharp umbra edge is
   cast by the Sun's upper limb, the faint outer edge by the lower limb
   (:func:`centre_altitude_deg`);
3. the readings of one site and day are fitted, by Gauss-Newton on all
   series at once, for the site's astronomical latitude and its clock offset,
   with the Sun's hour angle and declination from the ephemeris at each
   reading (so the declination is the one at *that site's* transit, and the
   Sun's side, north or south of the zenith, comes out of the spherical
   formula itself) (:func:`fit_series`);
4. the astronomical latitudes are regressed on the sites' north-south arc
   positions on WGS84 (or on surveyed baselines): the slope is 1/R
   (:func:`fit_radius`), with a leave-one-out test that names outlying sites.

Uncertainties are propagated linearly from every input (reading error,
gnomon height, edge location, refraction, clock, positions and baselines)
and split into an error budget; :func:`monte_carlo_radius` draws the same
inputs and redoes the whole reduction, as a check of the linear propagation.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from firstrung.constants import IUGG_MEAN_RADIUS_KM, STANDARD_TEMPERATURE_C
from firstrung.errors import ComputationError, InputError
from firstrung.geodesy import (
    meridian_arc_m,
    meridional_radius_of_curvature_km,
)
from firstrung.methods.shadows.altitude import (
    MIN_ALTITUDE_DEG,
    altitude_error_terms_rad,
    centre_altitude_deg,
    edge_altitude_deg,
)
from firstrung.methods.shadows.fits import (
    Positions,
    SeriesFit,
    fit_line,
    fit_series,
    north_south_positions,
)
from firstrung.methods.shadows.forms import (
    READING_SOURCE,
    collapse_untimed_traces,
    form_terms,
    reading_sources,
)
from firstrung.methods.shadows.inputs import (
    BaselineInput,
    ShadowReadings,
    SiteInput,
)
from firstrung.methods.shadows.series_results import SeriesResult, _series_results
from firstrung.refraction import refraction_from_apparent_deg, standard_pressure_hpa
from firstrung.uncertainty import (
    BudgetTerm,
    Measured,
    budget_from_contributions,
    reciprocal_of_gaussian,
)

#: Readings are used when the Sun is at least MIN_ALTITUDE_DEG high (altitude.py) and this near
#: noon [h]; others are left out and counted.
MAX_HOUR_ANGLE_H = 3.0
#: A site whose leave-one-out residual exceeds this many sigma is named an
#: outlier and left out (only with four or more sites).
OUTLIER_THRESHOLD_SIGMA = 3.5
#: Probability below which the sites' scatter about the line is taken as real
#: and the radius's sigma scaled up (a 5 % test, common practice).
SCATTER_SIGNIFICANCE = 0.05

READING_SOURCE_NAMES = tuple(READING_SOURCE.values())
#: The error budget's sources (the other forms add their own: see ``forms``).
BUDGET_SOURCES = (
    "shadow reading",
    "clock",
    "gnomon height",
    "edge location",
    "board level",
    "gnomon plumb",
    "refraction",
    "site positions",
    "baselines",
)


# --- results -----------------------------------------------------------------------------------


@dataclass(frozen=True)
class SiteResult:
    """One site: its series combined, its place on the fitted line."""

    id: str
    name: str
    latitude_deg: float
    longitude_deg: float
    north_south_km: float
    astronomical_latitude_deg: Measured
    residual_arcmin: float
    normalized_residual: float
    outlier: bool
    series: tuple[SeriesResult, ...]


@dataclass(frozen=True)
class ShadowReduction:
    """The Earth's radius from noon shadows, with everything it rests on."""

    earth_radius_km: Measured
    circumference_km: Measured
    expected_radius_km: float
    mean_radius_km: float
    meridional_radius_mid_km: float
    sites: tuple[SiteResult, ...]
    budget: tuple[BudgetTerm, ...]
    outliers: tuple[str, ...]
    readings_used: int
    readings_left_out: dict
    chi2_per_dof: float | None
    scatter_scale: float
    assumptions: tuple[str, ...]
    propagation: str = "linear (first-order) propagation of every input; see monte_carlo_radius"
    warnings: tuple[str, ...] = ()


# --- the whole reduction -----------------------------------------------------------------------------


@dataclass(frozen=True)
class _Prepared:
    """Everything computed once from the readings: ephemeris values, nominal altitudes, sensitivities."""

    sites: tuple[SiteInput, ...]
    baselines: tuple[BaselineInput, ...]
    readings: ShadowReadings
    keep: np.ndarray
    left_out: dict
    group: np.ndarray
    group_site: np.ndarray
    group_date: np.ndarray
    altitude_rad: np.ndarray
    sigma_reading_rad: np.ndarray
    dalt_dgnomon_rad_per_m: np.ndarray
    edge_sigma_rad: np.ndarray
    refraction_sigma_rad: np.ndarray
    declination_rad: np.ndarray
    hour_angle_rad: np.ndarray
    declination_rate: np.ndarray
    hour_angle_rate: np.ndarray
    semidiameter_deg: np.ndarray
    refraction_deg: np.ndarray
    #: Per reading: the altitude error of the board's tilt and of the gnomon's lean [rad]
    #: (common to a site's readings: one board, one rod).
    board_level_sigma_rad: np.ndarray | None = None
    gnomon_plumb_sigma_rad: np.ndarray | None = None
    common_rad: dict | None = None  # the other forms' errors common to a site: name -> per reading [rad]
    reading_source: np.ndarray | None = None  # index into READING_SOURCE of each reading's own error
    sun_azimuth_deg: np.ndarray | None = None


def _prepare(sites, baselines, readings: ShadowReadings) -> _Prepared:
    from firstrung import ephemeris

    readings, missed_traces = collapse_untimed_traces(sites, readings)
    n = len(readings)
    if n == 0:
        raise ComputationError("no shadow readings to reduce")
    idx = np.asarray(readings.site_index, int)
    lat = np.array([s.latitude_deg for s in sites])[idx]
    lon = np.array([s.longitude_deg for s in sites])[idx]
    elev = np.array([s.elevation_m for s in sites])[idx]
    track = ephemeris.sun_track(readings.time_utc, lat, lon, elev)
    pos = track.position
    temperature = np.where(np.isfinite(readings.temperature_c), readings.temperature_c, STANDARD_TEMPERATURE_C)
    measured_weather = np.isfinite(readings.pressure_hpa)
    pressure = np.where(measured_weather, readings.pressure_hpa, standard_pressure_hpa(elev))
    h = np.asarray(readings.gnomon_m, float)
    length = np.asarray(readings.shadow_m, float)
    forms = form_terms(readings, pos.semidiameter_deg, temperature, pressure)
    angle = np.isfinite(forms.altitude_deg)
    if angle.any():  # an angle row has no length: a stand-in of 45 deg, replaced below
        h, length = np.where(angle, 1.0, h), np.where(angle, 1.0, length)
    edge_app = edge_altitude_deg(h, length)
    edge_refraction = refraction_from_apparent_deg(edge_app, temperature, pressure)
    refr = np.where(angle, forms.refraction_deg, edge_refraction)
    altitude_deg = centre_altitude_deg(edge_app, readings.edge, pos.semidiameter_deg, temperature, pressure,
                                       refraction_deg=edge_refraction)
    del edge_refraction
    altitude_deg = np.where(angle, forms.altitude_deg, altitude_deg)
    # which readings the method can use
    left_out = {}
    low = pos.altitude_deg < MIN_ALTITUDE_DEG
    far = np.abs(pos.hour_angle_deg) > MAX_HOUR_ANGLE_H * 15.0
    left_out["sun below 5 deg"] = int(np.sum(low))
    left_out["more than 3 h from noon"] = int(np.sum(far & ~low))
    if missed_traces:
        left_out["traces without times that do not pass noon"] = missed_traces
    keep = ~low & ~far
    terms = altitude_error_terms_rad(
        h, length, readings.shadow_sigma_m, readings.gnomon_sigma_m, readings.edge,
        pos.altitude_deg, pos.semidiameter_deg, refr, measured_weather,
    )
    sigma_reading = np.where(angle, forms.instrument_rad, terms["shadow reading"])
    dalt_dgnomon = np.where(angle, 0.0, length / (h**2 + length**2))
    edge_sigma = np.where(angle, 0.0, terms["edge location"])
    refraction_sigma = terms["refraction"]
    # series: site and UTC date of the local noon (longitude shifts the civil day)
    local_day = (
        readings.time_utc.astype("datetime64[ms]")
        + (np.round(lon / 15.0 * 3600e3).astype(np.int64)).astype("timedelta64[ms]")
    ).astype("datetime64[D]")
    day_number = local_day.astype(np.int64)
    first_day = int(day_number.min())
    span = int(day_number.max()) - first_day + 1
    keys_kept = (idx * span + (day_number - first_day))[keep]
    if keys_kept.size == 0:
        raise ComputationError("no shadow reading has the Sun above 5 deg within 3 h of noon")
    unique_keys, group = np.unique(keys_kept, return_inverse=True)
    group_site = unique_keys // span
    group_date = (unique_keys % span + first_day).astype("datetime64[D]")
    every = bool(keep.all())

    def kept(values, view=False):
        """The kept readings' values: when every reading is kept, the array itself (twenty columns of a
        million-row log not copied), or a copy of ``view``s of the track's larger arrays (not kept whole)."""
        if not every:
            return values[keep]
        return values.copy() if view else values

    return _Prepared(
        sites=sites,
        baselines=baselines,
        readings=readings,
        keep=keep,
        left_out=left_out,
        group=group,
        group_site=group_site,
        group_date=group_date,
        altitude_rad=np.radians(kept(altitude_deg)),
        sigma_reading_rad=kept(sigma_reading),
        dalt_dgnomon_rad_per_m=kept(dalt_dgnomon),
        edge_sigma_rad=kept(edge_sigma),
        refraction_sigma_rad=kept(refraction_sigma),
        declination_rad=np.radians(kept(pos.declination_deg)),
        hour_angle_rad=np.radians(kept(pos.hour_angle_deg)),
        declination_rate=np.radians(kept(track.declination_rate_deg_per_s)),
        hour_angle_rate=np.radians(kept(track.hour_angle_rate_deg_per_s)),
        semidiameter_deg=kept(pos.semidiameter_deg, view=True),
        refraction_deg=kept(refr),
        board_level_sigma_rad=kept(np.where(angle, 0.0, terms["board level"])),
        gnomon_plumb_sigma_rad=kept(np.where(angle | (np.asarray(readings.form) == "trace"), 0.0, terms["gnomon plumb"])),
        common_rad={name: kept(term) for name, term in forms.common_rad.items()},
        reading_source=kept(reading_sources(readings.form, readings.timed)),
        sun_azimuth_deg=kept(pos.azimuth_deg, view=True),
    )


def _fit(prep: _Prepared, altitude_rad) -> SeriesFit:
    lat_guess = np.radians(np.array([prep.sites[i].latitude_deg for i in prep.group_site]))
    return fit_series(
        prep.group,
        len(prep.group_site),
        altitude_rad,
        prep.sigma_reading_rad,
        prep.declination_rad,
        prep.hour_angle_rad,
        prep.declination_rate,
        prep.hour_angle_rate,
        lat_guess,
    )


def _group_sum(group, n, values):
    return np.bincount(group, weights=values, minlength=n)


def _combine_sites(prep: _Prepared, fit: SeriesFit, scale: np.ndarray):
    """Per site: weighted mean of its series' latitudes, and the 1-sigma contribution of each source.

    Gnomon height, edge location, the board's level and the gnomon's plumb
    are taken as common to all series of a site (same instrument, same eye);
    reading and refraction errors as independent between days.
    """
    n_groups = len(prep.group_site)
    gain = fit.gain_latitude
    # per series: contribution of each source to the latitude (rad); the readings' own scatter
    # with the clock known, and what not knowing the clock adds (the fit solves for both)
    reading = np.sqrt(1.0 / fit.latitude_information) * scale
    clock = np.sqrt(np.maximum(fit.covariance[:, 0, 0] - 1.0 / fit.latitude_information, 0.0)) * scale
    gnomon = np.abs(_group_sum(prep.group, n_groups, gain * prep.dalt_dgnomon_rad_per_m * _gnomon_sigma(prep)))
    edge = np.abs(_group_sum(prep.group, n_groups, gain * prep.edge_sigma_rad))
    refraction = np.abs(_group_sum(prep.group, n_groups, gain * prep.refraction_sigma_rad))
    level = np.abs(_group_sum(prep.group, n_groups, gain * prep.board_level_sigma_rad))
    plumb = np.abs(_group_sum(prep.group, n_groups, gain * prep.gnomon_plumb_sigma_rad))
    extra = {name: np.abs(_group_sum(prep.group, n_groups, gain * term)) for name, term in prep.common_rad.items()}
    total = np.sqrt(reading**2 + clock**2 + gnomon**2 + edge**2 + refraction**2 + level**2 + plumb**2
                    + sum(v**2 for v in extra.values()))
    n_sites = len(prep.sites)
    w = 1.0 / total**2
    wsum = _group_sum(prep.group_site, n_sites, w)
    present = wsum > 0
    frac = w / np.where(present, wsum, 1.0)[prep.group_site]
    latitude = _group_sum(prep.group_site, n_sites, frac * fit.latitude_rad)
    contributions = {
        "shadow reading": np.sqrt(_group_sum(prep.group_site, n_sites, (frac * reading) ** 2)),
        "clock": np.sqrt(_group_sum(prep.group_site, n_sites, (frac * clock) ** 2)),
        "gnomon height": _group_sum(prep.group_site, n_sites, frac * gnomon),
        "edge location": _group_sum(prep.group_site, n_sites, frac * edge),
        "board level": _group_sum(prep.group_site, n_sites, frac * level),
        "gnomon plumb": _group_sum(prep.group_site, n_sites, frac * plumb),
        "refraction": np.sqrt(_group_sum(prep.group_site, n_sites, (frac * refraction) ** 2)),
    }
    per_series = {"shadow reading": reading, "clock": clock, "gnomon height": gnomon, "edge location": edge,
                  "board level": level, "gnomon plumb": plumb, "refraction": refraction}
    readings_by_form = reading_by_source(prep, gain, reading)
    for name, value in (extra | readings_by_form).items():
        per_series[name] = value
        if name in readings_by_form:
            contributions[name] = np.sqrt(_group_sum(prep.group_site, n_sites, (frac * value) ** 2))
        else:
            contributions[name] = _group_sum(prep.group_site, n_sites, frac * value)
    unused = [] if not readings_by_form else ["shadow reading"] if "instrument" not in readings_by_form else (
        ["shadow reading", "gnomon height", "edge location", "board level", "gnomon plumb"] if len(readings_by_form) == 1 else ["shadow reading"])
    for name in (u for u in unused if u not in readings_by_form):
        del contributions[name], per_series[name]
    return present, latitude, contributions, per_series, total


def reading_by_source(prep: _Prepared, gain, reading) -> dict:
    """Each form's share of the series' reading error (empty when every reading is a plain length)."""
    # the codes present, in order: np.unique's result without its import of numpy.ma (a command's start)
    source = np.sort(prep.reading_source)
    codes = source[np.concatenate(([True], source[1:] != source[:-1]))] if source.size else source
    if codes.tolist() == [0]:
        return {}
    n_groups = len(prep.group_site)
    spread = (gain * prep.sigma_reading_rad) ** 2
    everything = np.maximum(_group_sum(prep.group, n_groups, spread), 1e-300)
    return {
        READING_SOURCE_NAMES[c]: reading * np.sqrt(_group_sum(prep.group, n_groups, spread * (prep.reading_source == c)) / everything)
        for c in codes
    }


def _gnomon_sigma(prep: _Prepared):
    return np.asarray(prep.readings.gnomon_sigma_m, float)[prep.keep]


def _leave_one_out(position, latitude, variance, active):
    """Normalized leave-one-out residual of each active site (NaN where it cannot be formed).

    For site i, the residual from the weighted line through the other active
    sites divided by its standard error, sigma_i^2 + x_i' C_(i) x_i. All of
    them from the one fit through every active site (deleted residuals):
    with h_i = w_i x_i' C x_i the leverage, the residual is e_i / (1 - h_i)
    and x_i' C_(i) x_i = x_i' C x_i / (1 - h_i) (Sherman-Morrison), so the
    cost is linear in the sites.
    """
    out = np.full(len(position), np.nan)
    idx = np.flatnonzero(active)
    if idx.size < 4:
        return out
    w = 1.0 / variance[idx]
    x0 = np.sum(w * position[idx]) / np.sum(w)  # centred positions: a well-conditioned 2 x 2
    x = position[idx] - x0
    y = latitude[idx]
    sw, sx, sxx = np.sum(w), np.sum(w * x), np.sum(w * x * x)
    det = sw * sxx - sx * sx
    c00, c01, c11 = sxx / det, -sx / det, sw / det  # C = (X' W X)^-1 with rows (1, x)
    intercept = c00 * np.sum(w * y) + c01 * np.sum(w * x * y)
    slope = c01 * np.sum(w * y) + c11 * np.sum(w * x * y)
    q = c00 + 2.0 * c01 * x + c11 * x * x
    keep = 1.0 - w * q
    residual = y - (intercept + slope * x)
    with np.errstate(divide="ignore", invalid="ignore"):
        z = (residual / keep) / np.sqrt(variance[idx] + q / keep)
    out[idx] = np.where(keep > 1e-12, z, np.nan)
    return out


def reduce_shadows(
    sites: tuple[SiteInput, ...],
    readings: ShadowReadings,
    baselines: tuple[BaselineInput, ...] = (),
) -> ShadowReduction:
    """The Earth's radius from noon shadow readings at two or more sites.

    Parameters
    ----------
    sites : tuple of SiteInput
        The campaign's sites; ``readings.site_index`` points into it.
    readings : ShadowReadings
        Every reading, with its gnomon, edge, errors and weather.
    baselines : tuple of BaselineInput
        Surveyed distances that replace the map's.

    Returns
    -------
    ShadowReduction

    Raises
    ------
    ComputationError
        Fewer than two sites with usable readings, or no north-south spread.
    """
    prep = _prepare(tuple(sites), tuple(baselines), readings)
    fit = _fit(prep, prep.altitude_rad)
    chi2_dof, scale = _series_scatter_scale(fit)
    present, latitude, contributions, per_series, total = _combine_sites(prep, fit, scale)
    if np.sum(present) < 2:
        raise ComputationError("need usable shadow readings from at least two sites; got " + str(int(np.sum(present))))
    positions = north_south_positions(prep.sites, prep.baselines)
    site_variance = sum(c**2 for c in contributions.values())
    active = present.copy()
    outliers: list[int] = []
    while True:
        z = _leave_one_out(positions.position_km, latitude, site_variance, active)
        worst = int(np.nanargmax(np.abs(z))) if np.any(np.isfinite(z)) else -1
        if worst < 0 or abs(z[worst]) <= OUTLIER_THRESHOLD_SIGMA:
            break
        active[worst] = False
        outliers.append(worst)
    result = _radius_from(prep, positions, latitude, contributions, active)
    line, radius, budget, chi2_scale, expected = result
    spread = np.ptp(positions.position_km[active])
    if spread < 1.0:
        raise ComputationError("the sites are less than 1 km apart north-south; the method needs a north-south baseline")
    # per-site and per-series tables
    # sites without readings have no variance: their entries are never read below
    safe_variance = np.where(present, site_variance, 1.0)
    final_z = (latitude - (line.intercept_rad + line.slope_rad_per_km * positions.position_km)) / np.sqrt(safe_variance)
    loo = _leave_one_out(positions.position_km, latitude, site_variance, present)
    site_results = []
    series_results = _series_results(prep, fit, per_series, total, scale, chi2_dof)
    series_of: dict[str, list[SeriesResult]] = {}
    for r in series_results:
        series_of.setdefault(r.site_id, []).append(r)
    for i, s in enumerate(prep.sites):
        if not present[i]:
            continue
        residual = latitude[i] - (line.intercept_rad + line.slope_rad_per_km * positions.position_km[i])
        sigma_deg = float(np.degrees(np.sqrt(site_variance[i])))
        site_results.append(
            SiteResult(
                id=s.id,
                name=s.name,
                latitude_deg=s.latitude_deg,
                longitude_deg=s.longitude_deg,
                north_south_km=float(positions.position_km[i]),
                astronomical_latitude_deg=Measured(
                    float(np.degrees(latitude[i])), sigma_deg,
                    float(np.degrees(latitude[i])) - sigma_deg, float(np.degrees(latitude[i])) + sigma_deg, "deg",
                ),
                residual_arcmin=float(np.degrees(residual) * 60.0),
                normalized_residual=float(loo[i]) if np.isfinite(loo[i]) else float(final_z[i]),
                outlier=i in outliers,
                series=tuple(series_of.get(s.id, ())),
            )
        )
    lat_active = np.array([s.latitude_deg for s in prep.sites])[active]
    mid = 0.5 * (lat_active.min() + lat_active.max())
    left_out = dict(prep.left_out)
    assumptions = (
        "refraction: Bennett (1982) from the marked edge's apparent altitude; the log's temperature and "
        "pressure where given, else 10 C and 1010 hPa reduced to the site's elevation",
        "marked edge to the Sun's centre by the semi-diameter of the date (umbra edge = upper limb, "
        "outer edge = lower limb)",
        "declination and hour angle of the Sun from DE421 at each reading, topocentric",
        "positions along the meridian on WGS84, surveyed baselines replacing the map where given",
        "expected value: the same fit on the sites' geodetic latitudes, i.e. the WGS84 meridional radius "
        "of curvature over the sites' span (not the 6371 km mean radius)",
    )
    return ShadowReduction(
        earth_radius_km=radius,
        circumference_km=radius.scaled(2.0 * np.pi, "km"),
        expected_radius_km=expected,
        mean_radius_km=IUGG_MEAN_RADIUS_KM,
        meridional_radius_mid_km=float(meridional_radius_of_curvature_km(mid)),
        sites=tuple(site_results),
        budget=budget,
        outliers=tuple(prep.sites[i].id for i in outliers),
        readings_used=int(np.sum(prep.keep)),
        readings_left_out=left_out,
        chi2_per_dof=None if line.dof <= 0 else line.chi2 / line.dof,
        scatter_scale=chi2_scale,
        assumptions=assumptions,
        warnings=tuple(f"{r.site_id} {r.date}: {r.board.warning}" for r in series_results if r.board and r.board.warning),
    )


def _series_scatter_scale(fit: SeriesFit):
    """chi2/dof of each series and the factor on its reading term.

    A series that scatters about its fit significantly more than its stated
    reading error allows (the same 5 % test as between sites) has its reading
    term scaled by sqrt(chi2/dof); otherwise the stated error stands.
    """
    from firstrung.uncertainty import chi2_survival

    dof = fit.count - 2
    chi2_dof = np.where(dof >= 2, fit.chi2 / np.maximum(dof, 1), np.nan)
    significant = (dof >= 2) & (chi2_survival(fit.chi2, np.maximum(dof, 1)) < SCATTER_SIGNIFICANCE)
    scale = np.where(significant & (chi2_dof > 1.0), np.sqrt(np.nan_to_num(chi2_dof, nan=1.0)), 1.0)
    return chi2_dof, scale


def _scatter_is_significant(chi2: float, dof: int) -> bool:
    """True when the sites scatter about the line more than their stated errors allow.

    Only then is the slope's sigma scaled by sqrt(chi2/dof): with three or
    four sites chi2/dof swings widely by chance, and inflating on every value
    above 1 would make the interval too wide on average. The test is the
    chi-square upper tail at SCATTER_SIGNIFICANCE.
    """
    from firstrung.uncertainty import chi2_survival

    return bool(chi2 / dof > 1.0 and chi2_survival(chi2, dof) < SCATTER_SIGNIFICANCE)


def _radius_from(prep, positions: Positions, latitude, contributions, active):
    """Line fit over the active sites with position errors folded in; radius, budget, expected."""
    n = len(prep.sites)
    pos = positions.position_km
    base_var = sum(c**2 for c in contributions.values())
    pos_var = positions.variance_km2()
    slope = 1.0 / IUGG_MEAN_RADIUS_KM
    for _ in range(2):
        variance = base_var + slope**2 * pos_var
        line = fit_line(pos[active], latitude[active], variance[active])
        slope = line.slope_rad_per_km
    if slope <= 0:
        raise ComputationError(
            "the astronomical latitudes do not increase northwards with the sites' positions "
            f"(slope {slope:.3g} rad/km): check the sites' coordinates and edges"
        )
    gain = np.zeros(n)
    gain[active] = line.gain_slope
    budget_slope = {}
    for name, c in contributions.items():
        budget_slope[name] = float(np.sqrt(np.sum((gain * c) ** 2)))
    # positions: d(slope)/d(position_i) = -slope * gain_i (to first order)
    g_pos = -slope * gain
    budget_slope["site positions"] = float(np.sqrt(max(positions.map_quadratic(g_pos), 0.0)))
    budget_slope["baselines"] = float(np.sqrt(max(positions.baseline_quadratic(g_pos), 0.0)))
    sigma_slope_stated = float(np.sqrt(sum(v**2 for v in budget_slope.values())))
    chi2_scale = 1.0
    if line.dof >= 1 and _scatter_is_significant(line.chi2, line.dof):
        chi2_scale = float(np.sqrt(line.chi2 / line.dof))
        budget_slope["scatter between sites beyond the stated errors"] = sigma_slope_stated * float(
            np.sqrt(chi2_scale**2 - 1.0)
        )
    sigma_slope = float(np.sqrt(sum(v**2 for v in budget_slope.values())))
    radius = reciprocal_of_gaussian(1.0, slope, sigma_slope, "km")
    if not positions.baseline_sigma_km.size:
        del budget_slope["baselines"]
    budget = budget_from_contributions({k: v / slope**2 for k, v in budget_slope.items()}, "km")
    geodetic = np.radians(np.array([s.latitude_deg for s in prep.sites]))
    map_pos = meridian_arc_m(np.array([s.latitude_deg for s in prep.sites])) / 1000.0
    expected_line = fit_line(map_pos[active], geodetic[active], variance[active])
    expected = float(1.0 / expected_line.slope_rad_per_km)
    return line, radius, budget, chi2_scale, expected


# --- Monte Carlo check of the propagation ---------------------------------------------------------------


#: Most draws times readings of the Monte Carlo check (each array of that size takes 8 bytes a value).
MONTE_CARLO_MAX_VALUES = 20_000_000


def monte_carlo_radius(
    sites: tuple[SiteInput, ...],
    readings: ShadowReadings,
    baselines: tuple[BaselineInput, ...] = (),
    *,
    samples: int = 2000,
    seed: int = 1,
) -> np.ndarray:
    """Radius samples [km] from drawing every input error and redoing the reduction.

    Per reading: the shadow length (its reading sigma). Per site: the gnomon
    height, the edge placement and the refraction scale (one draw each, common
    to that site's readings). Per site position and baseline: their sigmas.
    The same sites are left out as outliers as in the nominal reduction (none
    are tested again). The spread of the result checks :func:`reduce_shadows`'s
    linear sigma.
    """
    rng = np.random.default_rng(seed)
    prep = _prepare(tuple(sites), tuple(baselines), readings)
    if samples * max(len(prep.altitude_rad), 1) > MONTE_CARLO_MAX_VALUES:
        raise InputError(
            f"--monte-carlo: at most {MONTE_CARLO_MAX_VALUES // max(len(prep.altitude_rad), 1):,} draws for "
            f"{len(prep.altitude_rad)} readings (memory), got {samples:,}"
        )
    nominal = reduce_shadows(sites, readings, baselines)
    outlier_ids = set(nominal.outliers)
    n_sites = len(prep.sites)
    reading_site = np.asarray(prep.readings.site_index, int)[prep.keep]
    k = len(prep.altitude_rad)
    alt = prep.altitude_rad[None, :] + rng.standard_normal((samples, k)) * prep.sigma_reading_rad[None, :]
    gnomon_draw = rng.standard_normal((samples, n_sites))[:, reading_site]
    alt = alt + gnomon_draw * prep.dalt_dgnomon_rad_per_m * _gnomon_sigma(prep)
    edge_draw = rng.standard_normal((samples, n_sites))[:, reading_site]
    alt = alt + edge_draw * prep.edge_sigma_rad
    refr_draw = rng.standard_normal((samples, n_sites))[:, reading_site]
    alt = alt + refr_draw * prep.refraction_sigma_rad
    level_draw = rng.standard_normal((samples, n_sites))[:, reading_site]
    alt = alt + level_draw * prep.board_level_sigma_rad
    plumb_draw = rng.standard_normal((samples, n_sites))[:, reading_site]
    alt = alt + plumb_draw * prep.gnomon_plumb_sigma_rad
    for term in prep.common_rad.values():
        alt = alt + rng.standard_normal((samples, n_sites))[:, reading_site] * term
    fit = _fit(prep, alt)
    # combine series per site with the nominal weights
    nominal_fit = _fit(prep, prep.altitude_rad)
    _, scale = _series_scatter_scale(nominal_fit)
    present, _, contributions, _, total = _combine_sites(prep, nominal_fit, scale)
    w = 1.0 / total**2
    wsum = _group_sum(prep.group_site, n_sites, w)
    frac = w / np.where(wsum > 0, wsum, 1.0)[prep.group_site]
    latitude = np.zeros((samples, n_sites))
    for g in range(len(prep.group_site)):  # series count is small (sites x days)
        latitude[:, prep.group_site[g]] += frac[g] * fit.latitude_rad[:, g]
    positions = north_south_positions(prep.sites, prep.baselines)
    pos = positions.draw(rng, samples)
    active = present & np.array([s.id not in outlier_ids for s in prep.sites])
    variance = sum(c**2 for c in contributions.values())[active]
    x = pos[:, active]
    y = latitude[:, active]
    wv = 1.0 / variance
    sw, sx, sy = wv.sum(), (wv * x).sum(1), (wv * y).sum(1)
    sxx, sxy = (wv * x * x).sum(1), (wv * x * y).sum(1)
    slope = (sw * sxy - sx * sy) / (sw * sxx - sx**2)
    return 1.0 / slope


def check_inputs(sites: tuple[SiteInput, ...]) -> None:
    """Refuse sites the method cannot use (bad coordinates)."""
    for s in sites:
        if not -90.0 <= s.latitude_deg <= 90.0:
            raise InputError(f"site '{s.id}': latitude_deg {s.latitude_deg} is outside -90..90 deg")
