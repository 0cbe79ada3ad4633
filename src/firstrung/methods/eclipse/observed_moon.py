"""The observers' own Moon, measured at their site, reduced to the Earth's centre for the eclipse.

What an observer measures is topocentric: the Moon's rate against the stars
from a site turning with the Earth is 25-45 % below the geocentric one during
a night-time eclipse, and the Moon looks up to 1.7 % larger from a site than
from the Earth's centre. :class:`ObservedMoon` holds what they measured, where
and when, with the ephemeris's directions there; :func:`_reduce_observed_moon`
iterates the reduction with the distance it gives (the corrections depend on
it) and carries every error through that loop. Also the Earth radius the
shadow rung measured, carried to the one the eclipse counts in
(:func:`equatorial_radius_from_shadows`).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from firstrung.campaign_model import Campaign
from firstrung.errors import ComputationError, InputError
from firstrung.uncertainty import Measured


@dataclass(frozen=True)
class ObservedMoon:
    """The observers' Moon as measured at their site (topocentric) and the directions that reduce it.

    ``semidiameter_deg``/``rate_deg_per_h`` are as measured (None when the
    ephemeris supplies that value); ``rate_kind`` is ``"sky"`` (against the
    stars) or ``"shadow"`` (relative to the Earth's shadow). The geometry
    (:class:`~firstrung.ephemeris.observer_moon.ObserverMoon`) is at the
    diameter's instant and at the rate interval's two ends.
    """

    site: str
    semidiameter_deg: float | None
    semidiameter_sigma_deg: float
    rate_kind: str | None
    rate_deg_per_h: float | None
    rate_sigma_deg_per_h: float
    diameter_utc: np.datetime64
    from_utc: np.datetime64
    to_utc: np.datetime64
    at_diameter: object
    at_interval: object
    site_choice: str

    def geocentric(self, distance_earth_radii: float, semidiameter_deg: float, rate_deg_per_h: float,
                   *, semidiameter_topo_deg: float | None = None, rate_topo_deg_per_h: float | None = None):
        """(semi-diameter, rate across the shadow) at the Earth's centre for a Moon at this distance [deg, deg/h].

        Values the observers did not measure (the ephemeris's) pass through unchanged.
        """
        from firstrung.methods.eclipse.topocentric_moon import (
            geocentric_over_topocentric,
            geocentric_rate_from_sky_rate,
        )

        d = float(distance_earth_radii)
        sm, v = semidiameter_deg, rate_deg_per_h
        s_topo = self.semidiameter_deg if semidiameter_topo_deg is None else semidiameter_topo_deg
        r_topo = self.rate_deg_per_h if rate_topo_deg_per_h is None else rate_topo_deg_per_h
        if s_topo is not None:
            g = self.at_diameter
            k = geocentric_over_topocentric(d, g.moon_direction[:, 0], g.site_earth_radii[:, 0])
            sm = math.degrees(math.asin(math.sin(math.radians(s_topo)) * k))
        if r_topo is not None:
            g = self.at_interval
            hours = float((self.to_utc - self.from_utc).astype("timedelta64[us]").astype(np.int64)) / 3.6e9
            if self.rate_kind == "sky":
                mid = g.moon_distance_km[2]
                _, v = geocentric_rate_from_sky_rate(
                    r_topo, d, g.moon_direction[:, :2], g.sun_direction[:, :2], g.site_earth_radii[:, :2], hours,
                    g.moon_distance_km[:2] / mid,
                )
            else:  # relative to the shadow, which lies at the Moon's distance: scaled like a size
                v = r_topo * geocentric_over_topocentric(d, g.moon_direction[:, 2], g.site_earth_radii[:, 2])
        return sm, v


def _observed_moon(campaign: Campaign, eclipse, sm, sm_sig, rate, rate_sig, kind, site_counts) -> ObservedMoon:
    """Where and when the observers measured the Moon, with the ephemeris's directions there."""
    from firstrung.ephemeris.observer_moon import observer_moon

    s = campaign.eclipse
    if s.moon_site is not None:
        if s.moon_site not in campaign.site_ids:
            raise InputError(f"eclipse.moon_site: expected one of the campaign's site ids "
                             f"({', '.join(campaign.site_ids)}), got {s.moon_site!r}", file=str(campaign.path))
        site, choice = s.moon_site, f"measured at {s.moon_site} (eclipse.moon_site)"
    else:
        ranked = sorted(campaign.site_ids, key=lambda i: -site_counts.get(i, 0))
        if not ranked:
            raise InputError("eclipse: the observers' Moon needs a site (eclipse.moon_site)", file=str(campaign.path))
        site = ranked[0]
        choice = (f"measured at {site}, the site with the most timings (no eclipse.moon_site given)"
                  if len(campaign.site_ids) > 1 else f"measured at {site}")
    where = campaign.site(site)
    g = eclipse.greatest_utc[0]
    if s.moon_from_utc is not None:
        t1, t2 = np.datetime64(s.moon_from_utc, "us"), np.datetime64(s.moon_to_utc, "us")
        choice += f"; rate over {s.moon_from_utc}Z to {s.moon_to_utc}Z"
    else:
        c = eclipse.contacts_utc
        first = c["U1"][0] if not np.isnat(c["U1"][0]) else c["P1"][0]
        last = c["U4"][0] if not np.isnat(c["U4"][0]) else c["P4"][0]
        t1, t2 = np.datetime64(first, "us"), np.datetime64(last, "us")
        choice += "; rate over the umbral phase (no eclipse.moon_from_utc/moon_to_utc given)"
    td = np.datetime64(s.moon_diameter_utc, "us") if s.moon_diameter_utc is not None else np.datetime64(g, "us")
    if s.moon_diameter_utc is None and sm is not None:
        choice += "; diameter at greatest eclipse (no eclipse.moon_diameter_utc given)"
    mid = t1 + (t2 - t1) // 2
    lat, lon, elev = where.latitude_deg, where.longitude_deg, where.elevation_m
    return ObservedMoon(
        site=site, semidiameter_deg=sm, semidiameter_sigma_deg=sm_sig, rate_kind=kind, rate_deg_per_h=rate,
        rate_sigma_deg_per_h=rate_sig, diameter_utc=td, from_utc=t1, to_utc=t2,
        at_diameter=observer_moon(np.array([td]), lat, lon, elev),
        at_interval=observer_moon(np.array([t1, t2, mid]), lat, lon, elev),
        site_choice=choice,
    )


def _site_counts(sites) -> dict:
    """How many timings each site logged (for the default site of the observers' Moon)."""
    out: dict = {}
    for x in sites:
        out[str(x)] = out.get(str(x), 0) + 1
    return out


def equatorial_radius_from_shadows(reduction) -> tuple[Measured, str]:
    """The Earth radius a shadow reduction measured, carried to the one the eclipse rung counts in.

    Noon shadows measure the meridional radius of curvature at the sites'
    latitudes (a perfect campaign returns ``expected_radius_km``); the
    eclipse's distance is in WGS84 equatorial radii (the conventions'
    parallax is ``asin(a / d)``). The ellipsoid's own ratio of the two at the
    sites' latitudes (an exact factor, 1.002 at 45 deg, 1.007 in the tropics)
    carries one to the other; the relative error is unchanged.

    >>> from types import SimpleNamespace
    >>> r = equatorial_radius_from_shadows(SimpleNamespace(
    ...     earth_radius_km=Measured(6366.0, 60.0, 6306.0, 6426.0, "km"), expected_radius_km=6366.0))
    >>> round(r[0].value, 3), round(r[0].sigma, 3)
    (6378.137, 60.114)
    """
    from firstrung.constants import SHADOW_EARTH_RADIUS_KM

    factor = SHADOW_EARTH_RADIUS_KM / float(reduction.expected_radius_km)
    source = (
        "the campaign's own shadow measurements (reduce shadows), carried from the meridional radius of "
        f"curvature at the sites' latitudes ({reduction.expected_radius_km:.1f} km on WGS84) to the equatorial "
        f"radius by the ellipsoid's ratio x{factor:.5f}"
    )
    return reduction.earth_radius_km.scaled(factor, "km"), source


#: The observers' Moon is reduced to the Earth's centre until the distance settles to this [1].
_OBSERVED_MOON_TOLERANCE = 1e-9
_OBSERVED_MOON_ITERATIONS = 40


def _moon_at(moon, distance: float, **topo):
    """The observers' Moon reduced to the Earth's centre for a Moon at ``distance`` Earth radii."""
    import dataclasses

    sm, v = moon.observed.geocentric(distance, moon.semidiameter_deg, moon.rate_deg_per_h, **topo)
    return dataclasses.replace(moon, semidiameter_deg=sm, rate_deg_per_h=v)


def _reduce_observed_moon(reduce, moon):
    """Reduce with the observers' topocentric Moon: iterate the distance to its fixed point.

    The geocentric diameter and rate depend on the distance the reduction
    gives (D -> F(D)); the fixed point D = F(D) is found by the secant method.
    Every error is then carried through the loop: a change dD of the
    reduction at fixed corrections becomes dD / (1 - F'(D)), so each term of
    the budget, and the interval, are widened by that factor; the measured
    values' sigmas enter through the same reduction (their geocentric sigmas
    from the conversion's slope).
    """
    import dataclasses

    obs = moon.observed

    def f(d):
        return reduce(_moon_at(moon, d)).moon_distance_earth_radii.value

    def settle(d0):
        d1 = f(d0)
        g0 = d1 - d0
        for _ in range(_OBSERVED_MOON_ITERATIONS):
            g1 = f(d1) - d1
            if abs(g1) < _OBSERVED_MOON_TOLERANCE * d1 or g1 == g0:
                return d1
            d0, d1, g0 = d1, d1 - g1 * (d1 - d0) / (g1 - g0), g1
            if not (1.0 < d1 < 1e4):
                break
        raise ComputationError("the observers' Moon cannot be reduced to the Earth's centre: the distance does not settle")

    # start from the distance the measured values give taken as geocentric, else from 60 Earth radii
    starts = [60.0]
    try:
        starts.insert(0, reduce(moon).moon_distance_earth_radii.value)
    except ComputationError:
        pass
    d1 = None
    for start in starts:
        try:
            d1 = settle(start)
            break
        except ComputationError as error:
            problem = error
    if d1 is None:
        raise problem
    distance = d1
    at = _moon_at(moon, distance)
    # the loop's gain F'(D), by a central difference
    h = 1e-4 * distance
    gain = (f(distance + h) - f(distance - h)) / (2 * h)
    if not gain < 0.95:
        raise ComputationError("the observers' Moon cannot be reduced to the Earth's centre: the distance is not determined")
    amplify = 1.0 / (1.0 - gain)
    # geocentric sigmas of the measured values, from the conversion's slope at the fixed point
    sm_sig, v_sig = moon.semidiameter_sigma_deg, moon.rate_sigma_deg_per_h
    if obs.semidiameter_deg is not None:
        step = 1e-3 * obs.semidiameter_deg
        up = _moon_at(moon, distance, semidiameter_topo_deg=obs.semidiameter_deg + step).semidiameter_deg
        sm_sig = obs.semidiameter_sigma_deg * abs(up - at.semidiameter_deg) / step
    if obs.rate_deg_per_h is not None:
        step = 1e-3 * obs.rate_deg_per_h
        up = _moon_at(moon, distance, rate_topo_deg_per_h=obs.rate_deg_per_h + step).rate_deg_per_h
        v_sig = obs.rate_sigma_deg_per_h * abs(up - at.rate_deg_per_h) / step
    at = dataclasses.replace(at, semidiameter_sigma_deg=sm_sig, rate_sigma_deg_per_h=v_sig)
    red = reduce(at)
    pm = red.moon_parallax_arcmin
    sig_pm = (pm.sigma or 0.0) * amplify
    budget = tuple(dataclasses.replace(b, sigma=b.sigma * amplify) for b in red.budget)
    from firstrung.methods.eclipse.reduction import _distance_interval

    red = dataclasses.replace(
        red,
        moon_parallax_arcmin=Measured(pm.value, sig_pm, pm.value - sig_pm, pm.value + sig_pm, pm.unit),
        moon_distance_earth_radii=_distance_interval(pm.value / 60.0, sig_pm / 60.0),
        budget=budget,
        assumptions=red.assumptions + (_observed_note(obs, at, distance, amplify),),
    )
    return red, at


def _observed_note(obs: ObservedMoon, at, distance: float, amplify: float) -> str:
    parts = [f"the observers' Moon reduced to the Earth's centre at the distance found ({distance:.3f} Earth radii)"]
    if obs.semidiameter_deg is not None:
        parts.append(f"diameter {2 * obs.semidiameter_deg * 60:.3f}' -> {2 * at.semidiameter_deg * 60:.3f}'")
    if obs.rate_deg_per_h is not None:
        what = "against the stars" if obs.rate_kind == "sky" else "across the shadow"
        parts.append(f"rate {what} {obs.rate_deg_per_h:.4f} -> {at.rate_deg_per_h:.4f} deg/h across the shadow")
    parts.append(f"every error widened x{amplify:.2f}: the corrections depend on the distance itself")
    return "; ".join(parts)
