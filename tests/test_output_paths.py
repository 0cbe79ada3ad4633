"""Output paths behave one way everywhere: a missing folder is created, by every command that writes.

A file output (``-o``, ``--ics``, ``--accepted``) in a folder that does not
exist yet gets its folder (and the folders above it) made, as the commands
that fill a folder (``simulate -o``, ``demo -o``, ``blank-sheets -o``) make
theirs; where a folder cannot be made (a file stands in the way) every
command says so in one line naming that file, exit 2, and writes nothing.
"""

from __future__ import annotations

import shutil
from pathlib import Path

import pytest

from helpers import run_cli

EXAMPLES = Path(__file__).resolve().parents[1] / "examples"


def file_commands(c: Path, target: Path) -> list[list]:
    """Every command with an output file, writing to ``target``."""
    return [
        ["plan", "shadows", c, "--from", "2027-03-01", "--to", "2027-03-31", "--ics", target],
        ["plan", "eclipse", c, "--from", "2029-12-01", "--to", "2029-12-31", "--ics", target],
        ["plan", "phases", c, "--from", "2027-01-01", "--to", "2027-01-31", "--ics", target],
        ["plan", "transit", c, "--from", "2032-11-01", "--to", "2032-11-30", "--ics", target],
        ["sheet", c, "--site", "fjell", "--date", "2027-03-22", "-o", target],
        ["sheet", c, "--kind", "phases", "--site", "fjell", "--date", "2027-03-15", "-o", target],
        ["check", c, "--accepted", target],
        ["report", c, "-o", target, "--samples", "1000"],
    ]


def folder_commands(c: Path, target: Path) -> list[list]:
    """Every command that fills a folder, writing into ``target``."""
    return [
        ["simulate", "shadows", c, "--from", "2027-03-22", "--to", "2027-03-22", "-o", target],
        ["blank-sheets", "-o", target],
    ]


def suffix(args: list) -> str:
    """The file ending an output of the command is written with."""
    return ".ics" if "--ics" in args else ".csv" if "--accepted" in args else ".html"


@pytest.fixture
def campaign(tmp_path) -> Path:
    shutil.copytree(EXAMPLES, tmp_path / "c")
    return tmp_path / "c" / "campaign.toml"


def test_every_output_path_creates_its_missing_folder_the_same_way(campaign, tmp_path, capsys, monkeypatch):
    commands = file_commands(campaign, Path("x")) + folder_commands(campaign, Path("x"))
    for k, args in enumerate(commands):
        made = tmp_path / f"new{k}" / "deeper"
        target = made / f"out{suffix(args)}" if k < len(file_commands(campaign, Path("x"))) else made
        argv = [target if a == Path("x") else a for a in args]
        code, out, err = run_cli(argv, capsys, monkeypatch, columns=80)
        assert code in (0, 1), (args, err)  # check exits 1 when it flags rows of the example, by design
        assert "Traceback" not in err
        assert target.exists() and made.is_dir(), args
        written = target if target.is_file() else next(made.iterdir())
        assert written.stat().st_size > 0, args

    # a file where a folder should be: one line, exit 2, the same words from every command
    (tmp_path / "plain").write_text("a file, not a folder\n")
    for args in commands:
        target = tmp_path / "plain" / f"out{suffix(args)}"
        argv = [target if a == Path("x") else a for a in args]
        code, out, err = run_cli(argv, capsys, monkeypatch, columns=80)
        assert code == 2, (args, out, err)
        assert err.count("\n") == 1 and "Traceback" not in err, (args, err)
        assert err.endswith(f"{tmp_path / 'plain'} exists and is not a folder\n"), (args, err)
    assert (tmp_path / "plain").read_text() == "a file, not a folder\n"
