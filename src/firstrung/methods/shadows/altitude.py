"""From a shadow (or an angle) to the Sun's centre: the marked edge's altitude, refraction removed, the\nedge moved to the centre by the semi-diameter, and each reading's error terms.\n"""

from __future__ import annotations

import numpy as np

from firstrung.errors import InputError
from firstrung.refraction import refraction_from_apparent_deg

#: Readings are used when the Sun is at least this high [deg]; lower ones are left out of the
#: reduction and counted (the check says so of each).
MIN_ALTITUDE_DEG = 5.0


#: Signed multiple of the Sun's semi-diameter from the Sun's centre to the ray
#: that casts each marked edge: the umbra tip comes from the upper limb.
EDGE_LIMB_SIGN = {"umbra": 1.0, "middle": 0.0, "outer": -1.0}


#: One-sigma error of placing each kind of edge, as a fraction of the penumbra
#: width on the board (common practice: the eye finds the dark edge of a soft
#: shadow to about a tenth of the penumbra, its middle and faint edge worse).
EDGE_LOCATION_FRACTION = {"umbra": 0.10, "middle": 0.15, "outer": 0.25}
#: One-sigma tilt of the shadow board along the shadow [rad]: a spirit level reads about
#: 1 mm per m (common practice). A tilt tau moves the altitude by tau cos^2(a).
BOARD_LEVEL_SIGMA_RAD = 1.0e-3
#: One-sigma lean of the gnomon from the vertical along the shadow [rad]: set with a plumb
#: line or a square to about 1 mm per m (common practice). The tip then stands h psi off the
#: foot the shadow is measured from: the altitude moves by psi sin^2(a).
GNOMON_PLUMB_SIGMA_RAD = 1.0e-3


#: Relative one-sigma error of the refraction with standard conditions assumed:
#: unknown weather (+/- 15 K, +/- 25 hPa) changes it by about 6 %, and
#: Bennett's formula itself is good to about 1 % above 15 deg (common practice).
REFRACTION_SIGMA_FRACTION_STANDARD = 0.06


#: The same when the log gives the temperature and pressure (common practice).
REFRACTION_SIGMA_FRACTION_MEASURED = 0.02


def edge_altitude_deg(gnomon_m, shadow_m):
    """Apparent altitude of the ray that casts the marked shadow tip [deg].

    >>> round(float(edge_altitude_deg(1.0, 1.0)), 6)
    45.0
    """
    return np.degrees(np.arctan2(np.asarray(gnomon_m, float), np.asarray(shadow_m, float)))


def penumbra_width_m(gnomon_m, altitude_deg, semidiameter_deg):
    """Width of the penumbra on a level board [m]: the lower limb's tip minus the upper limb's.

    >>> round(float(penumbra_width_m(1.0, 20.0, 0.2667)), 4)
    0.0796
    """
    h = np.asarray(gnomon_m, float)
    a = np.radians(np.asarray(altitude_deg, float))
    s = np.radians(np.asarray(semidiameter_deg, float))
    return h * (1.0 / np.tan(a - s) - 1.0 / np.tan(a + s))


def centre_altitude_deg(edge_apparent_deg, edge, semidiameter_deg, temperature_c, pressure_hpa, *,
                        refraction_deg=None):
    """True (airless) altitude of the Sun's centre from the marked edge's apparent altitude [deg].

    Refraction is removed from the ray of the limb that casts the edge, then
    the limb is moved to the centre by the semi-diameter. ``refraction_deg``: that ray's refraction
    when already known (:func:`~firstrung.refraction.refraction_from_apparent_deg` of the same arguments).

    >>> round(float(centre_altitude_deg(45.0, "middle", 0.2667, 10.0, 1010.0)), 4)
    44.9834
    """
    sign = _per_edge(edge, EDGE_LIMB_SIGN)
    refraction = refraction_from_apparent_deg(edge_apparent_deg, temperature_c, pressure_hpa) \
        if refraction_deg is None else refraction_deg
    return np.asarray(edge_apparent_deg) - refraction - sign * np.asarray(semidiameter_deg)


