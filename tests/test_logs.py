"""Tests of the log readers (firstrung.tabular and each method's log module): reading shadow, eclipse and half-moon CSV logs.

All sites, observers and readings are invented.
"""

from pathlib import Path

import numpy as np
import pytest

from firstrung.campaign import read_campaign
from firstrung.methods.eclipse.log import EclipseLog, read_eclipse_logs
from firstrung.methods.phases.log import PhaseLog, read_phase_logs
from firstrung.methods.shadows.log import ShadowLog, read_shadow_logs

CAMPAIGN = """\
[campaign]
name = "Invented exchange"

[[site]]
id = "ridge"
latitude_deg = 46.2
longitude_deg = 7.4
timezone = "Europe/Zurich"

[site.gnomon]
height_m = 1.0

[[site]]
id = "coast"
latitude_deg = 40.8
longitude_deg = 8.5

[logs]
shadows = ["logs/shadows.csv"]
eclipse = ["logs/eclipse.csv"]
phases = ["logs/phases.csv"]
"""


@pytest.fixture
def campaign_dir(tmp_path):
    (tmp_path / "logs").mkdir()
    (tmp_path / "campaign.toml").write_text(CAMPAIGN, encoding="utf-8")
    return tmp_path


def write_log(folder: Path, name: str, text: str) -> Path:
    path = folder / "logs" / name
    path.write_text(text, encoding="utf-8")
    return path


def shadows(folder: Path, text: str) -> ShadowLog:
    write_log(folder, "shadows.csv", text)
    return read_shadow_logs(read_campaign(folder / "campaign.toml"))


def eclipse(folder: Path, text: str) -> EclipseLog:
    write_log(folder, "eclipse.csv", text)
    return read_eclipse_logs(read_campaign(folder / "campaign.toml"))


def phases(folder: Path, text: str) -> PhaseLog:
    write_log(folder, "phases.csv", text)
    return read_phase_logs(read_campaign(folder / "campaign.toml"))


def messages(log) -> list[str]:
    return [str(problem) for problem in log.problems]


# --- shadows: good rows ---------------------------------------------------------------


def test_contract_example_with_local_times(campaign_dir):
    log = shadows(
        campaign_dir,
        "site,time_local,shadow_cm,observer,note\n"
        "ridge,2027-03-20T12:38:00,103.8,T. Okafor,board re-levelled before reading\n"
        "ridge,2027-03-20T12:42:00,103.8,T. Okafor,\n",
    )
    assert log.problems == ()
    assert len(log) == 2 and log.rows_read == 2
    assert log.file.tolist() == ["logs/shadows.csv"] * 2
    assert log.row.tolist() == [1, 2]
    assert log.site.tolist() == ["ridge", "ridge"]
    assert log.time_utc.dtype == np.dtype("datetime64[ms]")
    # Europe/Zurich is UTC+1 on 2027-03-20.
    assert log.time_utc.tolist() == [
        np.datetime64("2027-03-20T11:38:00", "ms").item(),
        np.datetime64("2027-03-20T11:42:00", "ms").item(),
    ]
    assert log.time_column.tolist() == ["time_local", "time_local"]
    np.testing.assert_allclose(log.shadow_m, [1.038, 1.038], rtol=0, atol=1e-12)
    assert log.shadow_column.tolist() == ["shadow_cm", "shadow_cm"]
    assert np.isnan(log.gnomon_m).all()
    assert log.edge.tolist() == [None, None]
    assert np.isnan(log.temperature_c).all() and np.isnan(log.pressure_hpa).all()
    assert log.observer.tolist() == ["T. Okafor", "T. Okafor"]
    assert log.note.tolist() == ["board re-levelled before reading", ""]
    assert log.ignored_columns == ()


