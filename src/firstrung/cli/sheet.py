"""``firstrung sheet`` (a day's field sheet for one site) and ``firstrung blank-sheets``."""

from __future__ import annotations

import importlib.util
import sys
from pathlib import Path
from typing import Annotated

from firstrung.cli.common import CampaignArgument, console, handles_errors, html_output
from firstrung.cli.direct import Option

PaperOption = Annotated[str, Option("--paper", help="Page size for printing: a4 or letter.")]


def register(app) -> None:
    """Add ``sheet`` and ``blank-sheets`` at the top level."""
    app.command("sheet")(handles_errors(sheet))
    app.command("blank-sheets")(handles_errors(blank_sheets))


def _paper(value: str) -> str:
    from firstrung.errors import InputError
    from firstrung.methods.shadows.sheet import PAPER_SIZES

    key = value.lower()
    if key not in PAPER_SIZES:
        raise InputError(f"--paper: expected a4 or letter, got {value!r}")
    return key


def sheet(
    campaign: CampaignArgument,
    site: Annotated[str, Option("--site", help="Site id from the campaign file.", show_default=False)],
    date: Annotated[str, Option("--date", help="Day of the readings (ISO 8601).", show_default=False)],
    output: Annotated[Path, Option("-o", "--output", help="HTML file to write.", show_default=False)],
    paper: PaperOption = "a4",
    blind: Annotated[bool, Option("--blind", help="Leave the predictions to be measured off the sheet.")] = False,
    kind: Annotated[str, Option("--kind", help="shadows (noon shadows), eclipse (a lunar eclipse night), phases (a half moon), transit (a transit of Mercury or Venus), parallax or cepheids (a night of star work).")] = "shadows",
) -> None:
    """A printable noon-shadow field sheet (one page) for one site and day, with the times to read.

    Refused on a day the Sun does not rise at noon; a warning when it is under 10° high.
    With --kind eclipse: the site's contacts in local time, the Moon's altitude, and craters to time;
    with --kind phases: the site's true half moon and its windows with Sun and Moon both up.
    """
    html_output(output)
    from rich.markup import escape

    from firstrung.campaign import read_campaign
    from firstrung.cli.common import parse_date
    from firstrung.errors import InputError
    from firstrung.methods import REGISTRY
    from firstrung.output import campaign_inputs, write_atomic

    kinds = {m.name: m for m in REGISTRY if importlib.util.find_spec(f"{m.package}.sheet") is not None}
    if kind not in kinds:
        raise InputError(f"--kind: expected {', '.join(kinds)}, got {kind!r}")
    c = read_campaign(campaign)
    html, warning = kinds[kind].module("sheet").site_sheet(c, site, parse_date("--date", date), _paper(paper), blind)
    write_atomic(output, html, inputs=campaign_inputs(c))
    if warning:
        print(f"firstrung: warning: {warning}", file=sys.stderr)
    console().print(f"field sheet written: {escape(str(output))}")


def blank_sheets(
    output: Annotated[Path, Option("-o", "--output", help="Folder for the blank sheets and CSV templates.")] = Path(
        "field_sheets"
    ),
    paper: PaperOption = "a4",
) -> None:
    """Blank field sheets (HTML) and CSV log templates for shadows, eclipse and half-moon work."""
    from rich.markup import escape

    from firstrung.methods.shadows.sheet import PAPER_SIZES, blank_field_kit
    from firstrung.output import make_folder, refuse_replacing_others, write_atomic

    files = blank_field_kit(_paper(paper))
    kits = [{name: text.encode("utf-8") for name, text in blank_field_kit(size).items()} for size in PAPER_SIZES]
    refuse_replacing_others((output / name for name in files),
                            lambda path, old: any(kit.get(path.name) == old for kit in kits),
                            "a blank sheet or template as firstrung writes it (filled in?)")
    make_folder(output)
    for name, text in files.items():
        write_atomic(output / name, text)
    console().print(f"{len(files)} files written to {escape(str(output))}")
