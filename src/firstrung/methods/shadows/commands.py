"""``firstrung plan|reduce|simulate shadows``: the shadows method's commands and their tables."""

from __future__ import annotations

import sys
from pathlib import Path
from typing import Annotated

from firstrung.cli.common import (
    CalendarSiteOption,
    CampaignArgument,
    FromOption,
    IncludeFlaggedOption,
    JsonOption,
    OutputOption,
    SeedOption,
    ToOption,
    VerboseOption,
    check_site_id,
    console,
    parse_date,
    parse_dates,
    parse_weekdays,
    print_json,
    registers,
    report_left_out,
    report_problems,
    simulation_range,
    terminal_text,
    write_simulated,
)
from firstrung.cli.direct import Option
from firstrung.numbers import plural


def plan_shadows(
    campaign: CampaignArgument,
    date_from: FromOption,
    date_to: ToOption,
    min_altitude_deg: Annotated[
        float, Option("--min-altitude-deg", "--min-altitude", help="Lowest noon altitude of the Sun allowed at any site [deg].")
    ] = 20.0,
    max_shadow_m: Annotated[
        float | None, Option("--max-shadow-m", "--max-shadow", help="Length of the board: longer shadows rule a day out [m].")
    ] = None,
    weekdays: Annotated[
        str | None, Option("--weekdays", help="Days of the week allowed, e.g. 'mon-fri' or 'tue,thu'.")
    ] = None,
    exclude: Annotated[
        list[str] | None, Option("--exclude", help="Dates ruled out (repeat, or separate with commas).")
    ] = None,
    top: Annotated[int, Option("--top", min=1, help="How many of the best days to show and export.")] = 10,
    ics: Annotated[
        Path | None, Option("--ics", help="Write the best days (--top) to this calendar file (RFC 5545).")
    ] = None,
    site: CalendarSiteOption = None,
    json_output: JsonOption = False,
    sites_csv: Annotated[
        Path | None, Option("--sites-csv", help="Write every site's noon, altitude and shadow on the best "
                                  "days (--top) to this CSV file (for many sites the table sums them up).")
    ] = None,
) -> None:
    """Rank the days of a range by the precision of the Earth's radius they allow.

    Every day is listed in --json; a day that breaks a constraint has rank
    null and the reasons.
    """
    from firstrung.methods.shadows.plan import (
        SOLAR_CAUTION,
        calendar_bytes,
        chosen_days,
        run_plan_shadows,
    )
    from firstrung.methods.shadows.prediction import ShadowConstraints
    from firstrung.methods.shadows.present_plan import shadow_plan_to_json
    from firstrung.output import campaign_inputs, write_atomic

    constraints = ShadowConstraints(
        min_altitude_deg=min_altitude_deg,
        max_shadow_m=max_shadow_m,
        weekdays=parse_weekdays(weekdays),
        excluded_dates=parse_dates(exclude or []),
    )
    run = run_plan_shadows(campaign, parse_date("--from", date_from), parse_date("--to", date_to), constraints)
    days = chosen_days(run.plan, top)
    if ics is not None:
        check_site_id(run.campaign, site)
        write_atomic(ics, calendar_bytes(run, days, site), inputs=campaign_inputs(run.campaign))
    if sites_csv is not None:
        from firstrung.methods.shadows.plan_network import sites_csv as site_rows

        write_atomic(sites_csv, site_rows(run.plan, days).encode("utf-8"), inputs=campaign_inputs(run.campaign))
    if json_output:  # the JSON of every day and site only when it is printed
        print_json(shadow_plan_to_json(run))
        return
    _render(run, days, SOLAR_CAUTION, ics, site, sites_csv)


