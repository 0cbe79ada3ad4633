"""The shadow check's statistics: each row's observed and predicted altitude, the robust chi-square of a\nseries, and the explicit hypotheses (time shifts, signs, units, edges) it is compared under.\n"""

from __future__ import annotations

import datetime as _dt
from dataclasses import dataclass, replace
from zoneinfo import ZoneInfo

import numpy as np

from firstrung.campaign_model import Campaign
from firstrung.constants import (
    ASTRONOMICAL_UNIT_KM,
    SUN_SEMIDIAMETER_AT_1AU_ARCSEC,
    WGS84_SEMI_MAJOR_AXIS_M,
)
from firstrung.distinct import distinct_texts
from firstrung.methods.shadows.altitude import EDGE_LIMB_SIGN, altitude_error_terms_rad
from firstrung.methods.shadows.inputs import ShadowReadings
from firstrung.methods.shadows.series_layout import (
    FlatSeries,
    SeriesLayout,
    hopeless_series,
    series_fit,
)
from firstrung.refraction import refraction_from_apparent_deg

#: Readings of one file and site more than this apart [h] belong to different series.
SERIES_GAP_H = 6.0


#: Prior one-sigma of a series' clock offset in the check [s]: a watch set by
#: hand keeps within a few minutes (common practice). Tighter than the
#: reduction's weak prior, so that offsets of a quarter of an hour and more
#: are left to the explicit hypotheses.
CHECK_CLOCK_SIGMA_S = 300.0


#: Whole-hour clock shifts tried [h].
TIME_SHIFTS_H = (-3, -2, -1, 1, 2, 3)


#: Length-unit factors tried (logged length / length the Sun allows): mm/cm/m
#: mix-ups and inches or feet read as a metric unit.
LENGTH_FACTORS = (10.0, 100.0, 1000.0, 2.54, 25.4, 30.48, 0.1, 0.01, 0.001, 1 / 2.54, 1 / 25.4, 1 / 30.48)


#: Each normalised residual contributes at most this squared to the statistic,
#: so that one wild row cannot decide between explanations of a whole series.
RESIDUAL_CAP_SIGMA = 3.0


#: Huber constant of the reweighting (sigma).
HUBER_SIGMA = 2.0


#: IRLS iterations of the level-and-clock fit (converges in 2-3).
_FIT_ITERATIONS = 4


#: One-sigma timing error of a single logged reading [s]: times written to
#: the whole minute have a rounding error of 60 / sqrt(12) = 17 s (common practice).
READING_TIME_SIGMA_S = 20.0


#: The Sun's mean hour-angle rate [rad/s]: 360 deg per mean solar day.
_HOUR_ANGLE_RATE_RAD_S = 2.0 * np.pi / 86400.0


_ARCMIN_PER_RAD = 60.0 * 180.0 / np.pi


_FAMILY = {
    "local-time-as-utc": "time",
    "time-shift-hours": "time",
    "longitude-sign": "time",
    "latitude-sign": "latitude",
    "length-unit": "unit",
    "edge-convention": "edge",
    "zenith-distance-as-altitude": "zenith",
    "degrees-minutes": "minutes",
}


#: Preference among explanations that the data cannot tell apart (lower first).
_PREFERENCE = {
    "local-time-as-utc": 0,
    "time-shift-hours": 1,
    "longitude-sign": 2,
    "latitude-sign": 3,
    "length-unit": 4,
    "edge-convention": 5,
    "zenith-distance-as-altitude": 6,
    "degrees-minutes": 7,
}


@dataclass(frozen=True)
class CheckSite:
    """What the check needs to know of a site."""

    id: str
    latitude_deg: float
    longitude_deg: float
    elevation_m: float = 0.0
    timezone: str | None = None


def check_sites(campaign: Campaign) -> tuple[CheckSite, ...]:
    """The campaign's sites as the check takes them."""
    return tuple(
        CheckSite(s.id, s.latitude_deg, s.longitude_deg, s.elevation_m, s.timezone) for s in campaign.sites
    )


#: The shadow edge each limb of an angle reading stands for (the umbra tip is cast by the upper limb).
LIMB_EDGE = {"upper": "umbra", "centre": "middle", "lower": "outer"}


