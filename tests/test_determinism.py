"""Determinism: every command run twice on the same inputs and seed gives the same bytes.

The commands are the ones registered in ``firstrung.cli.app`` when the test
runs (``GROUPS`` and ``TOP_LEVEL``); a command whose help offers ``--json`` is
run with it on the example campaign, twice, in the same folder, and its
stdout must be byte-identical; files it writes (``-o``) must be too. Required
options get the sample values below; a command that needs an option this
file does not know fails with the name to add.
"""

from __future__ import annotations

import json
import shutil
from pathlib import Path

import pytest
import typer

from firstrung.campaign import read_campaign
from firstrung.cli import main
from firstrung.cli.app import build

EXAMPLES = Path(__file__).resolve().parent.parent / "examples"
CAMPAIGN = "camp/campaign.toml"  # relative to the run folder: both runs see the same text

#: Values for required options, by option name.
SAMPLE_VALUES = {
    "--from": "2027-03-15",
    "--to": "2027-03-25",
    "--date": "2027-03-20",
    "--site": read_campaign(EXAMPLES / "campaign.toml").site_ids[0],
    "--paper": "a4",
}
#: Per command, values that give it something to compute (an eclipse in range, ...).
COMMAND_VALUES = {
    # The total lunar eclipse of 2025-09-07 (NASA Five Millennium Canon), seen from Europe.
    ("plan", "eclipse"): {"--from": "2025-09-01", "--to": "2025-09-10"},
    ("plan", "phases"): {"--from": "2027-03-01", "--to": "2027-03-31"},
    ("simulate", "shadows"): {"--from": "2027-03-20", "--to": "2027-03-20"},
}
#: Optional options set so that the random parts run: a fixed seed, few draws.
SEED = "7"
MONTE_CARLO_DRAWS = 300


def registered_commands() -> list[tuple[tuple[str, ...], object]]:
    """Every leaf command of the application (click objects, as typer builds them), by path."""
    root = typer.main.get_command(build())
    found = []

    def walk(command, path: tuple[str, ...]) -> None:
        if hasattr(command, "commands"):  # a group
            for name, sub in sorted(command.commands.items()):
                if not getattr(sub, "hidden", False):  # a hidden alias runs the same command
                    walk(sub, (*path, name))
        else:
            found.append((path, command))

    walk(root, ())
    return found


#: Commands that run until stopped: the collection point's server is checked by tests/collect instead
#: (its readings' store and links there; a server started here would never return).
LONG_RUNNING = {("serve",)}
COMMANDS = [(path, command) for path, command in registered_commands() if path not in LONG_RUNNING]


def help_text(path, capsys, monkeypatch) -> str:
    monkeypatch.setenv("COLUMNS", "200")
    with pytest.raises(SystemExit) as info:
        main([*path, "--help"])
    assert info.value.code == 0
    return capsys.readouterr().out


def _output_value(param) -> str:
    """A path under out/: a folder when the help speaks of one, else a file."""
    help_ = (getattr(param, "help", "") or "").lower()
    if "folder" in help_ or "directory" in help_:
        return "out/folder"
    suffix = ".ics" if "calendar" in help_ or "ics" in param.opts[0] else ".html"
    return "out/output" + suffix


def arguments(path: tuple[str, ...], command, json_flag: bool) -> list[str]:
    """The command line for one run: the campaign, required options, seed and draws."""
    args = [*path]
    overrides = COMMAND_VALUES.get(path, {})
    for param in command.params:
        if param.param_type_name == "argument":
            if param.name == "campaign":
                args.append(CAMPAIGN)
                continue
            if param.required:
                pytest.fail(f"{' '.join(path)}: no sample value for the argument {param.name!r}")
            continue
        if param.param_type_name != "option" or param.is_flag:
            continue
        names = param.opts + param.secondary_opts
        name = next((n for n in names if n in overrides or n in SAMPLE_VALUES), None)
        if "--seed" in names:
            args += ["--seed", SEED]
        elif "--monte-carlo" in names or "--samples" in names:
            low = getattr(param, "min", None) or 0  # the option's lower bound (IntRange)
            args += [names[0], str(max(MONTE_CARLO_DRAWS, low))]
        elif name is not None and (param.required or name in overrides):
            args += [name, overrides.get(name, SAMPLE_VALUES.get(name))]
        elif param.required and ("-o" in names or "--output" in names):
            args += [names[0], _output_value(param)]
        elif param.required:
            pytest.fail(
                f"{' '.join(path)}: no sample value for the required option {names[0]}; "
                "add one to SAMPLE_VALUES in tests/test_determinism.py"
            )
    if json_flag:
        args.append("--json")
    return args


def run_once(folder: Path, args: list[str], capsys, monkeypatch):
    """One run in ``folder``: exit status, stdout, and every file it wrote (outside camp/)."""
    for item in folder.iterdir():
        if item.name != "camp":
            shutil.rmtree(item) if item.is_dir() else item.unlink()
    out_dir = folder / "out"
    (out_dir / "folder").mkdir(parents=True)
    monkeypatch.chdir(folder)
    monkeypatch.setenv("COLUMNS", "100")
    try:
        main(args)
        code = 0
    except SystemExit as exit_:
        code = exit_.code if isinstance(exit_.code, int) else 1
    out, err = capsys.readouterr()
    written = {
        p.relative_to(folder).as_posix(): p.read_bytes()
        for p in sorted(folder.rglob("*"))
        if p.is_file() and p.relative_to(folder).parts[0] != "camp"
    }
    return code, out, err, written


@pytest.fixture()
def folder(tmp_path):
    shutil.copytree(EXAMPLES, tmp_path / "camp")
    return tmp_path


def inputs_of(folder: Path) -> dict[str, bytes]:
    return {
        p.relative_to(folder).as_posix(): p.read_bytes()
        for p in sorted((folder / "camp").rglob("*"))
        if p.is_file()
    }


@pytest.mark.parametrize(("path", "command"), COMMANDS, ids=[" ".join(p) for p, _ in COMMANDS])
def test_each_command_gives_the_same_bytes_twice(folder, capsys, monkeypatch, path, command):
    has_json = "--json" in help_text(path, capsys, monkeypatch)
    args = arguments(path, command, has_json)
    before = inputs_of(folder)
    first = run_once(folder, args, capsys, monkeypatch)
    second = run_once(folder, args, capsys, monkeypatch)
    code, out, err, written = first
    assert "Traceback" not in err
    if code == 2 and not out and not written:
        pytest.skip(
            f"{' '.join(path)} refuses the example campaign: {err.strip().splitlines()[-1]}"
        )
    assert code in (0, 1, 2), err
    if has_json:
        data = json.loads(out)  # exactly one JSON object on stdout
        assert isinstance(data, dict)
    else:
        assert written, f"{' '.join(args)} printed no JSON and wrote no file"
    assert second[0] == code
    assert second[1] == out, f"stdout of {' '.join(args)} differs between two runs"
    assert sorted(second[3]) == sorted(written)
    for name in written:
        assert second[3][name] == written[name], (
            f"{name} written by {' '.join(args)} differs between runs"
        )
    assert inputs_of(folder) == before  # the inputs are never modified


def test_the_commands_with_json_include_the_shadow_reduction():
    # The parametrised test above covers what is registered; the first command must be among them.
    assert ("reduce", "shadows") in [p for p, _ in COMMANDS]
