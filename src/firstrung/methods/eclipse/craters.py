"""The tool's table of lunar craters (IAU names, selenographic positions; craters.csv beside this\nmodule) and its lookup by name, shared by the eclipse log's check and its reduction.\n"""

from __future__ import annotations

import csv
import io
from dataclasses import dataclass
from importlib import resources

import numpy as np

from firstrung.errors import RowProblem


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
        """Row of a feature by IAU name (case, spaces and a word 'crater' before or after ignored), or None.

        >>> t = load_craters()
        >>> t.index("Tycho crater") == t.index("crater tycho") == t.index(" TYCHO ") != None
        True
        """
        words = str(feature).split()
        if len(words) > 1 and words[-1].casefold() == "crater":
            words = words[:-1]
        elif len(words) > 1 and words[0].casefold() == "crater":
            words = words[1:]
        wanted = " ".join(words).casefold()
        for i, n in enumerate(self.name):
            if n.casefold() == wanted:
                return i
        return None

    def unknown_features(self, log) -> tuple[list[RowProblem], np.ndarray]:
        """The crater timings of an eclipse log whose feature the table does not know.

        The one lookup both ``check`` and the reduction use: a problem per such
        row and a boolean mask of them.
        """
        bad = np.array([e in ("immersion", "emersion") and self.index(f) is None
                        for e, f in zip(log.event, log.feature, strict=True)], bool)
        problems = [RowProblem(str(log.file[k]), int(log.row[k]), "feature",
                               f"unknown lunar feature {log.feature[k]!r}: expected a crater of the crater table "
                               f"({', '.join(self.name[:6])}, ...)") for k in np.flatnonzero(bad)]
        return problems, bad


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
