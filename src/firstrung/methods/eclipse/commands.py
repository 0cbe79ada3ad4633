"""``firstrung plan|reduce|simulate eclipse``: the eclipse method's commands and their tables."""

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
    rows_line,
    simulation_range,
    write_simulated,
)
from firstrung.cli.direct import Option

ConventionOption = Annotated[
    str,
    Option(
        "--convention",
        help="How the atmosphere enlarges the Earth's shadow: danjon (the NASA canon's), chauvenet or geometric.",
    ),
]


def plan_eclipses(
    campaign: CampaignArgument,
    date_from: Annotated[str, Option("--from", help="First date (YYYY-MM-DD, UTC).", show_default=False)],
    date_to: Annotated[str, Option("--to", help="Last date (YYYY-MM-DD, UTC).", show_default=False)],
    ics: Annotated[
        Path | None, Option("--ics", help="Also write to this calendar file (RFC 5545) the eclipses some "
                                                "site can see (the Moon up at a contact).")
    ] = None,
    site: CalendarSiteOption = None,
    penumbral: Annotated[bool, Option("--penumbral", help="Put penumbral eclipses in the calendar too.")] = False,
    convention: ConventionOption = "danjon",
    json_output: JsonOption = False,
    verbose: VerboseOption = False,
) -> None:
    """Lunar eclipses from --from to --to: contacts, and each site's Moon and Sun at each contact."""
    from firstrung.campaign import read_campaign
    from firstrung.methods.eclipse.present import eclipse_plan_to_json
    from firstrung.methods.eclipse.run import eclipses_ics, plan_eclipses
    from firstrung.output import campaign_inputs, write_atomic

    start = _date("--from", date_from)
    end = _date("--to", date_to)
    c = read_campaign(campaign)
    plan = plan_eclipses(c, start, end, convention)
    data = eclipse_plan_to_json(plan)
    if ics is not None:
        check_site_id(c, site)
        write_atomic(ics, eclipses_ics(plan, site=site, penumbral=penumbral), inputs=campaign_inputs(c))
    if json_output:
        print_json(data)
    else:
        render_plan(data, verbose, {site.id: site.timezone for site in c.sites})
        if ics is not None:
            from rich.markup import escape

            console().print(f"  calendar written to {escape(str(ics))}")


def _date(option: str, value: str) -> str:
    import re

    import numpy as np

    from firstrung.errors import InputError

    text = value.strip()
    if not re.fullmatch(r"\d{4}-\d{2}-\d{2}", text):
        raise InputError(f"{option}: expected an ISO date such as 2029-12-20, got {value!r}")
    try:
        return str(np.datetime64(text, "D"))
    except ValueError:
        raise InputError(f"{option}: expected an ISO date such as 2029-12-20, got {value!r}") from None


def _fmt_time(text: str | None) -> str:
    return "" if not text else text[11:19]


#: What each contact is, in words, for the night's timeline.
EVENT_WORDS = {
    "P1": "penumbra touches the Moon (hard to see)",
    "U1": "umbra touches the Moon: partial phase begins",
    "U2": "Moon wholly in the umbra: totality begins",
    "greatest": "greatest eclipse",
    "U3": "totality ends",
    "U4": "umbra leaves the Moon: partial phase ends",
    "P4": "penumbra leaves the Moon",
}


def _local_clock(utc_text: str, zone: str | None) -> str:
    """HH:MM:SS on the site's clock (or UTC), with the day when it differs from the UTC date."""
    import datetime as dt
    from zoneinfo import ZoneInfo

    t = dt.datetime.fromisoformat(utc_text.replace("Z", "+00:00"))
    local = t.astimezone(ZoneInfo(zone)) if zone else t
    return local.strftime("%H:%M:%S") + ("" if local.date() == t.date() else f" ({local.strftime('%m-%d')})")


