"""The corpus of bad and awkward inputs: each file in tests/data/bad and what it must produce.

One case per file (``tests/data/bad/make_corpus.py`` writes them; all invented).
A log case gives the rows kept, the exact problems (``row:column: message``
after the file name) and the notes of a file read in another form; a
campaign case gives the exact error after the path, or ``None`` when the file
is accepted. Each case is also run through ``firstrung reduce shadows`` (logs:
beside the valid ``shadows_good.csv``) for the exit status and the exact
lines on stderr, never a traceback.
"""

from __future__ import annotations

import json
import shutil
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pytest

from firstrung.campaign import read_campaign
from firstrung.errors import InputError
from firstrung.methods.eclipse.log import read_eclipse_logs
from firstrung.methods.phases.log import read_phase_logs
from firstrung.methods.shadows.log import read_shadow_logs
from helpers import run_cli

BAD = Path(__file__).resolve().parent / "data" / "bad"
READERS = {"shadows": read_shadow_logs, "eclipse": read_eclipse_logs, "phases": read_phase_logs}
#: Readings of the corpus are noise-free values written to 0.1 mm (make_corpus.py).
WRITTEN_TO_M = 0.05e-3
#: Rows of shadows_good.csv.
GOOD_ROWS = 24


@dataclass(frozen=True)
class LogCase:
    file: str
    kind: str
    kept: int
    problems: list[str]
    notes: list[str]


@dataclass(frozen=True)
class CampaignCase:
    file: str
    error: str | None