def equivalent_length_m(angle_deg):
    """The shadow of a 1 m gnomon for an apparent altitude [m]."""
    return 1.0 / np.tan(np.radians(np.clip(np.asarray(angle_deg, float), 0.5, 89.99)))


def check_footing(rows: ShadowReadings) -> ShadowReadings:
    """Every form on the check's footing: an angle as the shadow of a 1 m gnomon (its reading error as the
    length error that gives the same altitude error, its limb as the edge that limb casts), a trace as its
    lengths; a trace without times has no clock to check and is left out.
    """
    forms, _ = distinct_texts(rows.form)
    if not (forms != "length").any():
        return rows
    form = np.asarray(rows.form).astype(str)
    keep = (form != "trace") | np.asarray(rows.timed, bool)
    angle = form == "angle"
    length = equivalent_length_m(np.asarray(rows.altitude_read_deg, float) + rows.index_correction_deg)
    sigma_rad = np.radians(np.asarray(rows.angle_sigma_deg, float))
    limb_edge = np.array([LIMB_EDGE.get(x, "middle") for x in np.asarray(rows.limb).astype(str)], dtype=object)
    changes = {
        "shadow_m": np.where(angle, length, rows.shadow_m),
        "gnomon_m": np.where(angle, 1.0, rows.gnomon_m),
        "edge": np.where(angle, limb_edge, np.asarray(rows.edge, dtype=object)),
        "gnomon_sigma_m": np.where(angle, 0.0, rows.gnomon_sigma_m),
        "shadow_sigma_m": np.where(angle, sigma_rad * (1.0 + length**2), rows.shadow_sigma_m),
        "altitude_read_deg": np.where(angle, rows.altitude_read_deg, np.nan),
    }
    picked = {name: values[keep] for name, values in changes.items()}
    for name, values in rows.__dict__.items():
        if name not in picked and isinstance(values, np.ndarray) and values.shape == form.shape:
            picked[name] = values[keep]
    return replace(rows, **picked)


def distinct_sun(time_utc, shift_ms: int = 0, like=None, rows=None):
    """The geocentric Sun once per distinct time: ``(xyz_km, gast_rad, inverse)`` for :func:`sun_altitude_rad`.

    ``like``: the distinct Sun of the same times unshifted; a whole shift of
    every time keeps which rows share a time, so its sorting is not repeated.
    ``rows`` (with ``like``): only these rows' times are wanted; each gets the numbers the whole set of
    times gives it (the inverse then points from these rows into the distinct times they use).
    """
    from firstrung import ephemeris

    if like is not None and shift_ms == 0 and rows is None:
        return like
    if like is None:
        t = np.asarray(time_utc, dtype="datetime64[us]")
        if shift_ms:
            t = t + np.timedelta64(shift_ms * 1000, "us")
        ephemeris.check_in_span(t)
        unique_t, inverse = np.unique(t, return_inverse=True)
        del t
    elif rows is not None:
        return _distinct_part(like, shift_ms, rows)
    else:
        unique_t = like[3] + np.timedelta64(shift_ms * 1000, "us")
        inverse = like[2]
        ephemeris.check_in_span(unique_t)
    xyz_km, gast_rad = ephemeris._geocentric_sun(unique_t)
    return xyz_km, gast_rad, inverse, unique_t


def _distinct_part(like, shift_ms: int, rows):
    """:func:`distinct_sun` of ``like``'s times moved by ``shift_ms`` at some rows only (see there)."""
    from firstrung import ephemeris
    from firstrung.ephemeris import sun

    used = np.zeros(like[3].size, bool)
    used[like[2][rows]] = True
    at = np.flatnonzero(used)
    inverse = (np.cumsum(used) - 1)[like[2][rows]]
    if not shift_ms:  # the same times: their Sun is known
        return like[0][:, at], like[1][at], inverse, like[3][at]
    shift = np.timedelta64(shift_ms * 1000, "us")
    ends = like[3][[0, -1]] + shift  # the distinct times are sorted: within the span when their ends are
    ephemeris.check_in_span(ends)
    unique_t = like[3][at] + shift
    part = sun._geocentric_sun_part(unique_t, ends[0], ends[1], like[3].size)
    if part is None:  # the whole set is computed directly (not per time): compute it whole, keep the part
        xyz_km, gast_rad = sun._geocentric_sun(like[3] + shift)
        part = xyz_km[:, at], gast_rad[at]
    return part[0], part[1], inverse, unique_t


