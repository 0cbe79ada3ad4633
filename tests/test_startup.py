"""What a command loads at start-up: only what it uses (docs/architecture.md, "Start-up").

A user pays every import of every command, cold. These tests hold that ``plan shadows`` and
``reduce shadows`` load no library they do not use (pydantic, through typer's general value
converter; scipy.stats; the plotting and templating libraries; skyfield's download machinery),
and that firstrung's own conversion of the command line's values gives what typer's does.
They time nothing: the benchmark measures the time (benchmarks/run.py).
"""

from __future__ import annotations

import math
import subprocess
import sys
from pathlib import Path

import pytest

EXAMPLE = Path(__file__).resolve().parent.parent / "examples" / "campaign.toml"

#: Libraries these commands never use: each costs a cold start tenths of a second.
NOT_LOADED = ("pydantic", "scipy.stats", "matplotlib", "jinja2", "skyfield.iokit", "astropy")
#: Modules the Sun's commands (plan, check, reduce of shadows) never use: the Moon's ephemeris module
#: (firstrung.ephemeris imports each of its modules on first use of one of its names), and Python's
#: TOML reader (a plain campaign file is read by firstrung.toml_plain; tomllib only for the rest).
NOT_LOADED_BY_SHADOWS = ("firstrung.ephemeris.moon", "tomllib")
#: numpy's masked arrays, which np.unique (without its options), np.median and np.quantile import:
#: the Sun's commands do without them (firstrung.numbers' median and quantiles, numpy's numbers).
MASKED = "numpy.ma"


def _loaded_after(args: list[str], ok=("0", "None")) -> set[str]:
    """The modules a fresh interpreter holds after running ``firstrung args`` (output discarded)."""
    code = (
        "import contextlib, io, sys\n"
        "from firstrung.cli import main\n"
        "with contextlib.redirect_stdout(io.StringIO()), contextlib.redirect_stderr(io.StringIO()):\n"
        "    try:\n"
        f"        main({args!r})\n"
        "    except SystemExit as e:\n"
        "        status = e.code\n"
        "print(status)\n"
        "print(' '.join(sorted(sys.modules)))\n"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=120,
                         env={"COLUMNS": "80", "PATH": "/usr/bin:/bin"})
    assert out.returncode == 0, out.stderr
    status, modules = out.stdout.strip().splitlines()[-2:]
    assert status in ok, status
    return set(modules.split())


def _unwanted(modules: set[str]) -> list[str]:
    return sorted(m for m in modules if any(m == n or m.startswith(n + ".") for n in NOT_LOADED + NOT_LOADED_BY_SHADOWS))


def test_plan_shadows_loads_no_library_it_does_not_use():
    modules = _loaded_after(["plan", "shadows", str(EXAMPLE), "--from", "2027-03-01", "--to", "2027-03-31",
                             "--min-altitude", "15", "--top", "3", "--exclude", "2027-03-02"])
    assert "firstrung.methods.shadows.prediction" in modules  # the plan did run
    assert _unwanted(modules) == []
    assert MASKED not in modules
    assert "firstrung.calendar_export" not in modules  # the calendar's module only with --ics


def test_a_years_plan_reads_the_sun_and_the_seasons_from_their_tables(tmp_path):
    """2026-2035: the Sun's hourly grid (a plan of 30 sites uses it) and the equinoxes come from the
    package's tables (same numbers, tests/ephemeris/test_sun_table.py and test_season_table.py), so
    neither DE421 is opened nor skyfield's search loaded: only its time scale."""
    campaign = tmp_path / "campaign.toml"
    campaign.write_text('[campaign]\nname = "thirty sites"\n' + "".join(
        f'[[site]]\nid = "s{i}"\nlatitude_deg = {(-1) ** i * (30 + i)}.5\nlongitude_deg = {11 * i - 160}.25\n'
        "[site.gnomon]\nheight_m = 1.0\n" for i in range(30)), encoding="utf-8")
    modules = _loaded_after(["plan", "shadows", str(campaign), "--from", "2027-01-01", "--to", "2027-12-31"])
    assert "firstrung.methods.shadows.prediction" in modules and "skyfield.timelib" in modules
    assert {"skyfield.jpllib", "jplephem", "skyfield.almanac", "skyfield.searchlib"}.isdisjoint(modules)


def test_reduce_shadows_loads_no_library_it_does_not_use():
    modules = _loaded_after(["reduce", "shadows", str(EXAMPLE)])
    assert "firstrung.methods.shadows.reduction" in modules
    assert "firstrung.methods.shadows.pairs" in modules  # the pairs' summary ran
    assert _unwanted(modules) == []
    assert MASKED not in modules


def test_check_of_shadows_loads_no_library_it_does_not_use(tmp_path):
    """The example campaign with its shadow log alone (its other logs need the Moon's modules)."""
    text = EXAMPLE.read_text(encoding="utf-8")
    logs = text.index("[logs]")
    end = text.find("\n[", logs + 1)
    shadows_only = text[:logs] + '[logs]\nshadows = ["' + (EXAMPLE.parent / "logs" / "shadows.csv").as_posix() + '"]\n'
    campaign = tmp_path / "campaign.toml"
    campaign.write_text(shadows_only + (text[end:] if end >= 0 else ""), encoding="utf-8")
    modules = _loaded_after(["check", str(campaign)], ok=("0", "1"))  # 1: rows flagged
    assert "firstrung.methods.shadows.check" in modules
    assert _unwanted(modules) == []
    assert MASKED not in modules


