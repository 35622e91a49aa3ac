"""The package's shape, held by a test: subpackages import only upstream, no circles.

The allowed directions are the data flow drawn in DEVELOPERS.md. Imports
inside functions count too (a lazy import is still a dependency).
"""

from __future__ import annotations

import ast
from pathlib import Path

import networkx as nx

PACKAGE = Path(__file__).resolve().parents[1] / "drc"

# Top-level leaves every subpackage may use.
LEAVES = {"drc", "errors", "severity", "units", "caching", "datafiles", "atomic", "diskcache"}
# subpackage (or top module) -> what else it may import, besides the leaves.
ALLOWED: dict[str, set[str]] = {
    "netlist": set(),
    "library": set(),
    "config": {"netlist"},
    "board": {"netlist", "library", "config"},
    "analysis": {"board", "library", "netlist", "config"},
    "checks": {"analysis", "board", "library", "netlist", "config"},
    "gate": {"checks", "analysis", "board", "library", "netlist", "config"},
    "design": {"checks", "analysis", "board", "library", "netlist", "config"},
    "simulation": {"analysis", "board", "library", "netlist", "config"},
    "report": {"design", "simulation", "gate", "checks", "analysis", "board", "library", "netlist", "config"},
    "pipeline": {"report", "design", "gate", "checks", "analysis", "board", "library", "netlist", "config"},
    "cli": {"pipeline", "report", "design", "simulation", "gate", "checks", "analysis", "board", "library",
            "netlist", "config"},
}


def module_name(path: Path) -> str:
    parts = path.relative_to(PACKAGE.parent).with_suffix("").parts
    return ".".join(parts[:-1] if parts[-1] == "__init__" else parts)


def imports() -> nx.DiGraph:
    graph = nx.DiGraph()
    for path in PACKAGE.rglob("*.py"):
        here = module_name(path)
        graph.add_node(here)
        for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
            if isinstance(node, ast.ImportFrom) and node.module and node.module.split(".")[0] == "drc":
                for alias in node.names:
                    target = f"{node.module}.{alias.name}"
                    graph.add_edge(here, target if (PACKAGE.parent / (target.replace(".", "/") + ".py")).exists()
                                   else node.module, names=alias.name)
            elif isinstance(node, ast.Import):
                for alias in node.names:
                    if alias.name.split(".")[0] == "drc":
                        graph.add_edge(here, alias.name)
    return graph


def area(module: str) -> str:
    parts = module.split(".")
    return parts[1] if len(parts) > 1 else "drc"


def test_at_most_ten_modules_directly_in_the_package():
    top = sorted(p.name for p in PACKAGE.glob("*.py"))
    assert len(top) <= 10, top


def test_subpackages_import_only_upstream():
    wrong = sorted((a, b) for a, b in imports().edges
                   if area(a) != area(b) and area(a) not in LEAVES | {"drc"}
                   and area(b) not in LEAVES and area(b) not in ALLOWED[area(a)])
    assert wrong == []


def test_leaves_import_only_leaves():
    wrong = sorted((a, b) for a, b in imports().edges
                   if area(a) in LEAVES and a != "drc" and area(b) not in LEAVES)
    assert wrong == []


def test_no_import_circles_between_modules():
    graph = imports()
    graph.remove_node("drc")  # the package's lazy public API names everything on purpose
    assert list(nx.simple_cycles(graph)) == []


def test_no_module_imports_another_modules_private_names():
    private = sorted((a, b, data["names"]) for a, b, data in imports().edges(data=True)
                     if data.get("names", "").startswith("_") and not data["names"].startswith("__"))
    assert private == []
