"""``firstrung reduce eclipse``: the Moon's distance and the umbra's enlargement from eclipse timings."""

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
    """Add ``eclipse`` to the ``reduce`` group."""
    app.command("eclipse")(handles_errors(eclipse))


def eclipse(
    campaign: CampaignArgument,
    convention: Annotated[
        str,
        typer.Option(
            "--convention",
            help="Enlargement convention inverted for the Moon's parallax: danjon (the NASA canon's), chauvenet or geometric.",
        ),
    ] = "danjon",
    earth_radius_km: Annotated[
        float | None,
        typer.Option("--earth-radius-km", help="Earth radius for the distance in km (else the campaign's own shadow result) [km]."),
    ] = None,
    earth_radius_sigma_km: Annotated[
        float | None, typer.Option("--earth-radius-sigma-km", help="One-sigma error of --earth-radius-km [km].")
    ] = None,
    magnitude: Annotated[
        float | None,
        typer.Option("--magnitude", help="Observed greatest umbral magnitude (a partial eclipse timed at U1 and U4 needs it)."),
    ] = None,
    magnitude_sigma: Annotated[
        float | None, typer.Option("--magnitude-sigma", help="One-sigma error of --magnitude.")
    ] = None,
    json_output: JsonOption = False,
    verbose: VerboseOption = False,
    include_flagged: IncludeFlaggedOption = False,
) -> None:
    """The shadow/Moon ratio and the Moon's distance from umbral contacts and crater timings.

    Exit status 2 when any row or file was refused (the results from the good
    rows are still shown).
    """
    from ..runs.eclipse import run_eclipse
    from ..serialize.eclipse import eclipse_run_to_json

    if earth_radius_sigma_km is not None and earth_radius_km is None:
        from ..errors import InputError

        raise InputError("--earth-radius-sigma-km: given without --earth-radius-km")
    run = run_eclipse(
        campaign, convention=convention, earth_radius_km=earth_radius_km,
        earth_radius_sigma_km=earth_radius_sigma_km, magnitude=magnitude, magnitude_sigma=magnitude_sigma,
        include_flagged=include_flagged,
    )
    data = eclipse_run_to_json(run)
    if json_output:
        print_json(data)
    else:
        render_eclipse(data, verbose)
    report_left_out(run.rows_left_out_flagged)
    report_problems(run.problems)
    if run.problems:
        raise typer.Exit(2)


def _pm(q: dict | None, digits: int) -> str:
    if q is None:
        return "-"
    if q["sigma"] is None:
        return f"{q['value']:.{digits}f}"
    return f"{q['value']:.{digits}f}±{q['sigma']:.{digits}f}"


def _interval(q: dict, digits: int) -> str:
    high = "no upper bound" if q["high"] is None else f"{q['high']:.{digits}f}"
    return f"{q['low']:.{digits}f} to {high}"


def render_eclipse(data: dict, verbose: bool) -> None:
    """Rich tables for an eclipse reduction."""
    from rich import box
    from rich.markup import escape
    from rich.table import Table

    out = console()
    out.print(f"[bold]{escape(data['campaign'])}[/bold]: the Moon's distance from lunar eclipse timings ({data['convention']} shadow)")
    for e in data["eclipses"]:
        m = e["moon"]
        out.print(f"\n[bold]{e['date']}[/bold] {e['kind']} eclipse, {e['rows']} timings")
        src = "measured by the observers" if m["observational"] else "from the ephemeris (ephemeris-assisted)" if m["semidiameter_source"] == m["rate_source"] == "ephemeris" else "partly from the ephemeris"
        out.print(
            f"  Moon: radius {m['semidiameter_arcmin']:.3f}' ({m['semidiameter_source']}), rate across the shadow "
            f"{m['rate_deg_per_h']:.4f} deg/h ({m['rate_source']}) — {src}"
        )
        if e["reduction"] is not None:
            r = e["reduction"]
            n, d = e["shadow_moon_ratio"], e["moon_distance_earth_radii"]
            out.print(f"  shadow / Moon ratio  {_pm(n, 3)}   (68 % interval {_interval(n, 3)})")
            out.print(f"  umbra radius         {_pm(r['umbra_radius_arcmin'], 2)}'   Moon's parallax {_pm(r['moon_parallax_arcmin'], 2)}'")
            out.print(f"  Moon's distance      {_pm(d, 2)} Earth radii   (68 % interval {_interval(d, 2)})")
            if e["moon_distance_km"] is not None:
                k = e["moon_distance_km"]
                out.print(f"                       {_pm(k, 0)} km   (68 % interval {_interval(k, 0)}; Earth radius {data['earth_radius_source']})")
            modern = e["modern"]["moon_distance_earth_radii"]
            z = (d["value"] - modern) / d["sigma"] if d["sigma"] else float("nan")
            out.print(f"  the ephemeris gives {modern:.3f} Earth radii at greatest eclipse ({z:+.1f} sigma)")
            budget = Table(title="Error budget of the distance", box=box.SIMPLE_HEAD)
            budget.add_column("input")
            budget.add_column("sigma (Earth radii)", justify="right")
            budget.add_column("share", justify="right")
            for b in r["error_budget"]:
                budget.add_row(b["source"], f"{b['sigma_earth_radii']:.3f}", f"{b['share_percent']:.0f} %")
            out.print(budget)
        else:
            out.print(f"  no distance: {e['reduction_problem']}")
        if e["enlargement"] is not None:
            en = e["enlargement"]
            q = en["enlargement_percent"]
            out.print(
                f"  umbra enlargement    {_pm(q, 2)} % over the geometric shadow from {en['used']} of {en['points']} crater points "
                f"(the {data['convention']} convention: {e['modern']['umbra_enlargement_percent']:.2f} %)"
            )
            if en["flattening"] is not None:
                out.print(f"  shadow flattening    {_pm(en['flattening'], 4)}")
        elif verbose:
            out.print(f"  no enlargement: {e['enlargement_problem']}")
        table = Table(title="Timings (combined per event)", box=box.SIMPLE_HEAD)
        for col in ("event", "feature", "time (UTC)", "sigma (s)", "used", "rejected", "resid. (s)"):
            table.add_column(col, justify="left" if col in ("event", "feature") else "right", no_wrap=True)
        for t in e["timings"]:
            table.add_row(
                t["event"], escape(t["feature"] or ""), t["time_utc"][11:19], f"{t['sigma_s']:.0f}", str(t["timings_used"]),
                str(len(t["rejected"])), "" if t["residual_s"] is None else f"{t['residual_s']:+.0f}",
            )
        if verbose or len(e["timings"]) <= 12:
            out.print(table)
        if verbose:
            for a in e["assumptions"]:
                out.print(f"  - {a}")
    rows = data["rows"]
    out.print(f"\n  rows: {rows['read']} read, {rows['accepted']} accepted" + (f", {rows['refused']} refused" if rows["refused"] else ""))
