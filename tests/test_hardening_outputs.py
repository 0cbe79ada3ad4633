"""No command replaces a campaign's input: every command that writes, aimed at every input.

The campaign is a copy of ``examples/`` with a second shadow log named like
the blank-sheets template (a filled-in template is a realistic log), so
that the folder-writing commands (simulate, blank-sheets, demo) also aim at
real inputs when given the logs' folder.
"""

from __future__ import annotations

import hashlib
import shutil
from pathlib import Path

import pytest

from firstrung.errors import InputError
from firstrung.output import campaign_inputs, make_folder, write_atomic
from helpers import run_cli

EXAMPLES = Path(__file__).resolve().parents[1] / "examples"


def tree(folder: Path) -> dict[str, str]:
    """Every file under a folder with the SHA-256 of its bytes."""
    return {
        str(p.relative_to(folder)): hashlib.sha256(p.read_bytes()).hexdigest()
        for p in sorted(folder.rglob("*"))
        if p.is_file()
    }


@pytest.fixture
def campaign(tmp_path) -> Path:
    folder = tmp_path / "c"
    shutil.copytree(EXAMPLES, folder)
    shutil.copy(folder / "logs" / "shadows.csv", folder / "logs" / "shadows-template.csv")
    toml = folder / "campaign.toml"
    toml.write_text(
        toml.read_text().replace('shadows = ["logs/shadows.csv"]',
                                 'shadows = ["logs/shadows.csv", "logs/shadows-template.csv"]')
    )
    return toml


def file_commands(campaign: Path, target: Path) -> list[list]:
    """Every command with an output file, writing to ``target``."""
    c = campaign
    return [
        ["plan", "shadows", c, "--from", "2027-03-01", "--to", "2027-03-31", "--ics", target],
        ["plan", "eclipses", c, "--from", "2029-12-01", "--to", "2029-12-31", "--ics", target],
        ["plan", "phases", c, "--from", "2027-01-01", "--to", "2027-01-31", "--ics", target],
        ["sheet", c, "--site", "fjell", "--date", "2027-03-22", "-o", target],
        ["check", c, "--accepted", target],
        ["report", c, "-o", target, "--samples", "1000"],
        ["report", c, "-o", target, "--samples", "1000", "--markdown"],
    ]


def folder_commands(campaign: Path, target: Path) -> list[list]:
    """Every command that fills a folder, writing into ``target``."""
    c = campaign
    return [
        ["simulate", "shadows", c, "--from", "2027-03-22", "--to", "2027-03-22", "-o", target],
        ["simulate", "eclipse", c, "--from", "2029-12-01", "--to", "2029-12-31", "-o", target],
        ["simulate", "phases", c, "--from", "2027-01-01", "--to", "2027-01-31", "-o", target],
        ["blank-sheets", "-o", target],
        ["demo", "-o", target],
    ]


def test_every_input_is_listed(campaign):
    names = sorted(str(p.relative_to(campaign.parent)) for p in campaign_inputs(campaign))
    assert names == ["campaign.toml", "logs/astrometry.csv", "logs/eclipse.csv", "logs/light_curves.csv",
                     "logs/phases.csv", "logs/shadows-template.csv", "logs/shadows.csv", "logs/transits.csv"]


def test_no_command_replaces_any_input(campaign, capsys, monkeypatch):
    folder = campaign.parent
    before = tree(folder)
    inputs = campaign_inputs(campaign)
    assert len(inputs) == 8
    tried = 0
    for target in inputs:
        runs = file_commands(campaign, target) + folder_commands(campaign, target)
        if target != campaign:
            # the folder commands aimed at the logs' folder, where they would write a log's name
            runs += folder_commands(campaign, target.parent)
        else:
            # the campaign's own folder: not empty and not a demo's output (its campaign differs)
            runs += [["demo", "-o", folder]]
        for args in runs:
            code, out, err = run_cli(args, capsys, monkeypatch, columns=80)
            tried += 1
            assert code == 2, (args, code, out, err)
            assert err.count("\n") == 1 and err.startswith("firstrung: "), (args, err)
            assert "Traceback" not in err
            assert tree(folder) == before, args
    assert tried == 8 * (7 + 5) + 7 * 5 + 1  # 8 inputs, 7 of them logs in one folder


