"""The layout rules of DEVELOPERS.md, checked on the source: one package, no circles, a pure core."""

from __future__ import annotations

import ast
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[2]
SOURCE_DIRS = ("model", "app")


def _modules() -> dict[str, Path]:
    """Every module of the package by its import name (turnback.model.plan, ...)."""
    out = {}
    for top in SOURCE_DIRS:
        for path in (ROOT / top).rglob("*.py"):
            parts = list(path.relative_to(ROOT).with_suffix("").parts)
            if parts[-1] == "__init__":
                parts = parts[:-1]
            out[".".join(["turnback", *parts])] = path
    return out


MODULES = _modules()


def _imports(name: str, path: Path) -> set[str]:
    """Modules of the package that ``name`` imports (module level and inside functions alike)."""
    tree = ast.parse(path.read_text(encoding="utf-8"))
    is_pkg = path.name == "__init__.py"
    base = name.split(".") if is_pkg else name.split(".")[:-1]
    found: set[str] = set()
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            found.update(a.name for a in node.names)
        elif isinstance(node, ast.ImportFrom):
            if node.level:
                mod = ".".join(base[: len(base) - node.level + 1] + ([node.module] if node.module else []))
            else:
                mod = node.module or ""
            found.add(mod)
            found.update(f"{mod}.{a.name}" for a in node.names)
    return {m for m in found if m in MODULES}


GRAPH = {name: _imports(name, path) for name, path in MODULES.items()}


def test_no_module_imports_the_old_top_level_packages() -> None:
    bad = []
    for folder in (*SOURCE_DIRS, "tests", "bench", "sample_data"):
        for path in (ROOT / folder).rglob("*.py"):
            for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
                names = (
                    [a.name for a in node.names]
                    if isinstance(node, ast.Import)
                    else [node.module or ""]
                    if isinstance(node, ast.ImportFrom) and not node.level
                    else []
                )
                bad += [f"{path.relative_to(ROOT)}: {n}" for n in names if n.split(".")[0] in ("model", "app")]
    assert bad == []


def _cycles(graph: dict[str, set[str]]) -> list[list[str]]:
    """Import circles of ``graph`` (depth-first search for back edges); a module importing its own package is none."""
    state: dict[str, int] = {}
    cycles: list[list[str]] = []

    def visit(n: str, stack: list[str]) -> None:
        state[n] = 1
        for m in sorted(graph[n]):
            if m == n or n.startswith(m + "."):
                continue
            if state.get(m) == 1:
                cycles.append([*stack[stack.index(m) :], m] if m in stack else [n, m])
            elif m not in state:
                visit(m, [*stack, m])
        state[n] = 2

    for n in sorted(graph):
        if n not in state:
            visit(n, [n])
    return cycles


def test_there_are_no_import_circles() -> None:
    assert _cycles(GRAPH) == []


def test_a_planted_circle_is_found() -> None:
    planted = dict(GRAPH)
    planted["turnback.model.plan"] = GRAPH["turnback.model.plan"] | {"turnback.model.ensemble"}
    assert any("turnback.model.plan" in c and "turnback.model.ensemble" in c for c in _cycles(planted))


def test_model_never_imports_the_front_end_or_dash() -> None:
    for name, path in MODULES.items():
        if not name.startswith("turnback.model"):
            continue
        assert not any(m.startswith("turnback.app") for m in GRAPH[name]), name
        text = path.read_text(encoding="utf-8")
        for lib in ("dash", "plotly", "flask"):
            assert f"import {lib}" not in text and f"from {lib}" not in text, (name, lib)


_FORBIDDEN_IN_CORE = {"os", "pathlib", "sqlite3", "tempfile", "shutil", "io", "importlib"}


def _core_violations(name: str, source: str) -> list[str]:
    """What a pure-core module must not do: import model/io, file or OS modules, or call open()."""
    out = [m for m in GRAPH.get(name, set()) if m.startswith("turnback.model.io")]
    for node in ast.walk(ast.parse(source)):
        if isinstance(node, ast.Import):
            out += [a.name for a in node.names if a.name.split(".")[0] in _FORBIDDEN_IN_CORE]
        elif isinstance(node, ast.ImportFrom) and not node.level:
            if (node.module or "").split(".")[0] in _FORBIDDEN_IN_CORE:
                out.append(node.module or "")
            if (node.module or "").startswith("turnback.model.io"):
                out.append(node.module or "")
        elif isinstance(node, ast.ImportFrom) and node.module and node.module.split(".")[0] == "io":
            out.append("relative import of io")
        elif isinstance(node, ast.Call) and isinstance(node.func, ast.Name) and node.func.id == "open":
            out.append("open()")
    return out


@pytest.mark.parametrize(
    "name", sorted(n for n in MODULES if n.startswith("turnback.model") and not n.startswith("turnback.model.io"))
)
def test_the_pure_core_does_no_file_environment_or_database_access(name: str) -> None:
    assert _core_violations(name, MODULES[name].read_text(encoding="utf-8")) == []


def test_a_planted_file_access_in_the_core_is_found() -> None:
    planted = "import os\nfrom pathlib import Path\nfrom .io.store import Store\nopen('x')\n"
    assert len(_core_violations("turnback.model.units", planted)) == 4


#: A module longer than this holds more than one concern (DEVELOPERS.md); split it along its seams.
MAX_MODULE_LINES = 600


def test_no_module_is_over_the_size_limit() -> None:
    long = {
        name: n
        for name, path in MODULES.items()
        if (n := len(path.read_text(encoding="utf-8").splitlines())) > MAX_MODULE_LINES
    }
    assert long == {}


def test_each_view_folder_holds_its_layout_callbacks_and_figures() -> None:
    views = [p for p in (ROOT / "app" / "views").iterdir() if (p / "__init__.py").exists()]
    assert {p.name for p in views} >= {"lake", "record", "plans", "map"}
    for folder in views:
        assert {"layout.py", "callbacks.py", "figures.py"} <= {f.name for f in folder.glob("*.py")}, folder.name
