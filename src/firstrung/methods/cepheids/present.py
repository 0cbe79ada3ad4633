"""JSON of the Cepheid plan (``plan cepheids``) and reduction (``reduce cepheids``), and the figure
of the folded light curves."""

from __future__ import annotations

import numpy as np

from firstrung.errors import refused_rows
from firstrung.jsonout import number as _num
from firstrung.jsonout import time_z as _time


def cepheid_plan_to_json(plan) -> dict:
    """``stars[].nights[]``: date, rank (the chosen nights in date order; null otherwise), phase."""
    stars = []
    for sn in plan.stars:
        nights = []
        for k, date in enumerate(sn.dates):
            night = {"date": str(date), "rank": int(sn.rank[k]) if sn.rank[k] > 0 else None,
                     "time_utc": None if np.isnat(sn.time_utc[k]) else _time(sn.time_utc[k]),
                     "phase": _num(sn.phase[k], 3)}
            if sn.excluded[k]:
                night["excluded"] = list(sn.excluded[k])
            nights.append(night)
        stars.append({"id": sn.star.id, "name": sn.star.name, "period_days": sn.period_days,
                      "chosen": int(np.sum(sn.rank > 0)), "largest_phase_gap": _num(sn.largest_gap, 3),
                      "nights": nights})
    return {
        "campaign": plan.campaign.name, "from": plan.first_date, "to": plan.last_date, "nights": plan.nights,
        "stars": stars,
        "assumptions": [
            "a night counts when the star stands above 30 deg for an hour with the Sun below -12 deg at a site; "
            "its time is when the star stands highest then",
            "nights chosen one by one, each at the phase farthest from those already chosen (phase 0: the first night)",
        ],
    }


def cepheid_run_to_json(run) -> dict:
    """The ``reduce cepheids`` result: per star, period, mean and absolute magnitude, distance."""
    stars = []
    for sc in run.stars:
        f = sc.fit
        r = f.relation
        stars.append({
            "id": sc.star.id,
            "name": sc.star.name,
            "band": sc.band,
            "magnitudes": int(sc.rows.size),
            "span_days": _num(float(np.ptp(f.time_d)), 1),
            "period_days": f.period_days.to_json(5),
            "false_alarm_probability": float(f"{f.false_alarm_probability:.3g}"),
            "periodogram_power": _num(f.power, 4),
            "harmonics": f.harmonics,
            "mean_magnitude": f.mean_magnitude.to_json(4),
            "absolute_magnitude": f.absolute_magnitude.to_json(3),
            "extinction_mag": {"value": _num(f.extinction_mag, 3), "sigma": _num(f.extinction_sigma_mag, 3),
                               "stated": sc.star.extinction_mag is not None},
            "distance_modulus_mag": f.distance_modulus_mag.to_json(3),
            "distance_pc": f.distance_pc.to_json(1),
            "relation": r.name,
            "relation_detail": {"band": r.band, "slope": r.slope, "slope_sigma": r.slope_sigma,
                                "zero_point_mag": r.zero_point_mag, "zero_point_sigma_mag": r.zero_point_sigma_mag,
                                "scatter_mag": r.scatter_mag, "form": "M = slope (log10 P - 1) + zero_point",
                                "source": r.source},
            "chi2": _num(f.chi2, 2), "dof": f.dof, "error_scale": _num(f.error_scale, 3),
            "error_budget": [{"source": b.source, "sigma_mag": _num(b.sigma, 4)} for b in f.budget],
        })
    from firstrung.methods.cepheids.relations import DEFAULT_RELATION, RELATIONS

    return {
        "campaign": run.campaign.name,
        "stars": stars,
        "relations": {name: rel.source for name, rel in RELATIONS.items()},
        "default_relation": DEFAULT_RELATION,
        "assumptions": [
            "period from the highest peak of the generalised Lomb-Scargle periodogram between 1 and 100 d "
            "(false-alarm probability: Baluev 2008), refined with the Fourier light curve",
            "mean magnitude: the constant of the Fourier series (magnitude-averaged mean)",
            "times as Julian dates on the UTC scale, not corrected to the Sun (at most 8 min: far below "
            "what a period or a mean magnitude feels)",
            "distance modulus m - M - A, with A the extinction stated in the campaign file (0 when it states none, "
            "which overstates the distance)",
        ],
        "notes": list(run.notes),
        "rows": {"read": run.rows_read, "accepted": len(run.log), "left_out_flagged": run.rows_left_out_flagged,
                 "refused": refused_rows(run.problems)},
    }


def light_curve_figure(fits: list[tuple[str, object]]):
    """Each star's magnitudes folded on its period, with the fitted curve (brighter up)."""
    from firstrung.figures import _plt

    plt = _plt()
    n = max(len(fits), 1)
    fig, axes = plt.subplots(1, n, figsize=(4.4 * n, 2.5), squeeze=False)
    for ax, (label, f) in zip(axes[0], fits, strict=False):
        p = f.period_days.value
        phase = ((f.time_d - f.time_origin_d) / p) % 1.0
        ax.errorbar(np.r_[phase, phase + 1], np.r_[f.magnitude, f.magnitude], yerr=np.r_[f.sigma_mag, f.sigma_mag],
                    fmt="o", ms=3, color="C0", label="magnitudes (two cycles shown)")
        grid = np.linspace(0.0, 2.0, 400)
        ax.plot(grid, f.model(f.time_origin_d + grid * p), color="C1", lw=1, label=f"Fourier fit ({f.harmonics} harmonics)")
        ax.axhline(f.mean_magnitude.value, color="0.5", lw=0.8, ls="--", label="mean magnitude")
        ax.invert_yaxis()
        ax.set_xlabel(f"phase (period {p:.4f} d)")
        ax.set_ylabel(f"magnitude ({f.relation.band})")
        ax.set_title(label, fontsize=9)
        ax.legend(fontsize=7, loc="upper center", bbox_to_anchor=(0.5, -0.3), ncol=2, frameon=False)
    fig.tight_layout()
    return fig