@pytest.mark.parametrize(
    ("column", "cell", "metres"),
    [
        ("shadow_m", "1.038", 1.038),
        ("shadow_cm", "103.8", 1.038),
        ("shadow_mm", "1038", 1.038),
        ("shadow_mm", "2.5e3", 2.5),
    ],
)
def test_length_units_are_converted_to_metres(campaign_dir, column, cell, metres):
    log = shadows(campaign_dir, f"site,time_utc,{column}\nridge,2027-03-20T11:38:00Z,{cell}\n")
    assert log.problems == ()
    assert log.shadow_m[0] == pytest.approx(metres, abs=1e-12)


@pytest.mark.parametrize(
    ("column", "cell", "metres"),
    [("gnomon_m", "1.25", 1.25), ("gnomon_cm", "125", 1.25), ("gnomon_mm", "1250", 1.25)],
)
def test_gnomon_units_are_converted_to_metres(campaign_dir, column, cell, metres):
    log = shadows(
        campaign_dir, f"site,time_utc,shadow_m,{column}\nridge,2027-03-20T11:38:00Z,1.0,{cell}\n"
    )
    assert log.problems == ()
    assert log.gnomon_m[0] == pytest.approx(metres, abs=1e-12)


def test_optional_columns(campaign_dir):
    log = shadows(
        campaign_dir,
        "site,time_utc,shadow_m,edge,temperature_c,pressure_hpa\n"
        "ridge,2027-03-20T11:38:00Z,1.0,Middle,-5.5,950\n"
        "coast,2027-03-20 11:40,1.1,,,\n",
    )
    assert log.problems == ()
    assert log.edge.tolist() == ["middle", None]
    assert log.temperature_c[0] == -5.5 and np.isnan(log.temperature_c[1])
    assert log.pressure_hpa[0] == 950.0 and np.isnan(log.pressure_hpa[1])
    assert log.observer.tolist() == ["", ""]


def test_bom_comments_blank_lines_and_header_case(campaign_dir):
    text = (
        "# shadow log of the invented ridge team\n"
        " Site ,TIME_UTC, Shadow_M \n"
        "# first reading\n"
        "ridge,2027-03-20T11:38:00Z,1.0\n"
        "\n"
        ",,\n"
        "ridge,2027-03-20T11:42:00Z,abc\n"
        "   # indented comment\n"
        "coast,2027-03-20T11:44:00Z,1.2\n"
    )
    path = campaign_dir / "logs" / "shadows.csv"
    path.write_bytes(b"\xef\xbb\xbf" + text.encode("utf-8"))
    log = read_shadow_logs(read_campaign(campaign_dir / "campaign.toml"))
    # Data rows are counted without the comment and blank lines: the bad one is row 2.
    assert messages(log) == [
        "logs/shadows.csv:2:shadow_m: expected a positive number of metres, got 'abc'"
    ]
    assert log.row.tolist() == [1, 3]
    assert log.rows_read == 3


def test_good_rows_are_kept_beside_bad_ones(campaign_dir):
    log = shadows(
        campaign_dir,
        "site,time_utc,shadow_cm\n"
        "ridge,2027-03-20T11:38:00Z,103.8\n"
        "ridge,2027-03-20T11:40:00Z,-1\n"
        "hill,2027-03-20T11:42:00Z,103.9\n"
        "coast,2027-03-20T11:44:00Z,110.2\n",
    )
    assert log.row.tolist() == [1, 4]
    assert log.site.tolist() == ["ridge", "coast"]
    assert messages(log) == [
        "logs/shadows.csv:2:shadow_cm: expected a positive number of centimetres, got '-1'",
        "logs/shadows.csv:3:site: unknown site 'hill' (known: ridge, coast)",
    ]
    assert log.rows_read == 4


def test_unknown_columns_are_ignored_and_listed(campaign_dir):
    log = shadows(
        campaign_dir,
        "site,time_utc,shadow_m,weather,,Colour\nridge,2027-03-20T11:38:00Z,1.0,fair,,red\n",
    )
    assert log.problems == ()
    assert len(log) == 1
    assert log.ignored_columns == ("weather", "colour")


