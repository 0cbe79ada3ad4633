"""``firstrung report``: the document for participants and funders."""

from __future__ import annotations

from pathlib import Path
from typing import Annotated

from firstrung.cli.common import (
    CampaignArgument,
    console,
    handles_errors,
    html_output,
    progress_bar,
    report_problems,
)
from firstrung.cli.direct import Option


def register(app) -> None:
    app.command("report")(handles_errors(report))


def report(
    campaign: CampaignArgument,
    output: Annotated[Path, Option("-o", "--output", help="Report file to write (.html, or .md with --markdown).",
                                         show_default=False)],
    markdown: Annotated[bool, Option("--markdown", help="Write Markdown with PNG figures beside it instead of one HTML file.")] = False,
    samples: Annotated[int, Option("--samples", min=1000, help="Monte Carlo draws of the ladder.")] = 100_000,
    seed: Annotated[int, Option("--seed", help="Seed of the draws (same seed, same report).")] = 1,
) -> None:
    """Write the campaign report: the ladder, each rung's data, fits and error budget, data quality, cautions."""
    from rich.markup import escape

    from firstrung.app.report import build_report, render_html, render_markdown
    from firstrung.campaign import read_campaign
    from firstrung.output import campaign_inputs, refuse_overwriting_inputs, write_atomic

    html_output(output, suffix=".md" if markdown else ".html")
    camp = read_campaign(campaign)
    inputs = campaign_inputs(camp)
    refuse_overwriting_inputs(output, inputs)
    steps = ["reducing the campaign's logs", "chaining the ladder", "drawing the shadow fits", "checking the logs",
             "drawing the eclipse", "drawing the half moon", "drawing the transit's chords",
             "drawing the parallax ellipses", "drawing the light curves", "writing"]
    with progress_bar() as bar:
        task = bar.add_task("report", total=len(steps))

        def step(name):
            bar.update(task, description=name, completed=steps.index(name) if name in steps else None)

        rep = build_report(campaign, samples=samples, seed=seed, progress=step)
        step("writing")
        if markdown:
            prefix = output.stem + "-"
            text, images = render_markdown(rep, prefix)
            for name in images:
                refuse_overwriting_inputs(output.parent / name, inputs)
            for name, data in images.items():
                write_atomic(output.parent / name, data, inputs=inputs)
            write_atomic(output, text, inputs=inputs)
        else:
            write_atomic(output, render_html(rep), inputs=inputs)
        bar.update(task, completed=len(steps))
    console().print(f"report written: {escape(str(output))}")
    report_problems(())
