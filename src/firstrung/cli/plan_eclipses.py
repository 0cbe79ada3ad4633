"""``firstrung plan eclipses``: the lunar eclipses of a range and what each site sees."""

from __future__ import annotations

from pathlib import Path
from typing import Annotated

import typer

from .common import CampaignArgument, JsonOption, VerboseOption, console, handles_errors, print_json

ConventionOption = Annotated[
    str,
    typer.Option(
        "--convention",
        help="How the atmosphere enlarges the Earth's shadow: danjon (the NASA canon's), chauvenet or geometric.",
    ),
]


def register(app: typer.Typer) -> None:
    """Add ``eclipses`` to the ``plan`` group."""
    app.command("eclipses")(handles_errors(eclipses))


def eclipses(
    campaign: CampaignArgument,
    date_from: Annotated[str, typer.Option("--from", help="First date (YYYY-MM-DD, UTC).", show_default=False)],
    date_to: Annotated[str, typer.Option("--to", help="Last date (YYYY-MM-DD, UTC).", show_default=False)],
    ics: Annotated[
        Path | None, typer.Option("--ics", help="Also write the eclipses to this calendar file (RFC 5545).")
    ] = None,
    convention: ConventionOption = "danjon",
    json_output: JsonOption = False,
    verbose: VerboseOption = False,
) -> None:
    """Lunar eclipses from --from to --to: contacts, and each site's Moon and Sun at each contact."""
    from ..campaign import read_campaign
    from ..output import write_atomic
    from ..runs.eclipse import eclipses_ics, plan_eclipses
    from ..serialize.eclipse import eclipse_plan_to_json

    start = _date("--from", date_from)
    end = _date("--to", date_to)
    c = read_campaign(campaign)
    plan = plan_eclipses(c, start, end, convention)
    data = eclipse_plan_to_json(plan)
    if ics is not None:
        write_atomic(ics, eclipses_ics(plan), inputs=[campaign])
    if json_output:
        print_json(data)
    else:
        render_plan(data, verbose)
        if ics is not None:
            console().print(f"  calendar written to {ics}")


def _date(option: str, value: str) -> str:
    import re

    import numpy as np

    from ..errors import InputError

    text = value.strip()
    if not re.fullmatch(r"\d{4}-\d{2}-\d{2}", text):
        raise InputError(f"{option}: expected an ISO date such as 2029-12-20, got {value!r}")
    try:
        return str(np.datetime64(text, "D"))
    except ValueError:
        raise InputError(f"{option}: expected an ISO date such as 2029-12-20, got {value!r}") from None


def _fmt_time(text: str | None) -> str:
    return "" if not text else text[11:19]


def render_plan(data: dict, verbose: bool) -> None:
    """Rich tables for an eclipse plan."""
    from rich import box
    from rich.markup import escape
    from rich.table import Table

    out = console()
    out.print(
        f"[bold]{escape(data['campaign'])}[/bold]: lunar eclipses {data['from']} to {data['to']} "
        f"({data['convention']} shadow)"
    )
    if not data["eclipses"]:
        out.print("  no lunar eclipse in this range")
        return
    table = Table(box=box.SIMPLE_HEAD, title="Eclipses (umbral contacts, UTC; P1/P4 with --json and per site)",
                  pad_edge=False, padding=(0, 1))
    for col in ("#", "date", "kind", "mag.", "total", "U1", "U2", "greatest", "U3", "U4"):
        table.add_column(col, justify="right" if col not in ("date", "kind") else "left", no_wrap=True,
                         min_width=8 if col in ("U1", "U2", "greatest", "U3", "U4") else None)
    for e in data["eclipses"]:
        c = e["contacts_utc"]
        tot = e["durations_min"]["total"]
        table.add_row(
            "-" if e["rank"] is None else str(e["rank"]), e["date"], e["kind"], f"{e['umbral_magnitude']:.3f}",
            "" if tot is None else f"{tot:.0f} min", *(_fmt_time(c.get(k)) for k in ("U1", "U2")),
            _fmt_time(e["greatest_utc"]), *(_fmt_time(c.get(k)) for k in ("U3", "U4")),
        )
    out.print(table)
    for e in data["eclipses"]:
        if e["rank"] is None and not verbose:
            continue
        view = Table(box=box.SIMPLE_HEAD, title=f"{e['date']} {e['kind']}: Moon altitude (deg) / Sun altitude (deg) at each contact; * = timeable in darkness")
        view.add_column("site", no_wrap=True)
        names = [k for k in ("P1", "U1", "U2", "greatest", "U3", "U4", "P4") if k == "greatest" or k in e["contacts_utc"]]
        for k in names:
            view.add_column(k, justify="right", no_wrap=True)
        for sid, per in e["sites"].items():
            cells = []
            for k in names:
                x = per.get(k)
                if x is None:
                    cells.append("")
                    continue
                mark = "*" if x["timeable"] else " "
                cells.append(f"{x['moon_altitude_deg']:+.0f}/{x['sun_altitude_deg']:+.0f}{mark}")
            view.add_row(escape(sid), *cells)
        out.print(view)
        if e["excluded"]:
            out.print("  not ranked: " + "; ".join(e["excluded"]))
    left = [e for e in data["eclipses"] if e["rank"] is None]
    if left and not verbose:
        out.print(f"  {len(left)} eclipse(s) not ranked (penumbral, or no site can time a contact); --verbose shows them")
    if verbose:
        for a in data["assumptions"]:
            out.print(f"  - {a}")
    out.print("  A lunar eclipse is safe to watch with the naked eye or any instrument; never look at the Sun.")
