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
    # the transit scales every distance of the ephemeris at once: it measures the astronomical unit,
    # the Sun's mean distance, whatever the Sun's distance on the day (these replace the half moon's)
    from firstrung.constants import ASTRONOMICAL_UNIT_KM

    source = "the astronomical unit, the Sun's mean distance (IAU 2012 Resolution B2), which the transit's parallax scales"
    ctx.overrides.append(("sun_distance_km", ASTRONOMICAL_UNIT_KM, source))
    ctx.overrides.append(("sun_distance_au", 1.0, source + ", in au"))
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
    """The transit section of the report: its context (``data``), the chords figure, plain headline and dates."""
    import numpy as np

    from firstrung.methods.transit.chords import chords_figure
    from firstrung.methods.transit.present import transit_run_to_json

    progress("drawing the transit's chords")
    data = transit_run_to_json(run)
    figures = {}
    reduced = sorted({int(k) for k in np.asarray(run.transit_of_row) if k >= 0})
    if reduced:
        k = reduced[0]
        timed = {str(s) for s in np.asarray(run.log.site)}
        sites = [s for s in run.campaign.sites if s.id in timed]
        figures["chords"] = chords_figure(run.transits, k, [s.id for s in sites], [s.latitude_deg for s in sites],
                                          [s.longitude_deg for s in sites], [s.elevation_m for s in sites])
    d = data["sun_distance_km"]
    value, interval = rounded(d["value"], d["low"], d["high"], space=" ")
    p = data["solar_parallax_arcsec"]
    headline = (f"From the transit timings the Sun is {value} km away (68 % interval {interval} km); the solar "
                f"parallax is {p['value']:.2f}″ ± {p['sigma']:.2f}″ against the modern "
                f"{data['modern']['solar_parallax_arcsec']:.3f}″.")
    return {"name": "transit", "title": TITLE, "method": METHOD, "data": data, "figures": figures,
            "headline": headline, "dates": [t["date"] for t in data["transits"]],
            "distance_text": f"{value} km", "interval_text": f"{interval} km"}
