"""The network's command-line parts: ``simulate shadows --network N`` and the terminal summary of a network."""

from __future__ import annotations

from pathlib import Path

from firstrung.cli.common import console


def simulate_network_log(campaign: Path, date: str, seed: int, schools: int, output: Path) -> None:
    """Write an invented open network of ``schools`` schools, one reading each on ``date``, as one log."""
    from collections import Counter

    from rich.markup import escape

    from firstrung.campaign import parse_campaign
    from firstrung.errors import InputError
    from firstrung.methods.shadows.rehearsal_network import (
        NETWORK_BLUNDERS,
        NETWORK_LOG_COLUMNS,
        network_log_rows,
        simulate_network,
    )
    from firstrung.output import campaign_inputs, make_folder, rows_to_csv, write_atomic

    if not 1 <= schools <= 100_000:
        raise InputError(f"--network: expected 1 to 100000 schools, got {schools}")
    try:
        text = Path(campaign).read_text(encoding="utf-8-sig")
    except OSError as error:
        raise InputError(f"cannot read the file: {error.strerror or error}", file=str(campaign)) from None
    # the coordinator's campaign may declare no site: the schools' rows will carry them
    c = parse_campaign(text, path=campaign)
    net = simulate_network(schools, date, seed)
    make_folder(output)
    path = write_atomic(output / "shadows.csv", rows_to_csv(network_log_rows(net), NETWORK_LOG_COLUMNS),
                        inputs=campaign_inputs(c))
    console().print(f"{schools:,} schools, one synthetic reading each on {date}, written to:")
    console().print(f"  {escape(str(path))}", soft_wrap=True)
    kinds = Counter(k for k in net.blunder.tolist() if k)
    if kinds:
        console().print("blunders injected (one per school):")
    for kind, count in sorted(kinds.items()):
        console().print(f"  {count:,} school{'s' if count != 1 else ''}: {NETWORK_BLUNDERS[kind]}")


def network_lines(data: dict) -> list[str]:
    """The terminal's lines on the method, the errors, the pairs and the flagged sites."""
    from rich.markup import escape

    method = data.get("method")
    lines = []
    if method == "subsolar":
        lines.append("  method: one site against the subsolar point (the latitude where the Sun stood at the "
                     "zenith that day); see the assumptions (--verbose)")
        return lines
    if data.get("errors_from_scatter"):
        scatter = data.get("scatter_per_site_arcmin")
        lines.append(f"  errors: from the network's own scatter, {scatter:.1f}' per site (the rows state none)"
                     if scatter is not None else "  errors: from the network's own scatter")
    summary = data.get("pairs_summary") or {}
    if summary.get("count"):
        lines.append(f"  pairs: {summary['count']:,} same-day pairs at least 100 km apart north-south: median "
                     f"{summary['median_km']:,.0f} km, the middle 68 % from {summary['low_km']:,.0f} to "
                     f"{summary['high_km']:,.0f} km")
        if "neighbours" in data.get("pairs_selection", ""):
            from firstrung.methods.shadows.pairs import ALL_PAIRS_MAX_SITES, NEIGHBOURS

            lines.append(f"  (a day of more than {ALL_PAIRS_MAX_SITES} sites pairs each site with its {NEIGHBOURS} "
                         "neighbours in longitude)")
    flagged = data.get("flagged_sites") or []
    if flagged:
        shown = ", ".join(escape(f) for f in flagged[:8]) + (f" and {len(flagged) - 8} more" if len(flagged) > 8 else "")
        lines.append(f"  flagged as blunders and left out: {len(flagged)} site{'s' if len(flagged) != 1 else ''} "
                     f"({shown})")
    return lines


def write_school_sheets(run, path: Path) -> None:
    """Write every school's result page (HTML made to print), never over an input."""
    from firstrung.errors import InputError
    from firstrung.methods.shadows.school_sheets import school_pages
    from firstrung.output import campaign_inputs, write_atomic

    if Path(path).suffix.lower() == ".pdf":
        raise InputError("--school-sheets: firstrung writes HTML made to print; give a .html name and print it "
                         "from a browser")
    write_atomic(path, school_pages(run).encode("utf-8"), inputs=campaign_inputs(run.campaign))