def test_select_and_len(campaign_dir):
    log = shadows(
        campaign_dir,
        "site,time_utc,shadow_m\n"
        "ridge,2027-03-20T11:38:00Z,1.0\n"
        "coast,2027-03-20T11:40:00Z,1.1\n"
        "ridge,2027-03-20T11:42:00Z,1.2\n"
        "ridge,2027-03-20T11:42:00Z,x\n",
    )
    ridge = log.select(log.site == "ridge")
    assert isinstance(ridge, ShadowLog)
    assert len(ridge) == 2
    assert ridge.shadow_m.tolist() == [1.0, 1.2]
    assert ridge.row.tolist() == [1, 3]
    assert ridge.problems == log.problems and ridge.rows_read == 4
    assert len(log) == 3
    assert log.select([2]).shadow_m.tolist() == [1.2]


def test_several_files_and_explicit_paths(campaign_dir):
    write_log(campaign_dir, "a.csv", "site,time_utc,shadow_m\nridge,2027-03-20T11:38:00Z,1.0\n")
    write_log(
        campaign_dir,
        "b.csv",
        "site,time_utc,shadow_mm\ncoast,2027-03-20T11:38:00Z,x\ncoast,2027-03-20T11:39:00Z,1100\n",
    )
    campaign = read_campaign(campaign_dir / "campaign.toml")
    log = read_shadow_logs(campaign, [campaign_dir / "logs/a.csv", campaign_dir / "logs/b.csv"])
    assert log.file.tolist() == ["logs/a.csv", "logs/b.csv"]
    assert log.row.tolist() == [1, 2]
    assert log.shadow_m.tolist() == pytest.approx([1.0, 1.1])
    assert messages(log) == [
        "logs/b.csv:1:shadow_mm: expected a positive number of millimetres, got 'x'"
    ]
    assert log.rows_read == 3


def test_empty_result_has_typed_arrays(campaign_dir):
    log = read_shadow_logs(read_campaign(campaign_dir / "campaign.toml"), [])
    assert len(log) == 0 and log.problems == () and log.rows_read == 0
    assert log.time_utc.dtype == np.dtype("datetime64[ms]")
    assert log.shadow_m.dtype == np.dtype(float)


# --- shadows: row problems ----------------------------------------------------------------

HEADER = "site,time_utc,shadow_cm,gnomon_m,edge,temperature_c,pressure_hpa\n"


