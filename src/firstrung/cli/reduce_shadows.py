"""``firstrung reduce shadows``: the Earth's radius from noon shadows."""

from __future__ import annotations

import sys
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
    """Add ``shadows`` to the ``reduce`` group."""
    app.command("shadows")(handles_errors(shadows))


def shadows(
    campaign: CampaignArgument,
    json_output: JsonOption = False,
    verbose: VerboseOption = False,
    monte_carlo: Annotated[
        int,
        typer.Option(
            "--monte-carlo",
            min=0,
            help="Also redo the reduction this many times with every input drawn from its errors, "
            "and show the spread beside the linear sigma (0: off).",
        ),
    ] = 0,
    seed: Annotated[int, typer.Option("--seed", help="Seed of the Monte Carlo draws.")] = 1,
    include_flagged: IncludeFlaggedOption = False,
) -> None:
    """The Earth's radius from noon gnomon shadows at two or more sites.

    Exit status 2 when any row or file was refused (the result from the good
    rows is still shown).
    """
    from ..runs import run_shadows
    from ..serialize import shadow_run_to_json

    run = run_shadows(campaign, include_flagged=include_flagged)
    data = shadow_run_to_json(run)
    if monte_carlo:
        from ..methods.shadows import monte_carlo_radius
        from ..runs import baseline_inputs, site_inputs
        from ..uncertainty import interval_from_samples

        readings = run.readings
        samples = monte_carlo_radius(
            site_inputs(run.campaign), readings, baseline_inputs(run.campaign), samples=monte_carlo, seed=seed
        )
        data["monte_carlo"] = {
            "samples": monte_carlo,
            "seed": seed,
            "earth_radius_km": interval_from_samples(samples, "km").to_json(3),
        }
    if json_output:
        print_json(data)
    else:
        render_shadows(data, verbose)
    for note in run.notes:
        print(f"firstrung: note: {note}", file=sys.stderr)
    report_left_out(run.rows_left_out_flagged)
    report_problems(run.problems)
    if run.problems:
        raise typer.Exit(2)


def _pm(q: dict, digits: int = 1) -> str:
    if q["sigma"] is None:
        return f"{q['value']:.{digits}f}"
    return f"{q['value']:.{digits}f}±{q['sigma']:.{digits}f}"


def _interval(q: dict, digits: int = 0) -> str:
    high = "no upper bound" if q["high"] is None else f"{q['high']:.{digits}f}"
    return f"{q['low']:.{digits}f} to {high}"


def render_shadows(data: dict, verbose: bool) -> None:
    """Rich tables for a shadow reduction."""
    from rich import box
    from rich.table import Table

    out = console()
    r = data["earth_radius_km"]
    c = data["circumference_km"]
    out.print(f"[bold]{_escape(data['campaign'])}[/bold]: Earth's radius from noon shadows")
    out.print(f"  radius          {_pm(r, 0)} km   (68 % interval {_interval(r)} km)")
    out.print(f"  circumference   {_pm(c, 0)} km   (68 % interval {_interval(c)} km)")
    out.print(
        f"  a perfect measurement at these sites gives {data['expected_radius_km']:.1f} km\n"
        f"  (the WGS84 meridional radius over their span); IUGG mean radius {data['mean_radius_km']:.1f} km"
    )
    ratio = data["ratio_to_expected"]
    z = (r["value"] - data["expected_radius_km"]) / r["sigma"] if r["sigma"] else float("nan")
    out.print(f"  measured / expected = {ratio:.4f} ({z:+.1f} sigma)")
    rows = data["rows"]
    left = ", ".join(f"{v} {k}" for k, v in rows["left_out"].items() if v)
    out.print(
        f"  readings: {rows['read']} read, {rows['accepted']} accepted, {rows['used']} used"
        + (f" ({left} left out)" if left else "")
        + (f", {rows['refused']} refused" if rows["refused"] else "")
    )
    if data["outliers"]:
        out.print(f"  outlying sites left out: {', '.join(data['outliers'])}")

    table = Table(title="Sites", box=box.SIMPLE_HEAD, caption="Sun: the side of the zenith it culminates on; decl.: the Sun's at that site's own transit")
    for col, just in (
        ("site", "left"), ("day", "left"), ("culm. alt (deg)", "right"),
        ("zenith (deg)", "right"), ("Sun", "left"), ("decl. (deg)", "right"),
        ("astro. lat (deg)", "right"), ("sigma (deg)", "right"), ("resid. (')", "right"), ("clock (s)", "right"),
    ):
        table.add_column(col, justify=just, no_wrap=col in ("site", "day"))
    for s in data["sites"]:
        for k, d in enumerate(s["days"]):
            lat = d["astronomical_latitude_deg"] if len(s["days"]) > 1 else s["astronomical_latitude_deg"]
            table.add_row(
                _escape(s["id"]) + (" (outlier)" if s["outlier"] and k == 0 else ""),
                d["date"],
                f"{d['culmination_altitude_deg']['value']:.3f}",
                f"{d['zenith_distance_deg']['value']:.3f}",
                d["sun_side"],
                f"{d['declination_deg']:.4f}",
                f"{lat['value']:.3f}",
                f"{lat['sigma']:.3f}",
                f"{s['residual_arcmin']:+.1f}" if k == 0 else "",
                _pm(d["clock_offset_s"], 0),
            )
    out.print(table)

    budget = Table(title="Error budget of the radius", box=box.SIMPLE_HEAD)
    budget.add_column("input")
    budget.add_column("sigma (km)", justify="right")
    budget.add_column("share of variance", justify="right")
    for t in data["error_budget"]:
        budget.add_row(t["source"], f"{t['sigma_km']:.1f}", f"{t['share_percent']:.0f} %")
    out.print(budget)
    if data["limited_by"]:
        out.print(f"  the result is limited most by: {data['limited_by']}")
    if "monte_carlo" in data:
        mc = data["monte_carlo"]["earth_radius_km"]
        out.print(
            f"  Monte Carlo ({data['monte_carlo']['samples']} draws): sigma {mc['sigma']:.1f} km, "
            f"68 % interval {mc['low']:.0f} to {mc['high']:.0f} km"
        )
    if verbose:
        noon = Table(title="Apparent noon by each site's clock")
        for col in ("site", "day", "predicted transit (UTC)", "noon by the clock (UTC)", "implied longitude (deg)"):
            noon.add_column(col)
        for s in data["sites"]:
            for d in s["days"]:
                noon.add_row(
                    _escape(s["id"]), d["date"], d["transit_utc"], d["apparent_noon_clock_utc"],
                    _pm(d["implied_longitude_deg"], 3),
                )
        out.print(noon)
        for a in data["assumptions"]:
            out.print(f"  - {a}")


def _escape(text: str) -> str:
    from rich.markup import escape

    return escape(text)
