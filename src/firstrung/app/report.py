"""The campaign report, built for its readers.

Page one is for a funder: what was measured, by whom and when, the results in plain words
against the values a perfect measurement of the campaign gives, and one figure. Then one
section per measured rung, each from its method's package (``methods/<name>/rung.py`` builds
the section, ``methods/<name>/templates/report.*.j2`` lays it out), asked through the
registry; then the sites, what the check found (one entry per diagnosis, with its rows and
the fix asked for), acknowledgements, cautions and references.

:func:`build_report` gathers the numbers and figures; :func:`render_html` and
:func:`render_markdown` turn them into documents. All text that came from a user's file is
escaped by jinja2's autoescape (HTML) or :func:`markdown_escape` (Markdown).
"""

from __future__ import annotations

from dataclasses import dataclass

from firstrung import __version__
from firstrung.errors import InputError
from firstrung.methods import REGISTRY
from firstrung.numbers import latitude_text, longitude_text, row_ranges
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


@dataclass(frozen=True)
class Report:
    context: dict
    figures: dict  # name -> matplotlib Figure (rendered later)
    runs: dict = None  # the reductions and the check it was built from, by name


def group_findings(flags: list[dict]) -> list[dict]:
    """The check's flags, one entry per diagnosis: its code, site, message, the fix and its rows.

    Flags with the same file, code, site and fix are one cause (a clock typed in local time
    flags every row of its series); their rows are listed as ranges.

    >>> f = [{"file": "a.csv", "row": r, "site": "x", "code": "c", "severity": "error", "message": "m",
    ...       "fix": "f"} for r in (3, 4, 5)]
    >>> [(g["rows_text"], g["count"]) for g in group_findings(f)]
    [('3-5', 3)]
    """
    groups: dict = {}
    for f in flags:
        key = (f["file"], f["code"], f.get("site"), f.get("fix") or "")
        g = groups.setdefault(key, {"file": f["file"], "code": f["code"], "site": f.get("site"),
                                    "severity": f["severity"], "message": f["message"], "fix": f.get("fix"),
                                    "rows": [], "messages": set()})
        if f.get("row") is not None:
            g["rows"].append(f["row"])
        g["messages"].add(f["message"])
    out = []
    for g in groups.values():
        g["count"] = max(len(g["rows"]), 1)
        g["rows_text"] = row_ranges(g["rows"]) if g["rows"] else ""
        g["same_message"] = len(g.pop("messages")) == 1
        out.append(g)
    out.sort(key=lambda g: (g["severity"] != "error", -g["count"], g["file"], g["rows"][:1]))
    return out


def _acknowledgements(campaign, check: dict | None) -> list[dict]:
    """Every site with its name and the observers its logs name."""
    observers: dict[str, list[str]] = {s.id: [] for s in campaign.sites}
    for r in (check or {}).get("summary", []):
        if r["observer"] and r["site"] in observers and r["observer"] not in observers[r["site"]]:
            observers[r["site"]].append(r["observer"])
    return [{"id": s.id, "name": s.name, "observers": observers[s.id]} for s in campaign.sites]


def _same_numbers_as_the_table(section: dict, rows: list[dict]) -> None:
    """Page one says each number once: a headline's value and interval become the ladder table's own.

    A rung's headline states its result as its own reduction gives it; the table beside it
    gives the ladder's (the radius carried through, the Moon's distance from the chained
    radius). Where a headline names a quantity of the table (``headline_numbers``), its
    figures are replaced by the table's, so that a reader never sees two values of one thing.
    """
    numbers = section.get("headline_numbers")
    row = next((r for r in rows if numbers and r["quantity"] == numbers["quantity"]), None)
    if row is None or row["measured"] is None or not row["interval_text"]:
        return
    headline = section["headline"]
    headline = headline.replace(f"{numbers['value']} km", f"{row['value_text']} km", 1)
    headline = headline.replace(f"68 % interval {numbers['interval']} km", f"68 % interval {row['interval_text']} km", 1)
    section["headline"] = headline


def build_report(campaign_path, *, samples: int, seed: int, progress=lambda step: None) -> Report:
    """Reduce every rung with logs, chain the ladder, and ask each method for its section (a log the
    reductions checked is not checked again for the report's own check)."""
    from firstrung.flags import checks_shared

    with checks_shared():
        return _build_report(campaign_path, samples=samples, seed=seed, progress=progress)


