"""``firstrung plan|reduce|simulate phases``: the phases method's commands and their tables."""

from __future__ import annotations

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
    finish_reduction,
    interval_text,
    print_assumptions,
    print_json,
    registers,
    simulation_range,
    write_simulated,
)
from firstrung.cli.direct import Option
from firstrung.numbers import plural


def plan_phases(
    campaign: CampaignArgument,
    date_from: FromOption,
    date_to: ToOption,
    min_altitude_deg: Annotated[
        float, Option("--min-altitude-deg", help="Lowest observed altitude of the Sun and of the Moon in a window [deg].")
    ] = 10.0,
    min_sun_elongation_deg: Annotated[
        float,
        Option("--min-sun-elongation-deg", help="Smallest Sun-Moon angle allowed for the instrument [deg]; never point optics near the Sun."),
    ] = 30.0,
    span_h: Annotated[
        float, Option("--span-h", help="Search windows this long before and after each half moon [h].")
    ] = 24.0,
    ics: Annotated[
        Path | None,
        Option("--ics", help="Write a calendar (RFC 5545): for each ranked quarter and site, the window nearest its half moon."),
    ] = None,
    site: CalendarSiteOption = None,
    json_output: JsonOption = False,
) -> None:
    """First and last quarters: quadrature, the true half moon, and when Sun and Moon are both up.

    Quadrature and the true half moon geocentric and per site, and the windows when the Sun and
    the Moon are both high enough to measure the angle between them.

    Every quarter is listed in --json; one without any window has rank null and the reasons.
    """
    from firstrung.methods.phases.present import phase_plan_to_json
    from firstrung.methods.phases.run import PlanSettings, calendar_bytes, plan_phases
    from firstrung.output import campaign_inputs, write_atomic

    settings = PlanSettings(min_altitude_deg=min_altitude_deg, min_sun_elongation_deg=min_sun_elongation_deg, half_span_h=span_h)
    plan = plan_phases(campaign, date_from, date_to, settings)
    if ics is not None:
        check_site_id(plan.campaign, site)
        write_atomic(ics, calendar_bytes(plan, site), inputs=campaign_inputs(plan.campaign))
    data = phase_plan_to_json(plan)
    if json_output:
        print_json(data)
        return
    render_plan(data, ics)


def render_plan(data: dict, ics) -> None:
    from rich import box
    from rich.markup import escape
    from rich.table import Table

    out = console()
    quarters = data["quarters"]
    ranked = [q for q in quarters if q["rank"] is not None]
    out.print(
        f"[bold]{escape(data['campaign'])}[/bold]: half moons, {data['from']} to {data['to']}; "
        f"{len(quarters)} quarters, {len(ranked)} with a window at some site"
    )
    table = Table(box=box.SIMPLE_HEAD, title="Quarters (geocentric)",
                  caption="half moon: the true half moon (phase angle 90 deg); offset from quadrature in minutes")
    for col, just in (("rank", "right"), ("quarter", "left"), ("quadrature (UTC)", "left"),
                      ("half moon (UTC)", "left"), ("offset", "right"), ("E (deg)", "right"), ("ratio", "right")):
        table.add_column(col, justify=just, no_wrap=True)
    for q in quarters:
        table.add_row(
            "-" if q["rank"] is None else str(q["rank"]), q["quarter"], q["quadrature_utc"][:16].replace("T", " "),
            q["dichotomy_utc"][11:16], f"{q['dichotomy_minus_quadrature_min']:+.1f}",
            f"{q['elongation_at_dichotomy_deg']:.4f}", f"{q['sun_moon_distance_ratio']:.0f}",
        )
    out.print(table)
    sites = Table(box=box.SIMPLE_HEAD, title="Each site's half moon and the nearest window with Sun and Moon both up",
                  caption="window: both bodies high enough and the Sun far enough from the Moon; minutes from the "
                          "site's half moon")
    for col, just in (("quarter", "left"), ("site", "left"), ("half moon seen (UTC)", "left"),
                      ("nearest window (UTC)", "left"), ("from half moon", "right")):
        sites.add_column(col, justify=just, no_wrap=True)
    for q in quarters:
        for sid, s in q["sites"].items():
            best = min(s["windows"], key=lambda w: abs(w["minutes_from_dichotomy"]), default=None)
            window, offset = "none", ""
            if best is not None:
                window = f"{best['start_utc'][5:10]} {best['start_utc'][11:16]}-{best['end_utc'][11:16]}"
                offset = "contains it" if best["contains_dichotomy"] else f"{best['minutes_from_dichotomy']:+.0f} min"
            sites.add_row(f"{q['quadrature_utc'][:10]} {q['quarter']}", escape(sid),
                          s["dichotomy_utc"][:16].replace("T", " "), window, offset)
    out.print(sites)
    if ics is not None:
        out.print(f"  calendar written: {escape(str(ics))}")
    out.print(f"  {data['caution']}")


