"""The dataclass methods' kept code (firstrung.cli.kept_methods): the same classes, compiled once.

What is checked: a class made through the kept code behaves and is built exactly as one made by
:mod:`dataclasses` alone (the same bytecode, annotations, signature, equality, hash, repr, frozen
refusal), a second run compiles nothing, a file from another interpreter or a damaged one is
ignored, nothing is written when Python is told not to write bytecode, and a command gives the same
bytes with and without kept code. Python's own ``exec`` and ``dataclasses`` are the reference.
"""

from __future__ import annotations

import builtins
import dataclasses
import inspect
import marshal
import os
import subprocess
import sys
from pathlib import Path

import pytest

from firstrung.cli import kept_methods

EXAMPLE = Path(__file__).resolve().parent.parent / "examples" / "campaign.toml"

SOURCE = '''
from dataclasses import dataclass, field

import numpy as np


@dataclass(frozen=True)
class Reading:
    """A reading."""

    site: str
    shadow_m: float
    when: np.ndarray | None = None
    notes: tuple = ()
    extra: list = field(default_factory=list)


@dataclass(order=True)
class Ranked:
    rank: int
    name: str = "x"
'''


@pytest.fixture
def fresh(tmp_path, monkeypatch):
    """kept_methods with an empty folder of its own and nothing read or made yet."""
    monkeypatch.setattr(kept_methods, "FOLDER", tmp_path / "__pycache__")
    monkeypatch.setattr(kept_methods, "_read", {})
    monkeypatch.setattr(kept_methods, "_made", {})
    monkeypatch.setattr(sys, "dont_write_bytecode", False)
    monkeypatch.setattr(dataclasses, "exec", kept_methods.kept_exec, raising=False)
    return tmp_path / "__pycache__"


def _module(name: str) -> dict:
    namespace = {"__name__": name}
    sys.modules[name] = type(sys)(name)
    try:
        sys.modules[name].__dict__.update(namespace)
        exec(compile(SOURCE, f"<{name}>", "exec"), sys.modules[name].__dict__)
        return sys.modules[name].__dict__
    finally:
        del sys.modules[name]


def _plain_module(name: str, monkeypatch) -> dict:
    monkeypatch.delattr(dataclasses, "exec", raising=False)
    try:
        return _module(name)
    finally:
        monkeypatch.setattr(dataclasses, "exec", kept_methods.kept_exec, raising=False)


METHODS = ("__init__", "__repr__", "__eq__", "__hash__", "__setattr__", "__delattr__", "__lt__")


def _same_function(a, b) -> None:
    a, b = inspect.unwrap(a), inspect.unwrap(b)  # __repr__ is wrapped against recursion
    assert a.__code__.co_code == b.__code__.co_code
    assert a.__code__.co_consts == b.__code__.co_consts
    assert a.__code__.co_names == b.__code__.co_names
    assert a.__code__.co_varnames == b.__code__.co_varnames
    assert a.__code__.co_filename == b.__code__.co_filename == "<string>"
    assert a.__code__.co_flags == b.__code__.co_flags  # no __future__ flag inherited
    assert a.__annotations__ == b.__annotations__
    assert a.__defaults__ == b.__defaults__ and a.__kwdefaults__ == b.__kwdefaults__
    assert a.__qualname__ == b.__qualname__


def test_classes_made_through_kept_code_are_those_dataclasses_makes(fresh, monkeypatch):
    plain = _plain_module("kept_case_plain", monkeypatch)
    kept = _module("kept_case_plain")  # the same module name: the same texts
    for name in ("Reading", "Ranked"):
        for method in METHODS:
            a, b = plain[name].__dict__.get(method), kept[name].__dict__.get(method)
            if a is None or not inspect.isfunction(a):
                assert a == b, (name, method)
                continue
            _same_function(a, b)
        assert inspect.signature(plain[name]) == inspect.signature(kept[name])
        assert plain[name].__doc__ == kept[name].__doc__
    # behaviour: the return annotation is the object, not text (no `from __future__ import annotations`)
    assert kept["Reading"].__init__.__annotations__["return"] is None
    r = kept["Reading"]("A", 1.5)
    assert repr(r) == "Reading(site='A', shadow_m=1.5, when=None, notes=(), extra=[])"
    assert r == kept["Reading"]("A", 1.5) and r != kept["Reading"]("B", 1.5)
    with pytest.raises(dataclasses.FrozenInstanceError):
        r.site = "B"
    assert kept["Ranked"](1) < kept["Ranked"](2)


