"""``firstrung check``: every log of a campaign against the ephemeris, before any reduction."""

from __future__ import annotations

from pathlib import Path
from typing import Annotated

import typer

from firstrung.cli.common import (
    CampaignArgument,
    JsonOption,
    VerboseOption,
    console,
    handles_errors,
    print_json,
)
from firstrung.numbers import plural


def register(app: typer.Typer) -> None:
    """Add ``check`` at the top level."""
    app.command("check")(handles_errors(check))


def check(
    campaign: CampaignArgument,
    json_output: JsonOption = False,
    verbose: VerboseOption = False,
    accepted: Annotated[
        Path | None,
        typer.Option(
            "--accepted",
            help="Also write a copy of every row read, with a status column (accepted, "
            "accepted-with-warning, rejected) and its flag codes, to this CSV file. The logs are never changed.",
            show_default=False,
            metavar="FILE",
        ),
    ] = None,
) -> None:
    """Check every log of a campaign and name the rows that look wrong, with the fix to ask for.

    Exit status 0 when nothing is flagged, 1 when rows are flagged, 2 when the
    campaign cannot be read.
    """
    from firstrung.app.check import run_check, status_csv
    from firstrung.app.check_json import check_run_to_json
    from firstrung.output import campaign_inputs, write_atomic

    run = run_check(campaign)
    if accepted is not None:
        write_atomic(accepted, status_csv(run), inputs=[*campaign_inputs(run.campaign), *run.inputs()])
    data = check_run_to_json(run)
    if json_output:
        print_json(data)
    else:
        render_check(data, verbose, accepted)
    if run.flags:
        raise typer.Exit(1)


def render_check(data: dict, verbose: bool, accepted: Path | None) -> None:
    """Rich tables: the flags grouped by site, then rows read, accepted and flagged per site and observer."""
    from rich import box
    from rich.markup import escape
    from rich.table import Table

    out = console()
    rows = data["rows"]
    out.print(f"[bold]{escape(data['campaign'])}[/bold]: check of the {', '.join(data['checked'])} logs")
    flags = data["flags"]
    by_site: dict[str, list[dict]] = {}
    for f in flags:
        by_site.setdefault(f["site"] or "(no site)", []).append(f)
    for site, items in by_site.items():
        table = Table(title=f"Site {escape(site)}: {len(items)} flag{'s' if len(items) != 1 else ''}",
                      box=box.SIMPLE_HEAD, title_justify="left")
        table.add_column("file:row", no_wrap=True)
        table.add_column("code", no_wrap=True)
        table.add_column("severity", no_wrap=True)
        table.add_column("diagnosis and fix")
        for f in _collapsed(items, verbose):
            where = f["file"] + (f":{f['row']}" if f["row"] is not None else "")
            table.add_row(escape(where), f["code"], f["severity"], escape(f["message"]) + "\n  fix: " + escape(f["fix"]))
        out.print(table)
    summary = Table(title="Rows per site and observer", box=box.SIMPLE_HEAD, title_justify="left")
    for col in ("site", "observer", "read", "accepted", "flagged", "errors", "warnings"):
        summary.add_column(col, justify="left" if col in ("site", "observer") else "right")
    shown, hidden, hidden_flagged = _summary_shown(data["summary"], verbose)
    for s in shown:
        summary.add_row(escape(s["site"] or "(none)"), escape(s["observer"] or "(all)"), str(s["read"]),
                        str(s["accepted"]), str(s["flagged"]), str(s["errors"]), str(s["warnings"]))
    out.print(summary)
    if hidden:
        quiet = "" if hidden_flagged else ", none flagged"
        out.print(f"  {hidden} more site{'s' if hidden != 1 else ''} not shown{quiet} (--verbose or --json shows all)")
    counts = data["counts"]
    out.print(
        f"  {plural(rows['read'], 'row')} read, {rows['accepted']:,} accepted, {rows['flagged']:,} flagged "
        f"({plural(counts['errors'], 'error')}, {plural(counts['warnings'], 'warning')}); reductions leave out "
        f"the {plural(rows['rejected'], 'row')} with errors unless --include-flagged is given"
    )
    if verbose:
        out.print(f"  statistic: {data['statistic']}")
        for s in data["series"]:
            out.print(
                f"  {escape(s['site'])} {s['date']} ({escape(s['file'])}, {s['rows']} rows): {s['verdict']}; "
                f"statistic as logged {s['statistic_logged']:.1f}, level {s['level_arcmin']:+.1f}' "
                f"({s['level_sigma']:+.1f} sigma)"
                + (f"; best explanation {s['best_explanation']} ({s['statistic_best']:.1f})" if s["best_explanation"] else "")
            )
    if accepted is not None:
        out.print(f"  wrote {escape(str(accepted))} (every row with its status)")


#: Rows of the per-site summary shown without --verbose.
SUMMARY_ROWS_SHOWN = 40


def _summary_shown(rows: list[dict], verbose: bool) -> tuple[list[dict], int, int]:
    """The summary rows shown, the sites left out and how many of those have flags.

    Every row with --verbose or when they fit in :data:`SUMMARY_ROWS_SHOWN`;
    otherwise the sites with flags (each with its observers), as many as fit.
    """
    if verbose or len(rows) <= SUMMARY_ROWS_SHOWN:
        return rows, 0, 0
    by_site: dict[str | None, list[dict]] = {}
    for r in rows:
        by_site.setdefault(r["site"], []).append(r)
    shown: list[dict] = []
    hidden = hidden_flagged = 0
    for site_rows in by_site.values():
        flagged = any(r["flagged"] for r in site_rows)
        if flagged and len(shown) + len(site_rows) <= SUMMARY_ROWS_SHOWN:
            shown.extend(site_rows)
        else:
            hidden += 1
            hidden_flagged += flagged
    return shown, hidden, hidden_flagged


def _collapsed(items: list[dict], verbose: bool) -> list[dict]:
    """Consecutive rows with the same code and message shown once (``file:first-last``) unless verbose."""
    if verbose:
        return items
    out: list[dict] = []
    open_runs: dict[tuple, dict] = {}  # per (file, code, message): the run that the next row may extend
    for f in items:
        key = (f["file"], f["code"], f["message"])
        last = open_runs.get(key)
        if last is not None and f["row"] is not None and last["_last"] is not None and f["row"] == last["_last"] + 1:
            last["_last"] = f["row"]
            continue
        run = {**f, "_last": f["row"]}
        out.append(run)
        open_runs[key] = run
    for f in out:
        if f["row"] is not None and f["_last"] != f["row"]:
            f["row"] = f"{f['row']}-{f['_last']}"
    return out
