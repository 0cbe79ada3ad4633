"""``firstrung plan phases``: the quarters of a range, each site's own half moon, and when to observe."""

from __future__ import annotations

from pathlib import Path
from typing import Annotated

import typer

from .common import CampaignArgument, JsonOption, console, handles_errors, print_json

FromOption = Annotated[str, typer.Option("--from", help="First date (ISO 8601, e.g. 2027-01-01).", show_default=False)]
ToOption = Annotated[str, typer.Option("--to", help="Last date, included.", show_default=False)]


def register(app: typer.Typer) -> None:
    """Add ``phases`` to the ``plan`` group."""
    app.command("phases")(handles_errors(phases))


def phases(
    campaign: CampaignArgument,
    date_from: FromOption,
    date_to: ToOption,
    min_altitude_deg: Annotated[
        float, typer.Option("--min-altitude-deg", help="Lowest observed altitude of the Sun and of the Moon in a window [deg].")
    ] = 10.0,
    min_sun_elongation_deg: Annotated[
        float,
        typer.Option("--min-sun-elongation-deg", help="Smallest Sun-Moon angle allowed for the instrument [deg]; never point optics near the Sun."),
    ] = 30.0,
    span_h: Annotated[
        float, typer.Option("--span-h", help="Search windows this long before and after each half moon [h].")
    ] = 24.0,
    ics: Annotated[
        Path | None,
        typer.Option("--ics", help="Write a calendar (RFC 5545): for each ranked quarter and site, the window nearest its half moon."),
    ] = None,
    json_output: JsonOption = False,
) -> None:
    """List first and last quarters: quadrature, true half moon (geocentric and per site), and the
    windows when the Sun and the Moon are both high enough to measure the angle between them.

    Every quarter is listed in --json; one without any window has rank null and the reasons.
    """
    from ..output import write_atomic
    from ..runs.phases import PlanSettings, calendar_bytes, plan_phases
    from ..serialize.phases import phase_plan_to_json

    settings = PlanSettings(min_altitude_deg=min_altitude_deg, min_sun_elongation_deg=min_sun_elongation_deg, half_span_h=span_h)
    plan = plan_phases(campaign, date_from, date_to, settings)
    if ics is not None:
        write_atomic(ics, calendar_bytes(plan), inputs=[campaign, *[p for v in plan.campaign.logs.values() for p in v]])
    data = phase_plan_to_json(plan)
    if json_output:
        print_json(data)
        return
    _render(data, ics)


def _render(data: dict, ics) -> None:
    from rich import box
    from rich.markup import escape
    from rich.table import Table

    out = console()
    quarters = data["quarters"]
    ranked = [q for q in quarters if q["rank"] is not None]
    out.print(
        f"[bold]{escape(data['campaign'])}[/bold]: half moons, {data['from']} to {data['to']}; "
        f"{len(quarters)} quarters, {len(ranked)} with a window at some site"
    )
    table = Table(box=box.SIMPLE_HEAD, title="Quarters (geocentric)",
                  caption="half moon: the true half moon (phase angle 90 deg); offset from quadrature in minutes")
    for col, just in (("rank", "right"), ("quarter", "left"), ("quadrature (UTC)", "left"),
                      ("half moon (UTC)", "left"), ("offset", "right"), ("E (deg)", "right"), ("ratio", "right")):
        table.add_column(col, justify=just, no_wrap=True)
    for q in quarters:
        table.add_row(
            "-" if q["rank"] is None else str(q["rank"]), q["quarter"], q["quadrature_utc"][:16].replace("T", " "),
            q["dichotomy_utc"][11:16], f"{q['dichotomy_minus_quadrature_min']:+.1f}",
            f"{q['elongation_at_dichotomy_deg']:.4f}", f"{q['sun_moon_distance_ratio']:.0f}",
        )
    out.print(table)
    sites = Table(box=box.SIMPLE_HEAD, title="Each site's half moon and the nearest window with Sun and Moon both up",
                  caption="window: both bodies high enough and the Sun far enough from the Moon; minutes from the "
                          "site's half moon")
    for col, just in (("quarter", "left"), ("site", "left"), ("half moon seen (UTC)", "left"),
                      ("nearest window (UTC)", "left"), ("from half moon", "right")):
        sites.add_column(col, justify=just, no_wrap=True)
    for q in quarters:
        for sid, s in q["sites"].items():
            best = min(s["windows"], key=lambda w: abs(w["minutes_from_dichotomy"]), default=None)
            window, offset = "none", ""
            if best is not None:
                window = f"{best['start_utc'][5:10]} {best['start_utc'][11:16]}-{best['end_utc'][11:16]}"
                offset = "contains it" if best["contains_dichotomy"] else f"{best['minutes_from_dichotomy']:+.0f} min"
            sites.add_row(f"{q['quadrature_utc'][:10]} {q['quarter']}", escape(sid),
                          s["dichotomy_utc"][:16].replace("T", " "), window, offset)
    out.print(sites)
    if ics is not None:
        out.print(f"  calendar written: {escape(str(ics))}")
    out.print(f"  {data['caution']}")
