"""Planning a shadow campaign: which days work at every site, and how well.

For every day of a range and every site, at once: the Sun's transit (local
apparent noon), its altitude (airless, and refracted at standard conditions),
the length of the marked shadow tip for that site's gnomon and edge, the
penumbra's width and the shadow's direction. From the same error model the
reduction uses (:func:`firstrung.methods.shadows.reduction.altitude_error_terms_rad`)
each day gets the sigma of the Earth's radius the campaign can expect; days
that break a constraint are kept with the reasons, and the rest are ranked.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, field

import numpy as np

from firstrung.constants import STANDARD_PRESSURE_HPA, STANDARD_TEMPERATURE_C
from firstrung.errors import InputError
from firstrung.methods.shadows.altitude import (
    EDGE_LIMB_SIGN,
    altitude_error_terms_rad,
    penumbra_width_m,
    stored_part,
)
from firstrung.methods.shadows.fits import north_south_positions
from firstrung.methods.shadows.inputs import SiteInput
from firstrung.numbers import median
from firstrung.refraction import apparent_from_true_altitude_deg, refraction_from_apparent_deg

#: Readings a site takes around noon in the plan's error model: every 2 min
#: from -30 to +30 min, as on the field sheet.
READINGS_PER_SERIES = 31
#: How well a clock is set before the readings [s] (to a time signal; common practice).
CLOCK_SIGMA_S = 60.0
WEEKDAY_NAMES = ("Monday", "Tuesday", "Wednesday", "Thursday", "Friday", "Saturday", "Sunday")


@dataclass(frozen=True)
class PlanSite:
    """A site as the planner needs it: place, zone and gnomon."""

    id: str
    name: str
    latitude_deg: float
    longitude_deg: float
    elevation_m: float
    timezone: str | None
    gnomon_height_m: float
    gnomon_sigma_m: float
    shadow_sigma_m: float
    edge: str


@dataclass(frozen=True)
class ShadowConstraints:
    """What rules a day out."""

    min_altitude_deg: float = 20.0
    max_shadow_m: float | None = None
    weekdays: tuple[int, ...] | None = None  # 0 = Monday
    excluded_dates: tuple[str, ...] = ()


@dataclass(frozen=True)
class ShadowPlan:
    """Predictions for every (day, site), the expected sigma of the radius per day, and the ranking."""

    dates: np.ndarray  # datetime64[D], (n_days,)
    sites: tuple[PlanSite, ...]
    transit_utc: np.ndarray  # (n_days, n_sites)
    altitude_deg: np.ndarray  # refracted, standard conditions
    altitude_airless_deg: np.ndarray
    declination_deg: np.ndarray
    shadow_m: np.ndarray
    penumbra_m: np.ndarray
    shadow_direction: np.ndarray  # "north" / "south" / "none"
    sigma_latitude_deg: np.ndarray
    sigma_terms_deg: dict
    sigma_radius_km: np.ndarray  # (n_days,)
    expected_radius_km: float
    rank: np.ndarray  # (n_days,), 0 where excluded
    excluded: DayReasons  # a tuple of reasons per day
    special: tuple[tuple[str, ...], ...]
    constraints: ShadowConstraints
    assumptions: tuple[str, ...] = field(default=())


def shadow_length_m(gnomon_m, true_centre_altitude_deg, semidiameter_deg, edge,
                    temperature_c=STANDARD_TEMPERATURE_C, pressure_hpa=STANDARD_PRESSURE_HPA):
    """Length of the marked shadow tip on a level board [m].

    The limb that casts the edge (upper for the umbra, lower for the outer
    edge) is refracted with Bennett's formula inverted, then projected by the
    gnomon.

    >>> round(float(shadow_length_m(1.0, 45.0, 0.0, "middle")), 4)
    0.9994
    """
    edge = np.asarray(edge, dtype=object)
    sign = np.broadcast_to(np.vectorize(EDGE_LIMB_SIGN.__getitem__, otypes=[float])(stored_part(edge)), edge.shape)
    limb = np.asarray(true_centre_altitude_deg, float) + sign * np.asarray(semidiameter_deg, float)
    apparent = apparent_from_true_altitude_deg(np.clip(limb, -0.9, 90.0), temperature_c, pressure_hpa)
    return np.asarray(gnomon_m, float) / np.tan(np.radians(apparent))


def plan_shadows(
    sites: tuple[PlanSite, ...],
    first_date,
    last_date,
    constraints: ShadowConstraints = ShadowConstraints(),
    baselines=(),
) -> ShadowPlan:
    """Predictions and the expected precision of the Earth's radius for every day of a range.

    Parameters
    ----------
    sites : tuple of PlanSite
        Two or more sites with gnomons.
    first_date, last_date : str or datetime64[D]
        The range, both ends included (civil dates at each site).
    constraints : ShadowConstraints
        Minimum noon altitude, board length, weekdays, excluded dates.
    baselines : tuple of BaselineInput
        Surveyed baselines (their sigma enters the expected precision).

    Returns
    -------
    ShadowPlan

    Examples
    --------
    >>> s = (PlanSite("a", "A", 41.0, 7.0, 0.0, None, 1.0, 0.001, 0.002, "umbra"),
    ...      PlanSite("b", "B", 46.4, 7.0, 0.0, None, 1.0, 0.001, 0.002, "umbra"))
    >>> p = plan_shadows(s, "2027-03-20", "2027-03-21")
    >>> [int(r) for r in p.rank]
    [1, 2]
    """
    from firstrung import ephemeris

    if len(sites) < 2:
        raise InputError(f"planning shadows needs two or more sites with a gnomon; got {len(sites)}")
    first = np.datetime64(first_date, "D")
    last = np.datetime64(last_date, "D")
    if last < first:
        raise InputError(f"--to {last} is before --from {first}")
    if not -90.0 <= constraints.min_altitude_deg <= 90.0:  # NaN fails too
        raise InputError(f"min_altitude_deg: received {constraints.min_altitude_deg!r}; expected -90 to 90")
    if constraints.max_shadow_m is not None and not 0.0 < constraints.max_shadow_m < float("inf"):
        raise InputError(f"max_shadow_m: received {constraints.max_shadow_m!r}; expected a positive length in m")
    dates = np.arange(first, last + np.timedelta64(1, "D"))
    lat = np.array([s.latitude_deg for s in sites])
    lon = np.array([s.longitude_deg for s in sites])
    elev = np.array([s.elevation_m for s in sites])
    h = np.array([s.gnomon_height_m for s in sites])
    edge = np.array([s.edge for s in sites], dtype=object)
    transit = ephemeris.solar_transit(dates[:, None], lat[None, :], lon[None, :], elev[None, :])
    airless = transit.altitude_deg
    semidiameter = transit.semidiameter_deg
    apparent = apparent_from_true_altitude_deg(np.clip(airless, -0.9, 90.0), STANDARD_TEMPERATURE_C, STANDARD_PRESSURE_HPA)
    edge_grid = np.broadcast_to(edge[None, :], airless.shape)
    length = shadow_length_m(h[None, :], airless, semidiameter, edge_grid)
    penumbra = penumbra_width_m(h[None, :], np.clip(airless, 1.0, 89.0), semidiameter)
    declination = transit.declination_deg
    direction = np.where(np.abs(lat[None, :] - declination) < 0.05, "none",
                         np.where(lat[None, :] > declination, "north", "south"))
    # expected sigma of each site's astronomical latitude [rad]
    refraction = refraction_from_apparent_deg(apparent, STANDARD_TEMPERATURE_C, STANDARD_PRESSURE_HPA)
    terms = altitude_error_terms_rad(
        h[None, :], length, np.array([s.shadow_sigma_m for s in sites])[None, :],
        np.array([s.gnomon_sigma_m for s in sites])[None, :], edge_grid, airless, semidiameter, refraction, False,
    )
    terms["shadow reading"] = terms["shadow reading"] / np.sqrt(READINGS_PER_SERIES)
    declination_rate_rad_s = np.radians(0.4 / 86400.0) * np.abs(np.cos(np.radians(_sun_longitude_proxy(dates))))[:, None]
    terms["declination drift"] = np.broadcast_to(declination_rate_rad_s * CLOCK_SIGMA_S, airless.shape)
    sigma_lat = np.sqrt(sum(t**2 for t in terms.values()))
    # the line latitude = a + k * position, k = 1/R, for every day at once
    site_inputs = tuple(SiteInput(s.id, s.name, s.latitude_deg, s.longitude_deg, s.elevation_m) for s in sites)
    positions = north_south_positions(site_inputs, tuple(baselines))
    x = positions.position_km
    if np.ptp(x) < 1.0:  # the reduction's own rule: no north-south baseline, no radius
        raise InputError(
            f"the sites are less than 1 km apart north-south ({np.ptp(x):.3f} km); noon shadows measure the "
            "radius along a meridian: choose sites at different latitudes"
        )
    w = 1.0 / sigma_lat**2
    xbar = np.sum(w * x, axis=1, keepdims=True) / np.sum(w, axis=1, keepdims=True)
    sxx = np.sum(w * (x - xbar) ** 2, axis=1, keepdims=True)
    gain = w * (x - xbar) / sxx  # d(slope)/d(latitude_i)
    # a perfect measurement: the same weighted line through the geodetic latitudes
    slope = np.sum(gain * np.radians(lat)[None, :], axis=1)
    var_slope = np.sum(gain**2 * sigma_lat**2, axis=1)
    g_pos = -slope[:, None] * gain
    var_slope = var_slope + positions.map_quadratic(g_pos) + positions.baseline_quadratic(g_pos)
    radius = 1.0 / slope
    sigma_radius = radius**2 * np.sqrt(var_slope)
    # constraints
    excluded, special = _constraints_and_special_days(
        dates, sites, apparent, length, declination, constraints
    )
    allowed = ~excluded.any
    rank = np.zeros(dates.size, dtype=int)
    order = np.argsort(np.where(allowed, sigma_radius, np.inf), kind="stable")
    rank[order[: int(allowed.sum())]] = np.arange(1, int(allowed.sum()) + 1)
    return ShadowPlan(
        dates=dates,
        sites=tuple(sites),
        transit_utc=transit.time_utc,
        altitude_deg=apparent,
        altitude_airless_deg=airless,
        declination_deg=declination,
        shadow_m=length,
        penumbra_m=penumbra,
        shadow_direction=direction,
        sigma_latitude_deg=np.degrees(sigma_lat),
        sigma_terms_deg={k: np.degrees(v) for k, v in terms.items()},
        sigma_radius_km=sigma_radius,
        expected_radius_km=median(radius),
        rank=rank,
        excluded=excluded,
        special=tuple(tuple(s) for s in special),
        constraints=constraints,
        assumptions=(
            "altitude_deg and shadow_m: refracted at standard conditions (10 C, 1010 hPa)",
            f"error model: {READINGS_PER_SERIES} readings a site around noon, the campaign's reading and gnomon "
            "errors, edge placement, refraction and clock as in the reduction",
        ),
    )


def _sun_longitude_proxy(dates):
    """Mean longitude of the Sun [deg] (Meeus 1998 eq. 25.2, leading terms): enough for the rate of declination."""
    days = (dates - np.datetime64("2000-01-01")).astype(float) + 0.5
    return np.mod(280.46646 + 0.98564736 * days, 360.0)


class DayReasons(Sequence):
    """Why each day is ruled out: one tuple of reasons per day, its text written when a day's is read
    (a plan of many sites has a reason per low site and day; the terminal table only counts them)."""

    def __init__(self, dates, sites, apparent, length, c: ShadowConstraints) -> None:
        self._sites, self._apparent, self._length, self._c = sites, apparent, length, c
        self._weekday = (dates.astype(np.int64) + 3) % 7  # 1970-01-01 was a Thursday
        self._low = apparent < c.min_altitude_deg
        self._long = length > c.max_shadow_m if c.max_shadow_m is not None else np.zeros_like(self._low)
        excluded_set = {np.datetime64(d, "D") for d in c.excluded_dates}
        self._wrong_day = (np.zeros(dates.size, bool) if c.weekdays is None
                           else ~np.isin(self._weekday, c.weekdays))
        self._ruled_out = np.isin(dates, np.array(sorted(excluded_set), dtype="datetime64[D]"))
        #: Whether each day is ruled out at all.
        self.any = self._low.any(axis=1) | self._long.any(axis=1) | self._wrong_day | self._ruled_out

    def __len__(self) -> int:
        return self.any.size

    def __getitem__(self, k):
        if isinstance(k, slice):
            return tuple(self[i] for i in range(*k.indices(len(self))))
        k = range(len(self))[k]
        if not self.any[k]:
            return ()
        c, out = self._c, []
        for j in np.flatnonzero(self._low[k] | self._long[k]):
            s = self._sites[j]
            if self._low[k, j]:
                out.append(f"Sun only {self._apparent[k, j]:.1f} deg high at noon at {s.id} "
                           f"(minimum {c.min_altitude_deg:g} deg)")
            if self._long[k, j]:
                out.append(f"shadow {self._length[k, j]:.2f} m at {s.id} is longer than the board ({c.max_shadow_m:g} m)")
        if self._wrong_day[k]:
            out.append(f"not a chosen weekday ({WEEKDAY_NAMES[int(self._weekday[k])]})")
        if self._ruled_out[k]:
            out.append("date excluded by the coordinator")
        return tuple(out)

    def kinds(self) -> dict[str, int]:
        """How many days each kind of reason rules out (a day low at three sites is one day)."""
        counts = {"Sun too low at noon": self._low.any(axis=1), "shadow longer than the board": self._long.any(axis=1),
                  "not a chosen weekday": self._wrong_day, "date excluded by the coordinator": self._ruled_out}
        return {key: int(days.sum()) for key, days in counts.items() if days.any()}


def _constraints_and_special_days(dates, sites, apparent, length, declination, c: ShadowConstraints):
    from firstrung import ephemeris

    excluded = DayReasons(dates, sites, apparent, length, c)
    special = [[] for _ in dates]
    # equinoxes and solstices
    days, names = ephemeris.equinox_and_solstice_dates(dates[0].astype("datetime64[us]"),
                                                       (dates[-1] + np.timedelta64(1, "D")).astype("datetime64[us]"))
    for day, name in zip(days, names, strict=True):
        k = int((day - dates[0]).astype(int))
        if 0 <= k < dates.size:
            special[k].append(str(name))
    # the Sun at the zenith at a tropical site: the day the noon declination passes its latitude
    lat = np.array([s.latitude_deg for s in sites])
    diff = declination - lat[None, :]
    crossing = np.sign(diff[1:]) != np.sign(diff[:-1])
    for k, j in zip(*np.nonzero(crossing), strict=True):
        day = k if abs(diff[k, j]) <= abs(diff[k + 1, j]) else k + 1
        special[day].append(f"Sun at the zenith at noon at {sites[j].id}")
    return excluded, special
