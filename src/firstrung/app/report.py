"""The campaign report: every measured rung, its data and fit, the ladder, cautions and references.

:func:`build_report` gathers the numbers and figures into one context;
:func:`render_html` and :func:`render_markdown` turn it into documents. All
text that came from a user's file is escaped by jinja2's autoescape.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from firstrung import __version__
from firstrung.errors import InputError
from firstrung.safety import ECLIPSE_NOTE, PHASES_CAUTION, SOLAR_CAUTION_FULL

REFERENCES = (
    "Eratosthenes' method as described in Cleomedes, On the Circular Motions of the Celestial Bodies I.7.",
    "JPL planetary ephemeris DE421 (Folkner, Williams & Boggs 2009, IPN Progress Report 42-178), read offline "
    "with skyfield (Rhodes 2019).",
    "Bennett, G. G. (1982), The calculation of astronomical refraction in marine navigation, J. Navigation 35:255.",
    "Meeus, J. (1998), Astronomical Algorithms, 2nd ed., Willmann-Bell (refraction ch. 16, semi-diameters ch. 55).",
    "Karney, C. F. F. (2013), Algorithms for geodesics, J. Geodesy 87:43 (GeographicLib, WGS84 meridian arcs).",
    "NIMA TR8350.2 (2000), World Geodetic System 1984; Moritz, H. (2000), Geodetic Reference System 1980, "
    "J. Geodesy 74:128 (IUGG mean radius).",
    "IAU 2012 Resolution B2 (astronomical unit); IAU 2015 Resolution B3 (nominal solar radius).",
    "ISO 12312-2:2015, filters for direct observation of the Sun.",
)

SHADOW_METHOD = (
    "Each shadow length L of a gnomon of height h gives the apparent altitude of the marked edge, atan(h/L). "
    "Refraction (Bennett 1982) is removed and the edge moved to the Sun's centre by the semi-diameter of the "
    "date. Each site's readings around noon are fitted for its astronomical latitude and its clock offset, "
    "with the Sun's declination and hour angle from the DE421 ephemeris at each reading, so the declination "
    "is the one at that site's own transit. The latitudes are fitted against the sites' north-south "
    "distances along the meridian on the WGS84 ellipsoid; the slope is one over the Earth's radius. Every "
    "input's error is propagated to the radius, and the error budget says which limits it."
)


ECLIPSE_METHOD = (
    "During a lunar eclipse the Moon crosses the Earth's shadow. Each timed contact (U1 to U4) and each "
    "crater's immersion and emersion is a point where the shadow's edge met the Moon: with the Moon's "
    "angular radius and its rate across the shadow, the timings are chords of the Moon's straight track "
    "across a circular umbra, solved for the umbra's radius and the track's closest approach (no central "
    "passage assumed). The umbra's radius in units of the Moon's gives the Moon's horizontal parallax "
    "through the stated enlargement convention (Danjon by default, as the NASA canon), and the distance is "
    "one over the sine of the parallax, in Earth radii; times the campaign's own Earth radius, in km."
)

PHASES_METHOD = (
    "At the exact half moon the Sun, the Moon and the observer make a right angle at the Moon, so the "
    "Sun is 1/cos E times as far as the Moon, E being the Sun-Moon angle (Aristarchus' method). E comes "
    "from a measured angle, from the ephemeris's directions of Sun and Moon at the moment the half moon "
    "was timed, or from a fit of the lit fraction in a photo series. Because E is within a fraction of a "
    "degree of 90 deg the result is very sensitive to it: the interval is skewed, and when E may reach "
    "90 deg only a lower bound exists."
)


@dataclass(frozen=True)
class Report:
    context: dict
    figures: dict  # name -> matplotlib Figure factory result (rendered later)
    runs: dict = None  # the reductions and the check it was built from, by name


#: Panels of the shadow-series figure: every series up to this many, else the outlying sites' first.
SERIES_SHOWN = 12


def _shadow_series(run) -> tuple[list[dict], int]:
    """Readings and the fitted curve of the (site, day) series drawn, in minutes from the fitted noon.

    Every series when there are at most :data:`SERIES_SHOWN`; otherwise the
    outlying sites' series first, then the others in order, that many. Also
    returns how many series there are in all.
    """
    from firstrung import ephemeris
    from firstrung.methods.shadows.prediction import shadow_length_m

    r = run.reduction
    readings = run.readings
    sites = {s.id: i for i, s in enumerate(run.campaign.sites)}
    every = [(site, d) for site in r.sites for d in site.series]
    if len(every) > SERIES_SHOWN:
        ranked = [p for p in every if p[0].outlier] + [p for p in every if not p[0].outlier]
        chosen = {id(p[1]) for p in ranked[:SERIES_SHOWN]}
        every = [p for p in every if id(p[1]) in chosen]
    site_index = np.asarray(readings.site_index)
    order = np.argsort(site_index, kind="stable")
    bounds = np.searchsorted(site_index[order], np.arange(len(run.campaign.sites) + 1))
    out = []
    for site, d in every:
        i = sites[site.id]
        camp_site = run.campaign.sites[i]
        mask = np.sort(order[bounds[i]:bounds[i + 1]])  # this site's readings, in the log's order
        day = np.datetime64(d.date, "D")
        t = readings.time_utc[mask].astype("datetime64[us]")
        local_day = (t + (np.round(camp_site.longitude_deg / 15 * 3600e6)).astype(np.int64).astype("timedelta64[us]")).astype("datetime64[D]")
        sel = local_day == day
        if not np.any(sel):
            continue
        offset_us = int(round(d.clock_offset_s.value * 1e6))
        true_t = t[sel] - np.timedelta64(offset_us, "us")
        minutes = (true_t - d.transit_utc.astype("datetime64[us]")).astype(np.int64) / 60e6
        grid_min = np.linspace(minutes.min() - 2, minutes.max() + 2, 60)
        grid_t = d.transit_utc.astype("datetime64[us]") + (grid_min * 60e6).astype(np.int64).astype("timedelta64[us]")
        pos = ephemeris.sun_position(grid_t, camp_site.latitude_deg, camp_site.longitude_deg, camp_site.elevation_m)
        lat = np.radians(d.latitude_deg.value)
        dec, ha = np.radians(pos.declination_deg), np.radians(pos.hour_angle_deg)
        alt = np.degrees(np.arcsin(np.sin(lat) * np.sin(dec) + np.cos(lat) * np.cos(dec) * np.cos(ha)))
        edge = readings.edge[mask][sel][0]
        height = float(readings.gnomon_m[mask][sel][0])
        model = shadow_length_m(height, alt, pos.semidiameter_deg, np.array([edge] * grid_t.size, dtype=object))
        out.append({
            "label": f"{site.id} {d.date}",
            "minutes": minutes,
            "shadow_m": readings.shadow_m[mask][sel],
            "model_minutes": grid_min,
            "model_shadow_m": model,
        })
    return out, sum(len(site.series) for site in r.sites)


def build_report(campaign_path, *, samples: int, seed: int, progress=lambda step: None) -> Report:
    """Reduce every rung with logs, chain the ladder and gather the report's tables and figures."""
    from firstrung import figures
    from firstrung.app.ladder_json import ladder_to_json
    from firstrung.app.ladder_run import run_ladder
    from firstrung.methods.shadows.present import shadow_run_to_json

    progress("reducing the campaign's logs")
    lad = run_ladder(campaign_path, samples=samples, seed=seed)
    progress("chaining the ladder")
    ladder_json = ladder_to_json(lad)
    from firstrung.cli.ladder import LABELS, format_value

    rows = []
    for row in ladder_json["comparison"]:
        value, interval = format_value(row["measured"], row["unit"])
        rows.append({**row, "label": LABELS[row["quantity"]], "value_text": value, "interval_text": interval})
    figs = {"ladder": figures.ladder_figure(rows)}
    shadows = None
    if "shadows" in lad.rung_runs:
        progress("drawing the shadow fits")
        run = lad.rung_runs["shadows"]
        shadows = shadow_run_to_json(run)
        series, total = _shadow_series(run)
        figs["shadow_series"] = figures.shadow_series_figure(series, total)
        red = run.reduction
        pos = np.array([s.north_south_km for s in red.sites])
        lat = np.array([s.astronomical_latitude_deg.value for s in red.sites])
        sig = np.array([s.astronomical_latitude_deg.sigma for s in red.sites])
        names = [s.id for s in red.sites]
        out = np.array([s.outlier for s in red.sites])
        # the fitted line in degrees: through the residuals' definition
        resid_deg = np.array([s.residual_arcmin for s in red.sites]) / 60.0
        slope_deg_per_km = np.degrees(1.0 / red.earth_radius_km.value)
        intercept = float(np.mean((lat - resid_deg) - slope_deg_per_km * pos))
        figs["latitude_line"] = figures.latitude_line_figure(pos, lat, sig, names, out, intercept, slope_deg_per_km)
    check = check_run = None
    try:
        from firstrung.app.check import run_check
        from firstrung.app.check_json import check_run_to_json

        progress("checking the logs")
        check_run = run_check(campaign_path)
        check = check_run_to_json(check_run)
    except InputError:
        check = None
    eclipse = phases = None
    if "eclipse" in lad.rung_runs:
        from firstrung.methods.eclipse.present import eclipse_run_to_json
        from firstrung.methods.eclipse.run import eclipse_figure

        progress("drawing the eclipse")
        erun = lad.rung_runs["eclipse"]
        eclipse = eclipse_run_to_json(erun)
        reduced = [r for r in erun.results if r.reduction is not None]
        if reduced:
            figs["eclipse"] = eclipse_figure(reduced[0])
    if "phases" in lad.rung_runs:
        from firstrung.methods.phases.present import phase_run_to_json
        from firstrung.methods.phases.reduction import ratio_figure

        progress("drawing the half moon")
        prun = lad.rung_runs["phases"]
        phases = phase_run_to_json(prun)
        figs["phases"] = ratio_figure(prun.combined.elongation_deg, prun.combined.sigma_deg,
                                      true_ratio=prun.expected_ratio)
    context = {
        "title": f"{lad.campaign.name}: campaign report",
        "eclipse": eclipse,
        "eclipse_method": ECLIPSE_METHOD,
        "phases": phases,
        "phases_method": PHASES_METHOD,
        "notes": list(lad.notes),
        "check": check,
        "campaign": lad.campaign.name,
        "version": __version__,
        "ladder": rows,
        "ladder_json": ladder_json,
        "shadows": shadows,
        "shadow_method": SHADOW_METHOD,
        "sites": [{"id": s.id, "name": s.name, "latitude_deg": s.latitude_deg, "longitude_deg": s.longitude_deg,
                   "elevation_m": s.elevation_m} for s in lad.campaign.sites],
        "problems": [str(p) for p in lad.problems],
        "cautions": [SOLAR_CAUTION_FULL, PHASES_CAUTION, ECLIPSE_NOTE],
        "references": REFERENCES,
        "not_measured": [r for r in rows if r["measured"] is None],
        "samples": samples,
        "seed": seed,
    }
    return Report(context, figs, {**lad.rung_runs, "check": check_run})


