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


#: Why crater timings never replace the convention in the distance (said in the output).
NOT_SEPARABLE = ("the timings measure the umbra's radius, (1 + k) pi_M + pi_S - s_S: the atmosphere's enlargement k and "
                 "the Moon's parallax pi_M only as their product, never apart; the craters' enlargement is measured "
                 "against the ephemeris's parallax, and the distance inverted with it is the ephemeris's whatever the "
                 "umbra's size, so it is a check, never applied")


def distance_enlargement(moon_parallax_deg, sun_parallax_deg, sun_semidiameter_deg, convention="danjon",
                         allowance_distance_percent=None) -> dict:
    """Which enlargement the distance used: always the convention, with its allowance, crater timings or not.

    One eclipse's timings cannot fit the enlargement for the distance: the
    umbra's radius is ``(1 + k) pi_M + pi_S - s_S`` (Danjon's k = 0.01), so a
    larger umbra is a nearer Moon or a thicker shadow-casting atmosphere and
    no chord or crater timing tells which (:data:`NOT_SEPARABLE`). The
    convention is inverted and the eclipse's own departure from it is carried
    as an error: half the Danjon-Chauvenet spread (``allowance_percent`` in
    points of enlargement over the geometric shadow at ``moon_parallax_deg``;
    ``allowance_distance_percent`` what it costs the distance, from its budget).

    >>> d = distance_enlargement(0.9, 8.8 / 3600, 0.27)
    >>> d["used"], d["convention_percent"], d["allowance_percent"]
    ('convention', 1.423, 0.168)
    """
    _check_convention(convention)
    pm, ps, ss = (float(np.asarray(x, dtype=float).ravel()[0]) for x in (moon_parallax_deg, sun_parallax_deg, sun_semidiameter_deg))
    geo = float(umbra_radius_deg(pm, ps, ss, "geometric"))
    ru = {c: float(umbra_radius_deg(pm, ps, ss, c)) for c in CONVENTIONS}
    return {
        "used": "convention",
        "convention": convention,
        "convention_percent": round(100.0 * (ru[convention] / geo - 1.0), 4),
        "allowance_percent": round(100.0 * abs(ru["chauvenet"] - ru["danjon"]) / 2.0 / geo, 4),
        "allowance_distance_percent": None if allowance_distance_percent is None else round(float(allowance_distance_percent), 4),
        "fitted_from_craters": False,
        "why": NOT_SEPARABLE,
    }


def enlargement_against_convention(measured_percent, measured_sigma_percent, moon_parallax_deg, sun_parallax_deg,
                                   sun_semidiameter_deg, convention="danjon") -> dict:
    """The umbra's enlargement measured from crater timings against the convention's, and what it means.

    The distance is inverted with a convention (the enlargement varies from
    eclipse to eclipse; its budget allows half the Danjon-Chauvenet spread).
    The crater fit measures this eclipse's enlargement over the geometric
    shadow of the ephemeris's geometry; when it departs from the convention's
    by more than that allowance and its own error, the distance carries a
    bias the budget does not hold: ``distance_shift_percent`` is how far the
    distance inverted with the convention falls from the truth for an umbra
    as the craters measured it (with the ephemeris's parallaxes, so it is a
    diagnosis, never applied to the result: applied, it would give the
    ephemeris's distance whatever the umbra's size, :data:`NOT_SEPARABLE`).

    >>> d = enlargement_against_convention(2.0, 0.05, 0.9, 8.8 / 3600, 0.27)   # Danjon's is 1.42 % here
    >>> d["difference_percent"], d["allowance_percent"], d["distance_shift_percent"], d["departs"]
    (0.577, 0.168, -0.4, True)
    """
    _check_convention(convention)
    pm, ps, ss = (float(np.asarray(x, dtype=float).ravel()[0]) for x in (moon_parallax_deg, sun_parallax_deg, sun_semidiameter_deg))
    geo = float(umbra_radius_deg(pm, ps, ss, "geometric"))
    ru = {c: float(umbra_radius_deg(pm, ps, ss, c)) for c in CONVENTIONS}
    convention_percent = 100.0 * (ru[convention] / geo - 1.0)
    allowance = 100.0 * abs(ru["chauvenet"] - ru["danjon"]) / 2.0 / geo
    diff = float(measured_percent) - convention_percent
    sigma = float(measured_sigma_percent)
    inferred = float(moon_parallax_from_umbra_deg(geo * (1.0 + float(measured_percent) / 100.0), ps, ss, convention))
    shift = 100.0 * (np.sin(np.radians(pm)) / np.sin(np.radians(inferred)) - 1.0)
    departs = bool(abs(diff) > 2.0 * float(np.hypot(allowance, sigma)))
    return {
        "measured_percent": round(float(measured_percent), 4),
        "measured_sigma_percent": round(sigma, 4),
        "convention": convention,
        "convention_percent": round(convention_percent, 4),
        "difference_percent": round(diff, 4),
        "sigma_apart": round(diff / sigma, 2) if sigma > 0 else None,
        "allowance_percent": round(allowance, 4),
        "distance_shift_percent": round(float(shift), 3),
        "departs": departs,
        "note": ("the craters' umbra departs from the convention's by more than twice the allowance and its error "
                 "together: the distance's interval may not hold the truth; reduce with the other convention "
                 "to see the spread" if departs else
                 "the craters' umbra agrees with the convention's within the allowance the distance's budget carries"),
    }