LOG_CASES = [
    LogCase(
        "eclipse_bad_rows.csv",
        "eclipse",
        kept=1,
        problems=[
            "1:event: expected an event U1, U2, U3, U4, immersion or emersion, got 'U5'",
            "2:event: expected an event U1, U2, U3, U4, immersion or emersion, got an empty cell",
            "3:feature: expected the lunar feature of the immersion (e.g. Kepler), got an empty cell",
            "4:feature: expected an empty cell for the umbral contact U3, got 'Tycho'",
            "5:time_sigma_s: expected a positive number of seconds, got '0'",
            "6:time_sigma_s: expected a timing uncertainty of at most 3600 s, got '1e9'",
            "7:time_sigma_s: expected a positive number of seconds, got 'nan'",
            "8:site: unknown site 'harbour' (known: ridge, coast, plain)",
        ],
        notes=[],
    ),
    LogCase(
        "eclipse_missing_event_column.csv",
        "eclipse",
        kept=0,
        problems=[
            "missing column 'event' (expected site, time_utc|time_local, event; found site, time_utc, contact)"
        ],
        notes=[],
    ),
    LogCase(
        "eclipse_semicolon_decimal_comma.csv",
        "eclipse",
        kept=2,
        problems=[],
        notes=["read as ';'-separated with decimal commas"],
    ),
    LogCase(
        "phases_bad_rows.csv",
        "phases",
        kept=1,
        problems=[
            "1:quarter: expected quarter first or last, got 'full'",
            "2:elongation_deg: expected an elongation between 0 and 180 degrees (exclusive), got '180'",
            "3:illuminated_fraction: expected an illuminated fraction between 0 and 1, got '1.2'",
            "4: give elongation_deg or illuminated_fraction in a row, not both",
            "5:elongation_deg: expected an elongation between 0 and 180 degrees (exclusive), got 'NaN'",
            "6:time_sigma_s: expected a timing uncertainty of at most 3600 s, got '7200'",
        ],
        notes=[],
    ),
    LogCase(
        "phases_both_time_columns.csv",
        "phases",
        kept=0,
        problems=["both time_utc and time_local present; give one time column per file"],
        notes=[],
    ),
    LogCase(
        "phases_tab_decimal_comma.csv",
        "phases",
        kept=1,
        problems=[],
        notes=["read as tab-separated with decimal commas"],
    ),
    LogCase(
        "shadows_absurd_magnitudes.csv",
        "shadows",
        kept=0,
        problems=[
            "1:shadow_mm: expected a shadow length of at most 1000 m, got '1e300' (1e+297 m)",
            "2:shadow_mm: expected a positive number of millimetres, got '1e400' (too large to be a measurement)",
            "3:shadow_mm: expected a positive number of millimetres, got '0'",
            "4:shadow_mm: expected a positive number of millimetres, got '-1039.1'",
            "5:gnomon_m: expected a gnomon height below 100 m, got '150' (150 m)",
            "6:temperature_c: expected a temperature between -80 and 60 degrees Celsius, got '200'",
            "7:pressure_hpa: expected a pressure between 300 and 1100 hPa, got '5'",
            "8:shadow_mm: expected a positive number of millimetres, got '99999999999999999999...' (400 characters) (too large to be a measurement)",
        ],
        notes=[],
    ),
    LogCase(
        "shadows_bad_times.csv",
        "shadows",
        kept=0,
        problems=[
            "1:time_utc: expected an ISO 8601 UTC time such as 2027-03-20T11:38:00Z, got '20/03/2027 11:30'",
            "2:time_utc: expected an ISO 8601 UTC time such as 2027-03-20T11:38:00Z, got '2027-03-20T12:30:00+01:00' (offset +01:00 is not UTC; convert it to UTC or give time_local)",
            "3:time_utc: expected an ISO 8601 UTC time such as 2027-03-20T11:38:00Z, got '2027-02-30T11:30:00Z' (no such date or time)",
            "4:time_utc: expected an ISO 8601 UTC time such as 2027-03-20T11:38:00Z, got an empty cell",
        ],
        notes=[],
    ),
    LogCase(
        "shadows_blank_and_comment_lines.csv",
        "shadows",
        kept=2,
        problems=["2:shadow_mm: expected a positive number of millimetres, got 'abc'"],
        notes=[],
    ),
    LogCase(
        "shadows_bom_then_not_utf8.csv",
        "shadows",
        kept=0,
        problems=[
            "not UTF-8 text although it starts with a UTF-8 byte-order mark (byte 0xe9 at offset 73); save the file as CSV UTF-8"
        ],
        notes=[],
    ),
    LogCase(
        "shadows_both_time_columns.csv",
        "shadows",
        kept=0,
        problems=["both time_utc and time_local present; give one time column per file"],
        notes=[],
    ),
    LogCase(
        "shadows_comma_quoted_decimal_comma.csv",
        "shadows",
        kept=1,
        problems=[
            "1:shadow_mm: expected a positive number of millimetres, got '1039,1' (a comma in a number in a ','-separated file: write it with a decimal point and no thousands separator)"
        ],
        notes=[],
    ),
    LogCase(
        "shadows_comma_split_by_decimal_comma.csv",
        "shadows",
        kept=1,
        problems=[
            "2: expected 4 cells as in the header, got 5 (is '1038,0' a number with a decimal comma? In a ','-separated file write 1038.0, or save the file with ';' separators)"
        ],
        notes=[],
    ),
    LogCase(
        "shadows_cr_only.csv",
        "shadows",
        kept=2,
        problems=[],
        notes=[],
    ),
    LogCase(
        "shadows_crlf.csv",
        "shadows",
        kept=2,
        problems=[],
        notes=[],
    ),
    LogCase(
        "shadows_dst_gap.csv",
        "shadows",
        kept=0,
        problems=[
            "1:time_local: local time 2027-03-28T02:30:00 does not exist in Europe/Zurich: the clocks jump forward over it (daylight saving starts); check the clock, or give time_utc"
        ],
        notes=[],
    ),
    LogCase(
        "shadows_dst_overlap.csv",
        "shadows",
        kept=0,
        problems=[
            "1:time_local: local time 2027-10-31T02:30:00 is ambiguous in Europe/Rome: the clocks go back and it happens twice (daylight saving ends), at 2027-10-31T00:30:00Z and 2027-10-31T01:30:00Z; give time_utc"
        ],
        notes=[],
    ),
    LogCase(
        "shadows_duplicated_column.csv",
        "shadows",
        kept=0,
        problems=["column 'shadow_mm' appears twice"],
        notes=[],
    ),
    LogCase(
        "shadows_empty.csv",
        "shadows",
        kept=0,
        problems=[
            "empty file (expected a header line: site, time_utc|time_local, shadow_m|shadow_cm|shadow_mm)"
        ],
        notes=[],
    ),
    LogCase(
        "shadows_header_case_and_spaces.csv",
        "shadows",
        kept=1,
        problems=[],
        notes=[],
    ),
    LogCase(
        "shadows_local_time_without_zone.csv",
        "shadows",
        kept=0,
        problems=[
            "1:time_local: site 'plain' has no timezone in the campaign file; give time_utc or add timezone"
        ],
        notes=[],
    ),
    LogCase(
        "shadows_missing_length_column.csv",
        "shadows",
        kept=0,
        problems=[
            "missing column 'shadow_m' or 'shadow_cm' or 'shadow_mm' (expected site, time_utc|time_local, shadow_m|shadow_cm|shadow_mm; found site, time_utc, shadow_in)"
        ],
        notes=[],
    ),
    LogCase(
        "shadows_missing_site_column.csv",
        "shadows",
        kept=0,
        problems=[
            "missing column 'site' (expected site, time_utc|time_local, shadow_m|shadow_cm|shadow_mm; found station, time_utc, shadow_mm)"
        ],
        notes=[],
    ),
    LogCase("shadows_missing.csv", "shadows", kept=0, problems=["no such file"], notes=[]),
    LogCase(
        "shadows_multiline_note.csv",
        "shadows",
        kept=2,
        problems=[],
        notes=[],
    ),
    LogCase(
        "shadows_nan_inf.csv",
        "shadows",
        kept=1,
        problems=[
            "1:shadow_mm: expected a positive number of millimetres, got 'nan'",
            "2:shadow_mm: expected a positive number of millimetres, got 'inf'",
            "3:shadow_mm: expected a positive number of millimetres, got '-inf'",
            "4:temperature_c: expected a temperature between -80 and 60 degrees Celsius, got 'NaN'",
        ],
        notes=[],
    ),
    LogCase(
        "shadows_nul_byte.csv",
        "shadows",
        kept=1,
        problems=["2:shadow_mm: expected a positive number of millimetres, got '10\\x0038'"],
        notes=[],
    ),
    LogCase(
        "shadows_only_comments.csv",
        "shadows",
        kept=0,
        problems=[
            "empty file (expected a header line: site, time_utc|time_local, shadow_m|shadow_cm|shadow_mm)"
        ],
        notes=[],
    ),
    LogCase(
        "shadows_outside_ephemeris.csv",
        "shadows",
        kept=0,
        problems=[
            "1:time_utc: expected a time between 1899-07-29 and 2053-10-08 (the span of the bundled ephemeris), got '1850-03-20T11:30:00Z'",
            "2:time_utc: expected a time between 1899-07-29 and 2053-10-08 (the span of the bundled ephemeris), got '2060-03-20T11:30:00Z'",
        ],
        notes=[],
    ),
    LogCase(
        "shadows_semicolon_ambiguous_thousands.csv",
        "shadows",
        kept=1,
        problems=[
            "2:shadow_m: expected a positive number of metres, got '1.038' (ambiguous in a file with decimal commas: 1.038 or 1038? write 1,038 or 1038)"
        ],
        notes=["read as ';'-separated with decimal commas"],
    ),
    LogCase(
        "shadows_semicolon_decimal_comma.csv",
        "shadows",
        kept=2,
        problems=[],
        notes=["read as ';'-separated with decimal commas"],
    ),
    LogCase(
        "shadows_semicolon_decimal_point.csv",
        "shadows",
        kept=2,
        problems=[],
        notes=["read as ';'-separated"],
    ),
    LogCase(
        "shadows_semicolon_time_comma_fraction.csv",
        "shadows",
        kept=1,
        problems=[],
        notes=["read as ';'-separated with decimal commas"],
    ),
    LogCase(
        "shadows_surplus_cells.csv",
        "shadows",
        kept=0,
        problems=[
            "1: expected 4 cells as in the header, got 5; put a cell that holds a ',' in double quotes"
        ],
        notes=[],
    ),
    LogCase(
        "shadows_tab_decimal_comma.csv",
        "shadows",
        kept=2,
        problems=[],
        notes=["read as tab-separated with decimal commas"],
    ),
    LogCase(
        "shadows_thousands_separator.csv",
        "shadows",
        kept=1,
        problems=[
            "2:shadow_mm: expected a positive number of millimetres, got '1.038,5' (write numbers without thousands separators)"
        ],
        notes=["read as ';'-separated with decimal commas"],
    ),
    LogCase(
        "shadows_trailing_separators.csv",
        "shadows",
        kept=1,
        problems=[],
        notes=["read as ';'-separated with decimal commas"],
    ),
    LogCase(
        "shadows_two_length_units.csv",
        "shadows",
        kept=0,
        problems=[
            "more than one of the columns shadow_cm, shadow_mm; give exactly one of shadow_m, shadow_cm, shadow_mm"
        ],
        notes=[],
    ),
    LogCase(
        "shadows_unknown_site.csv",
        "shadows",
        kept=1,
        problems=["1:site: unknown site 'hill' (known: ridge, coast, plain)"],
        notes=[],
    ),
    LogCase(  # the row with the open quote is refused; the line after it is read as the next row
        "shadows_unterminated_quote.csv",
        "shadows",
        kept=2,
        problems=[
            "2:note: a double quote opens a cell that runs on over 1 line end(s) and takes in lines that look like rows (a closing quote missing?); the row is left out and the lines after it are read as rows"
        ],
        notes=[],
    ),
    LogCase(
        "shadows_utf16_big_endian.csv",
        "shadows",
        kept=1,
        problems=[],
        notes=["read as UTF-16 text"],
    ),
    LogCase(
        "shadows_utf16_broken.csv",
        "shadows",
        kept=0,
        problems=["not valid UTF-16 text (at byte offset 50); save the file as CSV UTF-8"],
        notes=[],
    ),
    LogCase(
        "shadows_utf16_unicode_text.csv",
        "shadows",
        kept=1,
        problems=[],
        notes=["read as UTF-16 text, tab-separated with decimal commas"],
    ),
    LogCase(
        "shadows_utf16_without_bom.csv",
        "shadows",
        kept=1,
        problems=[],
        notes=["read as UTF-16 text without a byte-order mark"],
    ),
    LogCase(
        "shadows_utf32.csv",
        "shadows",
        kept=0,
        problems=["UTF-32 text; save the file as CSV UTF-8"],
        notes=[],
    ),
    LogCase(
        "shadows_utf8_bom.csv",
        "shadows",
        kept=1,
        problems=[],
        notes=[],
    ),
    LogCase(
        "shadows_windows_1252.csv",
        "shadows",
        kept=1,
        problems=[],
        notes=[
            "read as Windows-1252 text, as it is not UTF-8 (byte 0xe9 at offset 70; check letters outside ASCII in names and notes)"
        ],
    ),
    LogCase(
        "shadows_workbook.xlsx",
        "shadows",
        kept=0,
        problems=[
            "a spreadsheet workbook (.xlsx, .ods or .xls), not CSV text; save the sheet as CSV UTF-8"
        ],
        notes=[],
    ),
]