@pytest.mark.parametrize(
    ("row", "expected"),
    [
        (
            "ridge,2027-03-20T11:38:00Z,abc,,,,",
            "shadow_cm: expected a positive number of centimetres, got 'abc'",
        ),
        (
            "ridge,2027-03-20T11:38:00Z,,,,,",
            "shadow_cm: expected a positive number of centimetres, got an empty cell",
        ),
        (
            "ridge,2027-03-20T11:38:00Z,nan,,,,",
            "shadow_cm: expected a positive number of centimetres, got 'nan'",
        ),
        (
            "ridge,2027-03-20T11:38:00Z,inf,,,,",
            "shadow_cm: expected a positive number of centimetres, got 'inf'",
        ),
        (
            "ridge,2027-03-20T11:38:00Z,0,,,,",
            "shadow_cm: expected a positive number of centimetres, got '0'",
        ),
        (
            "ridge,2027-03-20T11:38:00Z,-103.8,,,,",
            "shadow_cm: expected a positive number of centimetres, got '-103.8'",
        ),
        (
            "ridge,2027-03-20T11:38:00Z,103.8 cm,,,,",
            "shadow_cm: expected a positive number of centimetres, got '103.8 cm'",
        ),
        (
            "ridge,2027-03-20T11:38:00Z,1_038,,,,",
            "shadow_cm: expected a positive number of centimetres, got '1_038'",
        ),
        (
            "ridge,2027-03-20T11:38:00Z,1e300,,,,",
            "shadow_cm: expected a shadow length of at most 1000 m, got '1e300' (1e+298 m)",
        ),
        (
            "ridge,2027-03-20T11:38:00Z,100001,,,,",
            "shadow_cm: expected a shadow length of at most 1000 m, got '100001' (1000.01 m)",
        ),
        (
            "ridge,2027-03-20T11:38:00Z,103.8,0,,,",
            "gnomon_m: expected a positive number of metres, got '0'",
        ),
        (
            "ridge,2027-03-20T11:38:00Z,103.8,150,,,",
            "gnomon_m: expected a gnomon height below 100 m, got '150' (150 m)",
        ),
        (
            "ridge,2027-03-20T11:38:00Z,103.8,,tip,,",
            "edge: expected edge umbra, middle or outer, got 'tip'",
        ),
        (
            "ridge,2027-03-20T11:38:00Z,103.8,,,-90,",
            "temperature_c: expected a temperature between -80 and 60 degrees Celsius, got '-90'",
        ),
        (
            "ridge,2027-03-20T11:38:00Z,103.8,,,61,",
            "temperature_c: expected a temperature between -80 and 60 degrees Celsius, got '61'",
        ),
        (
            "ridge,2027-03-20T11:38:00Z,103.8,,,,1200",
            "pressure_hpa: expected a pressure between 300 and 1100 hPa, got '1200'",
        ),
        (
            "ridge,2027-03-20T11:38:00Z,103.8,,,,29.9",
            "pressure_hpa: expected a pressure between 300 and 1100 hPa, got '29.9'",
        ),
        ("hill,2027-03-20T11:38:00Z,103.8,,,,", "site: unknown site 'hill' (known: ridge, coast)"),
        (
            ",2027-03-20T11:38:00Z,103.8,,,,",
            "site: expected a site id (ridge, coast), got an empty cell",
        ),
        (
            "ridge,20/03/2027 11:38,103.8,,,,",
            "time_utc: expected an ISO 8601 UTC time such as 2027-03-20T11:38:00Z, got '20/03/2027 11:38'",
        ),
        (
            "ridge,,103.8,,,,",
            "time_utc: expected an ISO 8601 UTC time such as 2027-03-20T11:38:00Z, got an empty cell",
        ),
        (
            "ridge,2027-03-20T12:38:00+01:00,103.8,,,,",
            "time_utc: expected an ISO 8601 UTC time such as 2027-03-20T11:38:00Z, got "
            "'2027-03-20T12:38:00+01:00' (offset +01:00 is not UTC; convert it to UTC or give time_local)",
        ),
        (
            "ridge,1850-03-20T11:38:00Z,103.8,,,,",
            "time_utc: expected a time between 1899-07-29 and 2053-10-08 (the span of the bundled "
            "ephemeris), got '1850-03-20T11:38:00Z'",
        ),
        (
            "ridge,2060-03-20T11:38:00Z,103.8,,,,",
            "time_utc: expected a time between 1899-07-29 and 2053-10-08 (the span of the bundled "
            "ephemeris), got '2060-03-20T11:38:00Z'",
        ),
        (
            "ridge,2027-03-20T11:38:00Z,103.8,,,,,surplus",
            " expected 7 cells as in the header, got 8; put a cell that holds a ',' in double quotes",
        ),
    ],
)
def test_shadow_row_problems(campaign_dir, row, expected):
    good = "ridge,2027-03-20T11:30:00Z,103.8,,,,\n"
    log = shadows(campaign_dir, HEADER + good + row + "\n" + good)
    assert messages(log) == [f"logs/shadows.csv:2:{expected}"]
    assert log.row.tolist() == [1, 3]
    assert log.rows_read == 3


