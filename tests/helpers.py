"""Shared test helpers: running the command line in process."""

from __future__ import annotations

from firstrung.cli import main


def run_cli(args, capsys, monkeypatch, columns: int = 100):
    """Run ``firstrung ARGS`` in this process at a fixed terminal width: (exit code, stdout, stderr)."""
    monkeypatch.setenv("COLUMNS", str(columns))
    try:
        main([str(a) for a in args])
        code = 0
    except SystemExit as exit_:
        code = exit_.code if isinstance(exit_.code, int) else 1
    out, err = capsys.readouterr()
    return code, out, err


def shadows_only(campaign_toml) -> None:
    """Drop the eclipse and half-moon logs from a copied campaign file (tests about shadow rows)."""
    text = campaign_toml.read_text()
    campaign_toml.write_text(
        "".join(line for line in text.splitlines(keepends=True) if not line.startswith(("eclipse =", "phases =")))
    )
