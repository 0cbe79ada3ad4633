"""``firstrung ladder``: chain the measured rungs into distances and sizes."""

from __future__ import annotations

from typing import Annotated

import typer

from firstrung.cli.common import (
    CampaignArgument,
    JsonOption,
    console,
    handles_errors,
    print_json,
    report_problems,
)


def register(app: typer.Typer) -> None:
    app.command("ladder")(handles_errors(ladder))


def ladder(
    campaign: CampaignArgument,
    samples: Annotated[int, typer.Option("--samples", min=1000, help="Monte Carlo draws.")] = 100_000,
    seed: Annotated[int, typer.Option("--seed", help="Seed of the draws (same seed, same result).")] = 1,
    json_output: JsonOption = False,
) -> None:
    """Earth's radius -> the Moon's distance -> the Sun's distance -> the sizes of Moon and Sun.

    A rung with no data is shown as not measured. Exit status 2 when any row
    was refused (the result from the good rows is still shown).
    """
    from firstrung.app.ladder_json import ladder_to_json
    from firstrung.app.ladder_run import run_ladder

    run = run_ladder(campaign, samples=samples, seed=seed)
    data = ladder_to_json(run)
    if json_output:
        print_json(data)
    else:
        _render(data)
    report_problems(run.problems)
    if run.problems:
        raise typer.Exit(2)


LABELS = {
    "earth_radius_km": "Earth's radius",
    "moon_distance_km": "Moon's distance",
    "sun_distance_km": "Sun's distance",
    "sun_distance_au": "Sun's distance",
    "moon_diameter_km": "Moon's diameter",
    "sun_diameter_km": "Sun's diameter",
}


def format_value(m: dict | None, unit: str) -> tuple[str, str]:
    """'value' and '68 % interval' cells, with sensible digits."""
    if m is None:
        return "not measured", ""
    digits = 3 if unit == "au" else 0
    high = "no upper bound" if m["high"] is None else f"{m['high']:,.{digits}f}"
    low = "no lower bound" if m["low"] is None else f"{m['low']:,.{digits}f}"
    if m["value"] is None:  # only a bound (a half moon's elongation that may reach 90 deg)
        value = "unbounded" if m["low"] is None else f"> {m['low']:,.{digits}f}"
        return value, f"{low} to {high}"
    return f"{m['value']:,.{digits}f}", f"{low} to {high}"


def _render(data: dict) -> None:
    from rich import box
    from rich.markup import escape
    from rich.table import Table

    out = console()
    out.print(f"[bold]{escape(data['campaign'])}[/bold]: the distance ladder ({data['samples']:,} Monte Carlo draws, seed {data['seed']})")
    t = Table(box=box.SIMPLE_HEAD, pad_edge=False, padding=(0, 1), collapse_padding=True, show_edge=False)
    # numbers are never cut: their columns do not wrap; the names and the interval wrap at spaces
    for col, just, wrap in (("quantity", "left", True), ("measured", "right", False), ("68 % interval", "right", True),
                            ("unit", "left", False), ("modern", "right", False), ("measured/\nmodern", "right", False),
                            ("sigma\napart", "right", False)):
        t.add_column(col, justify=just, no_wrap=not wrap, min_width=11 if col == "68 % interval" else None)
    for row in data["comparison"]:
        value, interval = format_value(row["measured"], row["unit"])
        modern = f"{row['modern']:,.3f}" if row["unit"] == "au" else f"{row['modern']:,.0f}"
        t.add_row(
            LABELS[row["quantity"]], value, interval, row["unit"], modern,
            "" if row["ratio_to_modern"] is None else f"{row['ratio_to_modern']:.3f}",
            "" if row["z_score"] is None else f"{row['z_score']:+.1f}",
        )
    out.print(t)
    for row in data["comparison"]:
        if row["note"]:
            out.print(f"  {LABELS[row['quantity']]} ({row['unit']}): {row['note']}")