def render_plan(data: dict, verbose: bool, zones: dict | None = None) -> None:
    """The eclipse plan: one line per eclipse, then each ranked eclipse's night at every site as a
    timeline in the site's own clock time, with the Moon's and the Sun's altitudes."""
    from rich import box
    from rich.markup import escape
    from rich.table import Table

    zones = zones or {}
    out = console()
    out.print(
        f"[bold]{escape(data['campaign'])}[/bold]: lunar eclipses {data['from']} to {data['to']} "
        f"({data['convention']} shadow)"
    )
    if not data["eclipses"]:
        out.print("  no lunar eclipse in this range")
        return
    table = Table(box=box.SIMPLE_HEAD, title="Lunar eclipses of the range")
    for col, just in (("rank", "right"), ("date", "left"), ("kind", "left"), ("umbral magnitude", "right"),
                      ("totality", "right"), ("greatest (UTC)", "right"), ("sites that can time it", "left")):
        table.add_column(col, justify=just)
    for e in data["eclipses"]:
        tot = e["durations_min"]["total"]
        able = [sid for sid, per in e["sites"].items() if per.get("timeable_contacts")]
        table.add_row(
            "-" if e["rank"] is None else str(e["rank"]), e["date"], e["kind"], f"{e['umbral_magnitude']:.3f}",
            "" if tot is None else f"{tot:.0f} min", _fmt_time(e["greatest_utc"]),
            ", ".join(escape(a) for a in able) or "none",
        )
    out.print(table)
    for e in data["eclipses"]:
        if e["rank"] is None and not verbose:
            continue
        out.print(f"\n[bold]The night of the {e['kind']} eclipse of {e['date']}[/bold], site by site "
                  f"(the site's clock time; altitudes in degrees)")
        names = [k for k in ("P1", "U1", "U2", "greatest", "U3", "U4", "P4") if k == "greatest" or k in e["contacts_utc"]]
        for sid, per in e["sites"].items():
            zone = zones.get(sid)
            view = Table(box=box.SIMPLE_HEAD, title=f"{sid} ({zone or 'UTC'})", title_justify="left")
            for col, just in (("clock", "right"), ("event", "left"), ("what happens", "left"), ("Moon", "right"),
                              ("Sun", "right"), ("can be timed", "left")):
                view.add_column(col, justify=just)
            for k in names:
                x = per.get(k)
                t = e["greatest_utc"] if k == "greatest" else e["contacts_utc"][k]
                if x is None:
                    continue
                why = "yes" if x["timeable"] else ("Moon below the horizon" if not x["moon_up"] else
                                                    "sky too bright" if not x["dark"] else "no")
                view.add_row(_local_clock(t, zone), k, EVENT_WORDS[k], f"{x['moon_altitude_deg']:+.0f}",
                             f"{x['sun_altitude_deg']:+.0f}", why if k != "greatest" else "")
            out.print(view)
        if e["excluded"]:
            out.print("  not ranked: " + "; ".join(e["excluded"]))
    left = [e for e in data["eclipses"] if e["rank"] is None]
    if left and not verbose:
        out.print(f"  {len(left)} {'eclipse' if len(left) == 1 else 'eclipses'} not ranked (penumbral, or no site can "
                  "time a contact); --verbose shows them")
    print_assumptions(out, data, verbose)
    out.print("  A lunar eclipse is safe to watch with the naked eye or any instrument; never look at the Sun.")


def reduce_eclipse(
    campaign: CampaignArgument,
    convention: Annotated[
        str,
        Option(
            "--convention",
            help="Enlargement convention inverted for the Moon's parallax: danjon (the NASA canon's), chauvenet or geometric.",
        ),
    ] = "danjon",
    earth_radius_km: Annotated[
        float | None,
        Option("--earth-radius-km", help="Earth radius for the distance in km (else the campaign's own shadow result) [km]."),
    ] = None,
    earth_radius_sigma_km: Annotated[
        float | None, Option("--earth-radius-sigma-km", help="One-sigma error of --earth-radius-km [km].")
    ] = None,
    magnitude: Annotated[
        float | None,
        Option("--magnitude", help="Observed greatest umbral magnitude (a partial eclipse timed at U1 and U4 needs it)."),
    ] = None,
    magnitude_sigma: Annotated[
        float | None, Option("--magnitude-sigma", help="One-sigma error of --magnitude.")
    ] = None,
    json_output: JsonOption = False,
    verbose: VerboseOption = False,
    include_flagged: IncludeFlaggedOption = False,
) -> None:
    """The shadow/Moon ratio and the Moon's distance from umbral contacts and crater timings.

    Exit status 2 when any row or file was refused (the results from the good
    rows are still shown).
    """
    from firstrung.methods.eclipse.present import eclipse_run_to_json
    from firstrung.methods.eclipse.run import run_eclipse

    if earth_radius_sigma_km is not None and earth_radius_km is None:
        from firstrung.errors import InputError

        raise InputError("--earth-radius-sigma-km: given without --earth-radius-km")
    run = run_eclipse(
        campaign, convention=convention, earth_radius_km=earth_radius_km,
        earth_radius_sigma_km=earth_radius_sigma_km, magnitude=magnitude, magnitude_sigma=magnitude_sigma,
        include_flagged=include_flagged,
    )
    finish_reduction(run, eclipse_run_to_json(run), render=render_eclipse, json_output=json_output, verbose=verbose)


def _pm(q: dict | None, digits: int) -> str:
    if q is None:
        return "-"
    if q["sigma"] is None:
        return f"{q['value']:,.{digits}f}"
    return f"{q['value']:,.{digits}f}±{q['sigma']:,.{digits}f}"