def sun_altitude_rad(time_utc, latitude_deg, longitude_deg, *, distinct=None, parts=None, latitude_terms=None):
    """True (airless) topocentric altitude of the Sun's centre, its rate, hour angle and semi-diameter.

    The geocentric apparent Sun comes from the ephemeris once per distinct
    time; the step to the site is the spherical formula with the Sun's
    parallax ``(a / d) cos(altitude)`` (diurnal aberration, 0.3", is left
    out). Good to about 1" against :func:`firstrung.ephemeris.sun_position`,
    far below the arcminutes a shadow reading is good to.

    Parameters
    ----------
    time_utc : datetime64 array (n,)
        Instants [UTC].
    latitude_deg, longitude_deg : arrays (n,)
        Sites [deg].

    distinct : optional
        The geocentric Sun of these times from :func:`distinct_sun` (computed when not given).
    parts : dict, optional
        Filled with what a hypothesis moving the Sun starts from (:func:`moved_altitude_bounds`): per row
        ``sin_term`` (sin latitude sin declination), ``cos_factor`` (cos latitude cos declination) and
        ``cos_lat`` and ``sin_lat``.
    latitude_terms : (sin, cos) of the latitudes, optional
        When known (``parts``' ``sin_lat`` and ``cos_lat`` of the same rows): the same numbers, not again.

    Returns
    -------
    altitude_rad, altitude_rate_rad_s, hour_angle_rad, semidiameter_deg : arrays (n,)

    >>> t = np.array(["2027-06-21T11:30:00"], dtype="datetime64[ms]")
    >>> a, rate, ha, sd = sun_altitude_rad(t, np.array([46.2]), np.array([7.4]))
    >>> round(float(np.degrees(a[0])), 1), round(float(sd[0]) * 60, 2)
    (67.2, 15.74)
    """
    xyz_km, gast_rad, inverse, _ = distinct_sun(time_utc) if distinct is None else distinct
    distance_km = np.sqrt(np.sum(xyz_km**2, axis=0))
    dec = np.arcsin(xyz_km[2] / distance_km)
    # per distinct time what the rows share, then per row in place (a long log's memory is in its temporaries)
    sin_dec, cos_dec = np.sin(dec)[inverse], np.cos(dec)[inverse]
    ha = (gast_rad - np.arctan2(xyz_km[1], xyz_km[0]))[inverse]
    distance_km = distance_km[inverse]
    del inverse
    ha += np.radians(np.asarray(longitude_deg, float))
    # wrapped to [-pi, pi] as angles.wrapped_rad wraps, in place, its cosine kept as the next product's buffer
    cos_ha = np.cos(ha)
    ha = np.arctan2(np.sin(ha, out=ha), cos_ha, out=ha)
    if latitude_terms is None:
        lat = np.radians(np.asarray(latitude_deg, float))
        sin_lat, cos_lat = np.sin(lat), np.cos(lat)
        del lat
    else:
        sin_lat, cos_lat = latitude_terms
    np.cos(ha, out=cos_ha)
    cos_ha *= cos_lat
    cos_ha *= cos_dec
    sin_alt = sin_lat * sin_dec
    if parts is not None:
        parts.update(sin_term=sin_alt.copy(), cos_factor=cos_lat * cos_dec, cos_lat=cos_lat, sin_lat=sin_lat)
    sin_alt += cos_ha
    del cos_ha, sin_dec, sin_lat
    alt = np.arcsin(np.clip(sin_alt, -1.0, 1.0, out=sin_alt), out=sin_alt)
    alt -= (WGS84_SEMI_MAJOR_AXIS_M / 1000.0 / distance_km) * np.cos(alt)
    rate = np.sin(ha)
    rate *= -cos_lat
    rate *= cos_dec
    rate /= np.maximum(np.cos(alt), 1e-6)
    rate *= _HOUR_ANGLE_RATE_RAD_S
    semidiameter_deg = SUN_SEMIDIAMETER_AT_1AU_ARCSEC / 3600.0 / (distance_km / ASTRONOMICAL_UNIT_KM)
    return alt, rate, ha, semidiameter_deg


