"""The package's shape (docs/architecture.md): no import cycles, modules of a readable size,
skyfield only behind the ephemeris, shared machinery that knows no method, and every method
reachable from the registry alone."""

from __future__ import annotations

import ast
from pathlib import Path

import pytest

from firstrung.methods import REGISTRY

PACKAGE = Path(__file__).resolve().parent.parent / "src" / "firstrung"
#: "No module over about 600 lines" (common practice for modules a reader takes in at once).
MAX_MODULE_LINES = 660
#: Modules of the shared machinery: they may import each other, never a method or the application.
SHARED = ("arguments", "blunders", "calendar_export", "campaign", "campaign_model", "constants", "errors",
          "figures", "flags", "geodesy", "jsonout", "output", "refraction", "safety", "tabular", "times",
          "uncertainty", "ephemeris", "campaign_stars", "star_catalogue", "star_rows", "star_checks", "toml_plain",
          "angles")


def _module_name(path: Path) -> str:
    parts = path.relative_to(PACKAGE.parent).with_suffix("").parts
    return ".".join(parts[:-1] if parts[-1] == "__init__" else parts)


def _modules() -> dict[str, Path]:
    return {_module_name(p): p for p in sorted(PACKAGE.rglob("*.py"))}


def _imports(name: str, path: Path, known: set[str]) -> set[str]:
    """Every firstrung module a module imports, at the top or inside a function."""
    package = name if path.name == "__init__.py" else name.rsplit(".", 1)[0]
    found = set()
    for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
        if isinstance(node, ast.Import):
            targets = [a.name for a in node.names]
        elif isinstance(node, ast.ImportFrom):
            base = node.module or ""
            if node.level:
                anchor = package.split(".")
                anchor = anchor[: len(anchor) - (node.level - 1)]
                base = ".".join(anchor + ([base] if base else []))
            targets = [base] + [f"{base}.{a.name}" for a in node.names]
        else:
            continue
        found.update(t for t in targets if t in known and t != name)
    return found


def _graph() -> dict[str, set[str]]:
    modules = _modules()
    return {name: _imports(name, path, set(modules)) for name, path in modules.items()}


def _cycles(graph: dict[str, set[str]]) -> list[list[str]]:
    """Strongly connected components of more than one module (Tarjan)."""
    index, low, stack, on_stack, out = {}, {}, [], set(), []

    def visit(v):
        index[v] = low[v] = len(index)
        stack.append(v)
        on_stack.add(v)
        for w in graph[v]:
            if w not in index:
                visit(w)
                low[v] = min(low[v], low[w])
            elif w in on_stack:
                low[v] = min(low[v], index[w])
        if low[v] == index[v]:
            component = []
            while True:
                w = stack.pop()
                on_stack.discard(w)
                component.append(w)
                if w == v:
                    break
            if len(component) > 1:
                out.append(sorted(component))

    for v in sorted(graph):
        if v not in index:
            visit(v)
    return out


def _without_package_fronts(graph):
    """A package's ``__init__`` that imports its own submodules is its front door, not a cycle."""
    return {v: {w for w in ws if not (v.endswith(("ephemeris",)) and w.startswith(v + "."))} for v, ws in graph.items()}


def test_no_module_imports_a_module_that_imports_it_back():
    cycles = _cycles(_without_package_fronts(_graph()))
    assert cycles == [], f"import cycles: {cycles}"


def test_the_cycle_finder_finds_a_cycle():
    assert _cycles({"a": {"b"}, "b": {"c"}, "c": {"a"}, "d": {"a"}}) == [["a", "b", "c"]]
    assert _cycles({"a": {"b"}, "b": set()}) == []


@pytest.mark.parametrize("name", sorted(_modules()))
def test_module_is_of_readable_size(name):
    lines = _modules()[name].read_text(encoding="utf-8").count("\n")
    assert lines <= MAX_MODULE_LINES, f"{name} has {lines} lines; split it by subject"


def test_only_the_ephemeris_calls_skyfield():
    for name, path in _modules().items():
        if name.startswith("firstrung.ephemeris"):
            continue
        tree = ast.parse(path.read_text(encoding="utf-8"))
        for node in ast.walk(tree):
            if isinstance(node, ast.ImportFrom) and (node.module or "").startswith("skyfield"):
                pytest.fail(f"{name} imports {node.module}")
            if isinstance(node, ast.Import) and any(a.name.startswith("skyfield") for a in node.names):
                pytest.fail(f"{name} imports skyfield")


def test_shared_machinery_imports_no_method_and_no_application_module():
    graph = _graph()
    for name, imported in graph.items():
        if name != "firstrung" and name.split(".")[1] in SHARED:
            bad = {m for m in imported if m.split(".")[1] in ("methods", "app", "cli")}
            assert not bad, f"{name} imports {sorted(bad)}"


@pytest.mark.parametrize("method", REGISTRY, ids=lambda m: m.name)
def test_every_registered_method_provides_each_part(method):
    commands = method.module("commands")
    for adder in ("register_plan", "register_reduce", "register_simulate"):
        assert callable(getattr(commands, adder))
    assert callable(method.module("check").check_campaign)
    assert callable(method.module("check").log_flags)
    rehearsal = method.module("rehearsal")
    assert rehearsal.LOG_COLUMNS[0] == "site" and callable(rehearsal.rehearsal_rows)
    assert callable(method.module("rung").ladder_draws)
    # its report section: built by its rung, laid out by its own templates
    assert callable(method.module("rung").report_section)
    templates = PACKAGE / "methods" / method.name / "templates"
    assert (templates / "report.html.j2").is_file() and (templates / "report.md.j2").is_file()