def test_a_second_run_compiles_nothing_and_reads_the_same_code(fresh, monkeypatch):
    _module("kept_case_second")
    kept_methods.keep()
    files = sorted(p.name for p in fresh.iterdir())
    assert files == [f"kept-methods.kept_case_second.{sys.implementation.cache_tag}.opt-{sys.flags.optimize}.marshal"]
    first = dict(kept_methods._made["kept_case_second"])
    assert len(first) >= 10  # Reading: init, repr, eq, hash, setattr, delattr; Ranked: init, repr, eq, 4 orders

    # a new process, as it were: nothing read, nothing made
    monkeypatch.setattr(kept_methods, "_read", {})
    monkeypatch.setattr(kept_methods, "_made", {})
    compiled = []
    real_compile = builtins.compile

    def counting_compile(*args, **kwargs):
        compiled.append(args[0])
        return real_compile(*args, **kwargs)

    monkeypatch.setattr(builtins, "compile", counting_compile)
    made = _module("kept_case_second")
    monkeypatch.setattr(builtins, "compile", real_compile)
    assert [c for c in compiled if isinstance(c, str) and "__create_fn__" in c] == []
    assert made["Reading"]("A", 2.0).shadow_m == 2.0
    before = (fresh / files[0]).stat().st_mtime_ns
    kept_methods.keep()  # nothing new: the file is not written again
    assert (fresh / files[0]).stat().st_mtime_ns == before
    for text, code in kept_methods._made["kept_case_second"].items():
        assert code.co_code == first[text].co_code


def test_a_file_of_another_interpreter_or_damaged_is_ignored(fresh):
    fresh.mkdir()
    name = f"kept-methods.kept_case_bad.{sys.implementation.cache_tag}.opt-{sys.flags.optimize}.marshal"
    # the right texts with code of a wrong body, under another magic number: must not be used
    (fresh / name).write_bytes(b"\x00\x00\r\n" + marshal.dumps({"x": compile("y = 1", "<string>", "exec")}))
    made = _module("kept_case_bad")
    assert made["Reading"]("A", 1.0).site == "A"
    (fresh / name).write_bytes(kept_methods.MAGIC_NUMBER + b"\xff\x00garbage")
    kept_methods._read.clear()
    made = _module("kept_case_bad")
    assert made["Ranked"](3).rank == 3
    kept_methods.keep()  # the damaged file is replaced by a good one
    assert marshal.loads((fresh / name).read_bytes()[len(kept_methods.MAGIC_NUMBER):]).keys() == \
        kept_methods._made["kept_case_bad"].keys()


def test_nothing_written_when_python_writes_no_bytecode(fresh, monkeypatch):
    monkeypatch.setattr(sys, "dont_write_bytecode", True)
    _module("kept_case_nowrite")
    kept_methods.keep()
    assert not fresh.exists()


def test_a_folder_that_cannot_be_written_is_skipped(fresh, monkeypatch):
    fresh.parent.joinpath("__pycache__").write_text("a file where the folder would be")
    _module("kept_case_readonly")
    kept_methods.keep()  # no error; the classes were made all the same
    assert fresh.read_text() == "a file where the folder would be"


def test_commands_give_the_same_bytes_with_and_without_kept_code(tmp_path):
    """``reduce shadows`` run three times: no kept code, writing it, reading it; outputs identical."""
    env = dict(os.environ, COLUMNS="80", PYTHONHASHSEED="0")
    env.pop("PYTHONDONTWRITEBYTECODE", None)
    code = (
        "import sys\n"
        "from pathlib import Path\n"
        "from firstrung.cli import kept_methods\n"
        "kept_methods.FOLDER = Path(sys.argv[1])\n"
        "if sys.argv[2] == 'off':\n"
        "    kept_methods.install = lambda: None\n"
        "from firstrung.cli import main\n"
        "main(sys.argv[3:])\n"
    )
    folder = tmp_path / "kept"
    args = ["reduce", "shadows", str(EXAMPLE), "--json"]
    outs = []
    for mode in ("off", "on", "on"):
        run = subprocess.run([sys.executable, "-c", code, str(folder), mode, *args], capture_output=True, env=env,
                             timeout=300)
        assert run.returncode == 0, run.stderr.decode()[-2000:]
        outs.append(run.stdout)
        if mode == "off":
            assert not folder.exists()
    assert outs[0] == outs[1] == outs[2] and b"earth_radius_km" in outs[0]
    kept = sorted(p.name.split(".cpython")[0].removeprefix("kept-methods.") for p in folder.iterdir())
    assert "firstrung.campaign_model" in kept and "firstrung.methods.shadows.reduction" in kept