@dataclass(frozen=True)
class SeriesStatistic:
    """Robust fit of level and clock offset per series, and the statistic (see :func:`series_statistic`)."""

    statistic: np.ndarray  # (n_groups,)
    level_rad: np.ndarray
    level_sigma_rad: np.ndarray
    clock_s: np.ndarray
    mean_square: np.ndarray
    z: np.ndarray  # (n,) normalised residual of each row about the fit


def series_statistic(group, n_groups, residual_rad, rate_rad_s, sigma_random_rad, variance_systematic_rad2,
                     *, robust=True, columns=None) -> SeriesStatistic:
    """Robust chi-square of each series about a fitted level and clock offset.

    Model of row i of series g: ``r_i = m_g + d_i u_g + e_i`` with ``d_i``
    the rate of the predicted altitude, ``u_g`` the clock offset (prior sigma
    CHECK_CLOCK_SIGMA_S) and ``e_i`` the reading error (sigma_random). The
    statistic is ``sum min(z_i^2, C^2) + m^2 / (V_sys + var m) + u^2 / s_u^2``
    with ``C`` = RESIDUAL_CAP_SIGMA and ``V_sys`` the series' mean systematic
    variance (errors common to its rows: gnomon height, edge, refraction).
    With ``robust`` the fit starts at the median and uses Huber weights;
    without, it is plain weighted least squares and nothing is capped.

    Parameters
    ----------
    group : int array (n,) or SeriesLayout
        Series of each row, 0..n_groups-1, or their :class:`SeriesLayout` (the same numbers, faster).
    residual_rad, rate_rad_s, sigma_random_rad, variance_systematic_rad2 : arrays (n,)
        Observed minus predicted altitude [rad], its rate with time [rad/s],
        the random and the systematic error [rad, rad^2].
    columns : bool array (n_groups,), optional
        With a SeriesLayout: fit only these series (the others get an infinite statistic, NaN values).

    Returns
    -------
    SeriesStatistic

    >>> g = np.zeros(5, int)
    >>> s = series_statistic(g, 1, np.full(5, 1e-3), np.zeros(5), np.full(5, 1e-3), np.full(5, 1e-6))
    >>> round(float(s.statistic[0]), 2), round(float(s.level_rad[0]) * 1e3, 3)
    (0.83, 1.0)
    """
    layout = group if isinstance(group, SeriesLayout) and group.usable else None
    if layout is None:  # the rows as they are (the fit ignores ``columns``: every series is fitted)
        flat = FlatSeries(group.group if isinstance(group, SeriesLayout) else group, n_groups)
        statistic, level, level_var, clock, mean_square, z = _fit(flat, residual_rad, rate_rad_s, sigma_random_rad,
                                                                  variance_systematic_rad2, robust, None)
        return SeriesStatistic(statistic, level, np.sqrt(level_var), clock, mean_square, z)
    statistic, level, level_var, clock, mean_square, z = _fit(
        layout, residual_rad, rate_rad_s, sigma_random_rad, variance_systematic_rad2, robust, columns)
    if columns is None or columns.all():
        return SeriesStatistic(statistic, level, np.sqrt(level_var), clock, mean_square, layout.rows(z))

    def wide(values, fill):
        out = np.full(layout.n_groups, fill)
        out[columns] = values
        return out

    z_all = np.full(layout.shape, np.nan)
    z_all[:, columns] = z
    return SeriesStatistic(wide(statistic, np.inf), wide(level, np.nan), wide(np.sqrt(level_var), np.nan),
                           wide(clock, np.nan), wide(mean_square, np.nan), layout.rows(z_all))


def _fit(arrangement, residual_rad, rate_rad_s, sigma_random_rad, variance_systematic_rad2, robust, columns):
    return series_fit(arrangement, residual_rad, rate_rad_s, sigma_random_rad, variance_systematic_rad2,
                      robust=robust, prior=1.0 / CHECK_CLOCK_SIGMA_S**2, huber=HUBER_SIGMA,
                      iterations=_FIT_ITERATIONS, cap=RESIDUAL_CAP_SIGMA, columns=columns)


