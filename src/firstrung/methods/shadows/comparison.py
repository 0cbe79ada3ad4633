"""The measured radius against the value a perfect measurement of the same campaign gives.

A perfect campaign at these sites measures the WGS84 meridional radius of curvature
averaged over the sites' north-south span (``expected_radius_km`` of the reduction), not
the IUGG mean radius: near the equator the meridional radius is about 35 km below the
mean. ``reduce shadows``, ``ladder`` and the report all judge the radius here, with the
IUGG mean as context, so they agree on how many sigma a campaign is off.
"""

from __future__ import annotations

import math

EXPECTED_SOURCE = ("WGS84 meridional radius over the sites' span (what a perfect measurement "
                   "at these sites gives; the IUGG mean radius is 6,371.0 km)")


def radius_z(reduction) -> float | None:
    """(measured - expected) / sigma of the radius, as ``reduce shadows`` states it.

    >>> from types import SimpleNamespace as N
    >>> r = N(earth_radius_km=N(value=6396.0, sigma=33.0), expected_radius_km=6373.0)
    >>> round(radius_z(r), 2)
    0.7
    """
    sigma = reduction.earth_radius_km.sigma
    if not sigma or not math.isfinite(sigma):
        return None
    return (reduction.earth_radius_km.value - reduction.expected_radius_km) / sigma