def _render(run, days, caution: str, ics, site=None, sites_csv=None) -> None:
    from rich import box
    from rich.markup import escape
    from rich.table import Table

    from firstrung.jsonout import number
    from firstrung.methods.shadows.present_plan import site_day

    out = console()
    plan = run.plan
    n_ranked = int((plan.rank > 0).sum())
    out.print(
        f"[bold]{escape(run.campaign.name)}[/bold]: noon shadows, {plan.dates[0]} to {plan.dates[-1]}; "
        f"{n_ranked} of {len(plan.dates)} days work at every site"
    )
    out.print(f"  a perfect measurement at these sites gives {number(plan.expected_radius_km, 3):,.1f} km")
    if run.skipped_sites:
        out.print(f"  sites without a gnomon, left out: {', '.join(run.skipped_sites)}")
    table = Table(title=f"Best days (of {n_ranked})", box=box.SIMPLE_HEAD)
    table.keep_columns = 2  # rank and date head every part of a split table
    table.add_column("rank", justify="right")
    table.add_column("date")
    table.add_column("sigma R (km)", justify="right")
    from firstrung.methods.shadows.plan_network import (
        SITE_COLUMNS_SHOWN,
        summary_columns,
        summary_note,
        zero_shadow_days,
    )

    many = len(plan.sites) > SITE_COLUMNS_SHOWN  # many sites: a summary per day, every site in --sites-csv
    # up to a few sites, a column each (the terminal's tables split a table too wide, never drop)
    for s in () if many else plan.sites:
        table.add_column(f"{escape(s.id)}\nnoon alt shadow(m)")
    if many:
        for col in ("noon alt (deg)", "shadow (m)", "noon (UTC)"):
            table.add_column(col, justify="right")
    table.add_column("note")
    table.caption = "noon: local apparent noon (site's zone, or Z for UTC); alt: Sun's refracted altitude (deg); N/S: shadow direction"
    if many:
        table.caption = f"the range over the {len(plan.sites)} sites; alt: the Sun's refracted altitude at noon"
    for k in days:
        row = [str(plan.rank[k]), str(plan.dates[k]), f"{plan.sigma_radius_km[k]:.0f}"]
        if many:
            row.extend(summary_columns(plan, k))
        for j, _s in enumerate(() if many else plan.sites):
            d = site_day(plan, k, j)
            clock = (d["transit_local"] or d["transit_utc"])[11:16]
            zone = "" if d["transit_local"] else "Z"
            row.append(f"{clock}{zone} {d['altitude_deg']:.1f} {d['shadow_m']:.2f}{d['shadow_direction'][0].upper()}")
        row.append(", ".join(plan.special[k]) if not many else summary_note(plan.special[k]))
        table.add_row(*row)
    out.print(table)
    reasons = plan.excluded.kinds()  # days, not site-days: a day too low at three sites is one day
    if reasons:
        n_out = int(plan.excluded.any.sum())
        out.print(f"  days ruled out: {n_out} of {len(plan.dates)} (a day may have several reasons)")
        for k, v in sorted(reasons.items()):
            out.print(f"    {k}: {v} {'day' if v == 1 else 'days'}")
    if many:
        out.print(f"  {len(plan.sites)} sites: the table sums them up; "
                  + (f"every site's noon is in {escape(str(sites_csv))}" if sites_csv is not None
                     else "--sites-csv FILE writes every site's noon, --json gives them all"))
    zeniths = zero_shadow_days(plan)
    if zeniths:
        shown = ", ".join(f"{escape(z['site'])} {z['date']} {(z['transit_local'] or z['transit_utc'])[11:16]}"
                          f"{'' if z['transit_local'] else 'Z'}" for z in zeniths[:6])
        more = f" and {len(zeniths) - 6} more (--json)" if len(zeniths) > 6 else ""
        out.print(f"  zero-shadow days (the Sun at the zenith at noon): {shown}{more}")
    if ics is not None:
        out.print(f"  calendar written: {escape(str(ics))} ({plural(len(days), 'day')} x "
                  f"{plural(1 if site else len(plan.sites), 'site')})")
    out.print(f"  Caution: {caution}")