def test_every_bad_cell_of_a_row_is_reported(campaign_dir):
    log = shadows(campaign_dir, HEADER + "hill,2027-03-20T11:38:00Z,abc,,tip,,\n")
    assert messages(log) == [
        "logs/shadows.csv:1:site: unknown site 'hill' (known: ridge, coast)",
        "logs/shadows.csv:1:shadow_cm: expected a positive number of centimetres, got 'abc'",
        "logs/shadows.csv:1:edge: expected edge umbra, middle or outer, got 'tip'",
    ]
    assert len(log) == 0


def test_short_rows_count_as_empty_cells(campaign_dir):
    log = shadows(campaign_dir, HEADER + "ridge,2027-03-20T11:38:00Z,103.8\n")
    assert log.problems == ()
    assert np.isnan(log.gnomon_m[0])


# --- local times --------------------------------------------------------------------


LOCAL_HEADER = "site,time_local,shadow_m\n"


@pytest.mark.parametrize(
    ("row", "expected"),
    [
        (
            "ridge,2027-03-28T02:30,1.0",
            "time_local: local time 2027-03-28T02:30:00 does not exist in Europe/Zurich: the clocks "
            "jump forward over it (daylight saving starts); check the clock, or give time_utc",
        ),
        (
            "ridge,2027-10-31T02:30,1.0",
            "time_local: local time 2027-10-31T02:30:00 is ambiguous in Europe/Zurich: the clocks go "
            "back and it happens twice (daylight saving ends), at 2027-10-31T00:30:00Z and "
            "2027-10-31T01:30:00Z; give time_utc",
        ),
        (
            "coast,2027-03-20T12:38:00,1.0",
            "time_local: site 'coast' has no timezone in the campaign file; give time_utc or add timezone",
        ),
        (
            "ridge,2027-03-20T12:38:00Z,1.0",
            "time_local: expected an ISO 8601 local time without offset such as 2027-03-20T12:38:00, "
            "got '2027-03-20T12:38:00Z' (time_local must have no offset; give times with an offset "
            "as time_utc in UTC)",
        ),
        (
            "ridge,,1.0",
            "time_local: expected an ISO 8601 local time such as 2027-03-20T12:38:00, got an empty cell",
        ),
        ("hill,2027-03-20T12:38:00,1.0", "site: unknown site 'hill' (known: ridge, coast)"),
    ],
)
def test_local_time_problems(campaign_dir, row, expected):
    log = shadows(campaign_dir, LOCAL_HEADER + row + "\n")
    assert messages(log) == [f"logs/shadows.csv:1:{expected}"]
    assert len(log) == 0


def test_local_time_across_the_daylight_saving_change(campaign_dir):
    log = shadows(
        campaign_dir,
        LOCAL_HEADER + "ridge,2027-03-28T01:59,1.0\nridge,2027-03-28T03:00,1.0\n",
    )
    assert log.problems == ()
    # CET (UTC+1) before the change, CEST (UTC+2) after: one minute apart in UTC.
    assert (log.time_utc[1] - log.time_utc[0]) == np.timedelta64(60_000, "ms")


# --- file-level problems ---------------------------------------------------------------


