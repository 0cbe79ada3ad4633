"""The ladder's parsec rung: the distances of the stars the campaign measured, and which steps
of the chain the campaign measured itself and which it took from published values.

A parallax gives the distance in parsecs directly (1 pc is where 1 au subtends 1"); in
kilometres it needs the astronomical unit, which the campaign's own Sun rung gives when it
measured one (the same Monte Carlo samples, so the correlation is kept), else the IAU value.
A Cepheid's distance modulus gives parsecs through a period-luminosity relation whose
calibration rests on published parallaxes: the campaign measures the period and the mean
magnitude, not the calibration.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from firstrung.uncertainty import Measured

#: Arcseconds per radian: 1 pc = 206,264.806 au (IAU 2015 Resolution B2).
AU_PER_PARSEC = 648_000.0 / np.pi
ASTRONOMICAL_UNIT_KM = 149_597_870.7


@dataclass(frozen=True)
class StarRung:
    """One star on the parsec rung."""

    id: str
    name: str
    method: str  # "parallax" or "cepheid"
    distance_pc: Measured
    distance_km: Measured
    modern_pc: float | None
    modern_source: str | None
    ratio_to_modern: float | None
    z_score: float | None
    steps: tuple[tuple[str, str], ...]  # (step, "measured by the campaign" | "published: ...")


def _summary(samples: np.ndarray, unit: str) -> Measured:
    finite = samples[np.isfinite(samples)]
    q = np.quantile(np.where(np.isfinite(samples), samples, np.finfo(float).max / 16),
                    [0.158655, 0.5, 0.841345], method="inverted_cdf")
    low, mid, high = (float(v) for v in q)
    big = np.finfo(float).max / 32
    sigma = float(np.std(finite, ddof=1)) if finite.size > 2 and finite.size == samples.size else None
    if mid >= big:  # over half the draws unbounded: a lower bound only
        return Measured(float("nan"), None, low, None, unit)
    return Measured(mid, sigma, low, None if high >= big else high, unit)


def parsec_rungs(stars, rng: np.random.Generator, samples: int, au_samples: np.ndarray | None,
                 sun_method: str) -> tuple[StarRung, ...]:
    """Each measured star's distance by Monte Carlo: parallaxes (mas) and distance moduli (mag).

    ``stars``: tuples (id, name, method, Draw, (modern pc, source) or None), in the order the
    rungs gave them (so the same seed draws the same samples).
    """
    out = []
    au_km = ASTRONOMICAL_UNIT_KM if au_samples is None else au_samples * ASTRONOMICAL_UNIT_KM
    au_step = ("the astronomical unit in km", "published: IAU 2012 Resolution B2") if au_samples is None else (
        "the astronomical unit in km", f"measured by the campaign ({sun_method} rung)")
    for sid, name, method, draw, modern in stars:
        x = draw.sample(rng, samples)
        with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
            if method == "parallax":
                pc = np.where(x > 0, 1000.0 / x, np.inf)
                steps = (("the star's parallax", "measured by the campaign"),
                         ("parsecs from the parallax", "definition: 1 pc = 1 au / tan 1\""), au_step)
            else:
                pc = 10.0 ** (x / 5.0 + 1.0)
                steps = (("the period and the mean magnitude", "measured by the campaign"),
                         ("the period-luminosity calibration", "published: on parallaxes of nearby Cepheids"),
                         ("the extinction", "stated in the campaign file (published or estimated)"), au_step)
            km = pc * AU_PER_PARSEC * au_km
        d_pc = _summary(pc, "pc")
        modern_pc, source = (None, None) if modern is None else modern
        ratio = z = None
        if modern_pc is not None and np.isfinite(d_pc.value):
            ratio = d_pc.value / modern_pc
            half = (d_pc.high - d_pc.value) if (modern_pc > d_pc.value and d_pc.high is not None) else (d_pc.value - d_pc.low)
            z = (d_pc.value - modern_pc) / half if half > 0 and not (modern_pc > d_pc.value and d_pc.high is None) else None
        out.append(StarRung(sid, name, method, d_pc, _summary(km, "km"), modern_pc, source, ratio, z, steps))
    return tuple(out)


def parsec_json(rungs) -> list[dict]:
    """The parsec rung as JSON: one entry per star."""
    from firstrung.jsonout import number

    return [{"id": r.id, "name": r.name, "method": r.method, "distance_pc": r.distance_pc.to_json(2),
             "distance_km": r.distance_km.to_json(-9), "modern_pc": number(r.modern_pc, 2),
             "modern_source": r.modern_source, "ratio_to_modern": number(r.ratio_to_modern, 4),
             "z_score": number(r.z_score, 2), "steps": [{"step": s, "source": how} for s, how in r.steps]}
            for r in rungs]
