"""Errors the half-moon estimates share: the judgement of one Moon (combine.py decides from the scatter).

Everyone who looks at the same Moon faces the same ambiguity of its look:
the terminator is straight at half moon and bows by only about 4" half an
hour away, so a judgement of "exactly half lit" does not improve by asking
more observers. A photo series' zero point is shared by its images and is
carried in its own fit (:func:`~firstrung.methods.phases.reduction.fit_half_phase`).
"""

from __future__ import annotations

import numpy as np

from firstrung.methods.phases import reduction as m


def mark_shared_judgement(estimates):
    """Mark the judgement shared by the timings and angles of each quarter (the same Moon).

    Nobody judging one Moon beats the ambiguity of its look: the smallest
    judgement error of the quarter's timings and angles is common to them
    all; each keeps its own error above that.
    """
    import dataclasses

    floor: dict[int, float] = {}
    for x in estimates:
        floor[x.quarter_index] = min(floor.get(x.quarter_index, np.inf), x.time_sigma_s)
    return [
        dataclasses.replace(x, shared_sigma_deg=float(min(
            m.elongation_sigma_from_timing_deg(floor[x.quarter_index], x.rate_deg_per_h), x.elongation_deg.sigma)))
        for x in estimates
    ]

