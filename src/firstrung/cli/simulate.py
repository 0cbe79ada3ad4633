"""``firstrung simulate ...``: synthetic logs with stated errors, for rehearsals and demos."""

from __future__ import annotations

from pathlib import Path
from typing import Annotated

import typer

from .common import CampaignArgument, console, handles_errors
from .plan_shadows import FromOption, ToOption, parse_date

OutputOption = Annotated[Path, typer.Option("-o", "--output", help="Folder for the log file.", show_default=False)]
SeedOption = Annotated[int, typer.Option("--seed", help="Seed of the random errors (same seed, same logs).")]


def register(app: typer.Typer) -> None:
    """Add the ``simulate`` group at the top level."""
    group = typer.Typer(help="Write synthetic logs a campaign would produce, with its stated errors.",
                        no_args_is_help=True)
    group.command("shadows")(handles_errors(shadows))
    group.command("eclipse")(handles_errors(eclipse))
    group.command("phases")(handles_errors(phases))
    app.add_typer(group, name="simulate")


def _write(campaign, kind: str, rows, columns, output: Path, what: str) -> None:
    from ..campaign import read_campaign
    from ..errors import InputError
    from ..output import write_atomic
    from ..simulation import rows_to_csv

    if not rows:
        raise InputError(f"nothing to simulate: no {what} in that range at the campaign's sites", file=str(campaign))
    c = read_campaign(campaign)
    inputs = [campaign, *[p for paths in c.logs.values() for p in paths]]
    if output.exists() and not output.is_dir():
        raise InputError(f"-o: {output} exists and is not a folder")
    output.mkdir(parents=True, exist_ok=True)
    path = write_atomic(output / f"{kind}.csv", rows_to_csv(rows, columns), inputs=inputs)
    console().print(f"{len(rows)} synthetic {what} written to {path}")


def _range(date_from: str, date_to: str) -> tuple[str, str]:
    from ..errors import InputError

    first, last = parse_date("--from", date_from), parse_date("--to", date_to)
    if last < first:
        raise InputError(f"--to {last} is before --from {first}")
    return first, last


def shadows(
    campaign: CampaignArgument,
    date_from: FromOption,
    date_to: ToOption,
    output: OutputOption,
    seed: SeedOption = 1,
    blunders: Annotated[
        str | None,
        typer.Option("--blunders", help="Mistakes to inject, comma-separated: clock, unit, longitude, edge, wild, "
                     "duplicate (or 'all')."),
    ] = None,
) -> None:
    """Shadow logs: every site with a gnomon, every 2 minutes around local apparent noon."""
    from ..campaign import read_campaign
    from ..rehearsal import SHADOW_BLUNDERS, SHADOW_COLUMNS, shadow_rows

    first, last = _range(date_from, date_to)
    chosen = () if not blunders else (
        tuple(SHADOW_BLUNDERS) if blunders.strip() == "all" else tuple(b.strip() for b in blunders.split(",") if b.strip())
    )
    rows = shadow_rows(read_campaign(campaign), first, last, seed, chosen)
    _write(campaign, "shadows", rows, SHADOW_COLUMNS, output, "shadow readings")
    for b in chosen:
        console().print(f"  blunder injected: {SHADOW_BLUNDERS[b]}")


def eclipse(
    campaign: CampaignArgument,
    date_from: FromOption,
    date_to: ToOption,
    output: OutputOption,
    seed: SeedOption = 1,
    observers: Annotated[int, typer.Option("--observers", min=1, help="Observers timing at each site.")] = 2,
) -> None:
    """Eclipse logs: umbral contacts and crater timings of every eclipse each site can time in the dark."""
    from ..campaign import read_campaign
    from ..rehearsal import ECLIPSE_COLUMNS, eclipse_rows

    first, last = _range(date_from, date_to)
    rows = eclipse_rows(read_campaign(campaign), first, last, seed, observers_per_site=observers)
    _write(campaign, "eclipse", rows, ECLIPSE_COLUMNS, output, "eclipse timings")


def phases(
    campaign: CampaignArgument,
    date_from: FromOption,
    date_to: ToOption,
    output: OutputOption,
    seed: SeedOption = 1,
) -> None:
    """Half-moon logs: timings by eye, measured Sun-Moon angles and photo series of the lit fraction."""
    from ..campaign import read_campaign
    from ..rehearsal import PHASE_COLUMNS, phase_rows

    first, last = _range(date_from, date_to)
    rows = phase_rows(read_campaign(campaign), first, last, seed)
    _write(campaign, "phases", rows, PHASE_COLUMNS, output, "half-moon rows")
