"""Save, or compare against a saved copy, every JSON output and the demo's files.

A restructuring of the package must leave what a user gets byte-identical:
run ``python benchmarks/compare_outputs.py save BEFORE`` on the old code,
change the code, then ``python benchmarks/compare_outputs.py compare BEFORE``.
The second prints every output that differs and exits 1 if any does.

The outputs: ``--json`` of every ``plan`` and ``reduce`` command, ``check``
and ``ladder`` on ``examples/campaign.toml``, and every file ``demo`` writes
(its campaign, logs, check table and report).
"""

from __future__ import annotations

import argparse
import filecmp
import os
import shutil
import subprocess
import sys
import tempfile
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
CAMPAIGN = "examples/campaign.toml"

#: name of the saved file -> the command's arguments after ``firstrung``
COMMANDS = {
    "plan-shadows.json": ["plan", "shadows", CAMPAIGN, "--from", "2027-01-01", "--to", "2027-12-31", "--json"],
    "plan-eclipses.json": ["plan", "eclipses", CAMPAIGN, "--from", "2026-01-01", "--to", "2035-12-31", "--json"],
    "plan-phases.json": ["plan", "phases", CAMPAIGN, "--from", "2027-01-01", "--to", "2027-06-30", "--json"],
    "reduce-shadows.json": ["reduce", "shadows", CAMPAIGN, "--json"],
    "reduce-shadows-mc.json": ["reduce", "shadows", CAMPAIGN, "--json", "--monte-carlo", "2000", "--seed", "3"],
    "reduce-eclipse.json": ["reduce", "eclipse", CAMPAIGN, "--json"],
    "reduce-phases.json": ["reduce", "phases", CAMPAIGN, "--json"],
    "check.json": ["check", CAMPAIGN, "--json"],
    "ladder.json": ["ladder", CAMPAIGN, "--json"],
}


def _firstrung() -> list[str]:
    return [sys.executable, "-m", "firstrung"]


def save(folder: Path) -> None:
    """Run every command and the demo, keeping their outputs in ``folder``."""
    folder.mkdir(parents=True, exist_ok=True)
    env = dict(os.environ, COLUMNS="80")
    for name, args in COMMANDS.items():
        done = subprocess.run(_firstrung() + args, cwd=ROOT, capture_output=True, env=env)
        (folder / name).write_bytes(done.stdout)
        (folder / (name + ".status")).write_text(f"{done.returncode}\n")
    demo = folder / "demo"
    if demo.exists():
        shutil.rmtree(demo)
    with tempfile.TemporaryDirectory() as scratch:
        out = Path(scratch) / "demo"
        subprocess.run(_firstrung() + ["demo", "-o", str(out)], cwd=ROOT, capture_output=True, env=env, check=True)
        shutil.copytree(out, demo)


def _differences(before: Path, after: Path, prefix: str = "") -> list[str]:
    comparison = filecmp.dircmp(before, after)
    found = [f"{prefix}{n}: only before" for n in comparison.left_only]
    found += [f"{prefix}{n}: only after" for n in comparison.right_only]
    for name in comparison.common_files:
        if (before / name).read_bytes() != (after / name).read_bytes():
            found.append(f"{prefix}{name}: differs")
    for name in comparison.common_dirs:
        found += _differences(before / name, after / name, f"{prefix}{name}/")
    return found


def compare(folder: Path) -> int:
    """Run everything again and list every output that is not byte-identical to ``folder``."""
    with tempfile.TemporaryDirectory() as scratch:
        now = Path(scratch) / "now"
        save(now)
        found = _differences(folder, now)
    for line in found:
        print(line)
    print("byte-identical" if not found else f"{len(found)} outputs differ")
    return 1 if found else 0


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("action", choices=["save", "compare"])
    parser.add_argument("folder", type=Path)
    args = parser.parse_args()
    if args.action == "save":
        save(args.folder.resolve())
        return 0
    return compare(args.folder.resolve())


if __name__ == "__main__":
    raise SystemExit(main())
