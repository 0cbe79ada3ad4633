"""``firstrung plan transits``, ``reduce transit``, ``simulate transit``: the transit method's commands."""

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


def plan_transits(
    campaign: CampaignArgument,
    date_from: FromOption,
    date_to: ToOption,
    ics: Annotated[Path | None, Option("--ics", help="Also write the transits to this calendar file (RFC 5545).")] = None,
    json_output: JsonOption = False,
    verbose: VerboseOption = False,
) -> None:
    """Transits of Mercury and Venus: geocentric contacts, and each site's contacts and Sun altitude."""
    from firstrung.campaign import read_campaign
    from firstrung.methods.transit.present import transit_plan_to_json
    from firstrung.methods.transit.run import plan_transits as plan
    from firstrung.methods.transit.run import transits_ics
    from firstrung.output import write_atomic

    first, last = simulation_range(date_from, date_to)
    c = read_campaign(campaign)
    result = plan(c, first, last)
    data = transit_plan_to_json(result)
    if ics is not None:
        write_atomic(ics, transits_ics(result), inputs=[campaign])
    if json_output:
        print_json(data)
        return
    render_plan(data, verbose)
    if ics is not None:
        console().print(f"  calendar written to {ics}")


def render_plan(data: dict, verbose: bool) -> None:
    """Rich tables for a transit plan."""
    from rich import box
    from rich.markup import escape
    from rich.table import Table

    out = console()
    out.print(f"[bold]{escape(data['campaign'])}[/bold]: transits of Mercury and Venus {data['from']} to {data['to']}")
    if not data["transits"]:
        out.print("  no transit in this range")
    else:
        table = Table(box=box.SIMPLE_HEAD, title="Transits (geocentric contacts, UTC)", pad_edge=False, padding=(0, 1))
        for col in ("date", "planet", "C1", "C2", "greatest", "C3", "C4"):
            table.add_column(col, no_wrap=True, justify="left" if col in ("date", "planet") else "right")
        for t in data["transits"]:
            c = t["contacts_utc"]
            table.add_row(t["date"], t["planet"], *(c.get(k, "")[11:19] for k in ("C1", "C2")),
                          t["greatest_utc"][11:19], *(c.get(k, "")[11:19] for k in ("C3", "C4")))
        out.print(table)
    for t in data["transits"]:
        view = Table(box=box.SIMPLE_HEAD, title=f"{t['date']} {t['planet']}: each site's contacts (UTC) and the Sun's altitude (deg)")
        view.add_column("site", no_wrap=True)
        for k in ("C1", "C2", "C3", "C4"):
            view.add_column(k, justify="right", no_wrap=True)
        warnings = []
        for sid, per in t["sites"].items():
            cells = []
            for k in ("C1", "C2", "C3", "C4"):
                x = per.get(k)
                cells.append("" if x is None else f"{x['time_utc'][11:19]} {x['sun_altitude_deg']:+.0f}")
                if x is not None and not x["sun_up"]:
                    warnings.append(f"{sid}: the Sun is down at {k}")
                elif x is not None and x["low_sun"]:
                    warnings.append(f"{sid}: the Sun is low at {k} ({x['sun_altitude_deg']:.0f} deg)")
            view.add_row(escape(sid), *cells)
        out.print(view)
        for w in warnings if verbose or len(warnings) <= 8 else warnings[:8] + [f"... {len(warnings) - 8} more with --verbose"]:
            out.print(f"  {escape(w)}")
    print_assumptions(out, data, verbose)
    out.print(f"  [bold]Safety:[/bold] {data['safety']}")


def reduce_transit(
    campaign: CampaignArgument,
    black_drop_sigma_s: Annotated[float | None, Option(
        "--black-drop-sigma-s", min=0.0,
        help="Scatter of the black drop on internal contacts C2 and C3 [s] (default: 3 for Mercury, 15 for Venus).")] = None,
    no_clock_offsets: Annotated[bool, Option(
        "--no-clock-offsets", help="Trust every site's clock (a time signal) instead of fitting an offset per site.")] = False,
    json_output: JsonOption = False,
    verbose: VerboseOption = False,
    include_flagged: IncludeFlaggedOption = False,
) -> None:
    """The solar parallax and the Sun's distance from timed contacts of a transit of Mercury or Venus.

    Exit status 2 when any row or file was refused (the result from the good rows is still shown).
    """
    from firstrung.methods.transit.present import transit_run_to_json
    from firstrung.methods.transit.run import run_transit

    run = run_transit(campaign, include_flagged=include_flagged, black_drop_sigma_s=black_drop_sigma_s,
                      fit_clocks=not no_clock_offsets)
    finish_reduction(run, transit_run_to_json(run), render=render_reduction, json_output=json_output, verbose=verbose)



def render_reduction(data: dict, verbose: bool) -> None:
    """Rich tables for a transit reduction."""
    from rich.markup import escape

    out = console()
    out.print(f"[bold]{escape(data['campaign'])}[/bold]: the Sun's distance from timed transit contacts")
    for t in data["transits"]:
        out.print(f"  {t['date']} transit of {t['planet'].capitalize()}: {t['timings']} timings from {len(t['sites'])} sites")
    p, km, au = data["solar_parallax_arcsec"], data["sun_distance_km"], data["sun_distance_au"]
    out.print(f"  solar parallax   {p['value']:.3f} ± {p['sigma']:.3f}\"   (modern 8.794\")")
    high = "no upper bound" if km["high"] is None else f"{km['high'] / 1e6:.2f}"
    out.print(f"  Sun's distance   {km['value'] / 1e6:.2f} million km   (68 % interval {km['low'] / 1e6:.2f} to {high})")
    out.print(f"                   {au['value']:.4f} au   (68 % interval {interval_text(au, 4)})")
    out.print(f"  chi2 {data['chi2']:.1f} for {data['dof']} degrees of freedom")
    out.print(budget_table("Error budget of the solar parallax", data["error_budget"], "sigma_arcsec", "arcsec", 4))
    rejected = [t for t in data["timings"] if not t["used"]]
    for t in rejected:
        out.print(f"  rejected: {escape(t['site'])} {t['event']} ({escape(t['file'])} row {t['row']}), "
                  f"{t['residual_s']:+.0f} s from the fit")
    print_assumptions(out, data, verbose)
    rows = data["rows"]
    out.print(rows_line(rows, "used in the fit"))
    out.print(f"  [bold]Safety:[/bold] {data['safety']}")


def simulate_transit(
    campaign: CampaignArgument,
    date_from: FromOption,
    date_to: ToOption,
    output: OutputOption,
    seed: SeedOption = 1,
    time_sigma_s: Annotated[float, Option("--time-sigma-s", min=0.0, help="Timing error of one contact [s].")] = 5.0,
) -> None:
    """Transit logs: C1-C4 at every site of every transit of the range where the Sun is up."""
    from firstrung.campaign import read_campaign
    from firstrung.methods.transit.rehearsal import LOG_COLUMNS, rehearsal_rows

    first, last = simulation_range(date_from, date_to)
    rows = rehearsal_rows(read_campaign(campaign), first, last, seed, time_sigma_s=time_sigma_s)
    write_simulated(campaign, "transits", rows, LOG_COLUMNS, output, "transit timings")


register_plan = registers("transit", plan_transits)
register_reduce = registers("transit", reduce_transit)
register_simulate = registers("transit", simulate_transit)