def altitude_error_terms_rad(
    gnomon_m, shadow_m, shadow_sigma_m, gnomon_sigma_m, edge, altitude_deg, semidiameter_deg,
    refraction_deg, measured_weather, *, width_m=None,
) -> dict[str, np.ndarray]:
    """One-sigma error of the Sun's centre altitude from each input, per reading [rad].

    ``shadow reading``: ``h sigma_L / (h^2 + L^2)``; ``gnomon height``:
    ``L sigma_h / (h^2 + L^2)``; ``edge location``: the observer's placement
    error, a fraction of the penumbra width (:data:`EDGE_LOCATION_FRACTION`),
    seen from the gnomon's tip; ``refraction``: a fraction of the refraction
    (:data:`REFRACTION_SIGMA_FRACTION_STANDARD` or ``_MEASURED``). The
    reduction and the planner share these terms. ``width_m``: the penumbra's width
    (:func:`penumbra_width_m` at the altitude clipped to 1-89 deg) when already known.

    >>> t = altitude_error_terms_rad(1.0, 1.0, 0.002, 0.001, "umbra", 45.0, 0.2667, 0.0165, False)
    >>> round(float(t["shadow reading"]) * 206264.8, 1)
    206.3
    """
    h = np.asarray(gnomon_m, float)
    length = np.asarray(shadow_m, float)
    h2, length2 = h**2, length**2  # each square once (the check calls this for every hypothesis)
    denom = h2 + length2
    fraction = _per_edge(edge, EDGE_LOCATION_FRACTION)
    width = penumbra_width_m(h, np.clip(altitude_deg, 1.0, 89.0), semidiameter_deg) if width_m is None else width_m
    refraction_fraction = np.where(
        measured_weather, REFRACTION_SIGMA_FRACTION_MEASURED, REFRACTION_SIGMA_FRACTION_STANDARD
    )
    return {
        "shadow reading": h * np.asarray(shadow_sigma_m, float) / denom,
        "gnomon height": length * np.asarray(gnomon_sigma_m, float) / denom,
        "edge location": h * fraction * np.abs(width) / denom,
        "board level": BOARD_LEVEL_SIGMA_RAD * length2 / denom,
        "gnomon plumb": GNOMON_PLUMB_SIGMA_RAD * h2 / denom,
        "refraction": np.radians(refraction_fraction * np.asarray(refraction_deg, float)),
    }


def stored_part(values: np.ndarray) -> np.ndarray:
    """The values a broadcast array holds, once: one entry along each axis it repeats (stride 0).

    >>> stored_part(np.broadcast_to(np.array(["umbra", "outer"], dtype=object), (365, 2))).shape
    (1, 2)
    """
    if values.ndim == 0:
        return values
    return values[tuple(slice(0, 1) if stride == 0 and n > 1 else slice(None)
                        for stride, n in zip(values.strides, values.shape, strict=True))]


def _per_edge(edge, table: dict) -> np.ndarray:
    """Look up a number per reading from its edge name, without a loop over readings (a broadcast
    array of names, such as a plan's sites over its days, is looked up once per name it stores)."""
    edge = np.asarray(edge, dtype=object)
    stored = stored_part(edge)
    if stored.size < edge.size:
        return np.broadcast_to(_per_edge(stored, table), edge.shape)
    # one comparison of the whole column per name (a log's edges are a few names seen a million times:
    # sorting them as text cost ten times as much)
    values, known = np.empty(edge.shape), np.zeros(edge.shape, bool)
    for name, value in table.items():
        at = edge == name
        values[at] = value
        known |= at
    if not known.all():
        unknown = sorted(set(edge[~known].astype(str).tolist()))
        raise InputError(f"edge: expected one of {', '.join(table)}, got {unknown[0]!r}")
    return values
