"""The command line's error paths: input errors, internal errors, --debug, Ctrl-C, warnings."""

from __future__ import annotations

import warnings
from pathlib import Path

import pytest

import firstrung.methods.shadows.run
from helpers import run_cli

EXAMPLE = Path(__file__).resolve().parent / "data" / "clean_campaign" / "campaign.toml"


def run(args, capsys, monkeypatch):
    return run_cli(args, capsys, monkeypatch, columns=100)


def boom(*args, **kwargs):
    raise RuntimeError("invented fault\nsecond line of detail")


def test_an_internal_error_is_one_line_saying_where_the_details_are(capsys, monkeypatch):
    monkeypatch.setattr(firstrung.methods.shadows.run, "run_shadows", boom)
    code, out, err = run(["reduce", "shadows", EXAMPLE, "--json"], capsys, monkeypatch)
    assert code == 3 and out == ""
    assert err.splitlines() == [
        "firstrung: internal error (RuntimeError: invented fault); this is a fault in firstrung, "
        "not in your files: run the same command again with --debug for the traceback"
    ]


@pytest.mark.parametrize("where", ["first", "last"])
def test_debug_shows_the_traceback(capsys, monkeypatch, where):
    monkeypatch.setattr(firstrung.methods.shadows.run, "run_shadows", boom)
    args = ["reduce", "shadows", EXAMPLE, "--json"]
    args = ["--debug", *args] if where == "first" else [*args, "--debug"]
    code, out, err = run(args, capsys, monkeypatch)
    assert code == 3 and out == ""
    lines = err.splitlines()
    assert lines[0] == "Traceback (most recent call last):"
    assert "in boom" in err and "RuntimeError: invented fault" in err
    assert lines[-1] == (
        "firstrung: internal error (RuntimeError: invented fault); the traceback above shows "
        "where it happened"
    )


def test_an_input_error_is_one_line_exit_2(tmp_path, capsys, monkeypatch):
    bad = tmp_path / "campaign.toml"
    bad.write_text('[[site]]\nid = "ridge"\nlatitude_deg = = 46.2\n', encoding="utf-8")
    code, out, err = run(["reduce", "shadows", bad], capsys, monkeypatch)
    assert code == 2 and out == ""
    assert err.splitlines() == [f"firstrung: {bad}:3:16: TOML syntax error: Invalid value"]


def test_ctrl_c_is_exit_130_with_one_line(capsys, monkeypatch):
    def interrupted(*args, **kwargs):
        raise KeyboardInterrupt

    monkeypatch.setattr(firstrung.methods.shadows.run, "run_shadows", interrupted)
    code, out, err = run(["reduce", "shadows", EXAMPLE], capsys, monkeypatch)
    assert code == 130 and out == ""
    assert err.splitlines() == ["firstrung: interrupted"]


def test_a_warning_is_one_line_without_debug(capsys, monkeypatch):
    real = firstrung.methods.shadows.run.run_shadows

    def warns(*args, **kwargs):
        warnings.warn("invented numerical warning", RuntimeWarning, stacklevel=1)
        return real(*args, **kwargs)

    monkeypatch.setattr(firstrung.methods.shadows.run, "run_shadows", warns)
    with warnings.catch_warnings():
        warnings.simplefilter("always")  # the suite turns warnings into errors; users see them
        code, out, err = run(["reduce", "shadows", EXAMPLE, "--json"], capsys, monkeypatch)
    assert code == 0
    assert err.splitlines() == [
        "firstrung: warning: RuntimeWarning: invented numerical warning (run again with --debug "
        "to see where)"
    ]


def test_a_usage_error_is_exit_2_without_a_traceback(capsys, monkeypatch):
    code, out, err = run(["reduce", "shadows", EXAMPLE, "--no-such-option"], capsys, monkeypatch)
    assert code == 2 and out == ""
    assert "No such option: --no-such-option" in err and "Traceback" not in err
