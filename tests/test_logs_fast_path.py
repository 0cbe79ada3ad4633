"""The reader's fast path for plain shadow rows gives exactly what the full row checks give."""

from __future__ import annotations

import shutil
from pathlib import Path

import numpy as np
import pytest

from firstrung import tabular
from firstrung.campaign import read_campaign
from firstrung.methods.shadows.log import read_shadow_logs

ROOT = Path(__file__).resolve().parent
BAD = ROOT / "data" / "bad"
CASES = sorted(p.name for p in BAD.glob("shadows_*.csv"))


def _both(campaign, paths):
    fast = read_shadow_logs(campaign, paths)
    try:
        tabular.FAST_PATH = False
        slow = read_shadow_logs(campaign, paths)
    finally:
        tabular.FAST_PATH = True
    return fast, slow


def _same(a, b):
    assert len(a) == len(b)
    for name in ("file", "row", "site", "time_utc", "time_column", "shadow_m", "shadow_column", "gnomon_m",
                 "temperature_c", "pressure_hpa", "observer", "note"):
        x, y = np.asarray(getattr(a, name)), np.asarray(getattr(b, name))
        if x.dtype.kind == "f":
            np.testing.assert_array_equal(x, y)
        else:
            assert x.tolist() == y.tolist(), name
    assert list(a.edge) == list(b.edge)
    assert [str(p) for p in a.problems] == [str(p) for p in b.problems]
    assert a.rows_read == b.rows_read and a.notes == b.notes


@pytest.mark.parametrize("name", CASES)
def test_fast_path_matches_the_full_checks_on_the_bad_input_corpus(name):
    campaign = read_campaign(BAD / "campaign.toml")
    _same(*_both(campaign, [BAD / name]))


def test_fast_path_matches_on_the_example_logs_and_a_mixed_file(tmp_path):
    shutil.copytree(ROOT.parent / "examples", tmp_path / "camp")
    log = tmp_path / "camp" / "logs" / "shadows.csv"
    lines = log.read_text().splitlines()
    lines[0] = "site,time_utc,shadow_mm,observer,note,gnomon_cm,edge,temperature_c,pressure_hpa"
    extra = [",150.0,umbra,-3.5,1013", ",,,,", ",0,,,", ",99999,,12,", ",150,middle,61,900", ",150,UMBRA,+5,1e3",
             ",150,,-0,1100.0"]
    lines = [lines[0]] + [line + extra[k % len(extra)] for k, line in enumerate(lines[1:])]
    lines.append("fjell,2027-03-22 11:00,1500.5,x,y,,,,")
    lines.append("fjell,2027-03-22T11:00:00.5+00:00,1500,x,y,,,,")
    lines.append("fjell,2060-03-22T11:00:00Z,1500,x,y,,,,")
    log.write_text("\n".join(lines) + "\n")
    campaign = read_campaign(tmp_path / "camp" / "campaign.toml")
    fast, slow = _both(campaign, None)
    _same(fast, slow)
    assert len(fast) > 100 and sum(max(len(p.rows), 1) for p in fast.problems) > 10  # a problem may stand for rows
