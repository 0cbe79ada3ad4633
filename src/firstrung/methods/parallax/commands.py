"""``firstrung plan parallax``, ``reduce parallax``, ``simulate parallax``: the parallax method's commands."""

from __future__ import annotations

from pathlib import Path
from typing import Annotated

from firstrung.cli.common import (
    CampaignArgument,
    FromOption,
    IncludeFlaggedOption,
    JsonOption,
    OutputOption,
    SeedOption,
    ToOption,
    VerboseOption,
    budget_table,
    console,
    figure_path,
    finish_reduction,
    interval_text,
    print_assumptions,
    print_json,
    registers,
    rows_line,
    simulation_range,
    write_simulated,
)
from firstrung.cli.direct import Option

StarOption = Annotated[str | None, Option("--star", help="Only this star (its id or name in the campaign file).")]


def plan_parallax(
    campaign: CampaignArgument,
    date_from: FromOption,
    date_to: ToOption,
    star: StarOption = None,
    step_days: Annotated[int, Option("--step-days", min=1, max=366, help="Days between the listed dates.")] = 7,
    json_output: JsonOption = False,
    verbose: VerboseOption = False,
) -> None:
    """Dates when each star's parallax displacement is largest and it is well placed at the sites."""
    from firstrung.campaign import read_campaign
    from firstrung.methods.parallax.present import parallax_plan_to_json
    from firstrung.methods.parallax.run import plan_parallax as plan

    first, last = simulation_range(date_from, date_to)
    data = parallax_plan_to_json(plan(read_campaign(campaign), first, last, step_days=step_days, star_id=star))
    if json_output:
        print_json(data)
        return
    render_plan(data, verbose)


def render_plan(data: dict, verbose: bool) -> None:
    """Rich tables for a parallax plan: the ranked dates of each star (every date with --verbose)."""
    from rich import box
    from rich.markup import escape
    from rich.table import Table

    out = console()
    out.print(f"[bold]{escape(data['campaign'])}[/bold]: parallax epochs {data['from']} to {data['to']}")
    for s in data["stars"]:
        cat = s["catalogue"]
        known = (f"catalogue parallax {cat['parallax_mas']:.2f} ± {cat['parallax_sigma_mas']:.2f} mas (HIP {cat['hip']})"
                 if cat else "not in the catalogue: displacement per 1 mas of parallax")
        table = Table(box=box.SIMPLE_HEAD, title=f"{escape(s['name'])}: {known}", pad_edge=False)
        for col in ("rank", "date", "factor RA", "factor Dec", "shift (mas)", "dark hours (best site)"):
            table.add_column(col, justify="left" if col == "date" else "right", no_wrap=True)
        days = s["days"] if verbose else sorted((d for d in s["days"] if d["rank"]), key=lambda d: d["rank"])[:12]
        for d in days:
            hours = max((v["dark_hours"] for v in d["sites"].values()), default=None)
            table.add_row("-" if d["rank"] is None else str(d["rank"]), d["date"], f"{d['parallax_factor_ra']:+.3f}",
                          f"{d['parallax_factor_dec']:+.3f}", f"{d['displacement_mas']:.1f}",
                          "" if hours is None else f"{hours:.1f}")
        out.print(table)
        ruled_out = sum(1 for d in s["days"] if d["rank"] is None)
        if ruled_out:
            out.print(f"  {ruled_out} of {len(s['days'])} dates ruled out: the star is not well placed in a dark sky")
    print_assumptions(out, data, verbose)


