"""Rehearsal logs from ``firstrung simulate``: every kind, and blunders that ``check`` then finds."""

from __future__ import annotations

import json
import shutil
from pathlib import Path

import pytest

from helpers import run_cli, shadows_only

CLEAN = Path(__file__).resolve().parent / "data" / "clean_campaign"


def run(args, capsys, monkeypatch):
    return run_cli(args, capsys, monkeypatch, columns=120)


@pytest.fixture()
def camp(tmp_path):
    """The clean campaign with its shadow log only (the simulated logs are added where a test needs them)."""
    shutil.copytree(CLEAN, tmp_path / "camp")
    toml = tmp_path / "camp" / "campaign.toml"
    shadows_only(toml)
    return toml


def _use(camp, folder="sim"):
    """Point the campaign at the simulated logs (simulate never writes over a log the campaign lists)."""
    text = camp.read_text().replace('"logs/', f'"{folder}/')
    for kind in ("eclipse", "phases"):
        if (camp.parent / folder / f"{kind}.csv").exists() and f"{kind} =" not in text:
            text = text.replace(f'shadows = ["{folder}/shadows.csv"]',
                                f'shadows = ["{folder}/shadows.csv"]\n{kind} = ["{folder}/{kind}.csv"]')
    camp.write_text(text)


def _check_codes(camp, capsys, monkeypatch):
    code, out, err = run(["check", camp, "--json"], capsys, monkeypatch)
    data = json.loads(out)
    return code, {(f["site"], f["code"]) for f in data["flags"]}


@pytest.mark.parametrize(
    "blunders, expected",
    [
        # a clock an hour out at fjell (Europe/Oslo is UTC+1 in March: local time as UTC fits as well)
        ("clock", {("fjell", "local-time-as-utc")}),
        ("unit", {("lowmead", "length-unit")}),
        # fjell at 10.2 E: a sign error moves noon by 2 x 10.2 / 15 h = 1 h 22 min, far from a whole hour
        ("longitude", {("fjell", "longitude-sign")}),
        ("edge", {("lowmead", "edge-convention")}),  # sardo marks the middle: lowmead is the last sharp edge
        ("wild,duplicate", {("fjell", "outlier"), ("lowmead", "duplicate-row")}),
    ],
)
def test_injected_blunders_are_found_by_check(camp, capsys, monkeypatch, blunders, expected):
    logs = camp.parent / "sim"
    code, out, err = run(["simulate", "shadows", camp, "--from", "2027-03-22", "--to", "2027-03-23", "-o", logs,
                          "--seed", "3", "--blunders", blunders], capsys, monkeypatch)
    assert code == 0, err
    _use(camp)
    code, found = _check_codes(camp, capsys, monkeypatch)
    assert code == 1
    assert expected <= found, found


def test_clean_rehearsal_passes_check(camp, capsys, monkeypatch):
    logs = camp.parent / "sim"
    run(["simulate", "shadows", camp, "--from", "2027-03-22", "--to", "2027-03-23", "-o", logs, "--seed", "3"],
        capsys, monkeypatch)
    _use(camp)
    code, found = _check_codes(camp, capsys, monkeypatch)
    assert code == 0 and found == set()


def test_eclipse_and_half_moon_rehearsals_reduce_near_the_truth(camp, capsys, monkeypatch):
    logs = camp.parent / "sim"
    run(["simulate", "shadows", camp, "--from", "2027-03-22", "--to", "2027-03-23", "-o", logs, "--seed", "4"],
        capsys, monkeypatch)
    code, out, err = run(["simulate", "eclipse", camp, "--from", "2029-12-01", "--to", "2029-12-31", "-o", logs,
                          "--seed", "4"], capsys, monkeypatch)
    assert code == 0, err
    code, out, err = run(["simulate", "phases", camp, "--from", "2027-01-01", "--to", "2027-06-30", "-o", logs,
                          "--seed", "4"], capsys, monkeypatch)
    assert code == 0, err
    _use(camp)
    code, out, err = run(["reduce", "eclipse", camp, "--json"], capsys, monkeypatch)
    assert code == 0, err
    e = json.loads(out)["eclipses"][0]
    d = e["moon_distance_earth_radii"]
    # built on DE421 with Danjon's enlargement: the distance and the enlargement come back within 3 sigma
    assert abs(d["value"] - e["modern"]["moon_distance_earth_radii"]) < 3 * d["sigma"]
    u = e["umbra_enlargement_percent"]
    assert abs(u["value"] - e["modern"]["umbra_enlargement_percent"]) < 3 * u["sigma"]
    code, out, err = run(["reduce", "phases", camp, "--json"], capsys, monkeypatch)
    assert code == 0, err
    p = json.loads(out)
    kinds = {x["kind"] for x in p["estimates"]}
    assert len(kinds) == 3  # timings, measured angles, photo series
    r = p["sun_moon_distance_ratio"]
    assert r["low"] <= p["expected_ratio"] and (r["high"] is None or p["expected_ratio"] <= r["high"] * 1.5)


def test_simulate_never_writes_over_a_log_the_campaign_lists(camp, capsys, monkeypatch):
    before = (camp.parent / "logs" / "shadows.csv").read_bytes()
    code, out, err = run(["simulate", "shadows", camp, "--from", "2027-03-22", "--to", "2027-03-22", "-o",
                          camp.parent / "logs"], capsys, monkeypatch)
    assert code == 2 and "one of the inputs" in err
    assert (camp.parent / "logs" / "shadows.csv").read_bytes() == before


def test_unknown_blunder_is_one_line(camp, capsys, monkeypatch):
    code, out, err = run(["simulate", "shadows", camp, "--from", "2027-03-22", "--to", "2027-03-22", "-o",
                          camp.parent / "x", "--blunders", "typo"], capsys, monkeypatch)
    assert not (camp.parent / "x" / "shadows.csv").exists()
    assert code == 2 and "--blunders: expected some of" in err
