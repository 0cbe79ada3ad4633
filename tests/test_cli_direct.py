"""Plain command lines read without typer (firstrung.cli.direct) give each command what typer gives it.

The reference is typer itself: every command of the application is given many command lines
(each option in each of its spellings, flags, numbers plain and not, out of range, paths that
exist or not, repeats, unknown options, missing and extra arguments, help) and the values the
command receives are compared, type and value, with those typer's parsing gives the same function.
A line read directly must agree exactly; any other line must be left to typer. Whole commands are
then run both ways and their output and exit status compared.
"""

from __future__ import annotations

import functools
import subprocess
import sys
from pathlib import Path

import pytest
from tests.helpers import run_cli

from firstrung.cli import direct, main
from firstrung.cli.app import GROUPS, TOP_LEVEL_HELP
from firstrung.methods import REGISTRY

EXAMPLE = Path(__file__).resolve().parent.parent / "examples" / "campaign.toml"


def _commands() -> dict[str, object]:
    """Every command of the application by its words, as the direct reading finds it."""
    found = {}
    for group, (_, attr, _, _) in GROUPS.items():
        for m in REGISTRY:
            words = [group, getattr(m, attr)]
            found[" ".join(words)] = direct._command(words)[0]
    for name in TOP_LEVEL_HELP:
        found[name] = direct._command([name])[0]
    return found


COMMANDS = _commands()
#: Commands with an option the direct reading leaves to typer (serve's yes, no or unset --join/--no-join).
TYPER_ONLY = {"serve"}


def _typers(command, words: list[str]):
    """What typer (as the command line runs it, firstrung's value conversion in place) calls
    ``command`` with for ``words``: the keyword arguments, or the error it stops with."""
    import typer
    from typer.main import get_command

    from firstrung.cli.app import plain_values

    plain_values()
    received = []

    @functools.wraps(command)
    def capture(**kwargs):
        received.append(kwargs)

    app = typer.Typer(add_completion=False, pretty_exceptions_enable=False, rich_markup_mode=None)
    app.command()(direct.typer_ready(capture))
    try:
        get_command(app).main(args=list(words), prog_name="firstrung", standalone_mode=False)
    except Exception as error:  # click's usage errors
        return type(error).__name__
    return received[0] if received else "no call"


def _directs(command, words: list[str]):
    try:
        return direct.parse(command, list(words))
    except direct.NotPlain:
        return None


def _typed(kwargs: dict) -> dict:
    return {k: (type(v).__name__, v) for k, v in kwargs.items()}


def _sample_lines(command) -> list[list[str]]:
    """Command lines for ``command``: the required ones, then each option in many forms."""
    parameters = direct._parameters(command)
    base: list[str] = []
    for p in parameters:
        if p.positional:
            base.append(str(EXAMPLE))
        elif p.default is direct._REQUIRED:
            base += [p.decls[0], "2027-03-01"]
    lines = [base, [*base, "--help"], [*base, "--no-such-option"], [*base, "extra"], base[1:], [*base, "--"]]
    for p in parameters:
        if p.positional:
            continue
        for decl in p.decls:
            if p.type is bool:
                lines += [[*base, decl], [*base, decl, decl], [*base, f"{decl}=1"]]
                continue
            if p.type is int:
                values = ["3", "0", "-2", "1000", "+4", "1_0", "2.5", "x", "99999999999999999999"]
            elif p.type is float:
                values = ["2.5", "0", "20", "-0.5", "1e3", "inf", "nan", ".5", "7."]
            elif p.type is Path:
                values = [str(EXAMPLE), str(EXAMPLE.parent), "/no/such/file.txt", "out.ics", ""]
            else:
                values = ["2027-03-05", "a,b", "", "-x", "mon-fri"]
            for v in values:
                if decl.startswith("--"):
                    lines.append([*base, f"{decl}={v}"])
                lines.append([*base, decl, v])
                lines.append([decl, v, *base])
            lines.append([*base, decl])  # the value missing
            lines.append([*base, decl, values[0], decl, values[0]])  # given twice
    return lines