def _build_report(campaign_path, *, samples: int, seed: int, progress) -> Report:
    from firstrung import figures
    from firstrung.app.ladder_json import ladder_to_json
    from firstrung.app.ladder_run import run_ladder
    from firstrung.cli.ladder import LABELS, format_modern, format_value

    progress("reducing the campaign's logs")
    lad = run_ladder(campaign_path, samples=samples, seed=seed)
    progress("chaining the ladder")
    ladder_json = ladder_to_json(lad)
    rows = []
    for row in ladder_json["comparison"]:
        value, interval = format_value(row["measured"], row["unit"], space=" ")
        rows.append({**row, "label": LABELS[row["quantity"]], "value_text": value, "interval_text": interval,
                     "modern_text": format_modern(row, space=" ")})
    figs = {"ladder": figures.ladder_figure(rows)}
    sections = []
    for method in REGISTRY:
        run = lad.rung_runs.get(method.name)
        if run is None:
            continue
        section = method.module("rung").report_section(run, progress)
        _same_numbers_as_the_table(section, rows)
        for name, fig in section.pop("figures").items():
            figs[f"{method.name}_{name}"] = fig
        section["figure_names"] = [n for n in figs if n.startswith(method.name + "_")]
        sections.append(section)
    check = check_run = None
    try:
        from firstrung.app.check import run_check
        from firstrung.app.check_json import check_run_to_json

        progress("checking the logs")
        check_run = run_check(campaign_path)
        check = check_run_to_json(check_run)
    except InputError:
        check = None
    dates = sorted({d for s in sections for d in s["dates"]})
    acknowledgements = _acknowledgements(lad.campaign, check)
    context = {
        "title": f"{lad.campaign.name}: campaign report",
        "campaign": lad.campaign.name,
        "version": __version__,
        "sections": sections,
        "section": {s["name"]: s for s in sections},
        "ladder": rows,
        "ladder_json": ladder_json,
        "dates": dates,
        "observer_count": sum(len(a["observers"]) for a in acknowledgements),
        "acknowledgements": acknowledgements,
        "sites": [{"id": s.id, "name": s.name, "latitude": latitude_text(s.latitude_deg),
                   "longitude": longitude_text(s.longitude_deg), "elevation_m": s.elevation_m,
                   "timezone": s.timezone or "UTC"} for s in lad.campaign.sites],
        "notes": list(lad.notes),
        "check": check,
        "findings": group_findings(check["flags"]) if check else [],
        "problems": [str(p) for p in lad.problems],
        "cautions": [SOLAR_CAUTION_FULL, PHASES_CAUTION, ECLIPSE_NOTE],
        "references": REFERENCES,
        "not_measured": [r for r in rows if r["measured"] is None],
        "samples": samples,
        "seed": seed,
    }
    return Report(context, figs, {**lad.rung_runs, "check": check_run})


def _environment(markdown: bool = False):
    """Templates: the report's own, and each method's section under its name (``shadows/report.html.j2``)."""
    from jinja2 import (
        ChoiceLoader,
        Environment,
        PackageLoader,
        PrefixLoader,
        StrictUndefined,
        select_autoescape,
    )

    loader = ChoiceLoader([
        PackageLoader("firstrung", "templates"),
        PrefixLoader({m.name: PackageLoader(m.package, "templates") for m in REGISTRY}),
    ])
    env = Environment(
        loader=loader,
        autoescape=False if markdown else select_autoescape(["html", "j2"], default_for_string=True, default=True),
        undefined=StrictUndefined,
        keep_trailing_newline=True,
    )
    env.filters["md"] = markdown_escape
    env.filters["thousands"] = lambda x, d=0: f"{x:,.{d}f}"
    return env


def render_html(report: Report) -> str:
    """One self-contained HTML file: plots inline as SVG, print CSS."""
    from firstrung import figures

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

    pngs = {f"{image_prefix}{name}.png": figures.to_png(fig) for name, fig in report.figures.items()}
    names = {name: f"{image_prefix}{name}.png" for name in report.figures}
    text = _environment(markdown=True).get_template("report.md.j2").render(images=names, **report.context)
    return text, pngs
