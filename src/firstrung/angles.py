"""Angles wrapped to one turn."""

from __future__ import annotations

import numpy as np


def wrapped_rad(angle_rad):
    """Angles [rad] wrapped to [-pi, pi] (pi and -pi keep their sign): the arctangent of their sine and cosine.

    The same numbers as ``np.angle(np.exp(1j * angle))``, whose complex exponential is that cosine
    and sine (tests/test_check_hypotheses.py holds the identity), without complex arrays.

    >>> [round(float(a), 6) for a in wrapped_rad([3 * np.pi / 2, np.pi, -np.pi, 7.0])]
    [-1.570796, 3.141593, -3.141593, 0.716815]
    """
    angle_rad = np.asarray(angle_rad, float)
    return np.arctan2(np.sin(angle_rad), np.cos(angle_rad))


__all__ = ["wrapped_rad"]