def test_the_input_under_another_name_is_refused(campaign, capsys, monkeypatch):
    folder = campaign.parent
    (folder / "alias.csv").symlink_to(folder / "logs" / "eclipse.csv")
    before = tree(folder)
    code, _, err = run_cli(["check", campaign, "--accepted", folder / "alias.csv"], capsys, monkeypatch)
    assert code == 2 and "is one of the inputs" in err
    code, _, err = run_cli(["plan", "eclipses", campaign, "--from", "2029-12-01", "--to", "2029-12-31",
                            "--ics", folder / "logs" / ".." / "logs" / "phases.csv"], capsys, monkeypatch)
    assert code == 2 and "is one of the inputs" in err
    assert tree(folder) == before


def test_demo_refuses_a_folder_that_is_not_its_output(tmp_path, capsys, monkeypatch):
    mine = tmp_path / "mine"
    mine.mkdir()
    (mine / "notes.txt").write_text("my notes\n")
    code, _, err = run_cli(["demo", "-o", mine], capsys, monkeypatch)
    assert code == 2
    assert err == (f"firstrung: -o: {mine} is not empty and is not the output of firstrung demo; it is left "
                   "as it is: choose an empty or new folder\n")
    assert tree(mine) == {"notes.txt": hashlib.sha256(b"my notes\n").hexdigest()}


def test_demo_refuses_its_own_folder_once_edited(tmp_path, capsys, monkeypatch):
    # the examples are the demo's campaign and logs: a copy is a demo output, an edited copy is not
    folder = tmp_path / "c"
    shutil.copytree(EXAMPLES, folder)
    with open(folder / "logs" / "phases.csv", "a") as f:
        f.write("sardo,2027-01-16T08:00:00Z,first,,0.52,,my own row\n")
    before = tree(folder)
    code, _, err = run_cli(["demo", "-o", folder], capsys, monkeypatch)
    assert code == 2
    assert err == (f"firstrung: {folder / 'logs' / 'phases.csv'} exists and is not the demo's own file (edited "
                   "since the demo wrote it?); it is left as it is: choose an empty or new folder\n")
    assert tree(folder) == before


def test_blank_sheets_never_replace_a_filled_in_template(tmp_path, capsys, monkeypatch):
    kit = tmp_path / "kit"
    assert run_cli(["blank-sheets", "-o", kit], capsys, monkeypatch)[0] == 0
    # an unchanged kit is replaced (also by the other paper size)
    assert run_cli(["blank-sheets", "-o", kit, "--paper", "letter"], capsys, monkeypatch)[0] == 0
    with open(kit / "eclipse-template.csv", "a") as f:
        f.write("ridge,2029-12-20T21:00:00Z,U1,,20,me\n")
    before = tree(kit)
    code, _, err = run_cli(["blank-sheets", "-o", kit], capsys, monkeypatch)
    assert code == 2 and "eclipse-template.csv exists and is not a blank sheet or template" in err
    assert tree(kit) == before


def _deny(*args, **kwargs):
    raise PermissionError(13, "Permission denied")


@pytest.mark.parametrize(
    "args",
    [
        ["blank-sheets", "-o", "{out}"],
        ["demo", "-o", "{out}"],
        ["simulate", "shadows", "{campaign}", "--from", "2027-03-22", "--to", "2027-03-22", "-o", "{out}"],
    ],
)
def test_a_read_only_folder_is_one_clear_line(args, campaign, tmp_path, capsys, monkeypatch):
    # the tests may run as root, who may write anywhere: the system's refusal is simulated
    out = tmp_path / "read-only" / "new"
    monkeypatch.setattr(Path, "mkdir", _deny)
    argv = [a.format(out=out, campaign=campaign) for a in args]
    code, _, err = run_cli(argv, capsys, monkeypatch)
    assert code == 2
    assert err == f"firstrung: -o: cannot create the folder {out if args[0] != 'demo' else out / 'logs'}: Permission denied\n"


