"""check reads each plain log once: its summary and the --accepted copy come from the same read."""

from __future__ import annotations

import shutil
from pathlib import Path

from firstrung.app.check import run_check, status_csv

ROOT = Path(__file__).resolve().parent.parent


def test_each_shadow_log_is_read_once_and_the_copy_has_every_row(tmp_path, monkeypatch):
    shutil.copytree(ROOT / "examples", tmp_path / "camp")
    log = tmp_path / "camp" / "logs" / "shadows.csv"
    reads: list[Path] = []
    original = Path.read_bytes

    def counting(self):
        reads.append(Path(self))
        return original(self)

    monkeypatch.setattr(Path, "read_bytes", counting)
    run = run_check(tmp_path / "camp" / "campaign.toml")
    assert reads.count(log) == 1
    (shadows,) = [f for f in run.files if f.kind == "shadows"]
    data_lines = [line for line in log.read_text().splitlines()[1:] if line.strip() and not line.startswith("#")]
    assert len(shadows.rows) == len(data_lines) == 187
    copy = status_csv(run).splitlines()
    assert copy[0].startswith("site,time_utc,shadow_mm,observer,note,") and copy[0].endswith(",status,flags,source_file,source_row,log")
    assert sum(1 for line in copy if ",logs/shadows.csv," in line) == 187
