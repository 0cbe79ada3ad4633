"""``firstrung plan shadows``: the days that work at every site, ranked by expected precision."""

from __future__ import annotations

from pathlib import Path
from typing import Annotated

import typer

from .common import CampaignArgument, JsonOption, console, handles_errors, print_json

WEEKDAYS = ("mon", "tue", "wed", "thu", "fri", "sat", "sun")

FromOption = Annotated[str, typer.Option("--from", help="First date (ISO 8601, e.g. 2027-01-01).", show_default=False)]
ToOption = Annotated[str, typer.Option("--to", help="Last date, included.", show_default=False)]


def register(app: typer.Typer) -> None:
    """Add ``shadows`` to the ``plan`` group."""
    app.command("shadows")(handles_errors(shadows))


def parse_weekdays(text: str | None) -> tuple[int, ...] | None:
    """'mon-fri' or 'mon,wed,sat' to weekday numbers (0 = Monday)."""
    from ..errors import InputError

    if not text:
        return None
    days: set[int] = set()
    for part in text.lower().replace(" ", "").split(","):
        ends = part.split("-")
        try:
            if len(ends) == 1:
                days.add(WEEKDAYS.index(ends[0][:3]))
            elif len(ends) == 2:
                a, b = WEEKDAYS.index(ends[0][:3]), WEEKDAYS.index(ends[1][:3])
                days.update(range(a, b + 1) if a <= b else [*range(a, 7), *range(0, b + 1)])
            else:
                raise ValueError
        except ValueError:
            raise InputError(f"--weekdays: expected names such as 'mon-fri' or 'mon,wed,sat', got {text!r}") from None
    return tuple(sorted(days))


def parse_dates(values: list[str]) -> tuple[str, ...]:
    """Excluded dates, given repeated or comma-separated."""
    import numpy as np

    from ..errors import InputError

    out = []
    for v in values:
        for part in v.split(","):
            part = part.strip()
            if not part:
                continue
            try:
                out.append(str(np.datetime64(part, "D")))
            except ValueError:
                raise InputError(f"--exclude: expected ISO dates such as 2027-04-01, got {part!r}") from None
    return tuple(out)


def parse_date(option: str, value: str) -> str:
    import numpy as np

    from ..errors import InputError

    try:
        return str(np.datetime64(value.strip(), "D"))
    except ValueError:
        raise InputError(f"{option}: expected an ISO date such as 2027-03-20, got {value!r}") from None


def shadows(
    campaign: CampaignArgument,
    date_from: FromOption,
    date_to: ToOption,
    min_altitude_deg: Annotated[
        float, typer.Option("--min-altitude-deg", "--min-altitude", help="Lowest noon altitude of the Sun allowed at any site [deg].")
    ] = 20.0,
    max_shadow_m: Annotated[
        float | None, typer.Option("--max-shadow-m", "--max-shadow", help="Length of the board: longer shadows rule a day out [m].")
    ] = None,
    weekdays: Annotated[
        str | None, typer.Option("--weekdays", help="Days of the week allowed, e.g. 'mon-fri' or 'tue,thu'.")
    ] = None,
    exclude: Annotated[
        list[str] | None, typer.Option("--exclude", help="Dates ruled out (repeat, or separate with commas).")
    ] = None,
    top: Annotated[int, typer.Option("--top", min=1, help="How many of the best days to show and export.")] = 10,
    ics: Annotated[
        Path | None, typer.Option("--ics", help="Write the best days (--top) to this calendar file (RFC 5545).")
    ] = None,
    json_output: JsonOption = False,
) -> None:
    """Rank the days of a range by the precision of the Earth's radius they allow.

    Every day is listed in --json; a day that breaks a constraint has rank
    null and the reasons.
    """
    from ..output import write_atomic
    from ..planning import ShadowConstraints
    from ..runs.plan_shadows import SOLAR_CAUTION, calendar_bytes, chosen_days, run_plan_shadows
    from ..serialize.plan_shadows import shadow_plan_to_json

    constraints = ShadowConstraints(
        min_altitude_deg=min_altitude_deg,
        max_shadow_m=max_shadow_m,
        weekdays=parse_weekdays(weekdays),
        excluded_dates=parse_dates(exclude or []),
    )
    run = run_plan_shadows(campaign, parse_date("--from", date_from), parse_date("--to", date_to), constraints)
    days = chosen_days(run.plan, top)
    if ics is not None:
        write_atomic(ics, calendar_bytes(run, days), inputs=[campaign, *run.campaign.logs.get("shadows", ())])
    data = shadow_plan_to_json(run)
    if json_output:
        print_json(data)
        return
    _render(data, run, days, SOLAR_CAUTION, ics)


def _render(data: dict, run, days, caution: str, ics) -> None:
    from rich import box
    from rich.markup import escape
    from rich.table import Table

    out = console()
    plan = run.plan
    n_ranked = int((plan.rank > 0).sum())
    out.print(
        f"[bold]{escape(data['campaign'])}[/bold]: noon shadows, {data['from']} to {data['to']}; "
        f"{n_ranked} of {len(plan.dates)} days work at every site"
    )
    out.print(f"  a perfect measurement at these sites gives {data['expected_radius_km']:.1f} km")
    if run.skipped_sites:
        out.print(f"  sites without a gnomon, left out: {', '.join(run.skipped_sites)}")
    table = Table(title=f"Best days (of {n_ranked})", box=box.SIMPLE_HEAD)
    table.add_column("rank", justify="right")
    table.add_column("date")
    table.add_column("sigma R (km)", justify="right")
    few = len(plan.sites) <= 4
    if few:
        for s in plan.sites:
            table.add_column(f"{escape(s.id)}\nnoon alt shadow(m)")
    table.add_column("note")
    table.caption = "noon: local apparent noon (site's zone, or Z for UTC); alt: Sun's refracted altitude (deg); N/S: shadow direction"
    for k in days:
        row = [str(plan.rank[k]), str(plan.dates[k]), f"{plan.sigma_radius_km[k]:.0f}"]
        if few:
            for j, _s in enumerate(plan.sites):
                d = data["days"][k]["sites"][plan.sites[j].id]
                clock = (d["transit_local"] or d["transit_utc"])[11:16]
                zone = "" if d["transit_local"] else "Z"
                row.append(f"{clock}{zone} {d['altitude_deg']:.1f} {d['shadow_m']:.2f}{d['shadow_direction'][0].upper()}")
        row.append(", ".join(plan.special[k]))
        table.add_row(*row)
    out.print(table)
    reasons: dict[str, int] = {}
    for e in plan.excluded:
        for r in e:
            key = r.split(" at ")[0] if r.startswith(("Sun only", "shadow")) else r
            key = "Sun too low at noon" if key.startswith("Sun only") else key
            key = "shadow longer than the board" if key.startswith("shadow") else key
            key = "not a chosen weekday" if key.startswith("not a chosen weekday") else key
            reasons[key] = reasons.get(key, 0) + 1
    if reasons:
        out.print("  days ruled out: " + "; ".join(f"{k} ({v})" for k, v in sorted(reasons.items())))
    if ics is not None:
        out.print(f"  calendar written: {escape(str(ics))} ({len(days)} days x {len(plan.sites)} sites)")
    out.print(f"  Caution: {caution}")
