"""What the half-moon method gives the ladder: the Sun/Moon distance ratio, and the Moon's distance
carried from the eclipse night to the half moons' epoch (a stated ephemeris ratio).
"""

from __future__ import annotations

import math

import numpy as np

from firstrung.constants import ASTRONOMICAL_UNIT_KM, SHADOW_EARTH_RADIUS_KM
from firstrung.errors import ComputationError, InputError
from firstrung.uncertainty import Draw


def ladder_draws(ctx) -> None:
    """The elongation at half moon (Gaussian in the combined estimate), and the Moon carried to its epoch."""
    from firstrung.methods.phases.run import run_phases

    runs, sources, notes = ctx.runs, ctx.sources, ctx.notes
    try:
        run = run_phases(ctx.campaign_path)
    except (InputError, ComputationError) as error:
        notes.append(f"half moon not reduced: {error}")
        return
    runs["phases"] = run
    c = run.combined
    sources.append(("sun_moon_distance_ratio", f"half moon, {c.estimates} estimates combined (reduce phases)"))
    ctx.draws["sun_moon_distance_ratio"] = Draw("secant", math.radians(c.elongation_deg), math.radians(c.sigma_deg))
    ctx.problems.extend(run.problems)
    moon_half_km, sun_half_km, when = half_moon_epoch(runs["phases"])
    ctx.overrides.append(("sun_distance_km", sun_half_km,
                          f"the Sun's distance at the half moons of {when} (DE421); its mean is 1 au"))
    ctx.overrides.append(("sun_distance_au", sun_half_km / ASTRONOMICAL_UNIT_KM,
                          f"the Sun's distance at the half moons of {when} (DE421), in au"))
    if ctx.draws.get("moon_distance_earth_radii") is not None:
        first = next(r for r in runs["eclipse"].results if r.reduction is not None)
        ctx.factors["half_moon_distance_factor"] = epoch_factor = moon_half_km / (first.ephemeris_distance_earth_radii * SHADOW_EARTH_RADIUS_KM)
        notes.append(
            f"the Sun's distance: the half-moon ratio holds for the Moon's distance at the half moons of {when}, "
            f"not on the eclipse night; the eclipse's distance is carried there by the ephemeris's ratio of the "
            f"two distances (x{epoch_factor:.4f}, DE421; a stated assumption, not a measurement)"
        )


def half_moon_epoch(run) -> tuple[float, float, str]:
    """The Moon's and the Sun's distances seen by the half-moon observers at their half moons [km].

    Each estimate's distances (the ephemeris's, from its site at its time)
    are averaged with the weights of the combined elongation (1/sigma^2), so
    that they describe the same half moons as the combined ratio. Returns
    (Moon km, Sun km, the dates).
    """
    from firstrung.methods.phases.topocentric import sun_moon_topocentric

    sites = {s.id: s for s in run.campaign.sites}
    est = run.estimates
    t = np.array([x.time_utc for x in est], dtype="datetime64[us]")
    lat = np.array([sites[x.site].latitude_deg for x in est])
    lon = np.array([sites[x.site].longitude_deg for x in est])
    elev = np.array([sites[x.site].elevation_m for x in est])
    g = sun_moon_topocentric(t, lat, lon, elev, rates=False)
    w = 1.0 / np.array([x.elongation_deg.sigma for x in est]) ** 2
    moon_km = float(np.sum(w * g.moon_distance_km) / np.sum(w))
    sun_km = float(np.sum(w * g.sun_distance_km) / np.sum(w))
    dates = sorted({str(x)[:10] for x in t})
    text = dates[0] if len(dates) == 1 else f"{dates[0]} to {dates[-1]}"
    return moon_km, sun_km, text
