"""What the shadow reduction takes: the readings, the sites and the surveyed baselines, and the\nsettings shared by its fits.\n"""

from __future__ import annotations

from dataclasses import dataclass, fields
from typing import TYPE_CHECKING

import numpy as np

if TYPE_CHECKING:
    from firstrung.campaign_model import Campaign

#: Prior one-sigma of a clock's offset [s]: weak, it only matters when the
#: readings cannot show where noon fell (one reading, or all on one side).
CLOCK_PRIOR_SIGMA_S = 600.0


#: One-sigma error of a site's north-south position taken from its
#: coordinates [km] (a map or a phone receiver, common practice).
POSITION_SIGMA_KM = 0.05


#: Gauss-Newton iterations of the series fit (converges in 3-4).
_FIT_ITERATIONS = 8


@dataclass(frozen=True)
class ShadowReadings:
    """Shadow readings: one entry per reading, plain equal-length arrays (the one record of the
    shadow method's readings, for its check and its reduction alike).

    ``site_index`` points into the campaign's (or the reduction's) ``sites`` tuple; ``gnomon_m``,
    ``edge`` and the sigmas are filled in from the campaign where the log gives none. The last
    fields say where each reading came from (file, 1-based data row, the time and length columns
    used, the observer); readings made by a program may leave them out.
    """

    site_index: np.ndarray
    time_utc: np.ndarray
    shadow_m: np.ndarray
    gnomon_m: np.ndarray
    edge: np.ndarray
    shadow_sigma_m: np.ndarray
    gnomon_sigma_m: np.ndarray
    temperature_c: np.ndarray
    pressure_hpa: np.ndarray
    file: np.ndarray | None = None
    row: np.ndarray | None = None
    time_column: np.ndarray | None = None
    shadow_column: np.ndarray | None = None
    observer: np.ndarray | None = None
    #: The other forms (:mod:`firstrung.methods.shadows.forms`), filled for plain lengths when
    #: not given: ``form`` (``"length"``, ``"angle"``, ``"trace"``), ``timed``; for angles the
    #: reading as an altitude, the limb, the reading's sigma, the index correction and its sigma
    #: [deg]; for traces the tip's position on the board [m] (``shadow_m`` is its distance).
    form: np.ndarray | None = None
    timed: np.ndarray | None = None
    altitude_read_deg: np.ndarray | None = None
    limb: np.ndarray | None = None
    angle_sigma_deg: np.ndarray | None = None
    index_correction_deg: np.ndarray | None = None
    index_sigma_deg: np.ndarray | None = None
    tip_x_m: np.ndarray | None = None
    tip_y_m: np.ndarray | None = None

    def __post_init__(self) -> None:
        n = int(np.size(self.shadow_m))
        fills = (("form", "length", "<U6"), ("timed", True, bool), ("altitude_read_deg", np.nan, float),
                 ("limb", "centre", "<U6"), ("angle_sigma_deg", np.nan, float),
                 ("index_correction_deg", 0.0, float), ("index_sigma_deg", 0.0, float),
                 ("tip_x_m", np.nan, float), ("tip_y_m", np.nan, float))
        for name, fill, dtype in fills:  # one value seen n times (read-only), not n copies of it
            if getattr(self, name) is None:
                object.__setattr__(self, name, np.broadcast_to(np.array(fill, dtype=dtype), (n,)))

    def __len__(self) -> int:
        return int(np.size(self.shadow_m))

    def select(self, keep) -> ShadowReadings:
        """The readings ``keep`` selects (a boolean mask or indices); a column that is one value seen every
        time (a default filled in above) stays one value, not a copy per reading."""
        keep = np.asarray(keep)
        m = int(keep.sum()) if keep.dtype == bool else keep.size
        columns = {}
        for field in fields(self):
            values = getattr(self, field.name)
            if values is None:
                columns[field.name] = None
            elif isinstance(values, np.ndarray) and values.ndim == 1 and values.strides == (0,):
                columns[field.name] = np.broadcast_to(values[:1], (m,))
            else:
                columns[field.name] = np.asarray(values)[keep]
        return ShadowReadings(**columns)


@dataclass(frozen=True)
class SiteInput:
    """What the reduction needs to know of a site."""

    id: str
    name: str
    latitude_deg: float
    longitude_deg: float
    elevation_m: float


@dataclass(frozen=True)
class BaselineInput:
    """A surveyed distance between two sites (indices into the sites tuple)."""

    first: int
    second: int
    distance_km: float
    sigma_km: float
    bearing_deg: float | None


def site_inputs(campaign: Campaign) -> tuple[SiteInput, ...]:
    """The campaign's sites as the methods take them."""
    return tuple(
        SiteInput(s.id, s.name, s.latitude_deg, s.longitude_deg, s.elevation_m) for s in campaign.sites
    )


def baseline_inputs(campaign: Campaign) -> tuple[BaselineInput, ...]:
    """The campaign's surveyed baselines, by site index."""
    index = {s.id: i for i, s in enumerate(campaign.sites)}
    return tuple(
        BaselineInput(index[b.sites[0]], index[b.sites[1]], b.distance_km, b.sigma_km, b.bearing_deg)
        for b in campaign.baselines
    )
