"""Coverage of each rung's 68 % interval over many simulated campaigns (run once; not a test).

    python notes/coverage_study.py [N] [scenario ...]

The scenarios live in tests/truth_coverage.py (the suite runs a smaller
version of each). One JSON line per scenario: the share of campaigns whose
68 % interval holds the truth, and the median bias. The same N gives the
same numbers.
"""

from __future__ import annotations

import sys
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent.parent / "tests"))

import truth_coverage  # noqa: E402

if __name__ == "__main__":
    truth_coverage.VERBOSE = True
    count = int(sys.argv[1]) if len(sys.argv) > 1 else 200
    for key in sys.argv[2:] or list(truth_coverage.SCENARIOS):
        truth_coverage.SCENARIOS[key](count)