def reduce_parallax(
    campaign: CampaignArgument,
    figure: Annotated[Path | None, Option("--figure", help="Also write the parallax ellipse with the epochs (.svg or .png).")] = None,
    json_output: JsonOption = False,
    verbose: VerboseOption = False,
    include_flagged: IncludeFlaggedOption = False,
) -> None:
    """Each star's parallax, distance and proper motion from its measured positions.

    Exit status 2 when any row or file was refused (the result from the good rows is still shown).
    """
    from firstrung.methods.parallax.present import parallax_run_to_json
    from firstrung.methods.parallax.run import run_parallax

    figure = figure_path(figure)
    run = run_parallax(campaign, include_flagged=include_flagged)
    data = parallax_run_to_json(run)
    from firstrung.methods.parallax.present import parallax_ellipse_figure

    finish_reduction(run, data, campaign=campaign, figure=figure, verbose=verbose, json_output=json_output,
                     draw=lambda: parallax_ellipse_figure([(s.star.name, s.fit) for s in run.stars]), render=render_reduction)



def render_reduction(data: dict, verbose: bool) -> None:
    """Rich tables for a parallax reduction."""
    from rich.markup import escape

    out = console()
    out.print(f"[bold]{escape(data['campaign'])}[/bold]: stellar parallax from the campaign's astrometry")
    for s in data["stars"]:
        p, d, ly = s["parallax_mas"], s["distance_pc"], s["distance_ly"]
        out.print(f"  [bold]{escape(s['name'])}[/bold]: {len(s['epochs'])} epochs over {s['span_days']:.0f} days")
        out.print(f"    parallax       {p['value']:.2f} ± {p['sigma']:.2f} mas")
        value = "undetermined" if d["value"] is None else f"{d['value']:.2f}"
        out.print(f"    distance       {value} pc   (68 % interval {interval_text(d, 2)})")
        if ly["value"] is not None:
            out.print(f"                   {ly['value']:.2f} light years   (68 % interval {interval_text(ly, 2)})")
        out.print(f"    proper motion  {s['proper_motion_ra_mas_per_yr']['value']:+.1f} mas/yr in RA, "
                  f"{s['proper_motion_dec_mas_per_yr']['value']:+.1f} mas/yr in Dec")
        cat = s["catalogue"]
        if cat:
            out.print(f"    catalogue      {cat['parallax_mas']:.2f} ± {cat['parallax_sigma_mas']:.2f} mas (HIP {cat['hip']}, "
                      "Hipparcos new reduction)")
        out.print(f"    chi2 {s['chi2']:.1f} for {s['dof']} degrees of freedom"
                  + ("" if s["error_scale"] == 1 else f"; errors scaled by {s['error_scale']:.2f}"))
        out.print(budget_table("Error budget of the parallax", s["error_budget"], "sigma_mas", "mas", 3))
    for note in data["notes"]:
        out.print(f"  not fitted: {escape(note)}")
    print_assumptions(out, data, verbose)
    rows = data["rows"]
    out.print(rows_line(rows, "used"))


def simulate_parallax(
    campaign: CampaignArgument,
    date_from: FromOption,
    date_to: ToOption,
    output: OutputOption,
    seed: SeedOption = 1,
    sigma_arcsec: Annotated[float, Option("--sigma-arcsec", min=0.0001, max=60.0, help="Error of one coordinate of one position [arcsec].")] = 0.05,
    cadence_days: Annotated[int, Option("--cadence-days", min=1, max=366, help="Days between epochs.")] = 14,
    parallax_mas: Annotated[float | None, Option("--parallax-mas", min=0.0, help="Give every star this parallax instead of the catalogue's [mas].")] = None,
    star: StarOption = None,
) -> None:
    """Astrometry logs: each star's place every few weeks when a site sees it in a dark sky."""
    from firstrung.campaign import read_campaign
    from firstrung.methods.parallax.rehearsal import LOG_COLUMNS, rehearsal_rows

    first, last = simulation_range(date_from, date_to)
    rows = rehearsal_rows(read_campaign(campaign), first, last, seed, sigma_arcsec=sigma_arcsec,
                          cadence_days=cadence_days, parallax_mas=parallax_mas, star_id=star)
    write_simulated(campaign, "astrometry", rows, LOG_COLUMNS, output, "star positions")


register_plan = registers("parallax", plan_parallax)
register_reduce = registers("parallax", reduce_parallax)
register_simulate = registers("parallax", simulate_parallax)
