"""``firstrung demo``: the bundled example campaign, end to end."""

from __future__ import annotations

from pathlib import Path
from typing import Annotated

from firstrung.cli.common import console, handles_errors, progress_bar
from firstrung.cli.direct import Option


def register(app) -> None:
    app.command("demo")(handles_errors(demo))


def demo(
    output: Annotated[Path, Option("-o", "--output", help="Folder for the demo's campaign, logs and results.")] = Path(
        "firstrung-demo"
    ),
) -> None:
    """Simulate an invented campaign's logs, check them, reduce every rung, chain the ladder, write the report."""
    from rich.markup import escape

    from firstrung.app.demo import run_demo
    from firstrung.cli.ladder import _render
    from firstrung.errors import InputError

    if output.exists() and not output.is_dir():
        raise InputError(f"-o: {output} exists and is not a folder")
    steps = ["simulating the observers' logs", "checking the logs, reducing every rung, chaining the ladder",
             "writing the report"]
    with progress_bar() as bar:
        task = bar.add_task(steps[0], total=len(steps))

        def step(name):
            bar.update(task, description=name, completed=steps.index(name))

        run = run_demo(output, progress=step)
        bar.update(task, completed=len(steps))
    _render(run.ladder)
    out = console()
    out.print(f"  check flagged {run.check_flags} rows (see {escape(str(run.files['check']))}); rows flagged as errors "
              "were left out")
    out.print(f"  campaign and logs: {escape(str(run.files['campaign']))} and {escape(str(run.folder / 'logs'))}")
    out.print(f"  report: {escape(str(run.files['report']))}")
