"""A shadow log typed in a spreadsheet is read as typed, and reduces to the canonical log's result.

Regression check (our own output, no outside value): the same invented
readings written canonically (site ids, ISO UTC times, ``shadow_cm``) and as
a day-first locale's spreadsheet exports them (``;`` separators, decimal
commas, the date and the local time of day in separate columns, headers such
as ``Shadow (cm)``, sites by name) give the same ``reduce shadows --json`` to
the last digit, apart from the note saying how the file was read.
"""

from __future__ import annotations

import json
from datetime import UTC
from zoneinfo import ZoneInfo

import numpy as np
import pytest

from firstrung.campaign import read_campaign
from firstrung.methods.shadows.log import read_shadow_logs
from firstrung.methods.shadows.rehearsal import (
    ShadowErrors,
    reading_times_utc,
    simulate_shadow_readings,
)
from firstrung.spreadsheet import header_name, iso_date, iso_time_of_day
from firstrung.times import TimeFormatError
from helpers import run_cli

CAMPAIGN = """\
[campaign]
name = "Invented spreadsheet exchange"

[[site]]
id = "ridge"
name = "Ridge outreach dome"
latitude_deg = 46.2
longitude_deg = 7.4
elevation_m = 620
timezone = "Europe/Zurich"

[site.gnomon]
height_m = 1.0

[[site]]
id = "coast"
name = "Coast school field kit"
latitude_deg = 40.8
longitude_deg = 8.5
elevation_m = 10
timezone = "Europe/Rome"

[site.gnomon]
height_m = 1.2
edge = "middle"

[logs]
shadows = ["{log}"]
{order}
"""

SITES = {"ridge": (46.2, 7.4, 620.0, 1.0, "umbra", "Ridge outreach dome", "Europe/Zurich"),
         "coast": (40.8, 8.5, 10.0, 1.2, "middle", "Coast school field kit", "Europe/Rome")}


def readings():
    """Invented noisy readings of both sites on two September days, to 0.1 cm."""
    ids = list(SITES)
    lat, lon, elev, height = (np.array([SITES[s][k] for s in ids]) for k in range(4))
    edges = np.array([SITES[s][4] for s in ids], dtype=object)
    dates = np.array(["2027-09-21", "2027-09-22"], dtype="datetime64[D]")
    times, pair = reading_times_utc(dates, lat, lon, elev, half_span_min=30.0, step_min=5.0)
    index = pair % 2
    syn = simulate_shadow_readings(index, times, lat, lon, elev, height, edges, ShadowErrors(0.002, 0.001),
                                   np.random.default_rng(7))
    return [(ids[i], t.astype("datetime64[s]").item(), f"{100 * length:.1f}")
            for i, t, length in zip(index, times, syn.shadow_m, strict=True)]


def canonical_log() -> str:
    lines = ["site,time_utc,shadow_cm,observer"]
    lines += [f"{site},{t.isoformat()}Z,{cm},team {site}" for site, t, cm in readings()]
    return "\n".join(lines) + "\n"


def spreadsheet_log() -> str:
    """The same readings as a day-first spreadsheet writes them (local clock times, 12-hour on the coast)."""

    lines = ["Site ; Date ; Time (local) ; Shadow (cm) ; Observer"]
    for site, t, cm in readings():
        name, zone = SITES[site][5], SITES[site][6]
        local = t.replace(tzinfo=UTC).astimezone(ZoneInfo(zone))
        clock = local.strftime("%H:%M:%S") if site == "ridge" else local.strftime("%I:%M:%S %p").lstrip("0")
        shown = name.upper() if site == "coast" else f"  {name}"
        lines.append(f"{shown};{local.strftime('%d/%m/%Y')};{clock};{cm.replace('.', ',')};team {site}")
    return "\r\n".join(lines) + "\r\n"


def reduce_json(tmp_path, name, text, order, capsys, monkeypatch) -> dict:
    folder = tmp_path / name
    folder.mkdir()
    (folder / "log.csv").write_text(text, encoding="utf-8")
    (folder / "campaign.toml").write_text(CAMPAIGN.format(log="log.csv", order=order), encoding="utf-8")
    code, out, err = run_cli(["reduce", "shadows", folder / "campaign.toml", "--json"], capsys, monkeypatch)
    assert code == 0, err
    return json.loads(out)