#: The other ways of recording the noon Sun (tests/data/bad/make_corpus.py: form_cases).
LOG_CASES += [
    LogCase(
        "shadows_form_angle_out_of_range.csv",
        "shadows",
        kept=1,
        problems=[
            "2:altitude_deg: expected an altitude between 0 and 90 degrees, got '97.5'",
            "3:altitude_deg: expected an altitude between 0 and 90 degrees, got '-3'",
            "4:altitude_deg: a row gives a length, an angle or a tip position, not two of them "
            "(got shadow_mm, altitude_deg)",
            "5:limb: expected limb lower, centre or upper, got 'left'",
        ],
        notes=[],
    ),
    LogCase(
        "shadows_form_short_trace.csv",
        "shadows",
        kept=1,
        problems=[
            "2: a trace without times at site 'coast' on 2027-03-20 has 3 point(s) (rows 2-4); expected at "
            "least 5 to find the shortest shadow",
        ],
        notes=[],
    ),
    LogCase(
        "shadows_form_ambiguous_date.csv",
        "shadows",
        kept=2,
        problems=[
            "2:date: ambiguous date '03/04/2027': day 3 of month 4 or day 4 of month 3? set [logs] date_order "
            "= \"day-first\" or \"month-first\" in the campaign file, or write 2027-09-22",
        ],
        notes=[],
    ),
]