@pytest.mark.parametrize(
    ("text", "expected"),
    [
        (
            "time_utc,shadow_cm\nridge,2027-03-20T11:38:00Z\n",
            "missing column 'site' (expected site, time_utc|time_local, shadow_m|shadow_cm|shadow_mm; "
            "found time_utc, shadow_cm)",
        ),
        (
            "site,time,shadow_cm\nridge,2027-03-20T11:38:00Z,1\n",
            "missing column 'time_utc' or 'time_local' (expected site, time_utc|time_local, "
            "shadow_m|shadow_cm|shadow_mm; found site, time, shadow_cm)",
        ),
        (
            "site,time_utc,shadow_in\nridge,2027-03-20T11:38:00Z,1\n",
            "missing column 'shadow_m' or 'shadow_cm' or 'shadow_mm' (expected site, "
            "time_utc|time_local, shadow_m|shadow_cm|shadow_mm; found site, time_utc, shadow_in)",
        ),
        (
            "site,time_utc,time_local,shadow_cm\nridge,2027-03-20T11:38:00Z,,1\n",
            "both time_utc and time_local present; give one time column per file",
        ),
        (
            "site,time_utc,shadow_cm,shadow_mm\nridge,2027-03-20T11:38:00Z,1,10\n",
            "more than one of the columns shadow_cm, shadow_mm; give exactly one of shadow_m, "
            "shadow_cm, shadow_mm",
        ),
        (
            "site,time_utc,shadow_cm,gnomon_m,gnomon_cm\nridge,2027-03-20T11:38:00Z,1,1,100\n",
            "more than one of the columns gnomon_m, gnomon_cm; give exactly one of gnomon_m, "
            "gnomon_cm, gnomon_mm",
        ),
        (
            "site,time_utc,shadow_cm,site\nridge,2027-03-20T11:38:00Z,1,ridge\n",
            "column 'site' appears twice",
        ),
        (
            "",
            "empty file (expected a header line: site, time_utc|time_local, "
            "shadow_m|shadow_cm|shadow_mm)",
        ),
        (
            "# only a comment\n\n",
            "empty file (expected a header line: site, time_utc|time_local, "
            "shadow_m|shadow_cm|shadow_mm)",
        ),
    ],
)
def test_file_level_problems(campaign_dir, text, expected):
    log = shadows(campaign_dir, text)
    assert messages(log) == [f"logs/shadows.csv: {expected}"]
    assert len(log) == 0 and log.rows_read == 0


def test_missing_file_is_a_problem_not_an_exception(campaign_dir):
    log = read_shadow_logs(read_campaign(campaign_dir / "campaign.toml"))
    assert messages(log) == ["logs/shadows.csv: no such file"]
    assert len(log) == 0
    assert messages(read_eclipse_logs(read_campaign(campaign_dir / "campaign.toml"))) == [
        "logs/eclipse.csv: no such file"
    ]


def test_a_folder_instead_of_a_file(campaign_dir):
    (campaign_dir / "logs" / "shadows.csv").mkdir()
    log = read_shadow_logs(read_campaign(campaign_dir / "campaign.toml"))
    assert messages(log) == ["logs/shadows.csv: is a folder, expected a CSV file"]


def test_other_encodings_are_read_with_a_note(campaign_dir):
    path = campaign_dir / "logs" / "shadows.csv"
    path.write_bytes(
        "site,time_utc,shadow_m,note\nridge,2027-03-20T11:38:00Z,1,d\xe9j\xe0\n".encode("latin-1")
    )
    campaign = read_campaign(campaign_dir / "campaign.toml")
    log = read_shadow_logs(campaign)
    assert log.problems == ()
    assert log.note.tolist() == ["d\xe9j\xe0"]
    assert log.notes == (
        "logs/shadows.csv: read as Windows-1252 text, as it is not UTF-8 (byte 0xe9 at offset "
        "58; check letters outside ASCII in names and notes)",
    )
    path.write_bytes("site,time_utc,shadow_m\nridge,2027-03-20T11:38:00Z,1.5\n".encode("utf-16"))
    log = read_shadow_logs(campaign)
    assert log.problems == () and log.shadow_m.tolist() == [1.5]
    assert log.notes == ("logs/shadows.csv: read as UTF-16 text",)
    path.write_bytes("site,time_utc,shadow_m\n".encode("utf-32"))
    assert messages(read_shadow_logs(campaign)) == [
        "logs/shadows.csv: UTF-32 text; save the file as CSV UTF-8"
    ]


