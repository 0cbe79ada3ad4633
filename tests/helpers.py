"""Shared test helpers: running the command line in process, campaigns and rows made for a test."""

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


def write_network(tmp_path, rows, campaign_extra=""):
    """An open network's campaign (no [[site]]) and its one log of ``rows`` (dicts): the campaign's path."""
    import csv

    logs = tmp_path / "logs"
    logs.mkdir(exist_ok=True)
    with open(logs / "schools.csv", "w", newline="") as f:
        w = csv.DictWriter(f, fieldnames=list(rows[0]))
        w.writeheader()
        w.writerows(rows)
    camp = tmp_path / "network.toml"
    camp.write_text('[campaign]\nname = "Equinox network"\n' + campaign_extra + '[logs]\nshadows = ["logs/schools.csv"]\n')
    return camp


def umbra_rows(site_index, t, shadow_m):
    """Shadow readings of a 1 m gnomon marked at the umbra's edge, with the usual stated errors (the
    check's input as the log reader gives it), for tests that make their own rows."""
    import numpy as np

    from firstrung.methods.shadows.inputs import ShadowReadings

    n = len(t)
    return ShadowReadings(
        np.asarray(site_index), t, shadow_m, np.ones(n), np.full(n, "umbra", dtype=object), np.full(n, 0.002),
        np.full(n, 0.001), np.full(n, np.nan), np.full(n, np.nan), file=np.full(n, "a.csv", dtype=object),
        row=np.arange(1, n + 1), time_column=np.full(n, "time_utc", dtype=object),
        shadow_column=np.full(n, "shadow_m", dtype=object), observer=np.full(n, "", dtype=object))

