"""``firstrung ladder``: chain the measured rungs into distances and sizes."""

from __future__ import annotations

from typing import Annotated

from firstrung.cli.common import (
    CampaignArgument,
    JsonOption,
    console,
    handles_errors,
    print_json,
    report_problems,
)
from firstrung.cli.direct import Option


def register(app) -> None:
    app.command("ladder")(handles_errors(ladder))


def ladder(
    campaign: CampaignArgument,
    samples: Annotated[int, Option("--samples", min=1000, help="Monte Carlo draws.")] = 100_000,
    seed: Annotated[int, Option("--seed", help="Seed of the draws (same seed, same result).")] = 1,
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
        raise SystemExit(2)


LABELS = {
    "earth_radius_km": "Earth's radius",
    "moon_distance_km": "Moon's distance",
    "sun_distance_km": "Sun's distance",
    "sun_distance_au": "Sun's distance",
    "moon_diameter_km": "Moon's diameter",
    "sun_diameter_km": "Sun's diameter",
}


def format_value(m: dict | None, unit: str, space: str = "") -> tuple[str, str]:
    """'value' and '68 % interval' cells, rounded to what the interval supports."""
    from firstrung.numbers import rounded

    if m is None:
        return "not measured", ""
    if m["value"] is None or m["low"] is None:  # only a bound (a half moon's elongation may reach 90 deg)
        def bound(x):
            return rounded(x, x * 0.5, x * 2.0, space=space)[0]
        low = "no lower bound" if m["low"] is None else bound(m["low"])
        high = "no upper bound" if m["high"] is None else bound(m["high"])
        if m["value"] is None:
            return ("unbounded" if m["low"] is None else f">{low}"), f"{low} to {high}"
        return bound(m["value"]), f"{low} to {high}"
    return rounded(m["value"], m["low"], m["high"], space=space)


def format_modern(row: dict, space: str = "") -> str:
    """The value compared with, to the measured value's precision (or four figures)."""
    from firstrung.numbers import rounded

    m = row["measured"]
    if m is None:
        return rounded(row["modern"], row["modern"] * 0.9999, row["modern"] * 1.0001, space=space)[0]
    if m["value"] is None or m["low"] is None:
        return rounded(row["modern"], row["modern"] * 0.5, row["modern"] * 2.0, space=space)[0]
    return rounded(row["modern"], row["modern"] - abs(m["value"] - m["low"]),
                   row["modern"] + abs(m["value"] - m["low"]), space=space)[0]


def _render(data: dict) -> None:
    from rich import box
    from rich.markup import escape
    from rich.table import Table

    out = console()
    out.print(f"[bold]{escape(data['campaign'])}[/bold]: the distance ladder ({data['samples']:,} Monte Carlo draws, seed {data['seed']})")
    t = Table(box=box.SIMPLE_HEAD)
    rows = []
    for row in data["comparison"]:
        value, interval = format_value(row["measured"], row["unit"])
        rows.append((
            f"{LABELS[row['quantity']]} ({row['unit']})", value, interval, format_modern(row),
            "" if row["ratio_to_modern"] is None else f"{row['ratio_to_modern']:.3f}",
            "" if row["z_score"] is None else f"{row['z_score']:+.1f}",
        ))
    # a quantity's unit wraps below its name; a measured value and a closed interval never wrap
    # (an open one, "x to no upper bound", at its words)
    closed = max((len(r[2]) for r in rows if "no upper" not in r[2]), default=0)
    widths = {"quantity": len("Sun's distance"), "measured": None, "68 % interval": closed}
    for col, just in (("quantity", "left"), ("measured", "right"), ("68 % interval", "right"),
                      ("compared with", "right"), ("ratio", "right"), ("sigma apart", "right")):
        t.add_column(col, justify=just, no_wrap=col == "measured", min_width=widths.get(col))
    for r in rows:
        t.add_row(*r)
    out.print(t)
    out.print("  compared with: the value a perfect measurement of this campaign gives; ratio: measured / that value")
    said = set()
    for row in data["comparison"]:
        # the Sun's distance in au is compared with the same value as in km: said once
        source = row["modern_source"].removesuffix(", in au")
        if row["measured"] is not None and source not in said:
            said.add(source)
            out.print(f"  {LABELS[row['quantity']]}: {row['modern_source']}")
    for row in data["comparison"]:
        if row["note"]:
            out.print(f"  {LABELS[row['quantity']]} ({row['unit']}): {row['note']}")
    if data.get("stars"):
        _render_stars(data["stars"])


def _render_stars(stars: list[dict]) -> None:
    """The parsec rung: each star's distance, and which steps the campaign measured."""
    from rich import box
    from rich.markup import escape
    from rich.table import Table

    out = console()
    t = Table(box=box.SIMPLE_HEAD, title="The parsec rung: the stars")
    for col, just in (("star", "left"), ("by", "left"), ("distance (pc)", "right"), ("68 % interval", "right"),
                      ("catalogue (pc)", "right"), ("sigma apart", "right")):
        t.add_column(col, justify=just, no_wrap=just == "right")  # a name wraps, a number never
    for s in stars:
        d = s["distance_pc"]
        high = "no upper bound" if d["high"] is None else f"{d['high']:.1f}"
        t.add_row(escape(s["name"]), s["method"], "lower bound" if d["value"] is None else f"{d['value']:.1f}",
                  f"{d['low']:.1f} to {high}",
                  "" if s["modern_pc"] is None else f"{s['modern_pc']:.1f}",
                  "" if s["z_score"] is None else f"{s['z_score']:+.1f}")
    out.print(t)
    for s in stars:
        steps = "; ".join(f"{x['step']}: {x['source']}" for x in s["steps"])
        out.print(f"  {escape(s['name'])}: {escape(steps)}")