def reduce_phases(
    campaign: CampaignArgument,
    json_output: JsonOption = False,
    verbose: VerboseOption = False,
    elongation_sigma_deg: Annotated[
        float, Option("--elongation-sigma-deg", help="Error of a measured Sun-Moon angle (the instrument's) [deg].")
    ] = 0.25,
    time_sigma_min: Annotated[
        float, Option("--time-sigma-min", help="Error of judging the half moon, for rows without time_sigma_s [min].")
    ] = 120.0,
    fraction_sigma: Annotated[
        float, Option("--fraction-sigma", help="Error of an illuminated fraction measured on an image.")
    ] = 0.01,
    zero_point_sigma: Annotated[
        float, Option("--zero-point-sigma", help="Error of the fractions shared by one photo series (zero point).")
    ] = 0.005,
    common_zero_point_sigma: Annotated[
        float, Option("--common-zero-point-sigma",
                            help="Error of the fractions shared by every photo series (one camera and processing for all).")
    ] = 0.0,
    include_flagged: IncludeFlaggedOption = False,
) -> None:
    """D_sun/D_moon with its 68 % interval, and how much better the angle or the timing must be.

    Exit status 2 when any row or file was refused (the result from the good rows is still shown).
    """
    from firstrung.methods.phases.present import phase_run_to_json
    from firstrung.methods.phases.run import PhaseSettings, run_phases

    settings = PhaseSettings(elongation_sigma_deg=elongation_sigma_deg, time_sigma_s=time_sigma_min * 60.0,
                             fraction_sigma=fraction_sigma, fraction_zero_point_sigma=zero_point_sigma,
                             common_zero_point_sigma=common_zero_point_sigma)
    run = run_phases(campaign, settings, include_flagged=include_flagged)
    finish_reduction(run, phase_run_to_json(run), render=render_reduction, json_output=json_output, verbose=verbose)



def render_reduction(data: dict, verbose: bool) -> None:
    from rich import box
    from rich.markup import escape
    from rich.table import Table

    out = console()
    e = data["elongation_deg"]
    out.print(f"[bold]{escape(data['campaign'])}[/bold]: the Sun's distance from the half moon")
    out.print(f"  elongation at half moon  {e['value']:.4f} ± {e['sigma']:.4f} deg")
    out.print(f"  {data['statement']}")
    if data["lower_bound_95"] is not None:
        out.print(f"  95 % lower bound {data['lower_bound_95']:.0f}")
    out.print(f"  modern value at these half moons {data['expected_ratio']:.0f} (E = {data['expected_elongation_deg']:.4f} deg)")
    out.print(f"  {data['precision']['sentence']}")
    p = data["precision"]["within_factor_2"]
    out.print(f"  (within a factor 2: E to ±{p['elongation_arcmin']:.1f}′ or the timing to ±{p['time_min']:.0f} min)")

    table = Table(title="Estimates", box=box.SIMPLE_HEAD)
    for col, just in (("kind", "left"), ("site", "left"), ("quarter", "left"), ("half moon (UTC)", "left"),
                      ("vs site's (min)", "right"), ("E (deg)", "right"), ("sigma (')", "right"), ("ratio 68 %", "right")):
        table.add_column(col, justify=just)
    for x in data["estimates"]:
        table.add_row(x["kind"], escape(x["site"]), x["quarter"], x["time_utc"][:16].replace("T", " "),
                      f"{x['minutes_from_site_dichotomy']:+.0f}", f"{x['elongation_deg']['value']:.3f}",
                      f"{x['elongation_deg']['sigma'] * 60:.1f}", interval_text(x["sun_moon_distance_ratio"], 0, 'any value'))
    out.print(table)
    for kind, c in data["by_kind"].items():
        out.print(f"  {kind}: E = {c['elongation_deg']['value']:.4f} ± {c['elongation_deg']['sigma']:.4f} deg, "
                  f"ratio {interval_text(c['sun_moon_distance_ratio'], 0, 'any value')} ({plural(c['estimates'], 'estimate')})")
    i = data["interval_method"]
    if i is not None:
        u = i["uncorrected"]
        out.print(f"  interval method ({i['first_to_last']} first-to-last, {i['last_to_first']} last-to-first intervals):")
        perfect = "no finite value" if u["perfect_timings_ratio"] is None else f"{u['perfect_timings_ratio']:.0f}"
        out.print(f"    uniform lunar motion: ratio {interval_text(u['sun_moon_distance_ratio'], 0, 'any value')}; "
                  f"perfect timings of these half moons would give {perfect}")
        if i["corrected"] is not None:
            out.print(f"    corrected with the ephemeris's lunar motion: ratio {interval_text(i['corrected']['sun_moon_distance_ratio'], 0, 'any value')}")
    rows = data["rows"]
    out.print(f"  rows: {rows['read']} read, {rows['accepted']} accepted, {plural(rows['estimates'], 'estimate')}"
              + (f", {rows['refused']} refused" if rows["refused"] else ""))
    print_assumptions(out, data, verbose)
    out.print(f"  {data['caution']}")


def simulate_phases(
    campaign: CampaignArgument,
    date_from: FromOption,
    date_to: ToOption,
    output: OutputOption,
    seed: SeedOption = 1,
) -> None:
    """Half-moon logs: timings by eye, measured Sun-Moon angles and photo series of the lit fraction."""
    from firstrung.campaign import read_campaign
    from firstrung.methods.phases.rehearsal import LOG_COLUMNS, rehearsal_rows

    first, last = simulation_range(date_from, date_to)
    rows = rehearsal_rows(read_campaign(campaign), first, last, seed)
    write_simulated(campaign, "phases", rows, LOG_COLUMNS, output, "half-moon rows")


register_plan = registers("phases", plan_phases)
register_reduce = registers("phases", reduce_phases)
register_simulate = registers("phases", simulate_phases)
