"""The distance ladder: Earth's radius -> the Moon's distance -> the Sun's distance -> sizes.

Each rung's result is drawn from the distribution of the quantity that is
really Gaussian in its method (the slope 1/R of the shadow fit, the Moon's
parallax of the eclipse fit, the elongation of the half-moon method) and
pushed through the chain sample by sample, so that one radius sample feeds
both the Moon's and the Sun's distance (correlations kept) and skewed rungs
stay skewed (the Sun's distance from a half moon is often only a lower
bound). Modern values, each with its source, stand beside the results.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from firstrung.uncertainty import Draw, Measured

#: Modern values to compare with: (value, unit, source).
MODERN_VALUES = {
    "earth_radius_km": (6371.0087714, "km", "IUGG mean radius R1 = (2a + b)/3 of GRS80/WGS84 (Moritz 2000)"),
    "moon_distance_km": (384_400.0, "km", "mean Earth-Moon distance, NASA NSSDCA Moon Fact Sheet"),
    "sun_distance_km": (149_597_870.7, "km", "astronomical unit, IAU 2012 Resolution B2"),
    "sun_distance_au": (1.0, "au", "astronomical unit, IAU 2012 Resolution B2"),
    "moon_diameter_km": (2 * 1737.4, "km", "twice the lunar mean radius 1,737.4 km (IAU/WGCCRE)"),
    "sun_diameter_km": (2 * 695_700.0, "km", "twice the nominal solar radius 695,700 km (IAU 2015 Resolution B3)"),
}
ASTRONOMICAL_UNIT_KM = 149_597_870.7
DEFAULT_SAMPLES = 100_000
#: Most Monte Carlo draws of the ladder (about 0.3 GB of memory at this many).
MAX_SAMPLES = 2_000_000


@dataclass(frozen=True)
class LadderInputs:
    """What the rungs measured; None where a rung has no data."""

    earth_radius_km: Draw | None = None
    moon_distance_earth_radii: Draw | None = None
    sun_moon_distance_ratio: Draw | None = None
    moon_angular_diameter_deg: Draw | None = None
    sun_angular_diameter_deg: Draw | None = None
    #: The Sun's distance in au from a transit's solar parallax (replaces the half moon's when given).
    sun_distance_au_transit: Draw | None = None
    #: The parsec rung: (id, name, "parallax"|"cepheid", Draw of the parallax [mas] or the distance
    #: modulus [mag], (modern distance [pc], source) or None), one per measured star.
    star_parallaxes: tuple = ()
    sources: tuple[tuple[str, str], ...] = ()
    #: Modern values that fit this campaign better than the table's (key -> (value, source)),
    #: e.g. the Moon's distance on the eclipse night instead of its mean distance.
    modern_overrides: tuple[tuple[str, float, str], ...] = ()
    #: The Earth radius the eclipse rung's distance is counted in (the WGS84 equatorial radius,
    #: the conventions' parallax) over the radius the shadow rung measured (the meridional radius
    #: of curvature at the sites' latitudes): the ellipsoid's own ratio, an exact factor [1].
    equatorial_radius_factor: float = 1.0
    #: The Moon's distance seen from the half-moon observers at their half moons over its
    #: geocentric distance on the eclipse night (the ephemeris's ratio of distances, a stated
    #: assumption): brings the eclipse rung to the half-moon rung's epoch [1].
    half_moon_distance_factor: float = 1.0


@dataclass(frozen=True)
class Rung:
    """One result of the ladder beside its modern value."""

    key: str
    measured: Measured | None
    modern: float
    unit: str
    modern_source: str
    ratio_to_modern: float | None
    z_score: float | None
    note: str


@dataclass(frozen=True)
class Ladder:
    rungs: tuple[Rung, ...]
    samples: int
    seed: int
    sources: tuple[tuple[str, str], ...]
    #: Which rung gave the Sun's distance: "transit" or "half-moon".
    sun_distance_method: str = "half-moon"
    #: The exact factors the chain applied (see :class:`LadderInputs`).
    equatorial_radius_factor: float = 1.0
    half_moon_distance_factor: float = 1.0
    #: The parsec rung (:class:`firstrung.app.parsec.StarRung`), one per measured star.
    stars: tuple = ()

    def rung(self, key: str) -> Rung:
        return next(r for r in self.rungs if r.key == key)


def _summary(samples: np.ndarray, unit: str) -> Measured:
    """Median and central 68 % interval; the high end is None when over 16 % of draws are unbounded."""
    finite = np.isfinite(samples)
    big = np.finfo(float).max / 16  # stands for "unbounded" inside the quantile arithmetic
    q = np.quantile(np.where(finite, samples, big), [0.158655, 0.5, 0.841345], method="inverted_cdf")
    low, median, high = (float(v) if v < big else float("inf") for v in q)
    sigma = float(np.std(samples[finite], ddof=1)) if finite.sum() > 2 and np.all(finite) else None
    if not np.isfinite(median):
        return Measured(float("nan"), None, low, None, unit)
    return Measured(median, sigma, low, high if np.isfinite(high) else None, unit)


def climb(inputs: LadderInputs, *, samples: int = DEFAULT_SAMPLES, seed: int = 1) -> Ladder:
    """Chain the rungs by Monte Carlo.

    Parameters
    ----------
    inputs : LadderInputs
        Each measured rung as a :class:`Draw`.
    samples : int
        Monte Carlo draws (every input drawn once per sample).
    seed : int
        Seed of the draws.

    >>> lad = climb(LadderInputs(earth_radius_km=Draw("reciprocal", 1 / 6400.0, 1e-6)), samples=1000)
    >>> round(lad.rung("earth_radius_km").measured.value, -1)
    6400.0
    >>> lad.rung("moon_distance_km").measured is None
    True
    """
    if not 1 <= samples <= MAX_SAMPLES:
        from firstrung.errors import InputError

        raise InputError(f"--samples: expected 1 to {MAX_SAMPLES:,} Monte Carlo draws, got {samples:,}")
    rng = np.random.default_rng(seed)
    draws = {}
    order = ("earth_radius_km", "moon_distance_earth_radii", "sun_moon_distance_ratio",
             "moon_angular_diameter_deg", "sun_angular_diameter_deg", "sun_distance_au_transit")
    for name in order:  # fixed order: the same seed gives the same samples
        d = getattr(inputs, name)
        draws[name] = None if d is None else d.sample(rng, samples)
    r = draws["earth_radius_km"]
    dm_er = draws["moon_distance_earth_radii"]
    ratio = draws["sun_moon_distance_ratio"]
    chain = {"earth_radius_km": r}
    chain["moon_distance_km"] = None if r is None or dm_er is None else r * inputs.equatorial_radius_factor * dm_er
    dm = chain["moon_distance_km"]
    # the half-moon ratio holds for the Moon's distance at the half moon, not on the eclipse night
    chain["sun_distance_km"] = None if dm is None or ratio is None else dm * inputs.half_moon_distance_factor * ratio
    method = "half-moon"
    if draws["sun_distance_au_transit"] is not None:  # the transit's parallax is the better rung for the Sun
        chain["sun_distance_km"] = draws["sun_distance_au_transit"] * ASTRONOMICAL_UNIT_KM
        method = "transit"
    ds = chain["sun_distance_km"]
    chain["sun_distance_au"] = None if ds is None else ds / ASTRONOMICAL_UNIT_KM
    am = draws["moon_angular_diameter_deg"]
    as_ = draws["sun_angular_diameter_deg"]
    chain["moon_diameter_km"] = None if dm is None or am is None else 2 * dm * np.tan(np.radians(am) / 2)
    chain["sun_diameter_km"] = None if ds is None or as_ is None else 2 * ds * np.tan(np.radians(as_) / 2)
    needs = {
        "earth_radius_km": "needs noon shadows",
        "moon_distance_km": "needs the Earth's radius and a lunar eclipse",
        "sun_distance_km": "needs the Moon's distance and the half moon",
        "sun_distance_au": "needs the Moon's distance and the half moon",
        "moon_diameter_km": "needs the Moon's distance and its angular size",
        "sun_diameter_km": "needs the Sun's distance and its angular size",
    }
    rungs = []
    overrides = {k: (v, src) for k, v, src in inputs.modern_overrides}
    for key, (modern, unit, source) in MODERN_VALUES.items():
        if key in overrides:
            modern, source = overrides[key]
        s = chain[key]
        if s is None:
            rungs.append(Rung(key, None, modern, unit, source, None, None, "not measured: " + needs[key]))
            continue
        m = _summary(s, unit)
        # sigma apart, on the side of the interval that faces the modern value (intervals may be skewed)
        half = (m.high - m.value) if (modern > m.value and m.high is not None) else (m.value - m.low)
        z = (m.value - modern) / half if half and half > 0 and not (modern > m.value and m.high is None) else None
        note = "" if m.high is not None else "lower bound only: the data allow any larger value"
        rungs.append(Rung(key, m, modern, unit, source, m.value / modern if np.isfinite(m.value) else None, z, note))
    from firstrung.app.parsec import parsec_rungs

    stars = parsec_rungs(inputs.star_parallaxes, rng, samples, chain["sun_distance_au"], method)
    return Ladder(tuple(rungs), samples, seed, inputs.sources, sun_distance_method=method,
                  equatorial_radius_factor=inputs.equatorial_radius_factor,
                  half_moon_distance_factor=inputs.half_moon_distance_factor, stars=stars)