def hopeless(layout: SeriesLayout, residual_rad, rate_rad_s, sigma_random_rad, variance_systematic_rad2,
             beyond) -> np.ndarray:
    """Per series: whether :func:`series_statistic` is sure to exceed ``beyond`` (see
    :func:`~firstrung.methods.shadows.series_layout.hopeless_series`); never when the layout is not used."""
    if not layout.usable:
        return np.zeros(layout.n_groups, bool)
    return hopeless_series(layout, residual_rad, rate_rad_s, sigma_random_rad, variance_systematic_rad2, beyond,
                           prior=1.0 / CHECK_CLOCK_SIGMA_S**2, huber=HUBER_SIGMA)


def _edge_sign(edge) -> np.ndarray:
    names, inverse = distinct_texts(edge)
    return np.array([EDGE_LIMB_SIGN.get(n, 0.0) for n in names], float)[inverse]


def _observed(rows: ShadowReadings, length_m, sign, semidiameter_deg, temperature_c, pressure_hpa):
    """Observed centre altitude [rad] and the random and systematic error terms (as centre_altitude_deg)."""
    apparent_deg = np.degrees(np.arctan2(rows.gnomon_m, length_m))
    refraction_deg = refraction_from_apparent_deg(apparent_deg, temperature_c, pressure_hpa)
    centre_deg = apparent_deg - refraction_deg - sign * semidiameter_deg
    return np.radians(centre_deg), refraction_deg


def edge_groups(edge) -> tuple[tuple[str, np.ndarray | None], ...]:
    """Each edge name of the rows and the rows that mark it (None: every row), for :func:`_error_terms`."""
    if isinstance(edge, str):
        return ((edge, None),)
    names, code = distinct_texts(edge)
    if names.size == 1:
        return ((str(names[0]), None),)
    return tuple((str(name), code == k) for k, name in enumerate(names))


def _error_terms(rows: ShadowReadings, length_m, altitude_deg, semidiameter_deg, refraction_deg, measured_weather,
                 edge=None, width_m=None):
    """(random reading variance, systematic variance) per row [rad^2], from altitude_error_terms_rad.

    ``edge``: the rows' edges (default: as logged), one edge name for every row, or their
    :func:`edge_groups`; ``width_m``: the penumbra's width at ``altitude_deg`` when known.
    """
    groups = edge if isinstance(edge, tuple) else edge_groups(rows.edge if edge is None else edge)
    if len(groups) == 1 and groups[0][1] is None:  # one edge for every row: no copies
        return _edge_error_terms(groups[0][0], rows.gnomon_m, length_m, rows.shadow_sigma_m, rows.gnomon_sigma_m,
                                 altitude_deg, semidiameter_deg, refraction_deg, measured_weather,
                                 rows.altitude_read_deg, width_m)
    random_var = np.zeros(len(rows))
    systematic_var = np.zeros(len(rows))
    for name, pick in groups:  # at most three edge names
        random_var[pick], systematic_var[pick] = _edge_error_terms(
            name, rows.gnomon_m[pick], length_m[pick], rows.shadow_sigma_m[pick], rows.gnomon_sigma_m[pick],
            altitude_deg[pick], semidiameter_deg[pick], refraction_deg[pick], measured_weather[pick],
            rows.altitude_read_deg[pick], None if width_m is None else width_m[pick])
    return random_var, systematic_var


def _edge_error_terms(name, gnomon_m, length_m, shadow_sigma_m, gnomon_sigma_m, altitude_deg, semidiameter_deg,
                      refraction_deg, measured_weather, altitude_read_deg, width_m):
    """The variances of :func:`_error_terms` for rows that all mark the edge ``name``."""
    terms = altitude_error_terms_rad(gnomon_m, length_m, shadow_sigma_m, gnomon_sigma_m, name, altitude_deg,
                                     semidiameter_deg, refraction_deg, measured_weather, width_m=width_m)
    random_var = terms["shadow reading"] ** 2
    systematic_var = (terms["gnomon height"] ** 2 + terms["edge location"] ** 2 + terms["refraction"] ** 2
                      + terms["board level"] ** 2 + terms["gnomon plumb"] ** 2)
    angle = np.isfinite(altitude_read_deg)
    if angle.any():  # an instrument set on a limb: its judgement, not a shadow's edge
        from firstrung.methods.shadows.forms import LIMB_JUDGEMENT_FRACTION

        limb = {"umbra": "upper", "middle": "centre", "outer": "lower"}.get(name, "centre")
        judgement = np.radians(LIMB_JUDGEMENT_FRACTION[limb] * semidiameter_deg[angle])
        systematic_var[angle] = judgement**2 + terms["refraction"][angle] ** 2
    return random_var, systematic_var