def reduce_shadows(
    campaign: CampaignArgument,
    json_output: JsonOption = False,
    verbose: VerboseOption = False,
    monte_carlo: Annotated[
        int,
        Option(
            "--samples",
            min=0,
            help="Monte Carlo draws: also redo the reduction this many times with every input drawn from its "
            "errors, and show the spread beside the linear sigma (0: off).",
        ),
    ] = 0,
    monte_carlo_old: Annotated[int | None, Option("--monte-carlo", min=0, hidden=True)] = None,
    seed: Annotated[int, Option("--seed", help="Seed of the Monte Carlo draws.")] = 1,
    include_flagged: IncludeFlaggedOption = False,
    school_sheets: Annotated[
        Path | None, Option("--school-sheets", help="Also write every site's result sheet (one printable "
                                  "page per site: its reading, its result, its partners, the network's) as HTML.")
    ] = None,
) -> None:
    """The Earth's radius from noon gnomon shadows at two or more sites.

    Exit status 2 when any row or file was refused (the result from the good
    rows is still shown).
    """
    from firstrung.methods.shadows.present import shadow_run_to_json
    from firstrung.methods.shadows.run import run_shadows

    run = run_shadows(campaign, include_flagged=include_flagged)
    # the terminal shows the pairs' summary only, and the days of the sites it shows
    data = shadow_run_to_json(run, pairs="as-written" if json_output else False, lazy_days=not json_output)
    if school_sheets is not None:
        from firstrung.methods.shadows.commands_network import write_school_sheets

        write_school_sheets(run, school_sheets)
    monte_carlo = monte_carlo_old if monte_carlo_old is not None and not monte_carlo else monte_carlo
    if monte_carlo:
        from firstrung.methods.shadows.reduction import monte_carlo_radius
        from firstrung.methods.shadows.run import baseline_inputs, site_inputs
        from firstrung.uncertainty import interval_from_samples

        readings = run.readings
        samples = monte_carlo_radius(
            site_inputs(run.campaign), readings, baseline_inputs(run.campaign), samples=monte_carlo, seed=seed
        )
        data["monte_carlo"] = {
            "samples": monte_carlo,
            "seed": seed,
            "earth_radius_km": interval_from_samples(samples, "km").to_json(3),
        }
    if json_output:
        print_json(data)
    else:
        render_shadows(data, verbose)
    for note in run.notes:
        print(f"firstrung: note: {terminal_text(note, one_line=True)}", file=sys.stderr)
    report_left_out(run.rows_left_out_flagged)
    report_problems(run.problems)
    if run.problems:
        raise SystemExit(2)


def _pm(q: dict, digits: int = 1) -> str:
    """Value±sigma with the thousands separated by commas, as every number firstrung prints."""
    if q["sigma"] is None:
        return f"{q['value']:,.{digits}f}"
    return f"{q['value']:,.{digits}f}±{q['sigma']:,.{digits}f}"


def _interval(q: dict, digits: int = 0) -> str:
    high = "no upper bound" if q["high"] is None else f"{q['high']:,.{digits}f}"
    return f"{q['low']:,.{digits}f} to {high}"