def test_a_spreadsheet_export_reduces_as_the_canonical_log(tmp_path, capsys, monkeypatch):
    canonical = reduce_json(tmp_path, "canonical", canonical_log(), "", capsys, monkeypatch)
    typed = reduce_json(tmp_path, "typed", spreadsheet_log(), 'date_order = "day-first"', capsys, monkeypatch)
    assert typed.pop("notes") == ["log.csv: read as ';'-separated with decimal commas"]
    assert canonical.pop("notes") == []
    assert json.dumps(typed, sort_keys=True) == json.dumps(canonical, sort_keys=True)
    assert typed["rows"]["accepted"] == len(readings()) and typed["problems"] == []


def test_the_typed_rows_are_the_canonical_rows(tmp_path):
    (tmp_path / "a.csv").write_text(canonical_log(), encoding="utf-8")
    (tmp_path / "b.csv").write_text(spreadsheet_log(), encoding="utf-8")
    text = CAMPAIGN.format(log="a.csv", order='date_order = "day-first"')
    (tmp_path / "campaign.toml").write_text(text, encoding="utf-8")
    campaign = read_campaign(tmp_path / "campaign.toml")
    a, b = read_shadow_logs(campaign, [tmp_path / "a.csv"]), read_shadow_logs(campaign, [tmp_path / "b.csv"])
    assert b.problems == () and len(a) == len(b)
    assert b.site.tolist() == a.site.tolist()
    assert (b.time_utc == a.time_utc).all() and b.shadow_m.tolist() == a.shadow_m.tolist()
    assert set(b.time_column) == {"time_local"}


@pytest.mark.parametrize(
    ("cell", "name"),
    [("Shadow (cm)", "shadow_cm"), ("Altitude [deg]", "altitude_deg"), ("Time (local)", "time_local"),
     (" TIME UTC ", "time_utc"), ("Tip x (mm)", "tip_x_mm"), ("Zenith distance (°)", "zenith_distance_deg"),
     ("\ufeffSite", "site")],
)
def test_header_spellings(cell, name):
    assert header_name(cell) == name


@pytest.mark.parametrize(
    ("text", "order", "iso"),
    [("2027-09-22", "day-first", "2027-09-22"), ("22/09/2027", "iso", "2027-09-22"),
     ("22.09.2027", "day-first", "2027-09-22"), ("09/22/2027", "month-first", "2027-09-22"),
     ("03/04/2027", "day-first", "2027-04-03"), ("03/04/2027", "month-first", "2027-03-04"),
     ("29.02.2028", "day-first", "2028-02-29")],
)
def test_dates(text, order, iso):
    assert iso_date(text, order) == iso


@pytest.mark.parametrize(
    ("text", "message"),
    [("03/04/2027", "ambiguous date '03/04/2027'"), ("31/02/2027", "(no such date)"),
     ("22/09/27", "expected a date such as 2027-09-22, got '22/09/27'")],
)
def test_dates_refused(text, message):
    with pytest.raises(TimeFormatError) as info:
        iso_date(text)
    assert message in info.value.message


@pytest.mark.parametrize(
    ("text", "clock"),
    [("13:14", "13:14:00"), ("13:14:10", "13:14:10"), ("1:14 PM", "13:14:00"), ("12:00 pm", "12:00:00"),
     ("12:30 AM", "00:30:00"), ("9:05:07.25", "09:05:07.25")],
)
def test_times_of_day(text, clock):
    assert iso_time_of_day(text) == clock


@pytest.mark.parametrize("text", ["25:00", "13:14 PM", "2027-09-22T13:14", "noon"])
def test_times_of_day_refused(text):
    with pytest.raises(TimeFormatError):
        iso_time_of_day(text)