CAMPAIGN_CASES = [
    CampaignCase(
        "campaign_baseline_absurd.toml",
        "baseline[1].distance_km: expected a distance of at most 20037.5 km (half the equator), got 6000000000.0",
    ),
    CampaignCase(
        "campaign_baseline_unknown_site.toml",
        "baseline[1].sites: unknown site 'harbour' (known: ridge)",
    ),
    CampaignCase("campaign_bom_crlf.toml", None),
    CampaignCase(
        "campaign_deep_nesting.toml", "TOML syntax error: arrays or tables nested too deeply"
    ),
    CampaignCase(
        "campaign_duplicate_site_ids.toml",
        "site[2].id: duplicate site id 'ridge' (already used by site[1])",
    ),
    CampaignCase(
        "campaign_empty.toml",
        "no [[site]] table; a campaign needs at least one site (id, latitude_deg, longitude_deg)",
    ),
    CampaignCase(
        "campaign_huge_integer.toml",
        "site[1].latitude_deg: expected a latitude between -90 and 90 degrees (+ north), got an integer of 401 digits",
    ),
    CampaignCase(
        "campaign_missing_longitude.toml",
        "site[1].longitude_deg: missing; expected a longitude between -180 and 180 degrees (+ east)",
    ),
    CampaignCase("campaign_missing.toml", "no such file"),
    CampaignCase(
        "campaign_nan_latitude.toml",
        "site[1].latitude_deg: expected a latitude between -90 and 90 degrees (+ north), got nan",
    ),
    CampaignCase(
        "campaign_not_utf8.toml",
        "not UTF-8 text (byte 0xe9 at offset 73); save the campaign file as UTF-8",
    ),
    CampaignCase("campaign_toml_syntax_error.toml", "5:15: TOML syntax error: Invalid value"),
    CampaignCase(
        "campaign_too_many_digits.toml",
        "TOML syntax error: a number too long to read (more than 4300 digits)",
    ),
    CampaignCase(
        "campaign_unknown_zone.toml", "site[1].timezone: unknown IANA time zone 'Europe/Zurch'"
    ),
    CampaignCase(
        "campaign_unterminated_string.toml", "2:17: TOML syntax error: Illegal character '\\n'"
    ),
    CampaignCase("campaign_utf16.toml", "UTF-16 text; save the campaign file as UTF-8"),
    CampaignCase(
        "campaign_workbook.toml",
        "a ZIP archive or office document, not a campaign file (TOML text)",
    ),
    CampaignCase("campaign_zone_folder.toml", "site[1].timezone: unknown IANA time zone 'Europe'"),
]


