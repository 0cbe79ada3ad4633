"""What the eclipse method gives the ladder: the Moon's distance in Earth radii and its angular size.
"""

from __future__ import annotations

import math

from firstrung.constants import SHADOW_EARTH_RADIUS_KM
from firstrung.errors import ComputationError, InputError
from firstrung.uncertainty import Draw


def ladder_draws(ctx) -> None:
    """The Moon's parallax (Gaussian in the chord fit) and angular diameter from the first reduced eclipse."""
    from firstrung.methods.eclipse.run import equatorial_radius_from_shadows, run_eclipse

    campaign_path, runs, sources, notes, overrides = ctx.campaign_path, ctx.runs, ctx.sources, ctx.notes, ctx.overrides
    shadows = runs.get("shadows")
    measured = None if shadows is None else equatorial_radius_from_shadows(shadows.reduction)
    try:
        run = run_eclipse(campaign_path, measured_earth_radius=measured)
    except (InputError, ComputationError) as error:
        notes.append(f"lunar eclipse not reduced: {error}")
        return
    runs["eclipse"] = run
    reduced = [r for r in run.results if r.reduction is not None]
    if not reduced:
        notes.append("lunar eclipse: no eclipse in the logs could be reduced")
        ctx.problems.extend(run.problems)
        return
    r = reduced[0]
    parallax = r.reduction.moon_parallax_arcmin
    moon = Draw("reciprocal_sine", math.radians(parallax.value / 60.0), math.radians((parallax.sigma or 0.0) / 60.0))
    diameter = Draw("gaussian", 2.0 * r.moon.semidiameter_deg, 2.0 * r.moon.semidiameter_sigma_deg)
    sources.append(("moon_distance_earth_radii", f"lunar eclipse of {str(r.epoch_utc)[:10]} (reduce eclipse, "
                                                  f"{r.reduction.convention} convention)"))
    sources.append(("moon_angular_diameter_deg", f"the Moon's angular size from the {r.moon.semidiameter_source}"))
    overrides.append((
        "moon_distance_km", r.ephemeris_distance_earth_radii * SHADOW_EARTH_RADIUS_KM,
        f"the Moon's geocentric distance at greatest eclipse {str(r.epoch_utc)[:10]} (DE421); its mean is 384 400 km",
    ))
    if len(reduced) > 1:
        notes.append(f"{len(reduced)} eclipses reduced; the ladder uses the first ({str(r.epoch_utc)[:10]})")
    ctx.draws["moon_distance_earth_radii"] = moon
    ctx.draws["moon_angular_diameter_deg"] = diameter
    ctx.problems.extend(run.problems)
