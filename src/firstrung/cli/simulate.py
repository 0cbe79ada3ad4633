"""``firstrung simulate ...``: synthetic logs with stated errors, for rehearsals and demos."""

from __future__ import annotations

from pathlib import Path
from typing import Annotated

import typer

from .common import CampaignArgument, console, handles_errors
from .plan_shadows import FromOption, ToOption, parse_date

OutputOption = Annotated[Path, typer.Option("-o", "--output", help="Folder for the log files.", show_default=False)]
SeedOption = Annotated[int, typer.Option("--seed", help="Seed of the random errors (same seed, same logs).")]

SHADOW_COLUMNS = ("site", "time_utc", "shadow_mm", "observer", "note")


def register(app: typer.Typer) -> None:
    """Add the ``simulate`` group at the top level."""
    group = typer.Typer(help="Write synthetic logs a campaign would produce, with its stated errors.",
                        no_args_is_help=True)
    group.command("shadows")(handles_errors(shadows))
    app.add_typer(group, name="simulate")


def shadows(
    campaign: CampaignArgument,
    date_from: FromOption,
    date_to: ToOption,
    output: OutputOption,
    seed: SeedOption = 1,
) -> None:
    """Shadow logs: every site with a gnomon, every 2 minutes around local apparent noon."""
    from ..campaign import read_campaign
    from ..errors import InputError
    from ..output import write_atomic
    from ..simulation import rows_to_csv, simulate_campaign_shadows

    c = read_campaign(campaign)
    first, last = parse_date("--from", date_from), parse_date("--to", date_to)
    if last < first:
        raise InputError(f"--to {last} is before --from {first}")
    rows = simulate_campaign_shadows(c, first, last, seed)
    if not rows:
        raise InputError("no site in the campaign has a [site.gnomon]", file=str(campaign))
    output.mkdir(parents=True, exist_ok=True)
    path = write_atomic(output / "shadows.csv", rows_to_csv(rows, SHADOW_COLUMNS),
                        inputs=[campaign, *c.logs.get("shadows", ())])
    console().print(f"{len(rows)} synthetic shadow readings written to {path}")