def without_file(text: str, file: str) -> str:
    assert text.startswith(file + ":"), text
    return text[len(file) + 1 :].lstrip()


@pytest.fixture(scope="module")
def campaign():
    return read_campaign(BAD / "campaign.toml")


def test_every_corpus_file_has_a_case():
    listed = {case.file for case in LOG_CASES} | {case.file for case in CAMPAIGN_CASES}
    present = {p.name for p in BAD.iterdir()} - {
        "campaign.toml",
        "shadows_good.csv",
        "make_corpus.py",
        ".gitattributes",
        "README.md",
        "__pycache__",  # make_corpus.py's bytecode, where Python writes it
    }
    assert present - listed == set()
    assert listed - present == {"shadows_missing.csv", "campaign_missing.toml"}


def test_the_corpus_campaign_and_good_log_are_valid(campaign):
    assert campaign.site_ids == ("ridge", "coast", "plain")
    log = read_shadow_logs(campaign)
    assert log.problems == () and log.notes == () and len(log) == GOOD_ROWS


def good_lengths(campaign) -> dict[tuple[str, np.datetime64], float]:
    log = read_shadow_logs(campaign)
    return {
        (site, t.astype("datetime64[m]")): length
        for site, t, length in zip(log.site, log.time_utc, log.shadow_m, strict=True)
    }


@pytest.mark.parametrize("case", LOG_CASES, ids=lambda case: case.file)
def test_log_case(campaign, case):
    path = BAD / case.file
    before = path.read_bytes() if path.exists() else None
    log = READERS[case.kind](campaign, [path])
    assert [without_file(str(p), case.file) for p in log.problems] == case.problems
    assert [without_file(note, case.file) for note in log.notes] == case.notes
    assert len(log) == case.kept
    assert (path.read_bytes() if path.exists() else None) == before  # inputs never modified
    if case.kind == "shadows" and case.kept:
        # What was kept, however it was written, is the reading of shadows_good.csv.
        good = good_lengths(campaign)
        for site, t, length in zip(log.site, log.time_utc, log.shadow_m, strict=True):
            assert length == pytest.approx(
                good[(site, t.astype("datetime64[m]"))], abs=WRITTEN_TO_M
            )


