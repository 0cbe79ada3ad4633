"""What the shadow method gives the ladder: the Earth's radius (and the factor to the equatorial radius
the eclipse counts in), and the Sun's angular size on the shadow days.
"""

from __future__ import annotations

import numpy as np

from firstrung.constants import SHADOW_EARTH_RADIUS_KM
from firstrung.uncertainty import Draw, earth_radius_draw


def ladder_draws(ctx) -> None:
    """Reduce the campaign's shadows and put the Earth's radius into the ladder's context ``ctx``."""
    from firstrung.methods.shadows.run import run_shadows

    shadow_run = run_shadows(ctx.campaign_path)
    ctx.runs["shadows"] = shadow_run
    ctx.problems.extend(shadow_run.problems)
    ctx.draws["earth_radius_km"] = earth_radius_draw(shadow_run.reduction.earth_radius_km)
    equatorial = SHADOW_EARTH_RADIUS_KM / float(shadow_run.reduction.expected_radius_km)
    ctx.factors["equatorial_radius_factor"] = equatorial
    ctx.notes.append(
        f"the Moon's distance in km: the shadows' radius (the meridional radius of curvature at the sites' "
        f"latitudes) times the WGS84 ratio {equatorial:.5f} gives the equatorial radius the eclipse's "
        "parallax is counted in"
    )
    ctx.sources.append(("earth_radius_km", "noon shadows (reduce shadows)"))
    ctx.draws["sun_angular_diameter_deg"] = _sun_diameter_draw(ctx.campaign, ctx.sources)


def _sun_diameter_draw(campaign, sources):
    """The Sun's angular diameter on the campaign's shadow days, from the ephemeris (said so)."""
    from firstrung import ephemeris
    from firstrung.methods.shadows.log import read_shadow_logs

    log = read_shadow_logs(campaign)
    if len(log) == 0:
        return None
    days = np.unique(np.asarray(log.time_utc).astype("datetime64[D]"))
    pos = ephemeris.sun_position(days.astype("datetime64[s]") + np.timedelta64(12, "h"), 0.0, 0.0)
    sources.append(("sun_angular_diameter_deg", "the Sun's angular size from the ephemeris on the shadow days"))
    return Draw("gaussian", float(2 * np.mean(pos.semidiameter_deg)), 0.0)
