"""Smoke test of the benchmark script so that it cannot rot (no time is asserted)."""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

SCRIPT = Path(__file__).resolve().parent.parent / "benchmarks" / "run.py"


def test_quick_benchmarks_run_and_agree():
    out = subprocess.run([sys.executable, str(SCRIPT), "--quick"], capture_output=True, text=True, timeout=300)
    assert out.returncode == 0, out.stderr
    lines = {line.split("  ")[0].strip(): line for line in out.stdout.splitlines()}
    assert "plan shadows" in lines and "reduce shadows" in lines and "CLI start" in lines
    # the transit agreement column reads "max X s": firstrung and skyfield's search agree within 1 s
    transit = lines["plan shadows"]
    assert float(transit.rsplit("max", 1)[1].split()[0]) < 1.0
