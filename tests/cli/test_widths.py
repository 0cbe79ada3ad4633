"""Every command at 80, 100 and 160 columns: no value cut, no column dropped without a note.

Run on the example campaign and on a campaign of twelve invented sites (its logs written by
``simulate``). A cut value shows as rich's ellipsis inside or after a digit (``2027-06-…``,
``233,339,…``); a table too wide for the terminal must be split into parts that say so.
"""

from __future__ import annotations

import io
import re
from pathlib import Path

import pytest
from tests.helpers import run_cli

EXAMPLE = Path(__file__).resolve().parents[2] / "examples" / "campaign.toml"
WIDTHS = (80, 100, 160)

#: Twelve invented sites from 64° N to 41° S (latitude, longitude, IANA zone).
TWELVE = (
    (64.1, -21.9, "Atlantic/Reykjavik"), (59.3, 18.1, "Europe/Stockholm"), (55.7, 12.6, "Europe/Copenhagen"),
    (51.5, -0.1, "Europe/London"), (47.8, 8.9, "Europe/Zurich"), (43.3, 5.4, "Europe/Paris"),
    (39.2, 9.1, "Europe/Rome"), (35.9, 14.5, "Europe/Malta"), (28.1, -15.4, "Atlantic/Canary"),
    (-12.0, -77.0, "America/Lima"), (-33.9249, 18.4, "Africa/Johannesburg"), (-41.3, 174.8, "Pacific/Auckland"),
)

CUT = re.compile(r"\d…|…\d|\d\.…")


def commands(campaign: Path) -> list[list[str]]:
    c = str(campaign)
    return [
        ["plan", "shadows", c, "--from", "2027-03-01", "--to", "2027-04-30"],
        ["plan", "eclipses", c, "--from", "2028-01-01", "--to", "2029-12-31"],
        ["plan", "phases", c, "--from", "2027-03-01", "--to", "2027-04-30"],
        ["plan", "transit", c, "--from", "2032-01-01", "--to", "2032-12-31"],
        ["reduce", "shadows", c],
        ["reduce", "eclipse", c],
        ["reduce", "phases", c],
        ["check", c],
        ["ladder", c, "--samples", "4000"],
    ]


@pytest.fixture(scope="module")
def twelve_sites(tmp_path_factory) -> Path:
    """A twelve-site campaign with shadow, eclipse and half-moon logs from ``simulate``."""
    return twelve_site_campaign(tmp_path_factory.mktemp("twelve"))


def twelve_site_campaign(root: Path) -> Path:
    """Write the twelve-site campaign and its simulated logs into ``root``; its campaign file."""
    from firstrung.cli import main

    root.mkdir(parents=True, exist_ok=True)
    parts = ['[campaign]\nname = "Twelve invented sites"\n']
    for i, (lat, lon, zone) in enumerate(TWELVE, 1):
        parts.append(
            f'[[site]]\nid = "site{i:02d}"\nname = "Invented site {i}"\nlatitude_deg = {lat}\n'
            f'longitude_deg = {lon}\nelevation_m = 100\ntimezone = "{zone}"\n\n'
            "[site.gnomon]\nheight_m = 1.0\nheight_sigma_m = 0.001\nshadow_sigma_m = 0.002\nedge = \"umbra\"\n"
        )
    toml = root / "campaign.toml"
    toml.write_text("\n".join(parts))
    for kind, first, last in (("shadows", "2027-03-20", "2027-03-21"), ("eclipse", "2029-12-19", "2029-12-21"),
                              ("phases", "2027-03-10", "2027-04-20")):
        try:
            main(["simulate", kind, str(toml), "--from", first, "--to", last, "-o", str(root / "logs")])
        except SystemExit as done:
            assert done.code in (0, None)
    toml.write_text(toml.read_text() + '\n[logs]\nshadows = ["logs/shadows.csv"]\neclipse = ["logs/eclipse.csv"]\n'
                    'phases = ["logs/phases.csv"]\n')
    return toml


def _check_output(out: str, width: int, args) -> None:
    cut = [line for line in out.splitlines() if CUT.search(line)]
    assert not cut, (args, width, cut[:3])
    assert "…" not in out, (args, width)
    too_wide = [line for line in out.splitlines() if len(line.rstrip()) > width]
    assert not too_wide, (args, width, too_wide[:2])
    # a table split in parts says how many, and every part is there
    for n in {int(m) for m in re.findall(r"part 1 of (\d+)", out)}:
        assert f"(part {n} of {n})" in out, (args, width)


@pytest.mark.parametrize("width", WIDTHS)
def test_example_campaign_never_cuts_a_value(width, capsys, monkeypatch):
    for args in commands(EXAMPLE):
        code, out, err = run_cli(args, capsys, monkeypatch, columns=width)
        assert code in ((0, 1) if args[0] == "check" else (0,)), (args, err)  # check: 1 = errors found
        _check_output(out, width, args)


@pytest.mark.parametrize("width", WIDTHS)
def test_twelve_sites_never_cut_a_value_nor_drop_a_site(width, twelve_sites, capsys, monkeypatch):
    for args in commands(twelve_sites):
        code, out, err = run_cli(args, capsys, monkeypatch, columns=width)
        assert code in ((0, 1) if args[0] == "check" else (0,)), (args, err)  # check: 1 = errors found
        _check_output(out, width, args)
        if args[:2] == ["plan", "shadows"]:
            # every site's noon column reachable, however narrow the terminal
            for i in range(1, 13):
                assert f"site{i:02d}" in out, (width, i)
            assert len(re.findall(r"\b2027-0[34]-\d\d\b", out)) >= 10  # the ten best days, whole
        if args[:2] == ["plan", "eclipses"]:
            assert "U4" in out and "00:28:42" in out  # 2029-12-20's U4 (whole, never 00:28:4)


def test_a_split_table_repeats_its_key_and_cuts_nothing():
    from rich.table import Table

    from firstrung.terminal import FittingConsole

    table = Table(title="Wide")
    table.add_column("site")
    for k in range(12):
        table.add_column(f"value {k}", justify="right")
    table.add_row("alpha", *[f"{1234567.891 * (k + 1):,.3f}" for k in range(12)])
    console = FittingConsole(width=80, record=True, file=io.StringIO())
    console.print(table)
    text = console.export_text()
    assert "…" not in text
    for k in range(12):
        assert f"{1234567.891 * (k + 1):,.3f}" in text
    parts = re.findall(r"part \d+ of (\d+)", text)
    assert parts and text.count("alpha") == int(parts[0])
