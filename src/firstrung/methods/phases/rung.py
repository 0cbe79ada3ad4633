"""What the half-moon method gives the ladder: the Sun/Moon distance ratio, and the Moon's distance
carried from the eclipse night to the half moons' epoch (a stated ephemeris ratio).
And what it gives the report: its section (:func:`report_section`).
"""

from __future__ import annotations

import math

import numpy as np

from firstrung.constants import ASTRONOMICAL_UNIT_KM, SHADOW_EARTH_RADIUS_KM
from firstrung.errors import ComputationError, InputError
from firstrung.numbers import rounded
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


TITLE = "The Sun's distance from the half moon"

METHOD = (
    "At the exact half moon the Sun, the Moon and the observer make a right angle at the Moon, so the "
    "Sun is 1/cos E times as far as the Moon, E being the Sun-Moon angle (Aristarchus' method). E comes "
    "from a measured angle, from the ephemeris's directions of Sun and Moon at the moment the half moon "
    "was timed, or from a fit of the lit fraction in a photo series. Because E is within a fraction of a "
    "degree of 90° the result is very sensitive to it: the interval is skewed, and when E may reach "
    "90° only a lower bound exists."
)


def report_section(run, progress=lambda step: None) -> dict:
    """The half-moon section of the report: its context (``data``), figure, plain headline and dates."""
    from firstrung.methods.phases.present import phase_run_to_json
    from firstrung.methods.phases.reduction import ratio_figure

    progress("drawing the half moon")
    data = phase_run_to_json(run)
    c = run.combined
    figs = {"ratio": ratio_figure(c.elongation_deg, c.sigma_deg, true_ratio=run.expected_ratio)}
    ratio = data["sun_moon_distance_ratio"] if "sun_moon_distance_ratio" in data else None
    if ratio and ratio.get("value") is not None:
        value, interval = rounded(ratio["value"], ratio["low"], ratio["high"], space=" ")
        headline = (f"The Sun is about {value} times as far as the Moon (68 % interval {interval}); "
                    f"the modern value at these half moons is {data['expected_ratio']:.0f}.")
    else:
        headline = f"{data['statement']}; the modern value at these half moons is {data['expected_ratio']:.0f}."
    dates = sorted({x["time_utc"][:10] for x in data["estimates"]})
    return {"name": "phases", "title": TITLE, "method": METHOD, "data": data, "figures": figs,
            "headline": headline, "dates": dates}
