"""``firstrung reduce phases``: the Sun/Moon distance ratio from half-moon angles, timings and images."""

from __future__ import annotations

from typing import Annotated

import typer

from .common import (
    CampaignArgument,
    IncludeFlaggedOption,
    JsonOption,
    VerboseOption,
    console,
    handles_errors,
    print_json,
    report_left_out,
    report_problems,
)


def register(app: typer.Typer) -> None:
    """Add ``phases`` to the ``reduce`` group."""
    app.command("phases")(handles_errors(phases))


def phases(
    campaign: CampaignArgument,
    json_output: JsonOption = False,
    verbose: VerboseOption = False,
    elongation_sigma_deg: Annotated[
        float, typer.Option("--elongation-sigma-deg", help="Error of a measured Sun-Moon angle (the instrument's) [deg].")
    ] = 0.25,
    time_sigma_min: Annotated[
        float, typer.Option("--time-sigma-min", help="Error of judging the half moon, for rows without time_sigma_s [min].")
    ] = 30.0,
    fraction_sigma: Annotated[
        float, typer.Option("--fraction-sigma", help="Error of an illuminated fraction measured on an image.")
    ] = 0.01,
    include_flagged: IncludeFlaggedOption = False,
) -> None:
    """D_sun/D_moon with its 68 % interval, and how much better the angle or the timing must be.

    Exit status 2 when any row or file was refused (the result from the good rows is still shown).
    """
    from ..runs.phases import PhaseSettings, run_phases
    from ..serialize.phases import phase_run_to_json

    settings = PhaseSettings(elongation_sigma_deg=elongation_sigma_deg, time_sigma_s=time_sigma_min * 60.0,
                             fraction_sigma=fraction_sigma)
    run = run_phases(campaign, settings, include_flagged=include_flagged)
    data = phase_run_to_json(run)
    if json_output:
        print_json(data)
    else:
        _render(data, verbose)
    report_left_out(run.rows_left_out_flagged)
    report_problems(run.problems)
    if run.problems:
        raise typer.Exit(2)


def _interval_text(q: dict, digits: int = 0) -> str:
    if q["low"] is None:
        return "any value"
    high = "no upper bound" if q["high"] is None else f"{q['high']:.{digits}f}"
    return f"{q['low']:.{digits}f} to {high}"


def _render(data: dict, verbose: bool) -> None:
    from rich import box
    from rich.markup import escape
    from rich.table import Table

    out = console()
    e = data["elongation_deg"]
    out.print(f"[bold]{escape(data['campaign'])}[/bold]: the Sun's distance from the half moon")
    out.print(f"  elongation at half moon  {e['value']:.4f} ± {e['sigma']:.4f} deg")
    out.print(f"  {data['statement']}")
    if data["lower_bound_95"] is not None:
        out.print(f"  95 % lower bound {data['lower_bound_95']:.0f}")
    out.print(f"  modern value at these half moons {data['expected_ratio']:.0f} (E = {data['expected_elongation_deg']:.4f} deg)")
    out.print(f"  {data['precision']['sentence']}")
    p = data["precision"]["within_factor_2"]
    out.print(f"  (within a factor 2: E to ±{p['elongation_arcmin']:.1f}′ or the timing to ±{p['time_min']:.0f} min)")

    table = Table(title="Estimates", box=box.SIMPLE_HEAD)
    for col, just in (("kind", "left"), ("site", "left"), ("quarter", "left"), ("half moon (UTC)", "left"),
                      ("vs site's (min)", "right"), ("E (deg)", "right"), ("sigma (')", "right"), ("ratio 68 %", "right")):
        table.add_column(col, justify=just)
    for x in data["estimates"]:
        table.add_row(x["kind"], escape(x["site"]), x["quarter"], x["time_utc"][:16].replace("T", " "),
                      f"{x['minutes_from_site_dichotomy']:+.0f}", f"{x['elongation_deg']['value']:.3f}",
                      f"{x['elongation_deg']['sigma'] * 60:.1f}", _interval_text(x["sun_moon_distance_ratio"]))
    out.print(table)
    for kind, c in data["by_kind"].items():
        out.print(f"  {kind}: E = {c['elongation_deg']['value']:.4f} ± {c['elongation_deg']['sigma']:.4f} deg, "
                  f"ratio {_interval_text(c['sun_moon_distance_ratio'])} ({c['estimates']} estimates)")
    i = data["interval_method"]
    if i is not None:
        u = i["uncorrected"]
        out.print(f"  interval method ({i['first_to_last']} first-to-last, {i['last_to_first']} last-to-first intervals):")
        perfect = "no finite value" if u["perfect_timings_ratio"] is None else f"{u['perfect_timings_ratio']:.0f}"
        out.print(f"    uniform lunar motion: ratio {_interval_text(u['sun_moon_distance_ratio'])}; "
                  f"perfect timings of these half moons would give {perfect}")
        if i["corrected"] is not None:
            out.print(f"    corrected with the ephemeris's lunar motion: ratio {_interval_text(i['corrected']['sun_moon_distance_ratio'])}")
    rows = data["rows"]
    out.print(f"  rows: {rows['read']} read, {rows['accepted']} accepted, {rows['estimates']} estimates"
              + (f", {rows['refused']} refused" if rows["refused"] else ""))
    if verbose:
        for a in data["assumptions"]:
            out.print(f"  - {a}")
    out.print(f"  {data['caution']}")
