"""The log reader on files a careless or hostile user may name: long cells, open quotes, devices,
pipes, huge files, one log listed twice, a stray byte in another encoding (all data invented)."""

from __future__ import annotations

import os
import shutil
import stat
from pathlib import Path

import pytest

from firstrung import tabular
from firstrung.campaign import read_campaign
from firstrung.methods.shadows.log import read_shadow_logs

BAD = Path(__file__).resolve().parent / "data" / "bad"


@pytest.fixture(scope="module")
def campaign():
    return read_campaign(BAD / "campaign.toml")


def _rows(n: int, note=lambda k: "") -> str:
    """``n`` plain shadow rows at the corpus's site 'ridge', a minute apart (row k has note(k))."""
    lines = ["site,time_utc,shadow_mm,observer,note"]
    for k in range(1, n + 1):
        minute = 1 + (k - 1) % 58
        hour = 10 + (k - 1) // 58 % 4
        day = 1 + (k - 1) // 232 % 28
        lines.append(f"ridge,2027-03-{day:02d}T{hour:02d}:{minute:02d}:00Z,1039.1,invented,{note(k)}")
    return "\n".join(lines) + "\n"


def test_one_overlong_cell_loses_no_row(campaign, tmp_path):
    path = tmp_path / "long_note.csv"
    path.write_text(_rows(200, lambda k: "x" * 140_000 if k == 120 else "ok"))
    log = read_shadow_logs(campaign, [path])
    assert len(log) == 200 and log.rows_read == 200 and not log.problems
    assert len(log.note[list(log.row).index(120)]) == 140_000


def test_an_unterminated_quote_costs_its_row_only_and_names_it(campaign, tmp_path):
    path = tmp_path / "open_quote.csv"
    path.write_text(_rows(3_740, lambda k: '"left open' if k == 11 else "ok"))
    log = read_shadow_logs(campaign, [path])
    assert len(log) == 3_739 and log.rows_read == 3_740
    (problem,) = log.problems
    assert (problem.row, problem.column) == (11, "note")
    assert "the row is left out and the lines after it are read as rows" in problem.message
    assert 11 not in set(log.row) and {10, 12, 3_740} <= set(log.row)


@pytest.mark.parametrize("device", ["/dev/zero", "/dev/urandom"])
def test_devices_are_refused_without_reading(campaign, device):
    if not os.path.exists(device):
        pytest.skip(f"{device} is not on this system")
    log = read_shadow_logs(campaign, [device])
    assert len(log) == 0
    assert [p.message for p in log.problems] == ["not a regular file (a device, pipe or socket); expected a CSV file"]


def test_a_fifo_is_refused_without_blocking(campaign, tmp_path):
    fifo = tmp_path / "pipe.csv"
    os.mkfifo(fifo)
    assert stat.S_ISFIFO(os.stat(fifo).st_mode)
    log = read_shadow_logs(campaign, [fifo])  # opening it would wait for a writer for ever
    assert [p.message for p in log.problems] == ["not a regular file (a device, pipe or socket); expected a CSV file"]


def test_a_huge_file_is_refused_by_its_size_before_it_is_read(campaign, tmp_path):
    path = tmp_path / "sparse.csv"
    with open(path, "wb") as f:
        f.truncate(2 * 1024**3)  # 2 GiB, sparse: no disk used
    log = read_shadow_logs(campaign, [path])
    assert len(log) == 0
    assert [p.message for p in log.problems] == [
        f"2,147 MB; logs over {tabular.MAX_LOG_BYTES / 1e6:,.0f} MB are not read "
        "(split it into several files, or check that it is the log)"
    ]
    assert tabular.MAX_LOG_BYTES == 256 * 1024**2


def test_one_log_listed_twice_is_read_once(tmp_path):
    shutil.copy(BAD / "campaign.toml", tmp_path / "campaign.toml")
    (tmp_path / "logs").mkdir()
    shutil.copy(BAD / "shadows_good.csv", tmp_path / "logs" / "x.csv")
    text = (tmp_path / "campaign.toml").read_text()
    text = text.split("[logs]")[0] + '[logs]\nshadows = ["logs/x.csv", "./logs/x.csv", "logs/../logs/x.csv"]\n'
    (tmp_path / "campaign.toml").write_text(text)
    c = read_campaign(tmp_path / "campaign.toml")
    assert c.logs["shadows"] == (tmp_path / "logs" / "x.csv",)
    log = read_shadow_logs(c)
    assert len(log) == 24 and not log.problems


def test_a_stray_latin1_byte_leaves_the_utf8_names_intact_and_is_noted(campaign, tmp_path):
    lines = _rows(3).encode("utf-8").splitlines()
    lines[1] = lines[1].replace(b"invented", "Zoë Ødegård".encode())
    lines[3] = lines[3].replace(b"invented", b"Ren\xe9")  # one name typed in Latin-1
    path = tmp_path / "mixed.csv"
    path.write_bytes(b"\n".join(lines) + b"\n")
    log = read_shadow_logs(campaign, [path])
    assert list(log.observer) == ["Zoë Ødegård", "invented", "René"]
    (note,) = log.notes
    assert note.endswith(
        "mixed.csv: read as UTF-8 text, with 1 line(s) that are not UTF-8 taken as Windows-1252 "
        "(line 4: byte 0xe9; check letters outside ASCII in the names and notes there)"
    )
