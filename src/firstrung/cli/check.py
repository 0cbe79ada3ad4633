"""``firstrung check``: every log of a campaign against the ephemeris, before any reduction."""

from __future__ import annotations

from pathlib import Path
from typing import Annotated

from firstrung.cli.common import (
    CampaignArgument,
    JsonOption,
    VerboseOption,
    console,
    handles_errors,
    print_json,
)
from firstrung.cli.direct import Option
from firstrung.numbers import plural


def register(app) -> None:
    """Add ``check`` at the top level."""
    app.command("check")(handles_errors(check))


def check(
    campaign: CampaignArgument,
    json_output: JsonOption = False,
    verbose: VerboseOption = False,
    accepted: Annotated[
        Path | None,
        Option(
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
        raise SystemExit(1)


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
    if not verbose and len(by_site) > FLAGGED_SITES_SHOWN:
        _flag_digest(out, flags, len(by_site))
        by_site = {}
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
#: Sites whose flags are shown one section each without --verbose; more are summed up (:func:`_flag_digest`).
FLAGGED_SITES_SHOWN = 12
#: Rows shown as the worst ones when the flags are summed up.
WORST_ROWS_SHOWN = 10


def worst_rows(flags: list[dict], count: int = WORST_ROWS_SHOWN) -> list[list[dict]]:
    """The ``count`` worst flagged rows, each as its list of flags: rows with an error first, then the
    largest deviation in sigma (an outlier's ``sigma``), then rows with more flags, then file order.

    >>> f = [{"file": "a", "row": 1, "severity": "warning"}, {"file": "a", "row": 2, "severity": "error"},
    ...      {"file": "a", "row": 3, "severity": "error", "sigma": 9.0}]
    >>> [r[0]["row"] for r in worst_rows(f, 2)]
    [3, 2]
    """
    rows: dict[tuple, list[dict]] = {}
    for f in flags:
        rows.setdefault((f["file"], f["row"]), []).append(f)
    order = sorted(enumerate(rows.values()), key=lambda item: (
        not any(f["severity"] == "error" for f in item[1]),
        -max((abs(f.get("sigma") or 0.0) for f in item[1]), default=0.0), -len(item[1]), item[0]))
    return [items for _, items in order[:count]]


def _flag_digest(out, flags: list[dict], sites: int) -> None:
    """Many flagged sites: the count of each code (errors, warnings, sites) and the worst rows, not a
    section per site (--verbose gives those; --json lists every flag)."""
    from rich import box
    from rich.markup import escape
    from rich.table import Table

    codes: dict[str, dict] = {}
    for f in flags:
        c = codes.setdefault(f["code"], {"error": 0, "warning": 0, "sites": set()})
        c[f["severity"]] = c.get(f["severity"], 0) + 1
        c["sites"].add(f["site"])
    table = Table(title=f"Flags by code: {plural(len(flags), 'flag')} at {plural(sites, 'site')}",
                  box=box.SIMPLE_HEAD, title_justify="left")
    for col in ("code", "errors", "warnings", "sites"):
        table.add_column(col, justify="left" if col == "code" else "right", no_wrap=True)
    for code, c in sorted(codes.items(), key=lambda kv: (-kv[1]["error"], -kv[1]["warning"], kv[0])):
        table.add_row(code, f"{c['error']:,}", f"{c['warning']:,}", f"{len(c['sites']):,}")
    out.print(table)
    worst = worst_rows(flags)
    table = Table(title=f"The {len(worst)} worst rows (errors first, the farthest off in sigma first)",
                  box=box.SIMPLE_HEAD, title_justify="left")
    table.add_column("file:row", no_wrap=True)
    table.add_column("codes (errors first) and the first one's diagnosis")
    for items in worst:
        items = sorted(items, key=lambda f: f["severity"] != "error")  # stable: the check's order otherwise
        where = items[0]["file"] + (f":{items[0]['row']}" if items[0]["row"] is not None else "")
        table.add_row(escape(where), ", ".join(f"{f['code']} ({f['severity']})" for f in items) + "\n"
                      + escape(items[0]["message"]))
    out.print(table)
    out.print(f"  {plural(sites, 'site')} with flags: --verbose shows each site's flags, --json lists every "
              "flag, --accepted FILE writes every row with its status")


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
