"""Published period-luminosity relations of classical Cepheids, chosen by name.

Each is ``M = slope (log10 P - 1) + zero_point`` in one band, with the one-sigma of its
coefficients and the scatter of single Cepheids about it (the instability strip's width),
which no measurement of one star can beat.

The calibration of Benedict et al. (2007) rests on HST Fine Guidance Sensor parallaxes of ten
Galactic Cepheids, delta Cephei among them; its coefficients below are written from memory
and marked so (check them against the paper before quoting a result to the last digit). The
scatter about each relation is the instability strip's width as commonly quoted (about 0.2 mag
in V, less in the infrared), also from memory.
"""

from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True)
class PeriodLuminosity:
    """One relation: ``M = slope (log10 P - 1) + zero_point`` [mag] in ``band``."""

    name: str
    band: str
    slope: float
    slope_sigma: float
    zero_point_mag: float
    zero_point_sigma_mag: float
    scatter_mag: float
    source: str

    def absolute_magnitude(self, period_d):
        """M [mag] for periods [d].

        >>> round(float(RELATIONS["benedict2007-v"].absolute_magnitude(10.0)), 2)
        -4.05
        """
        import numpy as np

        return self.slope * (np.log10(period_d) - 1.0) + self.zero_point_mag


_BENEDICT = ("Benedict et al. 2007, AJ 133, 1810 (HST FGS parallaxes of ten Galactic Cepheids); "
             "coefficients from memory")

#: The relations firstrung knows, by name; the default comes first.
RELATIONS = {
    "benedict2007-v": PeriodLuminosity("benedict2007-v", "V", -2.43, 0.12, -4.05, 0.02, 0.20, _BENEDICT),
    "benedict2007-i": PeriodLuminosity("benedict2007-i", "I", -2.81, 0.11, -4.76, 0.02, 0.15, _BENEDICT),
    "benedict2007-k": PeriodLuminosity("benedict2007-k", "K", -3.32, 0.12, -5.71, 0.03, 0.11, _BENEDICT),
}
DEFAULT_RELATION = "benedict2007-v"


def relation(name: str) -> PeriodLuminosity:
    """A relation by name (refused in one line, with the names known)."""
    from firstrung.errors import InputError

    key = name.strip().lower()
    if key not in RELATIONS:
        raise InputError(f"--relation: unknown period-luminosity relation {name!r} (known: {', '.join(RELATIONS)})")
    return RELATIONS[key]


def relation_for_band(band: str) -> PeriodLuminosity | None:
    """The first relation in a band (case ignored), or None."""
    for r in RELATIONS.values():
        if r.band.lower() == band.strip().lower():
            return r
    return None
