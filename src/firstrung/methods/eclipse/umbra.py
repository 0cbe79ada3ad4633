"""The Earth's umbra at the Moon: its radius from the Moon's parallax under a named enlargement\nconvention (geometric, Danjon, Chauvenet), the inverse, and the shadow's own motion.\n"""

from __future__ import annotations

import numpy as np

from firstrung.constants import (
    CHAUVENET_ENLARGEMENT_FACTOR,
    CHAUVENET_PARALLAX_FACTOR,
    DANJON_PARALLAX_FACTOR,
    SUN_MEAN_RATE_DEG_PER_H,
)
from firstrung.errors import InputError

#: The shadow conventions by name; Danjon is the default (the published NASA canon's).
CONVENTIONS = ("danjon", "chauvenet", "geometric")


def _check_convention(convention: str) -> str:
    if convention not in CONVENTIONS:
        raise InputError(f"convention: expected one of {', '.join(CONVENTIONS)}, got {convention!r}")
    return convention


def umbra_radius_deg(moon_parallax_deg, sun_parallax_deg, sun_semidiameter_deg, convention="danjon"):
    """Angular radius of the umbra at the Moon's distance, by a published convention.

    Parameters
    ----------
    moon_parallax_deg, sun_parallax_deg : float or array
        Equatorial horizontal parallaxes of the Moon and the Sun [deg].
    sun_semidiameter_deg : float or array
        The Sun's geocentric semi-diameter [deg].
    convention : {"danjon", "chauvenet", "geometric"}
        How the atmosphere's enlargement of the shadow is modelled.

    Returns
    -------
    float or ndarray
        Umbra radius [deg].

    Examples
    --------
    Reference-values 4.5, 2025-03-14 (pi_M 54.613', pi_S 8.845", s_S 16.087'):
    Danjon 39.219'.

    >>> round(float(umbra_radius_deg(54.613 / 60, 8.845 / 3600, 16.087 / 60)) * 60, 2)
    39.22
    """
    _check_convention(convention)
    pm, ps, ss = (np.asarray(x, dtype=float) for x in (moon_parallax_deg, sun_parallax_deg, sun_semidiameter_deg))
    if convention == "geometric":
        return pm + ps - ss
    if convention == "danjon":
        return DANJON_PARALLAX_FACTOR * pm + ps - ss
    return CHAUVENET_ENLARGEMENT_FACTOR * (CHAUVENET_PARALLAX_FACTOR * pm + ps - ss)


def penumbra_radius_deg(moon_parallax_deg, sun_parallax_deg, sun_semidiameter_deg, convention="danjon"):
    """Angular radius of the penumbra at the Moon's distance [deg] (same conventions).

    >>> round(float(penumbra_radius_deg(54.613 / 60, 8.845 / 3600, 16.087 / 60, "geometric")) * 60, 3)
    70.847
    """
    _check_convention(convention)
    pm, ps, ss = (np.asarray(x, dtype=float) for x in (moon_parallax_deg, sun_parallax_deg, sun_semidiameter_deg))
    if convention == "geometric":
        return pm + ps + ss
    if convention == "danjon":
        return DANJON_PARALLAX_FACTOR * pm + ps + ss
    return CHAUVENET_ENLARGEMENT_FACTOR * (CHAUVENET_PARALLAX_FACTOR * pm + ps + ss)


def moon_parallax_from_umbra_deg(umbra_deg, sun_parallax_deg, sun_semidiameter_deg, convention="danjon"):
    """The Moon's horizontal parallax from the umbra's radius: the convention inverted.

    Parameters
    ----------
    umbra_deg : float or array
        Umbra radius at the Moon [deg].
    sun_parallax_deg, sun_semidiameter_deg : float or array
        The Sun's parallax and semi-diameter [deg].
    convention : {"danjon", "chauvenet", "geometric"}

    Returns
    -------
    float or ndarray
        pi_M [deg].

    Examples
    --------
    Reference-values 4.5, 2025-03-14: n = 2.636 with s_M = 14.876' (Danjon)
    gives pi_M = 54.61'.

    >>> round(float(moon_parallax_from_umbra_deg(2.636 * 14.876 / 60, 8.845 / 3600, 16.087 / 60)) * 60, 2)
    54.61
    """
    _check_convention(convention)
    ru, ps, ss = (np.asarray(x, dtype=float) for x in (umbra_deg, sun_parallax_deg, sun_semidiameter_deg))
    if convention == "geometric":
        return ru + ss - ps
    if convention == "danjon":
        return (ru + ss - ps) / DANJON_PARALLAX_FACTOR
    return (ru / CHAUVENET_ENLARGEMENT_FACTOR + ss - ps) / CHAUVENET_PARALLAX_FACTOR


def shadow_rate_from_sky_rate_deg_per_h(moon_sky_rate_deg_per_h):
    """The Moon's rate across the shadow from its rate against the stars [deg/h].

    The shadow moves with the Sun, about 0.041 deg/h eastward along the
    ecliptic, nearly along the Moon's own path (5 deg apart), so its rate is
    simply subtracted.

    >>> round(float(shadow_rate_from_sky_rate_deg_per_h(0.533)), 4)
    0.4919
    """
    return np.asarray(moon_sky_rate_deg_per_h, dtype=float) - SUN_MEAN_RATE_DEG_PER_H
