"""What the transit method gives the ladder: the Sun's distance in au from the solar parallax.
And what it gives the report: its section (:func:`report_section`).
"""

from __future__ import annotations

from firstrung.errors import ComputationError, InputError
from firstrung.numbers import rounded
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


TITLE = "The Sun's distance from a transit of Mercury or Venus"

METHOD = (
    "Observers far apart see the planet cross the Sun's disc at slightly different times: the shift of "
    "each contact (C1 to C4) with the observer's place is proportional to the solar parallax. The timed "
    "contacts are fitted with one free scale of the ephemeris's distances, each contact's offset (which "
    "takes up the planet's and the Sun's radii and the black drop) and, where the log allows, each site's "
    "clock offset; wild contacts are rejected. The Sun's distance is the Earth's equatorial radius over "
    "the sine of the solar parallax."
)


def report_section(run, progress=lambda step: None) -> dict:
    """The transit section of the report: its context (``data``), plain headline and dates (no figure)."""
    from firstrung.methods.transit.present import transit_run_to_json

    data = transit_run_to_json(run)
    d = data["sun_distance_km"]
    value, interval = rounded(d["value"], d["low"], d["high"], space=" ")
    p = data["solar_parallax_arcsec"]
    headline = (f"From the transit timings the Sun is {value} km away (68 % interval {interval} km); the solar "
                f"parallax is {p['value']:.2f}″ ± {p['sigma']:.2f}″ against the modern "
                f"{data['modern']['solar_parallax_arcsec']:.3f}″.")
    return {"name": "transit", "title": TITLE, "method": METHOD, "data": data, "figures": {},
            "headline": headline, "dates": [t["date"] for t in data["transits"]],
            "distance_text": f"{value} km", "interval_text": f"{interval} km"}
