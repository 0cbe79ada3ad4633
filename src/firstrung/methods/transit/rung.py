"""What the transit method gives the ladder: the Sun's distance in au from the solar parallax.
"""

from __future__ import annotations

from firstrung.errors import ComputationError, InputError
from firstrung.uncertainty import Draw


def ladder_draws(ctx) -> None:
    """The Sun's distance in au from the transit rung: 1 / f, f the fitted scale (Gaussian)."""
    from firstrung.methods.transit.run import run_transit

    runs, sources, notes = ctx.runs, ctx.sources, ctx.notes
    try:
        run = run_transit(ctx.campaign_path)
    except (InputError, ComputationError) as error:
        notes.append(f"transit not reduced: {error}")
        return
    runs["transit"] = run
    f = run.reduction.parallax_scale
    dates = ", ".join(sorted({str(t)[:10] for t in run.transits.greatest_utc}))
    sources.append(("sun_distance_km", f"solar parallax from timed transit contacts ({dates}; reduce transit)"))
    ctx.draws["sun_distance_au_transit"] = Draw("reciprocal", f.value, f.sigma or 0.0, 1.0)
    ctx.problems.extend(run.problems)