def test_values_read_with_decimal_commas(campaign):
    log = read_shadow_logs(campaign, [BAD / "shadows_semicolon_decimal_comma.csv"])
    assert log.temperature_c.tolist()[0] == -2.5 and log.observer.tolist() == [
        "T. Okafor",
        "M. Brandt",
    ]
    log = read_shadow_logs(campaign, [BAD / "shadows_semicolon_time_comma_fraction.csv"])
    assert log.time_utc[0] == np.datetime64("2027-03-20T11:30:00.500")
    log = read_eclipse_logs(campaign, [BAD / "eclipse_semicolon_decimal_comma.csv"])
    assert log.time_sigma_s.tolist() == [2.5, 1.5]
    # Europe/Rome is on CEST (UTC+2) in June.
    assert log.time_utc[0] == np.datetime64("2029-06-26T01:32:40")
    log = read_phase_logs(campaign, [BAD / "phases_tab_decimal_comma.csv"])
    assert log.elongation_deg.tolist() == [89.6]


def test_free_text_in_other_encodings(campaign):
    log = read_shadow_logs(campaign, [BAD / "shadows_utf16_unicode_text.csv"])
    assert log.observer.tolist() == ["Zo\u00eb M\u00fcller"]
    log = read_shadow_logs(campaign, [BAD / "shadows_windows_1252.csv"])
    assert log.observer.tolist() == ["Ren\u00e9e L\u00f8kke"]
    log = read_shadow_logs(campaign, [BAD / "shadows_multiline_note.csv"])
    assert log.note.tolist() == ["board re-levelled\nthen read", ""]


@pytest.mark.parametrize("case", CAMPAIGN_CASES, ids=lambda case: case.file)
def test_campaign_case(case):
    path = BAD / case.file
    if case.error is None:
        assert read_campaign(path).site_ids == ("ridge", "coast", "plain")
        return
    with pytest.raises(InputError) as info:
        read_campaign(path)
    assert without_file(str(info.value), str(path)) == case.error


# --- the same cases through the command line ------------------------------------------


def run(args, capsys, monkeypatch):
    return run_cli(args, capsys, monkeypatch, columns=100)


def error_lines(err: str) -> list[str]:
    """The lines of stderr that are not notes (a note says how a file was read)."""
    return [line for line in err.splitlines() if not line.startswith("firstrung: note: ")]


SHADOW_CASES = [case for case in LOG_CASES if case.kind == "shadows"]


@pytest.mark.parametrize("case", SHADOW_CASES, ids=lambda case: case.file)
def test_log_case_through_reduce_shadows(tmp_path, capsys, monkeypatch, case):
    shutil.copy(BAD / "shadows_good.csv", tmp_path)
    if (BAD / case.file).exists():
        shutil.copy(BAD / case.file, tmp_path)
    text = (
        (BAD / "campaign.toml")
        .read_text(encoding="utf-8")
        .replace('shadows = ["shadows_good.csv"]', f'shadows = ["shadows_good.csv", "{case.file}"]')
    )
    (tmp_path / "campaign.toml").write_text(text, encoding="utf-8")
    code, out, err = run(
        ["reduce", "shadows", tmp_path / "campaign.toml", "--json", "--include-flagged"], capsys, monkeypatch
    )
    assert "Traceback" not in err
    assert code == (2 if case.problems else 0), err
    assert error_lines(err) == [
        f"firstrung: {case.file}:{p}" if p[0].isdigit() else f"firstrung: {case.file}: {p}"
        for p in case.problems
    ]
    assert json.loads(out)["rows"]["accepted"] == GOOD_ROWS + case.kept


@pytest.mark.parametrize("case", CAMPAIGN_CASES, ids=lambda case: case.file)
def test_campaign_case_through_reduce_shadows(capsys, monkeypatch, case):
    path = BAD / case.file
    code, out, err = run(["reduce", "shadows", path, "--json", "--include-flagged"], capsys, monkeypatch)
    assert "Traceback" not in err
    if case.error is None:
        assert code == 0, err
        assert json.loads(out)["rows"]["accepted"] == GOOD_ROWS
    else:
        assert code == 2 and out == ""
        separator = (
            ""
            if case.error[0].isdigit()
            or case.error.startswith("site")
            or case.error.startswith("baseline")
            else " "
        )
        assert err.splitlines() == [f"firstrung: {path}:{separator}{case.error}"]
