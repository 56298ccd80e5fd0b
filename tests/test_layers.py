"""The package's layers import one way only, and no two modules import each other.

Source: the project's architecture (DEVELOPERS.md, "Architecture"): study model
-> numeric core -> analysis -> io and report -> command line; the numeric core
never imports pandas, openpyxl, reportlab, matplotlib or typer. Imports are read
from the source with Python's ``ast`` module, including imports inside
functions (common practice: a deferred import is still a dependency).
"""

from __future__ import annotations

import ast
from pathlib import Path

import pytest

PACKAGE = Path(__file__).resolve().parents[1] / "riskdiet"

LAYER = {"errors": 0, "fields": 0, "version": 0, "model": 1, "validation": 1, "observations": 1,
         "uncertainty_rules": 1, "core": 2, "analysis": 3, "io": 4, "report": 4, "demo": 5,
         "cli": 5, "__init__": 5}
"""Rank of each top-level part; a module may import only parts of equal or lower rank."""

HEAVY = ("pandas", "openpyxl", "reportlab", "matplotlib", "typer", "rich")


def _module_name(path: Path) -> str:
    rel = path.relative_to(PACKAGE.parent).with_suffix("")
    parts = list(rel.parts)
    if parts[-1] == "__init__":
        parts = parts[:-1]
    return ".".join(parts)


def _imports(path: Path) -> set[str]:
    tree = ast.parse(path.read_text(encoding="utf-8"))
    found = set()
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            found |= {a.name for a in node.names}
        elif isinstance(node, ast.ImportFrom) and node.module and node.level == 0:
            found.add(node.module)
            found |= {f"{node.module}.{a.name}" for a in node.names}
    return found


def _graph() -> dict[str, set[str]]:
    modules = {_module_name(p): p for p in PACKAGE.rglob("*.py")}
    return {name: {m for m in _imports(path) if m in modules and m != name}
            for name, path in modules.items()}


def _part(module: str) -> str:
    parts = module.split(".")
    return parts[1] if len(parts) > 1 else "__init__"


def test_no_module_imports_another_that_imports_it_back():
    """The import graph among riskdiet's modules has no cycle (depth-first search
    for a back edge; Tarjan 1972 for the method)."""
    graph = _graph()
    state: dict[str, int] = {}
    cycles = []

    def visit(node, stack):
        state[node] = 1
        stack.append(node)
        for nxt in sorted(graph[node]):
            if state.get(nxt) == 1:
                cycles.append([*stack[stack.index(nxt):], nxt])
            elif nxt not in state:
                visit(nxt, stack)
        stack.pop()
        state[node] = 2

    for node in sorted(graph):
        if node not in state:
            visit(node, [])
    assert not cycles, cycles


@pytest.mark.parametrize("module", sorted(_graph()))
def test_imports_go_one_way(module):
    """Each module imports only from its own layer or the layers below it."""
    mine = LAYER[_part(module)]
    for other in _graph()[module]:
        if other == "riskdiet":
            continue
        assert LAYER[_part(other)] <= mine, f"{module} imports {other}"


@pytest.mark.parametrize("path", sorted((PACKAGE / "core").rglob("*.py")), ids=str)
def test_numeric_core_imports_no_heavy_library(path):
    """The numeric core is pure numpy/scipy (DEVELOPERS.md)."""
    heavy = {m for m in _imports(path) if m.split(".")[0] in HEAVY}
    assert not heavy, heavy
