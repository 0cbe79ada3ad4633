"""What the network and subsolar methods add to a shadow reduction (shared by both, and by their JSON)."""

from __future__ import annotations

from dataclasses import dataclass

#: One-sigma error of a school's clock when it logs a single reading [s]: a clock set from a
#: phone or a radio signal is within a minute (common practice).
NETWORK_CLOCK_SIGMA_S = 60.0

#: Sites (or a site and the subsolar point) closer than this north-south [km] give no radius of
#: their own: the angle between them is too small to read (the Contract's 100 km).
MIN_NORTH_SOUTH_KM = 100.0


@dataclass(frozen=True)
class NetworkFit:
    """What the network fit adds to a shadow reduction.

    ``method`` is ``"network"`` (two or more sites) or ``"subsolar"`` (one);
    ``errors_from_scatter`` True when each site's error is the network's own
    scatter (the rows state none); ``scatter_deg`` that scatter, or the
    scatter beyond the stated errors [deg]; ``flagged`` the sites flagged as
    blunders and left out; ``site_sigma_deg`` each site's latitude error used.
    """

    method: str
    errors_from_scatter: bool
    scatter_deg: float | None
    flagged: tuple[str, ...]
    site_sigma_deg: dict