def test_a_folder_that_exists_but_cannot_be_written(tmp_path, monkeypatch):
    import os

    monkeypatch.setattr(os, "access", lambda *a, **k: False)
    with pytest.raises(InputError, match=r"^-o: cannot write into the folder .*: permission denied$"):
        make_folder(tmp_path)


def test_write_atomic_wants_text_or_bytes(tmp_path):
    with pytest.raises(TypeError, match="expected the data as str or bytes, got int"):
        write_atomic(tmp_path / "x", 5)
    assert list(tmp_path.iterdir()) == []
    write_atomic(tmp_path / "y", bytearray(b"ab"))
    assert (tmp_path / "y").read_bytes() == b"ab"


def test_check_accepted_never_hands_a_spreadsheet_a_formula(tmp_path, capsys, monkeypatch):
    import csv
    import io

    folder = tmp_path / "c"
    shutil.copytree(EXAMPLES, folder)
    log = folder / "logs" / "shadows.csv"
    rows = list(csv.reader(io.StringIO(log.read_text())))
    observer = rows[0].index("observer")
    hostile = ['=HYPERLINK("http://example.invalid","x")', "\t=1+1", "+1", "-2", "@SUM(A1)", "\r=1", "-1+2",
               "+cmd|' /C calc'!A0"]
    for k, cell in enumerate(hostile, start=1):
        rows[k][observer] = cell
    with log.open("w", newline="") as f:
        csv.writer(f).writerows(rows)
    out = tmp_path / "accepted.csv"
    code, _, _ = run_cli(["check", folder / "campaign.toml", "--accepted", out], capsys, monkeypatch)
    assert code == 1
    written = list(csv.reader(io.StringIO(out.read_text())))
    observers = [r[written[0].index("observer")] for r in written[1:len(hostile) + 1]]
    # OWASP's CSV-injection advice: a leading apostrophe; plain numbers stay numbers
    assert observers == ["'=HYPERLINK(\"http://example.invalid\",\"x\")", "'=1+1", "+1", "-2", "'@SUM(A1)", "'=1",
                         "'-1+2", "'+cmd|' /C calc'!A0"]
    assert not any(cell.startswith(("=", "@", "\t", "\r")) for row in written for cell in row)


def test_simulate_writes_a_campaign_log_that_does_not_exist_yet(tmp_path, capsys, monkeypatch):
    # the rehearsal's first step: the campaign lists sim/shadows.csv, which simulate then writes
    folder = tmp_path / "c"
    shutil.copytree(EXAMPLES, folder)
    camp = folder / "campaign.toml"
    camp.write_text(camp.read_text().replace('"logs/shadows.csv"', '"sim/shadows.csv"'))
    code, out, err = run_cli(["simulate", "shadows", camp, "--from", "2027-03-22", "--to", "2027-03-22",
                              "-o", folder / "sim"], capsys, monkeypatch, columns=200)
    assert code == 0, err
    assert (folder / "sim" / "shadows.csv").read_text().startswith("site,time_utc,shadow_mm,observer,note\n")
    # and once it exists, it is an input like any other
    before = (folder / "sim" / "shadows.csv").read_bytes()
    code, out, err = run_cli(["simulate", "shadows", camp, "--from", "2027-03-23", "--to", "2027-03-23",
                              "-o", folder / "sim"], capsys, monkeypatch)
    assert code == 2 and "is one of the inputs" in err
    assert (folder / "sim" / "shadows.csv").read_bytes() == before


def test_the_writers_refuse_inputs_without_the_early_check(campaign, capsys, monkeypatch):
    # commands refuse at once (before any work); the writer itself must refuse too
    from firstrung.cli import common

    monkeypatch.setattr(common, "_refuse_outputs_over_inputs", lambda kwargs: None)
    folder = campaign.parent
    before = tree(folder)
    for target in (folder / "logs" / "phases.csv", folder / "logs" / "shadows-template.csv"):
        for args in file_commands(campaign, target)[:5]:  # plan x3, sheet, check (report is slow)
            code, out, err = run_cli(args, capsys, monkeypatch)
            assert code == 2 and err.endswith(f"firstrung: output {target} is one of the inputs; choose another "
                                              "file name\n"), (args, err)
            assert tree(folder) == before