@dataclass(frozen=True)
class _Hypothesis:
    code: str
    label: str
    hours: float = 0.0
    factor: float = 1.0
    edge: str | None = None
    longitude_sign: float = 1.0
    latitude_sign: float = 1.0
    local_as_utc: bool = False
    parts: tuple = ()  # a pair of usual mistakes made together: its two single hypotheses
    angle: str | None = None  # an angle typed wrongly: "zenith" (90 - x) or "minutes" (41.30 for 41 deg 30')

    @property
    def moves_time(self) -> bool:
        return self.hours != 0.0 or self.local_as_utc

    @property
    def family(self) -> str:
        if self.parts:
            return "+".join(sorted({p.family for p in self.parts}))
        return _FAMILY[self.code]

    @property
    def preference(self) -> int:
        return 10 + max(p.preference for p in self.parts) if self.parts else _PREFERENCE[self.code]


def _hypotheses() -> tuple[_Hypothesis, ...]:
    out = [_Hypothesis("local-time-as-utc", "local time typed as UTC", local_as_utc=True)]
    out += [_Hypothesis("time-shift-hours", f"times {h:+d} h", hours=float(h)) for h in TIME_SHIFTS_H]
    out.append(_Hypothesis("longitude-sign", "longitude sign", longitude_sign=-1.0))
    out.append(_Hypothesis("latitude-sign", "latitude sign", latitude_sign=-1.0))
    out += [_Hypothesis("length-unit", f"lengths x {f:.6g}", factor=f) for f in LENGTH_FACTORS]
    out += [_Hypothesis("edge-convention", f"{e} edge", edge=e) for e in EDGE_LIMB_SIGN]
    out.append(_Hypothesis("zenith-distance-as-altitude", "zenith distance typed as altitude", angle="zenith"))
    out.append(_Hypothesis("degrees-minutes", "degrees and minutes typed as decimals", angle="minutes"))
    return tuple(out)


def retyped_angle_deg(read_deg, how: str):
    """An angle as it was meant when typed wrongly: ``zenith`` 90 - x; ``minutes`` 41.30 read as 41 deg 30'.

    >>> [round(float(v), 4) for v in retyped_angle_deg(np.array([41.30, 60.0]), "minutes")]
    [41.5, 60.0]
    """
    read = np.asarray(read_deg, float)
    if how == "zenith":
        return 90.0 - read
    whole = np.floor(read)
    return whole + np.round((read - whole) * 100.0, 6) / 60.0


#: The alternative hypotheses tried on every series, in order.
HYPOTHESES = _hypotheses()


def _zone_offsets_h(sites, rows: ShadowReadings, group, group_site, group_day) -> np.ndarray:
    """Per row: the UTC offset [h] of its site's zone at local noon of its series' day (0 without a zone).

    Only for rows given in ``time_utc``: typing local time there is the mistake tested.
    """
    offsets = np.zeros(len(group_site))
    cache: dict[tuple[str, int], float] = {}
    for g, (s, day) in enumerate(zip(group_site, group_day, strict=True)):  # one per series, not per row
        zone = sites[s].timezone
        if zone is None:
            continue
        key = (zone, int(day))
        if key not in cache:
            noon = _dt.datetime(1970, 1, 1, 12) + _dt.timedelta(days=int(day))
            offset = ZoneInfo(zone).utcoffset(noon)
            cache[key] = 0.0 if offset is None else offset.total_seconds() / 3600.0
        offsets[g] = cache[key]
    per_row = offsets[group]
    return np.where(np.asarray(rows.time_column, dtype=object) == "time_utc", per_row, 0.0)
