"""What the parallax method gives the ladder: the parsec rung (each measured star's parallax).
And what it gives the report: its section (:func:`report_section`).
"""

from __future__ import annotations


def ladder_draws(ctx) -> None:
    """Each star's parallax (Gaussian in mas) for the parsec rung."""
    from firstrung.methods.parallax.run import run_parallax
    from firstrung.star_ladder import add_star_distances, reduced_for_ladder
    from firstrung.uncertainty import Draw

    run = reduced_for_ladder(ctx, "parallax", run_parallax)
    if run is None:
        return
    add_star_distances(ctx, run, "parallax", (
        (sp.star, Draw("gaussian", sp.fit.parallax_mas.value, sp.fit.parallax_mas.sigma or 0.0), sp.catalogue)
        for sp in run.stars), "stellar parallax from the campaign's astrometry (reduce parallax)")


TITLE = "Stellar parallax: the distance of a nearby star"

METHOD = (
    "Through the year the Earth's motion about the Sun makes a nearby star trace a small ellipse against "
    "the distant background stars. Each epoch's position, measured against reference stars on the "
    "observatory's own images, is fitted with the star's place, its proper motion and its parallax "
    "together; the parallax factors come from the Earth's position in the JPL DE421 ephemeris. The "
    "distance in parsecs is 1000 over the parallax in milliarcseconds: one parsec is the distance at "
    "which one astronomical unit subtends one arcsecond."
)


def report_section(run, progress=lambda step: None) -> dict:
    """The parallax section of the report: its context (``data``), the ellipse figure, headline and dates."""
    from firstrung.methods.parallax.present import parallax_ellipse_figure, parallax_run_to_json
    from firstrung.numbers import rounded

    progress("drawing the parallax ellipses")
    data = parallax_run_to_json(run)
    parts = []
    for s in data["stars"]:
        d = s["distance_pc"]
        if d["value"] is None:
            parts.append(f"{s['name']}'s parallax is {s['parallax_mas']['value']:.1f} ± "
                         f"{s['parallax_mas']['sigma']:.1f} mas: too small to give a distance")
            continue
        value, interval = rounded(d["value"], d["low"], d["high"], space=" ")
        parts.append(f"{s['name']} is {value} pc away ({interval} pc)")
    figs = {"ellipse": parallax_ellipse_figure([(s.star.name, s.fit) for s in run.stars])}
    dates = sorted({e["time_utc"][:10] for s in data["stars"] for e in s["epochs"]})
    return {"name": "parallax", "title": TITLE, "method": METHOD, "data": data, "figures": figs,
            "headline": "By its parallax, " + "; ".join(parts) + ".",
            "dates": dates[:1] + dates[-1:]}
