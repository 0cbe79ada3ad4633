"""``firstrung --help`` lists every command without importing it; the listing must match the real commands."""

from __future__ import annotations

import subprocess
import sys

import typer.main

from firstrung.cli.app import GROUPS, TOP_LEVEL_HELP, build


def _commands(app):
    group = typer.main.get_command(app)
    return {name: cmd for name, cmd in group.commands.items() if not getattr(cmd, "hidden", False)}


def test_listing_names_and_help_match_the_full_command_tree():
    full = _commands(build(None))
    listing = _commands(build([]))
    assert set(listing) == set(full) == set(GROUPS) | set(TOP_LEVEL_HELP)
    for name, (_module, help_text) in TOP_LEVEL_HELP.items():
        real = (full[name].help or "").strip().splitlines()[0]
        assert real == help_text, f"TOP_LEVEL_HELP[{name!r}] is stale: the command says {real!r}"


def test_help_imports_no_command_module():
    code = (
        "import sys\n"
        "from firstrung.cli import main\n"
        "try:\n    main(['--help'])\nexcept SystemExit:\n    pass\n"
        "print(sorted(m for m in sys.modules if m.startswith('firstrung.cli.') and m.split('.')[-1] not in "
        "('app', 'common', 'command_names', 'direct', 'kept_methods')))\n"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=60)
    assert out.stdout.strip().splitlines()[-1] == "[]"
