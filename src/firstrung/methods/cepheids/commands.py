"""``firstrung plan cepheids``, ``reduce cepheids``, ``simulate cepheids``: the Cepheid method's commands."""

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
    print_assumptions,
    print_json,
    registers,
    rows_line,
    simulation_range,
    write_simulated,
)
from firstrung.cli.direct import Option

StarOption = Annotated[str | None, Option("--star", help="Only this star (its id or name in the campaign file).")]
PeriodOption = Annotated[float | None, Option("--period-days", min=0.05, max=1000.0,
                                                     help="The Cepheid's period [d] (default: period_days of its [[star]]).")]


def plan_cepheids(
    campaign: CampaignArgument,
    date_from: FromOption,
    date_to: ToOption,
    star: StarOption = None,
    period_days: PeriodOption = None,
    nights: Annotated[int, Option("--nights", min=2, max=1000, help="How many nights to choose.")] = 12,
    json_output: JsonOption = False,
    verbose: VerboseOption = False,
) -> None:
    """Which nights cover each Cepheid's phase most evenly for its period."""
    from firstrung.campaign import read_campaign
    from firstrung.methods.cepheids.present import cepheid_plan_to_json
    from firstrung.methods.cepheids.run import plan_cepheids as plan

    first, last = simulation_range(date_from, date_to)
    data = cepheid_plan_to_json(plan(read_campaign(campaign), first, last, nights=nights, period_days=period_days,
                                     star_id=star))
    if json_output:
        print_json(data)
        return
    from rich import box
    from rich.markup import escape
    from rich.table import Table

    out = console()
    out.print(f"[bold]{escape(data['campaign'])}[/bold]: Cepheid nights {data['from']} to {data['to']}")
    for s in data["stars"]:
        table = Table(box=box.SIMPLE_HEAD, pad_edge=False,
                      title=f"{escape(s['name'])}: {s['chosen']} nights for a period of {s['period_days']:g} d")
        for col in ("rank", "date", "time (UTC)", "phase"):
            table.add_column(col, justify="left" if col == "date" else "right", no_wrap=True)
        for n in (s["nights"] if verbose else [n for n in s["nights"] if n["rank"]]):
            table.add_row("-" if n["rank"] is None else str(n["rank"]), n["date"],
                          "" if n["time_utc"] is None else n["time_utc"][11:16], f"{n['phase']:.2f}")
        out.print(table)
        out.print(f"  largest gap in phase between chosen nights: {s['largest_phase_gap']:.2f} of a cycle")
    print_assumptions(out, data, verbose)


def reduce_cepheids(
    campaign: CampaignArgument,
    relation: Annotated[str | None, Option(
        "--relation", help="Period-luminosity relation by name: benedict2007-v (default for V), benedict2007-i, "
                           "benedict2007-k (Benedict et al. 2007, AJ 133, 1810).")] = None,
    figure: Annotated[Path | None, Option("--figure", help="Also write the folded light curves (.svg or .png).")] = None,
    json_output: JsonOption = False,
    verbose: VerboseOption = False,
    include_flagged: IncludeFlaggedOption = False,
) -> None:
    """Each Cepheid's period, mean magnitude and distance through a period-luminosity relation.

    Exit status 2 when any row or file was refused (the result from the good rows is still shown).
    """
    from firstrung.methods.cepheids.present import cepheid_run_to_json
    from firstrung.methods.cepheids.run import run_cepheids

    figure = figure_path(figure)
    run = run_cepheids(campaign, relation_name=relation, include_flagged=include_flagged)
    data = cepheid_run_to_json(run)
    from firstrung.methods.cepheids.present import light_curve_figure

    finish_reduction(run, data, campaign=campaign, figure=figure, verbose=verbose, json_output=json_output,
                     draw=lambda: light_curve_figure([(s.star.name, s.fit) for s in run.stars]), render=render_reduction)


def render_reduction(data: dict, verbose: bool) -> None:
    """Rich tables for a Cepheid reduction."""
    from rich.markup import escape

    out = console()
    out.print(f"[bold]{escape(data['campaign'])}[/bold]: Cepheid distances from the campaign's photometry")
    for s in data["stars"]:
        p, m, big, d = s["period_days"], s["mean_magnitude"], s["absolute_magnitude"], s["distance_pc"]
        out.print(f"  [bold]{escape(s['name'])}[/bold]: {s['magnitudes']} magnitudes in {s['band']} over {s['span_days']:.0f} days")
        out.print(f"    period              {p['value']:.4f} ± {p['sigma']:.4f} d   "
                  f"(false-alarm probability {s['false_alarm_probability']:.2g})")
        out.print(f"    mean magnitude      {m['value']:.3f} ± {m['sigma']:.3f}")
        out.print(f"    absolute magnitude  {big['value']:.2f} ± {big['sigma']:.2f}   ({s['relation']})")
        ext = s["extinction_mag"]
        out.print(f"    extinction          {ext['value']:.2f} ± {ext['sigma']:.2f}"
                  + ("" if ext["stated"] else "   (none stated: the distance is overstated)"))
        out.print(f"    distance            {d['value']:.0f} pc   (68 % interval {d['low']:.0f} to {d['high']:.0f})")
        out.print(budget_table("Error budget of the distance modulus", s["error_budget"], "sigma_mag", "mag", 3))
        if verbose:
            out.print(f"    relation: {escape(s['relation_detail']['source'])}")
    for note in data["notes"]:
        out.print(f"  not reduced: {escape(note)}")
    print_assumptions(out, data, verbose)
    rows = data["rows"]
    out.print(rows_line(rows, "used"))


def simulate_cepheids(
    campaign: CampaignArgument,
    date_from: FromOption,
    date_to: ToOption,
    output: OutputOption,
    seed: SeedOption = 1,
    sigma_mag: Annotated[float, Option("--sigma-mag", min=0.0001, max=2.0, help="Error of one magnitude [mag].")] = 0.02,
    period_days: PeriodOption = None,
    mean_magnitude: Annotated[float, Option("--mean-magnitude", min=-30.0, max=30.0, help="Mean magnitude of the light curve (default: delta Cephei's in V).")] = 3.954,
    range_mag: Annotated[float, Option("--range-mag", min=0.0, max=5.0, help="Peak-to-peak range of the light curve [mag].")] = 0.89,
    band: Annotated[str, Option("--band", help="Band written in the log.")] = "V",
    star: StarOption = None,
) -> None:
    """Light-curve logs: one magnitude of each Cepheid every night a site sees it in a dark sky.

    The stars are those with period_days in the campaign file (every star with --period-days), or --star.
    """
    from firstrung.campaign import read_campaign
    from firstrung.methods.cepheids.rehearsal import LOG_COLUMNS, rehearsal_rows

    first, last = simulation_range(date_from, date_to)
    rows = rehearsal_rows(read_campaign(campaign), first, last, seed, sigma_mag=sigma_mag, band=band,
                          period_days=period_days, mean_magnitude=mean_magnitude, range_mag=range_mag, star_id=star)
    write_simulated(campaign, "light_curves", rows, LOG_COLUMNS, output, "magnitudes")


register_plan = registers("cepheids", plan_cepheids)
register_reduce = registers("cepheids", reduce_cepheids)
register_simulate = registers("cepheids", simulate_cepheids)
