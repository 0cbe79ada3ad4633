"""``ladder`` from a campaign file: reduce every rung that has logs, then chain them."""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from firstrung.app.ladder import Draw, Ladder, LadderInputs, climb, earth_radius_draw
from firstrung.campaign import read_campaign
from firstrung.campaign_model import Campaign
from firstrung.constants import SHADOW_EARTH_RADIUS_KM
from firstrung.errors import ComputationError, InputError, RowProblem


@dataclass(frozen=True)
class LadderRun:
    campaign: Campaign
    ladder: Ladder
    rung_runs: dict = field(default_factory=dict)
    problems: tuple[RowProblem, ...] = ()
    notes: tuple[str, ...] = ()


def _eclipse_draws(campaign_path, runs, sources, notes, overrides):
    """The Moon's parallax (Gaussian in the chord fit) and angular diameter from the first reduced eclipse."""
    from firstrung.methods.eclipse.run import equatorial_radius_from_shadows, run_eclipse

    shadows = runs.get("shadows")
    measured = None if shadows is None else equatorial_radius_from_shadows(shadows.reduction)
    try:
        run = run_eclipse(campaign_path, measured_earth_radius=measured)
    except (InputError, ComputationError) as error:
        notes.append(f"lunar eclipse not reduced: {error}")
        return None, None, ()
    runs["eclipse"] = run
    reduced = [r for r in run.results if r.reduction is not None]
    if not reduced:
        notes.append("lunar eclipse: no eclipse in the logs could be reduced")
        return None, None, tuple(run.problems)
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
    return moon, diameter, tuple(run.problems)


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


def _phase_draw(campaign_path, runs, sources, notes):
    """The elongation at half moon (Gaussian in the combined estimate)."""
    from firstrung.methods.phases.run import run_phases

    try:
        run = run_phases(campaign_path)
    except (InputError, ComputationError) as error:
        notes.append(f"half moon not reduced: {error}")
        return None, ()
    runs["phases"] = run
    c = run.combined
    sources.append(("sun_moon_distance_ratio", f"half moon, {c.estimates} estimates combined (reduce phases)"))
    return Draw("secant", math.radians(c.elongation_deg), math.radians(c.sigma_deg)), tuple(run.problems)


def _transit_draw(campaign_path, runs, sources, notes):
    """The Sun's distance in au from the transit rung: 1 / f, f the fitted scale (Gaussian)."""
    from firstrung.methods.transit.run import run_transit

    try:
        run = run_transit(campaign_path)
    except (InputError, ComputationError) as error:
        notes.append(f"transit not reduced: {error}")
        return None, ()
    runs["transit"] = run
    f = run.reduction.parallax_scale
    dates = ", ".join(sorted({str(t)[:10] for t in run.transits.greatest_utc}))
    sources.append(("sun_distance_km", f"solar parallax from timed transit contacts ({dates}; reduce transit)"))
    return Draw("reciprocal", f.value, f.sigma or 0.0, 1.0), tuple(run.problems)


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


def ladder_inputs(campaign_path):
    """Reduce each rung that has logs; the ones without stay out (shown as not measured)."""
    campaign = read_campaign(campaign_path)
    runs: dict = {}
    problems: list[RowProblem] = []
    sources: list[tuple[str, str]] = []
    notes: list[str] = []
    overrides: list[tuple[str, float, str]] = []
    earth = moon = moon_diameter = ratio = sun_diameter = None
    equatorial = epoch_factor = 1.0
    if campaign.logs.get("shadows"):
        from firstrung.methods.shadows.run import run_shadows

        shadow_run = run_shadows(campaign_path)
        runs["shadows"] = shadow_run
        problems.extend(shadow_run.problems)
        earth = earth_radius_draw(shadow_run.reduction.earth_radius_km)
        equatorial = SHADOW_EARTH_RADIUS_KM / float(shadow_run.reduction.expected_radius_km)
        notes.append(
            f"the Moon's distance in km: the shadows' radius (the meridional radius of curvature at the sites' "
            f"latitudes) times the WGS84 ratio {equatorial:.5f} gives the equatorial radius the eclipse's "
            "parallax is counted in"
        )
        sources.append(("earth_radius_km", "noon shadows (reduce shadows)"))
        sun_diameter = _sun_diameter_draw(campaign, sources)
    if campaign.logs.get("eclipse"):
        moon, moon_diameter, p = _eclipse_draws(campaign_path, runs, sources, notes, overrides)
        problems.extend(p)
    if campaign.logs.get("phases"):
        ratio, p = _phase_draw(campaign_path, runs, sources, notes)
        problems.extend(p)
    if ratio is not None and "phases" in runs:
        moon_half_km, sun_half_km, when = half_moon_epoch(runs["phases"])
        from firstrung.constants import ASTRONOMICAL_UNIT_KM

        overrides.append(("sun_distance_km", sun_half_km,
                          f"the Sun's distance at the half moons of {when} (DE421); its mean is 1 au"))
        overrides.append(("sun_distance_au", sun_half_km / ASTRONOMICAL_UNIT_KM,
                          f"the Sun's distance at the half moons of {when} (DE421), in au"))
        if moon is not None:
            first = next(r for r in runs["eclipse"].results if r.reduction is not None)
            epoch_factor = moon_half_km / (first.ephemeris_distance_earth_radii * SHADOW_EARTH_RADIUS_KM)
            notes.append(
                f"the Sun's distance: the half-moon ratio holds for the Moon's distance at the half moons of {when}, "
                f"not on the eclipse night; the eclipse's distance is carried there by the ephemeris's ratio of the "
                f"two distances (x{epoch_factor:.4f}, DE421; a stated assumption, not a measurement)"
            )
    transit = None
    if campaign.logs.get("transits"):
        transit, p = _transit_draw(campaign_path, runs, sources, notes)
        problems.extend(p)
    inputs = LadderInputs(
        earth_radius_km=earth,
        moon_distance_earth_radii=moon,
        sun_moon_distance_ratio=ratio,
        moon_angular_diameter_deg=moon_diameter,
        sun_angular_diameter_deg=sun_diameter,
        sun_distance_au_transit=transit,
        sources=tuple(sources),
        modern_overrides=tuple(overrides),
        equatorial_radius_factor=equatorial,
        half_moon_distance_factor=epoch_factor,
    )
    return campaign, inputs, runs, tuple(problems), tuple(notes)


def run_ladder(campaign_path, *, samples: int, seed: int) -> LadderRun:
    campaign, inputs, runs, problems, notes = ladder_inputs(campaign_path)
    return LadderRun(campaign, climb(inputs, samples=samples, seed=seed), runs, problems, notes)
