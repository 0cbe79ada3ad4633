"""``check`` on a network of many schools: the flags summed up (counts per code, the worst rows) instead of a
section per flagged school, unless --verbose; --json keeps every flag with the Contract's keys.

Regression checks of the terminal output against the command's own JSON (no outside reference involved).
"""

from __future__ import annotations

import csv
import json
import re
from collections import Counter

from tests.helpers import run_cli

from firstrung.cli.check import FLAGGED_SITES_SHOWN, WORST_ROWS_SHOWN, worst_rows
from firstrung.methods.shadows.rehearsal_network import network_log_rows, simulate_network

#: The Contract's keys of every flag (DESIGN.md section 4).
CONTRACT_KEYS = {"file", "row", "site", "code", "message"}


def test_many_flagged_schools_are_summed_up_by_code_and_worst_rows_unless_verbose(tmp_path, capsys, monkeypatch):
    net = simulate_network(200, "2027-03-20", 13)
    (tmp_path / "logs").mkdir()
    with open(tmp_path / "logs" / "schools.csv", "w", newline="") as f:
        rows = network_log_rows(net)
        w = csv.DictWriter(f, fieldnames=list(rows[0]))
        w.writeheader()
        w.writerows(rows)
    camp = tmp_path / "network.toml"
    camp.write_text('[campaign]\nname = "Equinox network"\n[logs]\nshadows = ["logs/schools.csv"]\n')
    code, out, _ = run_cli(["check", camp, "--json"], capsys, monkeypatch)
    assert code == 1
    flags = json.loads(out)["flags"]
    assert all(CONTRACT_KEYS <= set(f) for f in flags)
    sites = {f["site"] for f in flags}
    assert len(sites) > FLAGGED_SITES_SHOWN

    code, out, _ = run_cli(["check", camp], capsys, monkeypatch, columns=80)
    assert code == 1
    assert not re.search(r"^Site .*: \d+ flags?$", out, flags=re.M)  # no section per school
    assert f"Flags by code: {len(flags)} flags at {len(sites)} sites" in out
    for (code_name, severity), count in Counter((f["code"], f["severity"]) for f in flags).items():
        line = re.search(rf"^\s+{re.escape(code_name)}\s+([\d,]+)\s+([\d,]+)\s+([\d,]+)\s*$", out, flags=re.M)
        assert int(line.group(1 if severity == "error" else 2).replace(",", "")) == count
        assert int(line.group(3)) == len({f["site"] for f in flags if f["code"] == code_name})
    worst = worst_rows(flags)
    assert len(worst) == WORST_ROWS_SHOWN
    shown = re.findall(r"^\s+logs/schools\.csv:(\d+)\s", out, flags=re.M)
    assert [int(r) for r in shown] == [items[0]["row"] for items in worst]
    # the worst are errors, the farthest off the Sun first
    sigmas = [max(f.get("sigma") or 0.0 for f in items) for items in worst]
    assert all(any(f["severity"] == "error" for f in items) for items in worst)
    assert sigmas == sorted(sigmas, reverse=True) and sigmas[0] == max(f.get("sigma") or 0.0 for f in flags)
    assert "--verbose shows each site's flags" in out

    code, out, _ = run_cli(["check", camp, "--verbose"], capsys, monkeypatch, columns=80)
    assert len(re.findall(r"^Site .*: \d+ flags?$", out, flags=re.M)) == len(sites)
    assert "Flags by code" not in out


def test_worst_rows_put_errors_first_then_the_largest_sigma_then_the_most_flags():
    def flag(row, severity="error", sigma=None, code="outlier"):
        return {"file": "a.csv", "row": row, "site": f"s{row}", "code": code, "severity": severity,
                "message": "m", "fix": "f", **({"sigma": sigma} if sigma is not None else {})}

    flags = [flag(1, "warning", 50.0), flag(2, sigma=4.0), flag(3, sigma=9.0), flag(4, code="length-unit"),
             flag(4, sigma=4.0), flag(5)]
    assert [items[0]["row"] for items in worst_rows(flags, 5)] == [3, 4, 2, 5, 1]
    assert len(worst_rows(flags, 2)) == 2
