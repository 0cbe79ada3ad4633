"""What the Cepheid method gives the ladder: each Cepheid's distance on the parsec rung (the
relation's calibration taken from published parallaxes, said so). And what it gives the report."""

from __future__ import annotations

from firstrung.errors import ComputationError, InputError
from firstrung.uncertainty import Draw


def ladder_draws(ctx) -> None:
    """Each Cepheid's distance modulus (Gaussian) for the parsec rung."""
    from firstrung.methods.cepheids.run import run_cepheids
    from firstrung.star_catalogue import campaign_star_entry

    try:
        run = run_cepheids(ctx.campaign_path)
    except (InputError, ComputationError) as error:
        ctx.notes.append(f"cepheids not reduced: {error}")
        return
    ctx.runs["cepheids"] = run
    stars = list(ctx.draws.get("star_parallaxes", ()))
    for sc in run.stars:
        mu = sc.fit.distance_modulus_mag
        cat = campaign_star_entry(sc.star)
        modern = None if cat is None or not cat.parallax_mas > 0 else (
            1000.0 / cat.parallax_mas, f"HIP {cat.hip}, Hipparcos new reduction (van Leeuwen 2007)")
        stars.append((sc.star.id, sc.star.name, "cepheid", Draw("gaussian", mu.value, mu.sigma or 0.0), modern))
    ctx.draws["star_parallaxes"] = tuple(stars)
    relations = sorted({sc.fit.relation.name for sc in run.stars})
    ctx.sources.append(("star_distance_pc", "Cepheid period and mean magnitude from the campaign's photometry "
                        f"(reduce cepheids); the period-luminosity calibration {', '.join(relations)} is published, "
                        "not measured by the campaign"))
    ctx.problems.extend(run.problems)


TITLE = "Cepheids: a distance from a period"

METHOD = (
    "A Cepheid swells and shrinks with a period that grows with its luminosity (Leavitt's law). The "
    "campaign's magnitudes give the period (the highest peak of a Lomb-Scargle periodogram, refined with "
    "a Fourier fit of the light curve) and the mean magnitude; a published period-luminosity relation, "
    "calibrated on parallaxes of nearby Cepheids, gives the absolute magnitude; the difference, less the "
    "extinction by interstellar dust, is the distance modulus. The error budget shows what limits the "
    "distance: usually the width of the instability strip, which no photometry of one star can beat."
)


def report_section(run, progress=lambda step: None) -> dict:
    """The Cepheid section of the report: its context (``data``), the folded light curves, headline and dates."""
    from firstrung.methods.cepheids.present import cepheid_run_to_json, light_curve_figure
    from firstrung.numbers import rounded

    progress("drawing the light curves")
    data = cepheid_run_to_json(run)
    parts = []
    for s in data["stars"]:
        d = s["distance_pc"]
        value, interval = rounded(d["value"], d["low"], d["high"], space=" ")
        parts.append(f"{s['name']}, pulsating every {s['period_days']['value']:.2f} days, is {value} pc away "
                     f"({interval} pc)")
    figs = {"light_curves": light_curve_figure([(s.star.name, s.fit) for s in run.stars])}
    import numpy as np

    dates = sorted({str(np.datetime64(t, "D")) for s in run.stars for t in run.log.time_utc[s.rows]})
    return {"name": "cepheids", "title": TITLE, "method": METHOD, "data": data, "figures": figs,
            "headline": "As a Cepheid, " + "; ".join(parts) + ".", "dates": dates[:1] + dates[-1:]}