@pytest.mark.parametrize(
    "data",
    [
        b"site,time_utc,shadow_m\nridge,\x00\x00,1\n",
        b'site,time_utc,shadow_m\nridge,"2027-03-20T11:38:00Z,1\n',
        b"site,time_utc,shadow_m\n" + b"ridge," + b"9" * 200_000 + b",1\n",
        b"\r\n\r\nsite;time_utc;shadow_m\r\nridge;2027;1\r\n",
        b'"""\n,\n"',
        bytes(range(1, 128)),
    ],
)
def test_garbage_never_crashes(campaign_dir, data):
    (campaign_dir / "logs" / "shadows.csv").write_bytes(data)
    log = read_shadow_logs(read_campaign(campaign_dir / "campaign.toml"))
    assert isinstance(log, ShadowLog)
    assert log.problems
    for problem in log.problems:
        assert "\n" not in str(problem)


def test_inputs_are_never_modified(campaign_dir):
    texts = {
        "shadows.csv": "\ufeffsite,time_local,shadow_cm\n# c\nridge,2027-03-20T12:38:00,103.8\n"
        "ridge,2027-03-28T02:30,x\n",
        "eclipse.csv": "site,time_utc,event,feature\ncoast,2029-06-26T01:32:40Z,u1,\n",
        "phases.csv": "site,time_utc,quarter\nridge,2027-01-15T18:40:00Z,first\r\n",
    }
    for name, text in texts.items():
        write_log(campaign_dir, name, text)
    files = [campaign_dir / "campaign.toml"] + [campaign_dir / "logs" / n for n in texts]
    before = {path: path.read_bytes() for path in files}
    campaign = read_campaign(campaign_dir / "campaign.toml")
    read_shadow_logs(campaign)
    read_eclipse_logs(campaign)
    read_phase_logs(campaign)
    assert {path: path.read_bytes() for path in files} == before
    assert sorted(p.name for p in (campaign_dir / "logs").iterdir()) == sorted(texts)


# --- eclipse --------------------------------------------------------------------------


def test_eclipse_contract_example(campaign_dir):
    log = eclipse(
        campaign_dir,
        "site,time_utc,event,feature,observer\n"
        "coast,2029-06-26T01:32:40Z,U1,,M. Brandt\n"
        "coast,2029-06-26T01:41:05Z,immersion,Kepler,M. Brandt\n"
        "ridge,2029-06-26T01:33:00Z,u2,,\n"
        "ridge,2029-06-26T01:50:00Z,Emersion,Kepler,\n",
    )
    assert log.problems == ()
    assert log.event.tolist() == ["U1", "immersion", "U2", "emersion"]
    assert log.feature.tolist() == ["", "Kepler", "", "Kepler"]
    assert np.isnan(log.time_sigma_s).all()
    assert log.observer.tolist() == ["M. Brandt", "M. Brandt", "", ""]
    assert log.time_utc[0] == np.datetime64("2029-06-26T01:32:40", "ms")


def test_eclipse_time_sigma(campaign_dir):
    log = eclipse(
        campaign_dir,
        "site,time_utc,event,time_sigma_s\n"
        "coast,2029-06-26T01:32:40Z,U1,5\n"
        "coast,2029-06-26T01:32:40Z,U1,0\n"
        "coast,2029-06-26T01:32:40Z,U1,inf\n",
    )
    assert log.time_sigma_s.tolist() == [5.0]
    assert messages(log) == [
        "logs/eclipse.csv:2:time_sigma_s: expected a positive number of seconds, got '0'",
        "logs/eclipse.csv:3:time_sigma_s: expected a positive number of seconds, got 'inf'",
    ]


@pytest.mark.parametrize(
    ("row", "expected"),
    [
        (
            "coast,2029-06-26T01:32:40Z,U5,",
            "event: expected an event U1, U2, U3, U4, immersion or emersion, got 'U5'",
        ),
        (
            "coast,2029-06-26T01:32:40Z,,",
            "event: expected an event U1, U2, U3, U4, immersion or emersion, got an empty cell",
        ),
        (
            "coast,2029-06-26T01:32:40Z,immersion,",
            "feature: expected the lunar feature of the immersion (e.g. Kepler), got an empty cell",
        ),
        (
            "coast,2029-06-26T01:32:40Z,U3,Tycho",
            "feature: expected an empty cell for the umbral contact U3, got 'Tycho'",
        ),
    ],
)
def test_eclipse_row_problems(campaign_dir, row, expected):
    log = eclipse(campaign_dir, "site,time_utc,event,feature\n" + row + "\n")
    assert messages(log) == [f"logs/eclipse.csv:1:{expected}"]


