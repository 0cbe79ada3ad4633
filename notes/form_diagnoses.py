"""How often ``check`` lands each angle-log diagnosis on the right rows (and nowhere else).

Uses the trials of ``tests/methods/test_shadow_form_checks.py`` (one mistake
at one of two sites: zenith distance typed as altitude, degrees and minutes
typed as decimals, the wrong limb, a clock on standard time in summer; and
clean logs). Run from the repository root:
``python notes/form_diagnoses.py [trials per mistake]``.
"""

from __future__ import annotations

import sys
import tempfile
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent.parent / "tests" / "methods"))

from test_shadow_form_checks import EXPECTED_CODE, diagnose  # noqa: E402


def main(trials: int = 100) -> None:
    with tempfile.TemporaryDirectory() as scratch:
        for mistake in [*EXPECTED_CODE, None]:
            hits = sum(diagnose(Path(scratch), mistake, 1000 + seed) for seed in range(trials))
            print(f"{mistake or 'clean log'}: right rows, nothing else, in {hits}/{trials} trials "
                  f"({100 * hits / trials:.1f} %)")


if __name__ == "__main__":
    main(*(int(a) for a in sys.argv[1:]))