def render_eclipse(data: dict, verbose: bool) -> None:
    """Rich tables for an eclipse reduction."""
    from rich import box
    from rich.markup import escape
    from rich.table import Table

    out = console()
    out.print(f"[bold]{escape(data['campaign'])}[/bold]: the Moon's distance from lunar eclipse timings ({data['convention']} shadow)")
    for e in data["eclipses"]:
        m = e["moon"]
        out.print(f"\n[bold]{e['date']}[/bold] {e['kind']} eclipse, {e['rows']} timings")
        src = "measured by the observers" if m["observational"] else "from the ephemeris (ephemeris-assisted)" if m["semidiameter_source"] == m["rate_source"] == "ephemeris" else "partly from the ephemeris"
        out.print(
            f"  Moon: radius {m['semidiameter_arcmin']:.3f}′ ({m['semidiameter_source']}), rate across the shadow "
            f"{m['rate_deg_per_h']:.4f} deg/h ({m['rate_source']}) — {src}"
        )
        if e["reduction"] is not None:
            r = e["reduction"]
            n, d = e["shadow_moon_ratio"], e["moon_distance_earth_radii"]
            out.print(f"  shadow / Moon ratio  {_pm(n, 3)}   (68 % interval {interval_text(n, 3)})")
            out.print(f"  umbra radius         {_pm(r['umbra_radius_arcmin'], 2)}′   Moon's parallax {_pm(r['moon_parallax_arcmin'], 2)}′")
            out.print(f"  Moon's distance      {_pm(d, 2)} Earth radii   (68 % interval {interval_text(d, 2)})")
            if e["moon_distance_km"] is not None:
                k = e["moon_distance_km"]
                out.print(f"                       {_pm(k, 0)} km   (68 % interval {interval_text(k, 0)}; Earth radius {data['earth_radius_source']})")
            modern = e["modern"]["moon_distance_earth_radii"]
            z = (d["value"] - modern) / d["sigma"] if d["sigma"] else float("nan")
            out.print(f"  the ephemeris gives {modern:.3f} Earth radii at greatest eclipse ({z:+.1f} sigma)")
            budget = Table(title="Error budget of the distance", box=box.SIMPLE_HEAD)
            budget.add_column("input")
            budget.add_column("sigma (Earth radii)", justify="right")
            budget.add_column("share", justify="right")
            for b in r["error_budget"]:
                budget.add_row(b["source"], f"{b['sigma_earth_radii']:.3f}", f"{b['share_percent']:.0f} %")
            out.print(budget)
        else:
            out.print(f"  no distance: {e['reduction_problem']}")
        if e["enlargement"] is not None:
            en = e["enlargement"]
            q = en["enlargement_percent"]
            out.print(
                f"  umbra enlargement    {_pm(q, 2)} % over the geometric shadow from {en['used']} of {en['points']} crater points "
                f"(the {data['convention']} convention: {e['modern']['umbra_enlargement_percent']:.2f} %)"
            )
            if en["flattening"] is not None:
                out.print(f"  shadow flattening    {_pm(en['flattening'], 4)}")
            used = e["distance_enlargement"]
            if used is not None:
                out.print(f"  distance's umbra     the {used['convention']} convention's {used['convention_percent']:.2f}"
                          f"±{used['allowance_percent']:.2f} %, not the craters': they fix the enlargement and the "
                          "distance only together")
            against = e["enlargement_against_convention"]
            if against["departs"]:
                out.print(f"  the umbra departs from the {against['convention']} convention by "
                          f"{against['difference_percent']:+.2f} points (allowance {against['allowance_percent']:.2f}): "
                          f"the distance may be off by about {against['distance_shift_percent']:+.2f} %")
        elif verbose:
            out.print(f"  no enlargement: {e['enlargement_problem']}")
        table = Table(title="Timings (combined per event)", box=box.SIMPLE_HEAD)
        for col in ("event", "feature", "time (UTC)", "sigma (s)", "used", "rejected", "resid. (s)"):
            table.add_column(col, justify="left" if col in ("event", "feature") else "right", no_wrap=True)
        for t in e["timings"]:
            table.add_row(
                t["event"], escape(t["feature"] or ""), t["time_utc"][11:19], f"{t['sigma_s']:.0f}", str(t["timings_used"]),
                str(len(t["rejected"])), "" if t["residual_s"] is None else f"{t['residual_s']:+.0f}",
            )
        if verbose or len(e["timings"]) <= 12:
            out.print(table)
        if verbose:
            for a in e["assumptions"]:
                out.print(f"  - {a}")
    rows = data["rows"]
    out.print("\n" + rows_line(rows, "accepted"))


def simulate_eclipse(
    campaign: CampaignArgument,
    date_from: FromOption,
    date_to: ToOption,
    output: OutputOption,
    seed: SeedOption = 1,
    observers: Annotated[int, Option("--observers", min=1, help="Observers timing at each site.")] = 2,
) -> None:
    """Eclipse logs: umbral contacts and crater timings of every eclipse each site can time in the dark."""
    from firstrung.campaign import read_campaign
    from firstrung.methods.eclipse.rehearsal import LOG_COLUMNS, rehearsal_rows

    first, last = simulation_range(date_from, date_to)
    rows = rehearsal_rows(read_campaign(campaign), first, last, seed, observers_per_site=observers)
    write_simulated(campaign, "eclipse", rows, LOG_COLUMNS, output, "eclipse timings")


register_plan = registers("eclipse", plan_eclipses)
register_reduce = registers("eclipse", reduce_eclipse)
register_simulate = registers("eclipse", simulate_eclipse)
