"""The transit commands end to end: plan (contract keys, calendar, caution), simulate, reduce, ladder."""

from __future__ import annotations

import json

from tests.helpers import run_cli

CAMPAIGN = """
[campaign]
name = "Transit rehearsal"
{sites}
[logs]
transits = ["logs/transits.csv"]
"""
SITES = [("capetown", -33.93, 18.42), ("perth", -31.95, 115.86), ("nairobi", -1.29, 36.82),
         ("almaty", 43.24, 76.89), ("cairo", 30.04, 31.24), ("delhi", 28.61, 77.21)]


def _campaign(tmp_path):
    text = "".join(f'\n[[site]]\nid = "{i}"\nlatitude_deg = {a}\nlongitude_deg = {b}\nelevation_m = 0\n'
                   for i, a, b in SITES)
    path = tmp_path / "c.toml"
    path.write_text(CAMPAIGN.format(sites=text))
    return path


def test_plan_simulate_reduce_and_ladder(tmp_path, capsys, monkeypatch):
    c = _campaign(tmp_path)
    code, out, _ = run_cli(["plan", "transits", str(c), "--from", "2032-01-01", "--to", "2040-12-31",
                            "--ics", str(tmp_path / "t.ics"), "--json"], capsys, monkeypatch)
    assert code == 0
    data = json.loads(out)
    assert [t["planet"] for t in data["transits"]] == ["mercury", "mercury"]
    first = data["transits"][0]
    assert first["greatest_utc"].startswith("2032-11-13T08:54")
    assert set(first["contacts_utc"]) == {"C1", "C2", "C3", "C4"}
    assert set(first["sites"]["capetown"]["C3"]) >= {"time_utc", "sun_altitude_deg"}
    assert first["sites"]["perth"]["C4"]["sun_altitude_deg"] < 0  # sunset in Perth before egress
    ics = (tmp_path / "t.ics").read_text()
    assert "BEGIN:VEVENT" in ics and "ISO 12312-2" in ics.replace("\r\n ", "")
    code, _, _ = run_cli(["simulate", "transit", str(c), "--from", "2032-11-13", "--to", "2032-11-13",
                          "-o", str(tmp_path / "sim"), "--seed", "4"], capsys, monkeypatch)
    assert code == 0
    (tmp_path / "logs").mkdir()
    (tmp_path / "logs" / "transits.csv").write_bytes((tmp_path / "sim" / "transits.csv").read_bytes())
    code, out, _ = run_cli(["reduce", "transit", str(c), "--json"], capsys, monkeypatch)
    assert code == 0
    r = json.loads(out)
    assert [t["date"] for t in r["transits"]] == ["2032-11-13"]
    p = r["solar_parallax_arcsec"]
    assert p["unit"] == "arcsec" and p["low"] < p["value"] < p["high"]
    assert abs(p["value"] - 8.794) < 4 * p["sigma"]
    assert r["sun_distance_au"]["unit"] == "au" and r["sun_distance_km"]["unit"] == "km"
    code, out, _ = run_cli(["ladder", str(c), "--json"], capsys, monkeypatch)
    assert code == 0
    lad = json.loads(out)
    assert lad["sun_distance_method"] == "transit"
    assert abs(lad["sun_distance_au"]["value"] - r["sun_distance_au"]["value"]) < 0.02 * r["sun_distance_au"]["value"]


def test_a_bad_contact_label_is_one_clear_line(tmp_path, capsys, monkeypatch):
    c = _campaign(tmp_path)
    (tmp_path / "logs").mkdir()
    (tmp_path / "logs" / "transits.csv").write_text(
        "site,time_utc,event\ncapetown,2032-11-13T06:41:48Z,C5\ncapetown,2032-11-13T06:43:52Z,C2\n")
    code, out, err = run_cli(["reduce", "transit", str(c)], capsys, monkeypatch)
    assert code == 2 and len(err.strip().splitlines()) == 1 and "Traceback" not in err
    code, out, err = run_cli(["check", str(c), "--json"], capsys, monkeypatch)
    flags = json.loads(out)["flags"]
    assert any(f["code"] == "bad-value" and "C5" in f["message"] and f["row"] == 1 for f in flags), flags
