"""Safe writes: firstrung.output.write_atomic and refuse_overwriting_inputs."""

from __future__ import annotations

import os
import stat
import sys

import pytest

from firstrung import output
from firstrung.errors import InputError
from firstrung.output import refuse_overwriting_inputs, write_atomic


def names(folder) -> list[str]:
    return sorted(p.name for p in folder.iterdir())


def test_text_and_bytes_are_written(tmp_path):
    assert write_atomic(tmp_path / "a.txt", "r\u00e9sum\u00e9\n") == tmp_path / "a.txt"
    assert (tmp_path / "a.txt").read_bytes() == "r\u00e9sum\u00e9\n".encode()
    write_atomic(tmp_path / "b.bin", b"\x00\x01")
    assert (tmp_path / "b.bin").read_bytes() == b"\x00\x01"
    assert names(tmp_path) == ["a.txt", "b.bin"]


def test_an_existing_output_is_replaced_whole(tmp_path):
    path = tmp_path / "report.html"
    path.write_text("old and longer content\n")
    write_atomic(path, "new\n")
    assert path.read_text() == "new\n"
    assert names(tmp_path) == ["report.html"]


@pytest.mark.skipif(sys.platform == "win32", reason="POSIX permission bits")
def test_permissions_follow_the_umask_or_the_replaced_file(tmp_path):
    umask = os.umask(0o022)
    try:
        write_atomic(tmp_path / "new.txt", "x")
    finally:
        os.umask(umask)
    # mkstemp makes 0600 files; the output must be as readable as any other new file.
    assert stat.S_IMODE((tmp_path / "new.txt").stat().st_mode) == 0o644
    kept = tmp_path / "kept.txt"
    kept.write_text("x")
    kept.chmod(0o640)
    write_atomic(kept, "y")
    assert stat.S_IMODE(kept.stat().st_mode) == 0o640


@pytest.mark.parametrize("interruption", [KeyboardInterrupt, OSError, RuntimeError])
def test_nothing_is_left_behind_when_the_rename_fails(tmp_path, monkeypatch, interruption):
    path = tmp_path / "sheet.html"
    path.write_text("previous\n")

    def fail(*args, **kwargs):
        raise (
            interruption(28, "No space left on device")
            if interruption is OSError
            else interruption()
        )

    monkeypatch.setattr(output.os, "replace", fail)
    expected = InputError if interruption is OSError else interruption
    with pytest.raises(expected) as info:
        write_atomic(path, "new content\n")
    if interruption is OSError:
        assert str(info.value) == f"cannot write {path}: No space left on device"
    assert names(tmp_path) == ["sheet.html"]  # no .part file
    assert path.read_text() == "previous\n"  # the old output is untouched


def test_nothing_is_left_behind_when_writing_fails_half_way(tmp_path, monkeypatch):
    real_fsync = os.fsync

    def interrupted_fsync(fd):
        real_fsync(fd)
        raise KeyboardInterrupt

    monkeypatch.setattr(output.os, "fsync", interrupted_fsync)
    with pytest.raises(KeyboardInterrupt):
        write_atomic(tmp_path / "big.csv", "x" * 1_000_000)
    assert names(tmp_path) == []


def test_an_output_equal_to_an_input_is_refused(tmp_path, monkeypatch):
    campaign = tmp_path / "campaign.toml"
    campaign.write_text("[[site]]\n")
    before = campaign.read_bytes()
    with pytest.raises(InputError) as info:
        write_atomic(campaign, "overwritten", inputs=[None, tmp_path / "other.csv", campaign])
    assert str(info.value) == f"output {campaign} is one of the inputs; choose another file name"
    # The same file by a relative name, through a symbolic link and through a hard link.
    monkeypatch.chdir(tmp_path)
    with pytest.raises(InputError):
        write_atomic("campaign.toml", "x", inputs=[campaign])
    if hasattr(os, "symlink"):
        (tmp_path / "link.toml").symlink_to(campaign)
        with pytest.raises(InputError):
            write_atomic(tmp_path / "link.toml", "x", inputs=[campaign])
    os.link(campaign, tmp_path / "hard.toml")
    with pytest.raises(InputError):
        write_atomic(tmp_path / "hard.toml", "x", inputs=[campaign])
    assert campaign.read_bytes() == before
    assert refuse_overwriting_inputs(tmp_path / "out.html", [campaign]) == tmp_path / "out.html"


def test_a_missing_folder_is_created_and_a_folder_as_output_refused(tmp_path):
    assert write_atomic(tmp_path / "nowhere" / "deeper" / "a.txt", "x").read_text() == "x"
    (tmp_path / "plain").write_text("")
    with pytest.raises(InputError) as info:
        write_atomic(tmp_path / "plain" / "a.txt", "x")
    assert str(info.value) == f"cannot write {tmp_path / 'plain' / 'a.txt'}: {tmp_path / 'plain'} exists and is not a folder"
    (tmp_path / "out").mkdir()
    with pytest.raises(InputError) as info:
        write_atomic(tmp_path / "out", "x")
    assert str(info.value) == f"cannot write {tmp_path / 'out'}: it is a folder; give a file name"
    assert names(tmp_path / "out") == []


@pytest.mark.skipif(sys.platform == "win32" or os.geteuid() == 0, reason="root may write anywhere")
def test_a_read_only_folder_is_one_input_error(tmp_path):
    folder = tmp_path / "locked"
    folder.mkdir()
    folder.chmod(0o500)
    try:
        with pytest.raises(InputError) as info:
            write_atomic(folder / "a.txt", "x")
        assert str(info.value) == f"cannot write {folder / 'a.txt'}: Permission denied"
    finally:
        folder.chmod(0o700)
