"""What the eclipse method gives the ladder: the Moon's distance in Earth radii and its angular size.
And what it gives the report: its section (:func:`report_section`).
"""

from __future__ import annotations

import math

from firstrung.constants import SHADOW_EARTH_RADIUS_KM
from firstrung.errors import ComputationError, InputError
from firstrung.numbers import rounded
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
        f"the Moon's geocentric distance at greatest eclipse {str(r.epoch_utc)[:10]} (DE421); its mean is 384,400 km",
    ))
    if len(reduced) > 1:
        notes.append(f"{len(reduced)} eclipses reduced; the ladder uses the first ({str(r.epoch_utc)[:10]})")
    ctx.draws["moon_distance_earth_radii"] = moon
    ctx.draws["moon_angular_diameter_deg"] = diameter
    ctx.problems.extend(run.problems)


TITLE = "The Moon's distance from a lunar eclipse"

METHOD = (
    "During a lunar eclipse the Moon crosses the Earth's shadow. Each timed contact (U1 to U4) and each "
    "crater's immersion and emersion is a point where the shadow's edge met the Moon: with the Moon's "
    "angular radius and its rate across the shadow, the timings are chords of the Moon's straight track "
    "across a circular umbra, solved for the umbra's radius and the track's closest approach (no central "
    "passage assumed). The umbra's radius in units of the Moon's gives the Moon's horizontal parallax "
    "through the stated enlargement convention (Danjon by default, as the NASA canon), and the distance is "
    "one over the sine of the parallax, in Earth radii; times the campaign's own Earth radius, in km."
)


def report_section(run, progress=lambda step: None) -> dict:
    """The eclipse section of the report: its context (``data``), figure, plain headline and dates."""
    from firstrung.methods.eclipse.present import eclipse_run_to_json
    from firstrung.methods.eclipse.run import eclipse_figure

    progress("drawing the eclipse")
    data = eclipse_run_to_json(run)
    reduced = [r for r in run.results if r.reduction is not None]
    figs = {"track": eclipse_figure(reduced[0])} if reduced else {}
    for e in data["eclipses"]:
        k = e.get("moon_distance_km")
        if k:
            value, _ = rounded(k["value"], k["value"] - k["sigma"], k["value"] + k["sigma"], space=" ")
            e["distance_text"] = f"{value} ± {rounded(k['sigma'], k['sigma'] * 0.9, k['sigma'] * 1.1)[0]}"
    headline = "No eclipse in the logs could be reduced."
    numbers = None
    for e in data["eclipses"]:
        if e.get("reduction") and e.get("moon_distance_km"):
            k = e["moon_distance_km"]
            value, interval = rounded(k["value"], k["low"], k["high"], space=" ")
            d = e["moon_distance_earth_radii"]
            headline = (f"The Moon is {value} km away (68 % interval {interval} km), {d['value']:.1f} Earth radii, "
                        f"from the {e['kind']} eclipse of {e['date']}; the ephemeris gives "
                        f"{e['modern']['moon_distance_earth_radii']:.1f} Earth radii that night.")
            numbers = {"quantity": "moon_distance_km", "value": value, "interval": interval}
            break
    return {"name": "eclipse", "title": TITLE, "method": METHOD, "data": data, "figures": figs,
            "headline": headline, "dates": [e["date"] for e in data["eclipses"]], "headline_numbers": numbers}
