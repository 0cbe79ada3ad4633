"""What the Cepheid method gives the ladder: each Cepheid's distance on the parsec rung (the
relation's calibration taken from published parallaxes, said so). And what it gives the report."""

from __future__ import annotations


def ladder_draws(ctx) -> None:
    """Each Cepheid's distance modulus (Gaussian) for the parsec rung."""
    from firstrung.methods.cepheids.run import run_cepheids
    from firstrung.star_catalogue import campaign_star_entry
    from firstrung.star_ladder import add_star_distances, reduced_for_ladder
    from firstrung.uncertainty import Draw

    run = reduced_for_ladder(ctx, "cepheids", run_cepheids)
    if run is None:
        return
    relations = sorted({sc.fit.relation.name for sc in run.stars})
    add_star_distances(ctx, run, "cepheid", (
        (sc.star, Draw("gaussian", sc.fit.distance_modulus_mag.value, sc.fit.distance_modulus_mag.sigma or 0.0),
         campaign_star_entry(sc.star)) for sc in run.stars),
        "Cepheid period and mean magnitude from the campaign's photometry (reduce cepheids); the "
        f"period-luminosity calibration {', '.join(relations)} is published, not measured by the campaign")


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
