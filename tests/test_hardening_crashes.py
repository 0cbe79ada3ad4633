"""Realistic campaigns that once stopped a command with an internal error: each now gives its answer or one line.

Every case starts from a copy of ``examples/`` (invented data) changed the
way a careless or hostile user would.
"""

from __future__ import annotations

import csv
import io
import os
import re
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

from helpers import run_cli

EXAMPLES = Path(__file__).resolve().parents[1] / "examples"


@pytest.fixture
def c(tmp_path) -> Path:
    folder = tmp_path / "c"
    shutil.copytree(EXAMPLES, folder)
    return folder


def edit_csv(path: Path, change) -> None:
    rows = list(csv.reader(io.StringIO(path.read_text())))
    change(rows[0], rows[1:])
    buf = io.StringIO()
    csv.writer(buf, lineterminator="\n").writerows(rows)
    path.write_text(buf.getvalue())


def replace_in(path: Path, old: str, new: str, count: int = -1) -> None:
    text = path.read_text()
    assert old in text
    path.write_text(text.replace(old, new, count))


def no_fault(err: str) -> None:
    assert "internal error" not in err and "Traceback" not in err, err


# --- the half moon at or past 90 deg: a lower bound only ---------------------------------------


def elongation_past_90(c: Path) -> None:
    def change(header, rows):
        e, f = header.index("elongation_deg"), header.index("illuminated_fraction")
        for r in rows:
            r[e], r[f] = "89.95", ""

    edit_csv(c / "logs" / "phases.csv", change)
    # the half moon's own bound on the Sun: without the transit, which would give the Sun instead
    camp = c / "campaign.toml"
    camp.write_text(camp.read_text().replace('transits = ["logs/transits.csv"]\n', ""))


def test_ladder_with_the_half_moon_past_90_deg_shows_lower_bounds(c, capsys, monkeypatch):
    elongation_past_90(c)
    code, out, err = run_cli(["ladder", c / "campaign.toml", "--samples", "1000"], capsys, monkeypatch, columns=80)
    no_fault(err)
    assert code == 2  # the rows timed with the Sun down are named
    assert "logs/phases.csv:1:elongation_deg: the Sun is below the horizon at sardo" in err
    lines = out.splitlines()
    # the table at 80 columns: the quantity's name and unit wrap, the bound stays whole
    sun = next(k for k, line in enumerate(lines) if line.lstrip().startswith("Sun's distance") and ">" in line
               and "×" not in line)
    assert re.match(r"\s+Sun's distance\s+>\d\.\d+\s+\d\.\d+ to no( upper)?\s+\d\.\d+\s*$", lines[sun]), lines[sun]
    assert lines[sun + 1].split()[0] == "(au)"
    assert "  Sun's distance (au): lower bound only: the data allow any larger value" in lines
    assert not any("\u2026" in line for line in lines)  # no number cut at 80 columns


def test_report_with_the_half_moon_past_90_deg(c, tmp_path, capsys, monkeypatch):
    elongation_past_90(c)
    out_file = tmp_path / "r.html"
    code, out, err = run_cli(["report", c / "campaign.toml", "-o", out_file, "--samples", "1000"], capsys, monkeypatch)
    no_fault(err)
    assert code == 0 and out == f"report written: {out_file}\n"
    html = out_file.read_text()
    assert re.search(r"<td class=\"num\">&gt;\d\.\d × 10⁸</td><td class=\"num\">\d\.\d × 10⁸ to no upper bound</td>",
                     html)


# --- an eclipse that cannot be solved ---------------------------------------------------------


def test_report_on_an_eclipse_log_that_cannot_be_solved(c, tmp_path, capsys, monkeypatch):
    from firstrung.app.report import build_report, render_html, render_markdown

    log = c / "logs" / "eclipse.csv"
    log.write_text("".join(log.read_text().splitlines(keepends=True)[:9]))  # clouds after U1
    report = build_report(c / "campaign.toml", samples=1000, seed=1)  # as the command does, then each format
    html = render_html(report)
    assert ("Not reduced: cannot solve the chords: 2 independent constraint(s) (contacts U1, 1 crater timing(s)); "
            "three are needed") in html
    text, images = render_markdown(report, "r-")
    assert ": not reduced (cannot solve the chords" in text and "r-eclipse.png" not in images


# --- stated errors of zero or next to nothing --------------------------------------------------