def render_shadows(data: dict, verbose: bool) -> None:
    """Rich tables for a shadow reduction."""
    from rich import box
    from rich.table import Table

    out = console()
    r = data["earth_radius_km"]
    c = data["circumference_km"]
    out.print(f"[bold]{_escape(data['campaign'])}[/bold]: Earth's radius from noon shadows")
    out.print(f"  radius          {_pm(r, 0)} km   (68 % interval {_interval(r)} km)")
    out.print(f"  circumference   {_pm(c, 0)} km   (68 % interval {_interval(c)} km)")
    out.print(
        f"  a perfect measurement at these sites gives {data['expected_radius_km']:,.1f} km\n"
        f"  (the WGS84 meridional radius over their span); IUGG mean radius {data['mean_radius_km']:,.1f} km"
    )
    ratio = data["ratio_to_expected"]
    z = (r["value"] - data["expected_radius_km"]) / r["sigma"] if r["sigma"] else float("nan")
    out.print(f"  measured / expected = {ratio:.4f} ({z:+.1f} sigma, as in the ladder and the report)")
    rows = data["rows"]
    left = ", ".join(f"{v} {k}" for k, v in rows["left_out"].items() if v)
    out.print(
        f"  readings: {rows['read']} read, {rows['accepted']} accepted, {rows['used']} used"
        + (f" ({left} left out)" if left else "")
        + (f", {rows['refused']} refused" if rows["refused"] else "")
    )
    from firstrung.methods.shadows.commands_network import network_lines

    for line in network_lines(data):
        out.print(line)
    if data["outliers"] and not data.get("flagged_sites"):
        out.print(f"  outlying sites left out: {', '.join(data['outliers'])}")

    table = Table(title="Sites", box=box.SIMPLE_HEAD, caption="Sun: the side of the zenith it culminates on; decl.: the Sun's at that site's own transit")
    for col, just in (
        ("site", "left"), ("day", "left"), ("culm. alt (deg)", "right"),
        ("zenith (deg)", "right"), ("Sun", "left"), ("decl. (deg)", "right"),
        ("astro. lat (deg)", "right"), ("sigma (deg)", "right"), ("resid. (')", "right"), ("clock (s)", "right"),
    ):
        table.add_column(col, justify=just, no_wrap=col in ("site", "day"))
    shown, hidden = _sites_shown(data["sites"], verbose)
    for s in shown:
        for k, d in enumerate(s["days"]):
            lat = d["astronomical_latitude_deg"] if len(s["days"]) > 1 else s["astronomical_latitude_deg"]
            table.add_row(
                _escape(s["id"]) + (" (outlier)" if s["outlier"] and k == 0 else ""),
                d["date"],
                f"{d['culmination_altitude_deg']['value']:.3f}",
                f"{d['zenith_distance_deg']['value']:.3f}",
                d["sun_side"],
                f"{d['declination_deg']:.4f}",
                f"{lat['value']:.3f}",
                f"{lat['sigma']:.3f}",
                f"{s['residual_arcmin']:+.1f}" if k == 0 else "",
                _pm(d["clock_offset_s"], 0),
            )
    out.print(table)
    if hidden:
        out.print(f"  {hidden} more site{'s' if hidden != 1 else ''} not shown (--verbose shows every site, --json gives them all)")

    budget = Table(title="Error budget of the radius", box=box.SIMPLE_HEAD)
    budget.add_column("input")
    budget.add_column("sigma (km)", justify="right")
    budget.add_column("share of variance", justify="right")
    for t in data["error_budget"]:
        budget.add_row(t["source"], f"{t['sigma_km']:.1f}", f"{t['share_percent']:.0f} %")
    out.print(budget)
    if data["limited_by"]:
        out.print(f"  the result is limited most by: {data['limited_by']}")
    if "monte_carlo" in data:
        mc = data["monte_carlo"]["earth_radius_km"]
        out.print(
            f"  Monte Carlo ({data['monte_carlo']['samples']} draws): sigma {mc['sigma']:.1f} km, "
            f"68 % interval {mc['low']:.0f} to {mc['high']:.0f} km"
        )
    if verbose:
        noon = Table(title="Apparent noon by each site's clock")
        for col in ("site", "day", "predicted transit (UTC)", "noon by the clock (UTC)", "implied longitude (deg)"):
            noon.add_column(col)
        for s in data["sites"]:
            for d in s["days"]:
                noon.add_row(
                    _escape(s["id"]), d["date"], d["transit_utc"], d["apparent_noon_clock_utc"],
                    _pm(d["implied_longitude_deg"], 3),
                )
        out.print(noon)
        for a in data["assumptions"]:
            out.print(f"  - {a}")