def test_eclipse_feature_column_absent(campaign_dir):
    log = eclipse(
        campaign_dir,
        "site,time_utc,event\ncoast,2029-06-26T01:41:05Z,emersion\ncoast,2029-06-26T01:32:40Z,U1\n",
    )
    assert messages(log) == [
        "logs/eclipse.csv:1:feature: expected the lunar feature of the emersion (e.g. Kepler), "
        "got an empty cell"
    ]
    assert log.event.tolist() == ["U1"]


def test_eclipse_missing_event_column(campaign_dir):
    log = eclipse(campaign_dir, "site,time_utc\ncoast,2029-06-26T01:41:05Z\n")
    assert messages(log) == [
        "logs/eclipse.csv: missing column 'event' (expected site, time_utc|time_local, event; "
        "found site, time_utc)"
    ]


# --- phases --------------------------------------------------------------------------


def test_phases_contract_example(campaign_dir):
    log = phases(
        campaign_dir,
        "site,time_utc,quarter,elongation_deg,illuminated_fraction,observer\n"
        "ridge,2027-01-15T18:40:00Z,first,89.6,,school team 2\n"
        "coast,2027-01-15T17:55:00Z,First,,0.47,photo series A\n"
        "coast,2027-01-30T05:00:00Z,last,,,\n",
    )
    assert log.problems == ()
    assert log.quarter.tolist() == ["first", "first", "last"]
    assert log.elongation_deg[0] == 89.6 and np.isnan(log.elongation_deg[1:]).all()
    assert log.illuminated_fraction[1] == 0.47
    assert np.isnan(log.illuminated_fraction[[0, 2]]).all()
    assert np.isnan(log.time_sigma_s).all()
    assert log.observer.tolist() == ["school team 2", "photo series A", ""]


@pytest.mark.parametrize(
    ("row", "expected"),
    [
        (
            "ridge,2027-01-15T18:40:00Z,full,,,",
            "quarter: expected quarter first or last, got 'full'",
        ),
        (
            "ridge,2027-01-15T18:40:00Z,first,180,,",
            "elongation_deg: expected an elongation between 0 and 180 degrees (exclusive), got '180'",
        ),
        (
            "ridge,2027-01-15T18:40:00Z,first,0,,",
            "elongation_deg: expected an elongation between 0 and 180 degrees (exclusive), got '0'",
        ),
        (
            "ridge,2027-01-15T18:40:00Z,first,,1.2,",
            "illuminated_fraction: expected an illuminated fraction between 0 and 1, got '1.2'",
        ),
        (
            "ridge,2027-01-15T18:40:00Z,first,89.6,0.5,",
            " give elongation_deg or illuminated_fraction in a row, not both",
        ),
        (
            "ridge,2027-01-15T18:40:00Z,first,,,-3",
            "time_sigma_s: expected a positive number of seconds, got '-3'",
        ),
    ],
)
def test_phase_row_problems(campaign_dir, row, expected):
    log = phases(
        campaign_dir,
        "site,time_utc,quarter,elongation_deg,illuminated_fraction,time_sigma_s\n" + row + "\n",
    )
    assert messages(log) == [f"logs/phases.csv:1:{expected}"]
    assert len(log) == 0


def test_phases_with_local_times(campaign_dir):
    log = phases(campaign_dir, "site,time_local,quarter\nridge,2027-07-15T22:10,first\n")
    assert log.problems == ()
    assert log.time_utc[0] == np.datetime64("2027-07-15T20:10", "ms")
    assert log.time_column.tolist() == ["time_local"]