def render_html(report: Report) -> str:
    """One self-contained HTML file: plots inline as SVG, print CSS."""
    from firstrung import figures
    from firstrung.methods.shadows.sheet import _environment

    svgs = {name: figures.to_svg(fig) for name, fig in report.figures.items()}
    return _environment().get_template("report.html.j2").render(figures=svgs, **report.context)


def markdown_escape(text) -> str:
    """Backslash-escape the characters Markdown (and inline HTML) would act on.

    >>> print(markdown_escape("a|b <i>*x*</i>"))
    a\\|b &lt;i&gt;\\*x\\*&lt;/i&gt;
    """
    out = str(text).replace("&", "&amp;").replace("<", "&lt;").replace(">", "&gt;")
    for ch in "\\`*_[]|#":
        out = out.replace(ch, "\\" + ch)
    return out


def render_markdown(report: Report, image_prefix: str) -> tuple[str, dict[str, bytes]]:
    """Markdown text and the PNG files it links (names relative to the Markdown file)."""
    from firstrung import figures
    from firstrung.methods.shadows.sheet import _environment

    pngs = {f"{image_prefix}{name}.png": figures.to_png(fig) for name, fig in report.figures.items()}
    names = {name: f"{image_prefix}{name}.png" for name in report.figures}
    env = _environment()
    env.autoescape = False  # Markdown: text from users' files goes through the md filter
    env.filters["md"] = markdown_escape
    text = env.get_template("report.md.j2").render(images=names, **report.context)
    return text, pngs