def test_the_ephemeris_package_gives_every_name_it_lists():
    """firstrung.ephemeris imports its modules on first use: every listed name and module is there."""
    import importlib

    from firstrung import ephemeris

    for name in ephemeris.__all__:
        assert getattr(ephemeris, name) is getattr(importlib.import_module(
            f"firstrung.ephemeris.{ephemeris._WHERE[name]}"), name)
    assert set(ephemeris.__all__) == set(ephemeris._WHERE)
    assert ephemeris.sun.solar_transit is ephemeris.solar_transit
    with pytest.raises(AttributeError):
        ephemeris.no_such_name  # noqa: B018 - the attribute's absence is what is tested


def test_importing_firstrung_compiles_no_regular_expression():
    """Every module's patterns are compiled at their first use (firstrung.patterns), not at import."""
    code = (
        "import importlib, pkgutil, re, sys\n"
        "import firstrung\n"
        "found = []\n"
        "compile_ = re._compile\n"
        "def counted(pattern, flags):\n"
        "    caller = sys._getframe(1)\n"
        "    while caller is not None and caller.f_globals.get('__name__', '').split('.')[0] == 're':\n"
        "        caller = caller.f_back\n"
        "    if caller is not None and caller.f_globals.get('__name__', '').startswith('firstrung'):\n"
        "        found.append(caller.f_globals['__name__'])\n"
        "    return compile_(pattern, flags)\n"
        "re._compile = counted\n"
        "for m in pkgutil.walk_packages(firstrung.__path__, 'firstrung.'):\n"
        "    importlib.import_module(m.name)\n"
        "print(len(sys.modules), sorted(set(found)))\n"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=300)
    assert out.returncode == 0, out.stderr[-2000:]
    count, found = out.stdout.strip().split(" ", 1)
    assert int(count) > 300  # every module was imported
    assert found == "[]"


# --- the command line's values, converted as typer's own converter does ---------------------------


def _typers_own(annotation, text, minimum=None, maximum=None):
    """typer's general converter (pydantic) on one value: the value, or its error's class name."""
    from typing import Annotated

    from pydantic import Field, TypeAdapter, ValidationError

    limits = {k: v for k, v in (("ge", minimum), ("le", maximum)) if v is not None}
    adapter = TypeAdapter(Annotated[annotation, Field(**limits)] if limits else annotation)
    try:
        return adapter.validate_python(text)
    except ValidationError:
        return "refused"


class _Limits:
    """The parts of typer's ParameterInfo the conversion reads."""

    def __init__(self, minimum=None, maximum=None):
        self.min, self.max, self.clamp = minimum, maximum, False


@pytest.mark.parametrize(
    ("annotation", "text", "minimum", "maximum"),
    [
        (int, "10", None, None), (int, "-3", None, None), (int, "0", 1, None), (int, "1", 1, None),
        (int, "366", 1, 366), (int, "367", 1, 366), (int, "007", None, None), (int, "+5", None, None),
        (int, "1_000", None, None), (int, " 5", None, None), (int, "5.0", None, None), (int, "x", None, None),
        (int, "123456789012345678901", None, None),
        (float, "20", None, None), (float, "20.5", None, None), (float, "-0", None, None),
        (float, "0.1", None, None), (float, "1e3", None, None), (float, ".5", None, None),
        (float, "1.", None, None), (float, "nan", None, None), (float, "-0.0001", 0.0, None),
        (float, "0.05", 0.05, 1000.0), (float, "1000.0000001", 0.05, 1000.0),
        (float, "2.675", None, None), (float, "123456789.123456789", None, None),
        (str, "mon-fri", None, None), (str, "", None, None),
    ],
)
def test_plain_values_are_typers_values(annotation, text, minimum, maximum):
    """Each value the plain conversion accepts is the value typer's own converter gives; each it
    does not recognise (or finds out of range) is left to typer's converter, which refuses it or
    converts it with its own rules and messages."""
    from firstrung.cli.direct import UNSURE as _UNSURE
    from firstrung.cli.direct import plain_value as _plain

    ours = _plain(annotation, _Limits(minimum, maximum), text)
    theirs = _typers_own(annotation, text, minimum, maximum)
    if ours is _UNSURE:
        return  # typer's own converter decides, as before
    assert type(ours) is type(theirs)
    assert ours == theirs or (math.isnan(ours) and math.isnan(theirs))
    if annotation is float:
        assert math.copysign(1.0, ours) == math.copysign(1.0, theirs)


def test_plain_values_take_the_usual_values_themselves():
    """The conversion does its work: the values a user types go no further (else nothing is gained)."""
    from firstrung.cli.direct import UNSURE as _UNSURE
    from firstrung.cli.direct import plain_value as _plain

    assert _plain(int, _Limits(1), "10") == 10
    assert _plain(float, _Limits(), "20.5") == 20.5
    assert _plain(float, _Limits(), 20) == 20.0 and type(_plain(float, _Limits(), 20)) is float
    assert _plain(list[str], _Limits(), ("2027-03-02", "2027-03-05")) == ["2027-03-02", "2027-03-05"]
    assert _plain(int, _Limits(1), "0") is _UNSURE  # out of range: typer's message
    assert _plain(int, _Limits(), True) is _UNSURE  # a flag's value is no number


def test_a_refused_value_keeps_typers_message(capsys):
    from firstrung.cli import main

    with pytest.raises(SystemExit) as stop:
        main(["plan", "shadows", str(EXAMPLE), "--from", "2027-03-01", "--to", "2027-03-02", "--top", "0"])
    assert stop.value.code == 2
    err = capsys.readouterr().err
    assert "Invalid value for '--top'" in err and "greater than or equal to 1" in err
