"""The tool's table of lunar craters (IAU names, selenographic positions; craters.csv beside this\nmodule) and its lookup by name, shared by the eclipse log's check and its reduction.\n"""

from __future__ import annotations

import csv
import io
from dataclasses import dataclass
from importlib import resources

import numpy as np


@dataclass(frozen=True)
class CraterTable:
    """The tool's crater table (``firstrung/methods/eclipse/craters.csv``)."""

    name: tuple[str, ...]
    latitude_deg: np.ndarray
    longitude_deg: np.ndarray
    diameter_km: np.ndarray
    source: tuple[str, ...]

    def __len__(self) -> int:
        return len(self.name)

    def index(self, feature: str) -> int | None:
        """Row of a feature by IAU name (case and surrounding spaces ignored), or None."""
        wanted = " ".join(str(feature).split()).casefold()
        for i, n in enumerate(self.name):
            if n.casefold() == wanted:
                return i
        return None


def load_craters() -> CraterTable:
    """Read the bundled crater table (IAU Gazetteer coordinates; source per row).

    >>> t = load_craters()
    >>> len(t) >= 30, t.name[t.index("kepler")]
    (True, 'Kepler')
    """
    text = resources.files("firstrung.methods.eclipse").joinpath("craters.csv").read_text(encoding="utf-8")
    lines = [line for line in text.splitlines() if line.strip() and not line.startswith("#")]
    rows = list(csv.DictReader(io.StringIO("\n".join(lines))))
    return CraterTable(
        name=tuple(r["name"] for r in rows),
        latitude_deg=np.array([float(r["latitude_deg"]) for r in rows]),
        longitude_deg=np.array([float(r["longitude_deg"]) for r in rows]),
        diameter_km=np.array([float(r["diameter_km"]) for r in rows]),
        source=tuple(r["source"] for r in rows),
    )