#: Site-days the Sites table shows without --verbose.
SITE_ROWS_SHOWN = 40


def _sites_shown(sites: list[dict], verbose: bool) -> tuple[list[dict], int]:
    """The sites the table shows, in their order, and how many it leaves out.

    Every site with --verbose or when they fit in :data:`SITE_ROWS_SHOWN`
    rows; otherwise the outlying sites first, then the others, as many as fit.
    """
    if verbose or sum(len(s["days"]) for s in sites) <= SITE_ROWS_SHOWN:
        return sites, 0
    keep, rows = set(), 0
    # the outlying sites first, then the furthest from the line (a network's worst rows)
    order = sorted(range(len(sites)), key=lambda k: (not sites[k]["outlier"], -abs(sites[k]["normalized_residual"] or 0.0)))
    for k in order:
        if rows + len(sites[k]["days"]) <= SITE_ROWS_SHOWN:
            keep.add(k)
            rows += len(sites[k]["days"])
    return [s for k, s in enumerate(sites) if k in keep], len(sites) - len(keep)


def _escape(text: str) -> str:
    from rich.markup import escape

    return escape(text)


def simulate_shadows(
    campaign: CampaignArgument,
    date_from: FromOption,
    date_to: ToOption,
    output: OutputOption,
    seed: SeedOption = 1,
    blunders: Annotated[
        str | None,
        Option("--blunders", help="Mistakes to inject, comma-separated: clock, unit, longitude, edge, wild, "
                     "duplicate (or 'all')."),
    ] = None,
    form: Annotated[
        str,
        Option("--form", help="How the noon Sun is recorded: length (shadow lengths), altitude (an angle "
                     "instrument's readings) or trace (shadow-tip positions on a turned board, with times)."),
    ] = "length",
    network: Annotated[
        int,
        Option("--network", min=0, help="Instead: an open network of this many invented schools at random "
                     "land positions, one reading each on the --from date, with the usual blunders (0: off)."),
    ] = 0,
) -> None:
    """Shadow logs: every site with a gnomon, every 2 minutes around local apparent noon."""
    from firstrung.campaign import read_campaign
    from firstrung.errors import InputError
    from firstrung.methods.shadows.rehearsal import LOG_COLUMNS, SHADOW_BLUNDERS, rehearsal_rows
    from firstrung.methods.shadows.rehearsal_forms import FORM_COLUMNS, FORMS, form_rows

    first, last = simulation_range(date_from, date_to)
    if network:
        from firstrung.methods.shadows.commands_network import simulate_network_log

        if blunders or form != "length":
            raise InputError("--network: the network's usual blunders are injected; give no --blunders or --form")
        simulate_network_log(campaign, first, seed, network, output)
        return
    if form not in FORMS:
        raise InputError(f"--form: expected one of {', '.join(FORMS)}, got {form!r}")
    if form != "length":
        if blunders:
            raise InputError("--blunders: only with --form length")
        rows = form_rows(read_campaign(campaign), form, first, last, seed)
        write_simulated(campaign, "shadows", rows, FORM_COLUMNS[form], output, f"{form} readings")
        return
    chosen = () if not blunders else (
        tuple(SHADOW_BLUNDERS) if blunders.strip() == "all" else tuple(b.strip() for b in blunders.split(",") if b.strip())
    )
    rows = rehearsal_rows(read_campaign(campaign), first, last, seed, chosen)
    write_simulated(campaign, "shadows", rows, LOG_COLUMNS, output, "shadow readings")
    for b in chosen:
        console().print(f"  blunder injected: {SHADOW_BLUNDERS[b]}")


register_plan = registers("shadows", plan_shadows)
register_reduce = registers("shadows", reduce_shadows)
register_simulate = registers("shadows", simulate_shadows)