@pytest.mark.parametrize(
    "old, new, message",
    [
        ("shadow_sigma_m = 0.002", "shadow_sigma_m = 0.0",
         "site[1].gnomon.shadow_sigma_m: expected a reading error of at least 1e-05 m (no shadow is read exactly), got 0.0"),
        ("shadow_sigma_m = 0.002", "shadow_sigma_m = 1e-300",
         "site[1].gnomon.shadow_sigma_m: expected a reading error of at least 1e-05 m (no shadow is read exactly), "
         "got 1e-300"),
        ("height_m = 1.000", "height_m = 1e-100",
         "site[1].gnomon.height_m: expected a gnomon height of at least 0.001 m and below 100 m, got 1e-100"),
    ],
)
def test_reduce_shadows_refuses_vanishing_stated_errors(c, capsys, monkeypatch, old, new, message):
    replace_in(c / "campaign.toml", old, new, 1)
    code, out, err = run_cli(["reduce", "shadows", c / "campaign.toml"], capsys, monkeypatch)
    assert (code, out, err) == (2, "", f"firstrung: {c / 'campaign.toml'}:{message}\n")


def test_a_timing_error_of_next_to_nothing_is_refused_per_row(c, capsys, monkeypatch):
    def change(header, rows):
        rows[0][header.index("time_sigma_s")] = "1e-300"
        rows[1][header.index("time_sigma_s")] = "0.001"

    edit_csv(c / "logs" / "eclipse.csv", change)
    for args in (["reduce", "eclipse", c / "campaign.toml"], ["ladder", c / "campaign.toml", "--samples", "2000"]):
        code, out, err = run_cli(args, capsys, monkeypatch)
        no_fault(err)
        assert code == 2
        assert err.splitlines()[:2] == [
            "firstrung: logs/eclipse.csv:1:time_sigma_s: expected a timing uncertainty of at least 0.01 s, got '1e-300'",
            "firstrung: logs/eclipse.csv:2:time_sigma_s: expected a timing uncertainty of at least 0.01 s, got '0.001'",
        ]
        assert "Moon" in out  # the other rows still give the result


# --- planning with every site on one latitude --------------------------------------------------


@pytest.mark.parametrize("json_flag", [[], ["--json"]])
def test_plan_shadows_with_every_site_on_one_latitude(c, capsys, monkeypatch, json_flag):
    text = (c / "campaign.toml").read_text()
    (c / "campaign.toml").write_text(re.sub(r"latitude_deg = .*", "latitude_deg = 45.0", text))
    code, out, err = run_cli(["plan", "shadows", c / "campaign.toml", "--from", "2027-03-01", "--to", "2027-03-31",
                              *json_flag], capsys, monkeypatch)
    # never a ranking of days by rounding noise (the JSON once claimed sigma_radius_km 0.03)
    assert (code, out) == (2, "")
    assert err == ("firstrung: the sites are less than 1 km apart north-south (0.000 km); noon shadows measure the "
                   "radius along a meridian: choose sites at different latitudes\n")


# --- calendars and hostile names -------------------------------------------------------------


HOSTILE_CAMPAIGN_NAME = r'Line1\nINJECTED:1\r\nEND:VCALENDAR\u001b[2J\u0007\u2028Equinox'
HOSTILE_SITE_NAME = r'Fj\u001b]0;title\u0007ell\nBEGIN:VEVENT'


def hostile_names(c: Path) -> None:
    replace_in(c / "campaign.toml", 'name = "Equinox', f'name = "{HOSTILE_CAMPAIGN_NAME}', 1)
    replace_in(c / "campaign.toml", 'name = "Fjellvik', f'name = "{HOSTILE_SITE_NAME}', 1)


CONTENT_LINE = re.compile(r"(?:[A-Z0-9-]+[;:]| )[^\x00-\x08\x0a-\x1f\x7f]*")


def assert_clean_calendar(data: bytes) -> None:
    text = data.decode("utf-8")
    assert text.endswith("\r\n")
    lines = text[:-2].split("\r\n")
    for line in lines:
        assert CONTENT_LINE.fullmatch(line), line
    assert lines.count("BEGIN:VCALENDAR") == 1 and lines.count("END:VCALENDAR") == 1
    assert lines.count("BEGIN:VEVENT") == lines.count("END:VEVENT") > 0
    assert not any(ch in text for ch in "\x1b\x07\u2028")


PLANS = {
    "shadows": ["--from", "2027-03-01", "--to", "2027-03-31"],
    "phases": ["--from", "2027-01-01", "--to", "2027-02-28"],
    "eclipses": ["--from", "2029-12-01", "--to", "2029-12-31"],
}


@pytest.mark.parametrize("kind", sorted(PLANS))
def test_calendars_carry_no_raw_line_break_escape_or_bell(c, tmp_path, capsys, monkeypatch, kind):
    hostile_names(c)
    ics = tmp_path / f"{kind}.ics"
    code, out, err = run_cli(["plan", kind, c / "campaign.toml", *PLANS[kind], "--ics", ics], capsys, monkeypatch)
    no_fault(err)
    assert code == 0
    data = ics.read_bytes()
    assert_clean_calendar(data)
    if kind != "eclipses":
        assert b"X-WR-CALNAME:Line1 INJECTED:1 END:VCALENDAR[2JEquinox" in data
    assert "\x1b" not in out and "\x07" not in out


