"""The package's shape: layers import downward only, and no module takes part in an import circle.

The contracts live in pyproject.toml ([tool.importlinter]) and are checked with
import-linter; the circle check reads the import graph with grimp, the library
import-linter is built on. Both count every import statement, including those inside
functions and under ``if TYPE_CHECKING``. (Common practice: a layered architecture
held by a contract in the test suite, so a change that reaches up fails CI.)
"""

from __future__ import annotations

import os
import shutil
import subprocess
import sys
from pathlib import Path

import grimp
import pytest

ROOT = Path(__file__).resolve().parents[1]
LINT = Path(sys.executable).with_name("lint-imports")


def _lint(cwd: Path, env: dict[str, str] | None = None) -> subprocess.CompletedProcess:
    if not LINT.exists():  # pragma: no cover - the test extra installs it
        pytest.fail(f"import-linter is not installed beside {sys.executable}: pip install -e '.[test]'")
    return subprocess.run(
        [str(LINT), "--config", "pyproject.toml", "--no-cache"],
        cwd=cwd,
        env=env,
        capture_output=True,
        text=True,
        timeout=300,
    )


def test_import_contracts_are_kept():
    result = _lint(ROOT)
    assert result.returncode == 0, f"import contracts broken:\n{result.stdout}\n{result.stderr}"
    assert "0 broken" in result.stdout


def test_a_layer_reaching_up_fails_with_the_import_named(tmp_path):
    """The contract can fail: a copy of the package whose scenario imports a study is refused."""
    shutil.copytree(ROOT / "src" / "womlab", tmp_path / "src" / "womlab", ignore=shutil.ignore_patterns("__pycache__"))
    shutil.copy(ROOT / "pyproject.toml", tmp_path / "pyproject.toml")
    checks = tmp_path / "src" / "womlab" / "scenario" / "checks.py"
    checks.write_text(checks.read_text() + "\nimport womlab.studies.runner  # reaches up on purpose\n")
    env = {**os.environ, "PYTHONPATH": str(tmp_path / "src")}
    result = _lint(tmp_path, env)
    assert result.returncode != 0
    assert "womlab.scenario.checks -> womlab.studies.runner" in result.stdout


def _graph() -> grimp.ImportGraph:
    return grimp.build_graph("womlab", include_external_packages=True, cache_dir=None)


def _strongly_connected(nodes: set[str], edges: dict[str, set[str]]) -> list[list[str]]:
    """Tarjan's algorithm (Tarjan 1972, "Depth-first search and linear graph algorithms"), iteratively."""
    index: dict[str, int] = {}
    low: dict[str, int] = {}
    on_stack: set[str] = set()
    stack: list[str] = []
    out: list[list[str]] = []
    counter = 0
    for root in sorted(nodes):
        if root in index:
            continue
        work = [(root, iter(sorted(edges[root])))]
        index[root] = low[root] = counter
        counter += 1
        stack.append(root)
        on_stack.add(root)
        while work:
            v, children = work[-1]
            child = next(children, None)
            if child is not None:
                if child not in index:
                    index[child] = low[child] = counter
                    counter += 1
                    stack.append(child)
                    on_stack.add(child)
                    work.append((child, iter(sorted(edges[child]))))
                elif child in on_stack:
                    low[v] = min(low[v], index[child])
                continue
            work.pop()
            if work:
                low[work[-1][0]] = min(low[work[-1][0]], low[v])
            if low[v] == index[v]:
                component = []
                while True:
                    w = stack.pop()
                    on_stack.discard(w)
                    component.append(w)
                    if w == v:
                        break
                out.append(sorted(component))
    return out


def test_strongly_connected_components_on_a_known_graph():
    # a → b → c → a is one circle; d → a hangs off it; e stands alone
    edges = {"a": {"b"}, "b": {"c"}, "c": {"a"}, "d": {"a"}, "e": set()}
    components = sorted(_strongly_connected(set(edges), edges))
    assert components == [["a", "b", "c"], ["d"], ["e"]]


def test_no_module_takes_part_in_an_import_circle():
    graph = _graph()
    # the package root re-exports the public API and is imported by no module of womlab
    modules = {m for m in graph.modules if m.startswith("womlab.")}
    edges = {m: {x for x in graph.find_modules_directly_imported_by(m) if x in modules} for m in modules}
    circles = [c for c in _strongly_connected(modules, edges) if len(c) > 1]
    assert not circles, "import circles: " + "; ".join(" <-> ".join(c) for c in circles)


def test_nothing_inside_womlab_imports_the_package_root():
    importers = {m for m in _graph().find_modules_that_directly_import("womlab") if m.startswith("womlab.")}
    assert not importers, f"import the module you need, not the package root: {sorted(importers)}"


def test_only_the_mesa_model_and_the_browser_view_import_mesa():
    # the model (mesa.Model, its agents and space) and the page built on Mesa's own browser view;
    # grimp counts `from mesa.visualization import ...` as importing mesa
    graph = _graph()
    importers = {m for m in graph.find_modules_that_directly_import("mesa") if m.startswith("womlab")}
    assert importers == {"womlab.dynamics.mesa_model", "womlab.view.page"}


def test_only_the_browser_view_imports_solara():
    importers = {m for m in _graph().find_modules_that_directly_import("solara") if m.startswith("womlab")}
    assert importers == {"womlab.view.page"}
