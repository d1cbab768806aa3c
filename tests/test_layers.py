"""The package's layers: outputs and the data model load no solver, and no import cycle.

Importing CP-SAT's Python module takes most of a second; a command that only draws,
exports or checks a file must not pay for it (nor for rich, where no terminal is drawn).
"""

from __future__ import annotations

import ast
import json
import subprocess
import sys
from collections.abc import Iterator
from graphlib import CycleError, TopologicalSorter
from pathlib import Path

import pytest

PACKAGE = Path(__file__).parent.parent / "clockplan"

WITHOUT_SOLVER_OR_RICH = [
    "clockplan.compare",
    "clockplan.drawing",
    "clockplan.evaluate",
    "clockplan.exits",
    "clockplan.export",
    "clockplan.graphs",
    "clockplan.header",
    "clockplan.plan",
    "clockplan.report",
    "clockplan.result",
    "clockplan.scenario",
    "clockplan.settle",
    "clockplan.text",
    "clockplan.topology",
]


def _loaded_after_import(module: str) -> set[str]:
    code = (
        f"import json, sys; import {module}; "
        "print(json.dumps(sorted({name.split('.')[0] for name in sys.modules})))"
    )
    completed = subprocess.run(
        [sys.executable, "-c", code], capture_output=True, text=True, check=True
    )
    return set(json.loads(completed.stdout))


@pytest.mark.parametrize("module", WITHOUT_SOLVER_OR_RICH)
def test_an_output_or_model_module_loads_neither_the_solver_nor_rich(module):
    loaded = _loaded_after_import(module)
    assert "ortools" not in loaded
    assert "rich" not in loaded


def test_the_scenario_loads_no_graph_library():
    assert "networkx" not in _loaded_after_import("clockplan.scenario")


def _module_name(path: Path) -> str:
    parts = path.relative_to(PACKAGE.parent).with_suffix("").parts
    return ".".join(parts[:-1] if parts[-1] == "__init__" else parts)


def _imports(path: Path, modules: set[str]) -> set[str]:
    """The clockplan modules a file imports at run time, at the top or inside a function
    (imports for the type checker alone do not count); ``from package import module``
    counts as importing that module."""
    found = set()
    for node in _run_time_nodes(ast.parse(path.read_text())):
        if isinstance(node, ast.ImportFrom) and node.module and node.level == 0:
            for alias in node.names:
                submodule = f"{node.module}.{alias.name}"
                found.add(submodule if submodule in modules else node.module)
        elif isinstance(node, ast.Import):
            found.update(alias.name for alias in node.names)
    return found & modules


def _run_time_nodes(tree: ast.AST) -> Iterator[ast.AST]:
    """Every node of the tree except what sits under ``if TYPE_CHECKING:``."""
    for child in ast.iter_child_nodes(tree):
        if isinstance(child, ast.If) and ast.unparse(child.test) == "TYPE_CHECKING":
            kept: list[ast.AST] = list(child.orelse)
        else:
            kept = [child]
        for node in kept:
            yield node
            yield from _run_time_nodes(node)


def test_no_import_cycle_in_the_package():
    modules = {_module_name(path): path for path in PACKAGE.rglob("*.py")}
    names = set(modules)
    graph = {name: _imports(path, names) - {name} for name, path in modules.items()}
    try:
        tuple(TopologicalSorter(graph).static_order())
    except CycleError as error:
        pytest.fail(f"import cycle: {' -> '.join(error.args[1])}")