def test_the_templates_of_the_other_forms_read_as_logs(tmp_path):
    from firstrung.methods.shadows.sheet import blank_field_kit

    kit = blank_field_kit()
    for name in ("altitudes-template.csv", "traces-template.csv"):
        (tmp_path / name).write_text(kit[name], encoding="utf-8")
    (tmp_path / "campaign.toml").write_text(CAMPAIGN.format(log="x.csv", order=""), encoding="utf-8")
    campaign = read_campaign(tmp_path / "campaign.toml")
    angles = read_shadow_logs(campaign, [tmp_path / "altitudes-template.csv"])
    assert angles.problems == () and angles.form.tolist() == ["angle"] and angles.limb.tolist() == ["lower"]
    assert angles.altitude_deg.tolist() == [41.62] and angles.angle_sigma_deg.tolist() == [0.1]
    # Europe/Zurich is on CEST (UTC+2) on 2027-09-22
    assert angles.time_utc[0] == np.datetime64("2027-09-22T11:14")
    traces = read_shadow_logs(campaign, [tmp_path / "traces-template.csv"])
    # one mark of a trace without times: read, then refused as too few to find the noon shadow
    assert [p.message.split(";")[0] for p in traces.problems] == [
        "a trace without times at site 'ridge' on 2027-09-22 has 1 point(s) (row 1)"]
    assert "grid" in kit["traces-sheet.html"] and "Trace grid" in kit["shadows-sheet.html"]


def test_the_fast_path_reads_angles_and_traces_as_the_full_checks_do(tmp_path):
    """Plain angle and trace rows (timed or not) take the reader's fast path: same arrays, same problems."""
    from firstrung import tabular

    rows = ["site,time_utc,altitude_deg,limb,tip_x_cm,tip_y_mm,observer",
            "ridge,2027-09-22T11:14:00Z,41.62,lower,,,a", "ridge,2027-09-22T11:16:00Z,41.7,Center,,,b",
            "ridge,2027-09-22T11:18:00Z,-1,,,,c", "coast,2027-09-22T11:20:00Z,,,15.2,-988,d",
            "coast,2027-09-22T11:22:00Z,,,15.2,,e", "coast,2027-09-22T11:24Z,43.1,,1,2,f",
            "coast,2027-09-22 11:26,90,upper,,,g", "nowhere,2027-09-22T11:28:00Z,40,,,,h",
            "ridge,2027-09-22T11:30:00Z,1e1,,,,i", "coast,2027-09-22T11:32:00Z,,,-0.5,7.25,j"]
    untimed = ["site,date,tip_x_mm,tip_y_mm,observer", *(f"ridge,2027-09-22,{x},-988,a" for x in (-300, -150, 0, 150)),
               "ridge,22/09/2027,300,-990,b", "coast,2027-09-22,15,,d", "nowhere,2027-09-22,1,2,e",
               "coast,2027-02-30,3,4,f", "Coast,2027-09-23,1.5e2,-980,g", "coast,2027-09-23,-0.5,-970,h",
               "ridge,1066-10-14,1,2,i", *(f"coast,2027-09-23,{x},-975,j" for x in (-200, -100, 100))]
    files = {"a.csv": rows, "b.csv": [r.replace(",altitude_deg,", ",zenith_distance_deg,") for r in rows],
             "untimed.csv": untimed}
    (tmp_path / "campaign.toml").write_text(CAMPAIGN.format(log="a.csv", order=""), encoding="utf-8")
    campaign = read_campaign(tmp_path / "campaign.toml")
    for name, lines in files.items():
        (tmp_path / name).write_text("\n".join(lines) + "\n", encoding="utf-8")
        fast = read_shadow_logs(campaign, [tmp_path / name])
        try:
            tabular.FAST_PATH = False
            slow = read_shadow_logs(campaign, [tmp_path / name])
        finally:
            tabular.FAST_PATH = True
        assert [str(p) for p in fast.problems] == [str(p) for p in slow.problems] and len(fast) == len(slow) >= 6
        for field in ("row", "site", "time_utc", "time_column", "form", "timed", "altitude_deg", "angle_column", "limb",
                      "angle_sigma_deg", "tip_x_m", "tip_y_m", "shadow_m", "shadow_column", "observer", "edge"):
            assert np.asarray(getattr(fast, field)).tolist() == np.asarray(getattr(slow, field)).tolist() or (
                np.asarray(getattr(fast, field)).dtype.kind == "f"
                and np.array_equal(getattr(fast, field), getattr(slow, field), equal_nan=True)), field