def test_calendars_are_checked_without_asserts(c, tmp_path):
    # Python's -O drops asserts, which the calendar library relies on to refuse raw line breaks
    hostile_names(c)
    env = {**os.environ, "PYTHONOPTIMIZE": "1", "COLUMNS": "80"}
    for kind in ("phases",):
        ics = tmp_path / f"{kind}-O.ics"
        done = subprocess.run(
            [sys.executable, "-m", "firstrung", "plan", kind, str(c / "campaign.toml"), *PLANS[kind], "--ics", str(ics)],
            capture_output=True, text=True, env=env, timeout=300,
        )
        assert done.returncode == 0, done.stderr
        assert_clean_calendar(ics.read_bytes())
        assert b"\r\nINJECTED:1" not in ics.read_bytes()


def test_calendar_checker_refuses_a_raw_line():
    from icalendar import Calendar

    from firstrung.calendar_export import checked_ical

    cal = Calendar()
    cal.add("prodid", "-//x//y//EN")
    cal["x-wr-calname"] = "a\r\nINJECTED:1\x1b"  # set raw, past the cleaning
    with pytest.raises(RuntimeError, match="calendar line 3 is not an RFC 5545 content line"):
        checked_ical(cal)


# --- dates at the ephemeris' edge, non-finite and huge numbers --------------------------------


def test_plan_shadows_from_the_first_day_of_the_ephemeris(c, capsys, monkeypatch):
    code, out, err = run_cli(["plan", "shadows", c / "campaign.toml", "--from", "1899-07-29", "--to", "1899-08-02",
                              "--json"], capsys, monkeypatch)
    no_fault(err)
    assert code == 0
    import json

    days = json.loads(out)["days"]
    assert [d["date"] for d in days] == ["1899-07-29", "1899-07-30", "1899-07-31", "1899-08-01", "1899-08-02"]
    code, out, err = run_cli(["plan", "shadows", c / "campaign.toml", "--from", "1899-07-28", "--to", "1899-08-02"],
                             capsys, monkeypatch)
    assert (code, err) == (2, "firstrung: time 1899-07-28T11:19:12.000 is outside the ephemeris: DE421 covers "
                              "1899-07-29 to 2053-10-08 (UTC)\n")


@pytest.mark.parametrize(
    "args, message",
    [
        (["plan", "shadows", "{c}", "--from", "2027-03-01", "--to", "2027-03-03", "--min-altitude-deg", "nan", "--json"],
         "--min-altitude-deg: expected a finite number, got nan"),
        (["plan", "shadows", "{c}", "--from", "2027-03-01", "--to", "2027-03-03", "--max-shadow-m", "inf", "--json"],
         "--max-shadow-m: expected a finite number, got inf"),
        (["plan", "phases", "{c}", "--from", "2027-01-01", "--to", "2027-01-31", "--span-h", "-inf", "--json"],
         "--span-h: expected a finite number, got -inf"),
        (["reduce", "phases", "{c}", "--fraction-sigma", "nan", "--json"],
         "--fraction-sigma: expected a finite number, got nan"),
        (["reduce", "eclipse", "{c}", "--earth-radius-sigma-km", "inf", "--json"],
         "--earth-radius-sigma-km: expected a finite number, got inf"),
        (["ladder", "{c}", "--samples", "10000000000000"],
         "--samples: expected 1 to 2,000,000 Monte Carlo draws, got 10,000,000,000,000"),
        (["report", "{c}", "-o", "{out}", "--samples", "10000000000000"],
         "--samples: expected 1 to 2,000,000 Monte Carlo draws, got 10,000,000,000,000"),
        (["reduce", "shadows", "{c}", "--monte-carlo", "10000000000"],
         "--monte-carlo: at most 129,870 draws for 154 readings (memory), got 10,000,000,000"),
        (["simulate", "eclipse", "{c}", "--from", "2029-12-01", "--to", "2029-12-31", "-o", "{out}",
          "--observers", "100000000000"],
         "--observers: expected 1 to 100 observers at each site, got 100,000,000,000"),
    ],
)
def test_non_finite_and_huge_numbers_are_one_line(c, tmp_path, capsys, monkeypatch, args, message):
    out_path = tmp_path / "out"
    argv = [a.format(c=c / "campaign.toml", out=out_path) for a in args]
    code, out, err = run_cli(argv, capsys, monkeypatch)
    assert (code, out) == (2, "")
    assert err.splitlines()[-1] == f"firstrung: {message}"
    assert not out_path.exists()