@pytest.mark.parametrize("name", sorted(COMMANDS))
def test_each_plain_line_gives_the_command_what_typer_gives(name):
    command = COMMANDS[name]
    if name in TYPER_ONLY:  # a declaration the direct reading does not know: every line goes to typer
        with pytest.raises(direct.NotPlain):
            direct.parse(command, [str(EXAMPLE)])
        return
    read_directly = 0
    for words in _sample_lines(command):
        ours = _directs(command, words)
        if ours is None:
            continue
        theirs = _typers(command, words)
        assert isinstance(theirs, dict), (name, words, theirs)
        assert _typed(ours) == _typed(theirs), (name, words)
        read_directly += 1
    assert read_directly >= 3, name  # the plain lines are read directly, not all left to typer


@pytest.mark.parametrize("words", [
    ["plan", "shadows", str(EXAMPLE), "--from", "2027-03-01", "--to", "2027-03-31", "--top", "3"],
    ["reduce", "shadows", str(EXAMPLE)],
    ["reduce", "shadows", str(EXAMPLE), "--json", "--verbose"],
    ["check", str(EXAMPLE), "-v"],
    ["ladder", str(EXAMPLE), "--samples", "2000", "--seed", "3"],
])
def test_the_usual_lines_are_read_directly(words):
    command, rest = direct._command(words)
    assert direct.parse(command, rest)  # not left to typer


def _run(args, capsys, monkeypatch, typer_only: bool):
    if typer_only:
        monkeypatch.setattr(direct, "run_direct", lambda args: False)
    try:
        return run_cli(args, capsys, monkeypatch, columns=80)
    finally:
        monkeypatch.undo()


@pytest.mark.parametrize("args", [
    ["reduce", "shadows", EXAMPLE],
    ["check", EXAMPLE, "--json"],
    ["plan", "shadows", EXAMPLE, "--from", "2027-03-01", "--to", "2027-03-10", "--top", "2"],
    ["plan", "shadows", EXAMPLE, "--from", "2027-03-01", "--to", "2027-02-10"],  # refused: exit 2, one line
    ["reduce", "shadows", "/no/such/campaign.toml"],
])
def test_a_command_run_directly_prints_and_exits_as_under_typer(args, capsys, monkeypatch):
    direct_run = _run(args, capsys, monkeypatch, typer_only=False)
    typer_run = _run(args, capsys, monkeypatch, typer_only=True)
    assert direct_run == typer_run
    assert direct_run[0] in (0, 1, 2)


def test_ctrl_c_in_a_direct_command_is_exit_130(capsys, monkeypatch):
    import firstrung.methods.shadows.run

    def interrupted(*args, **kwargs):
        raise KeyboardInterrupt

    monkeypatch.setattr(firstrung.methods.shadows.run, "run_shadows", interrupted)
    with pytest.raises(SystemExit) as exit_:
        main(["reduce", "shadows", str(EXAMPLE)])
    assert exit_.value.code == 130
    assert capsys.readouterr().err.splitlines() == ["firstrung: interrupted"]


def test_a_plain_line_loads_no_typer():
    code = (
        "import contextlib, io, sys\n"
        "from firstrung.cli import main\n"
        "with contextlib.redirect_stdout(io.StringIO()):\n"
        "    try:\n"
        f"        main(['plan', 'shadows', {str(EXAMPLE)!r}, '--from', '2027-03-01', '--to', '2027-03-05'])\n"
        "    except SystemExit as e:\n"
        "        code = e.code\n"
        "print(code, 'typer' in sys.modules, 'click' in sys.modules)\n"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=120)
    assert out.returncode == 0, out.stderr
    assert out.stdout.split() == ["0", "False", "False"]
