"""JSON of the parallax plan (``plan parallax``) and reduction (``reduce parallax``), and the
figure of the parallax ellipse."""

from __future__ import annotations

import numpy as np

from firstrung.errors import refused_rows
from firstrung.jsonout import number as _num
from firstrung.star_catalogue import CATALOGUE_SOURCE


def _catalogue_json(entry) -> dict | None:
    if entry is None:
        return None
    return {"hip": entry.hip, "parallax_mas": _num(entry.parallax_mas, 2),
            "parallax_sigma_mas": _num(entry.parallax_sigma_mas, 2),
            "distance_pc": _num(entry.distance_pc, 2),
            "proper_motion_ra_mas_per_yr": _num(entry.pm_ra_mas_per_yr, 2),
            "proper_motion_dec_mas_per_yr": _num(entry.pm_dec_mas_per_yr, 2), "source": CATALOGUE_SOURCE}


def parallax_plan_to_json(plan) -> dict:
    """``stars[].days[]``: date, rank (null when excluded), parallax factors, displacement, sites."""
    stars = []
    for sp in plan.stars:
        days = []
        for k, date in enumerate(sp.dates):
            sites = {s.id: {"dark_hours": _num(sp.view.dark_hours[k, j], 2),
                            "best_altitude_deg": _num(sp.view.best_altitude_deg[k, j], 1)}
                     for j, s in enumerate(plan.campaign.sites)}
            day = {"date": str(date), "rank": int(sp.rank[k]) if sp.rank[k] > 0 else None,
                   "parallax_factor_ra": _num(sp.f_ra[k], 4), "parallax_factor_dec": _num(sp.f_dec[k], 4),
                   "displacement_mas": _num(sp.displacement_mas[k], 2), "sites": sites}
            if sp.excluded[k]:
                day["excluded"] = list(sp.excluded[k])
            days.append(day)
        stars.append({"id": sp.star.id, "name": sp.star.name, "catalogue": _catalogue_json(sp.catalogue),
                      "days": days})
    return {
        "campaign": plan.campaign.name, "from": plan.first_date, "to": plan.last_date, "step_days": plan.step_days,
        "stars": stars,
        "assumptions": [
            "parallax factors from DE421's Earth (barycentric); the displacement is the catalogue parallax "
            "times the factors' length (1 mas when the star is not in the catalogue)",
            "a date counts when the star stands above 30 deg for an hour with the Sun below -12 deg at a site "
            "(the night that starts at the site's local noon)",
        ],
    }


def parallax_run_to_json(run) -> dict:
    """The ``reduce parallax`` result: per star, parallax, distance, proper motion and per epoch."""
    from firstrung.methods.parallax.reduction import LIGHT_YEARS_PER_PARSEC

    log = run.log
    stars = []
    for sp in run.stars:
        f = sp.fit
        epochs = [{"file": str(log.file[i]), "row": int(log.row[i]), "time_utc": str(np.datetime64(log.time_utc[i], "s")) + "Z",
                   "parallax_factor_ra": _num(f.f_ra[k], 4), "parallax_factor_dec": _num(f.f_dec[k], 4),
                   "residual_ra_mas": _num(f.residual_ra_mas[k], 2), "residual_dec_mas": _num(f.residual_dec_mas[k], 2)}
                  for k, i in enumerate(sp.rows)]
        stars.append({
            "id": sp.star.id,
            "name": sp.star.name,
            "parallax_mas": f.parallax_mas.to_json(3),
            "distance_pc": f.distance_pc.to_json(2),
            "distance_ly": f.distance_ly.to_json(2),
            "proper_motion_ra_mas_per_yr": f.proper_motion_ra_mas_per_yr.to_json(2),
            "proper_motion_dec_mas_per_yr": f.proper_motion_dec_mas_per_yr.to_json(2),
            "reference_epoch_jyear": _num(f.reference_epoch_jyear, 4),
            "reference_ra_deg": _num(f.reference_ra_deg, 7),
            "reference_dec_deg": _num(f.reference_dec_deg, 7),
            "epochs": epochs,
            "span_days": _num(float(np.ptp(f.years)) * 365.25, 1),
            "chi2": _num(f.chi2, 2), "dof": f.dof, "error_scale": _num(f.error_scale, 3),
            "error_budget": [{"source": b.source, "sigma_mas": _num(b.sigma, 3)} for b in f.budget],
            "catalogue": _catalogue_json(sp.catalogue),
        })
    return {
        "campaign": run.campaign.name,
        "stars": stars,
        "light_years_per_parsec": LIGHT_YEARS_PER_PARSEC,
        "assumptions": [
            "place, proper motion and parallax fitted together by weighted least squares on the tangent plane; "
            "parallax factors from DE421's Earth",
            "the stated one-sigma of each position is used as given, scaled by sqrt(chi2/dof) only when the "
            "chi-square refuses it (p < 0.003)",
            "distance = 1000 / parallax pc (1 pc = 1 au / tan 1\"); its 68 % interval is the parallax's, mapped",
        ],
        "notes": list(run.notes),
        "rows": {"read": run.rows_read, "accepted": len(log), "left_out_flagged": run.rows_left_out_flagged,
                 "refused": refused_rows(run.problems)},
    }


def parallax_ellipse_figure(fits: list[tuple[str, object]]):
    """Each star's measured offsets with its proper motion removed, on its fitted parallax ellipse
    (the factors over a whole year times the fitted parallax)."""
    from firstrung.figures import _plt

    plt = _plt()
    n = max(len(fits), 1)
    fig, axes = plt.subplots(1, n, figsize=(3.4 * n, 3.0), squeeze=False)
    year = np.linspace(0.0, 1.0, 200)
    for ax, (label, f) in zip(axes[0], fits, strict=False):
        p = f.parallax_mas.value
        # the ellipse: factors over a year, from the fit's own factors' harmonic fit
        design = np.column_stack([np.ones_like(f.years), np.cos(2 * np.pi * f.years), np.sin(2 * np.pi * f.years)])
        cra, *_ = np.linalg.lstsq(design, f.f_ra, rcond=None)
        cdec, *_ = np.linalg.lstsq(design, f.f_dec, rcond=None)
        curve = np.column_stack([np.ones_like(year), np.cos(2 * np.pi * year), np.sin(2 * np.pi * year)])
        ax.plot(p * (curve @ cra) / 1000.0, p * (curve @ cdec) / 1000.0, color="0.5", lw=1, label="fitted parallax ellipse")
        x = (p * f.f_ra + f.residual_ra_mas) / 1000.0
        y = (p * f.f_dec + f.residual_dec_mas) / 1000.0
        ax.errorbar(x, y, xerr=f.sigma_mas / 1000.0, yerr=f.sigma_mas / 1000.0, fmt="o", ms=3, color="C0",
                    label="epochs (proper motion removed)")
        ax.invert_xaxis()
        ax.set_aspect("equal", adjustable="datalim")
        ax.set_xlabel("east offset (arcsec)")
        ax.set_ylabel("north offset (arcsec)")
        ax.set_title(f"{label}: parallax {p:.1f} ± {f.parallax_mas.sigma:.1f} mas", fontsize=9)
        ax.legend(fontsize=7, loc="upper center", bbox_to_anchor=(0.5, -0.3), ncol=2, frameon=False)
    fig.tight_layout()
    return fig
