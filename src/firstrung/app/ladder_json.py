"""JSON of ``ladder`` (DESIGN section 4: earth_radius_km, moon_distance_km, sun_distance_km, ...)."""

from __future__ import annotations

from firstrung.jsonout import number
from firstrung.uncertainty import Measured

_DIGITS = {"km": 3, "au": 5}  # km as reduce gives them: a value is rounded once, for display


def ladder_to_json(run) -> dict:
    lad = run.ladder
    out = {"campaign": run.campaign.name, "samples": lad.samples, "seed": lad.seed}
    comparison = []
    for r in lad.rungs:
        m: Measured | None = r.measured
        out[r.key] = None if m is None else m.to_json(_DIGITS.get(r.unit, 4))
        comparison.append(
            {
                "quantity": r.key,
                "measured": out[r.key],
                "modern": r.modern,
                "unit": r.unit,
                "modern_source": r.modern_source,
                "ratio_to_modern": number(r.ratio_to_modern, 4),
                "z_score": number(r.z_score, 2),
                "note": r.note,
            }
        )
    out["sun_distance_method"] = lad.sun_distance_method
    from firstrung.app.parsec import parsec_json

    out["stars"] = parsec_json(lad.stars)
    out["comparison"] = comparison
    out["rung_sources"] = dict(lad.sources)
    # exact factors: the shadows' radius to the equatorial one; the eclipse night's Moon to the half moon's
    out["equatorial_radius_factor"] = number(lad.equatorial_radius_factor, 6)
    out["half_moon_distance_factor"] = number(lad.half_moon_distance_factor, 6)
    out["problems"] = [str(p) for p in run.problems]
    out["notes"] = list(run.notes)
    out["method"] = (
        "Monte Carlo: every input drawn once per sample from the distribution of the quantity that is "
        "Gaussian in its method; the same radius sample feeds the Moon's and the Sun's distance"
    )
    return out
