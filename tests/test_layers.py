"""The package's layers, checked from its own imports (every import, deferred ones included).

The table in DEVELOPERS.md ("The layers") in code: each top-level module or package of
narrator has a rank, and a module may import only from its own rank or below. No two modules
import each other, directly or around a circle, and no module outside the engine imports one
of the engine's private names. Run with ``python -m pytest tests/test_layers.py``.
"""

from __future__ import annotations

import ast
import pathlib

import pytest

PACKAGE = pathlib.Path(__file__).resolve().parents[1] / "narrator"

RANKS = {
    "errors": 0, "findings": 0, "xmltext": 0, "wordtext": 0, "resources": 0, "progress": 0,
    "reading": 1,
    "safe_io": 2,
    "engine": 3, "scale": 3,
    "request": 4,
    "history": 5, "groups": 5,
    "phrasing": 6,
    "figures": 7,
    "writer": 8,
    "report": 9,
    "places": 10,
    "recipe": 11,
    "demo": 12,
    "__init__": 13,
    "cli": 14,
    "__main__": 15,
}


def module_name(path: pathlib.Path) -> str:
    parts = path.relative_to(PACKAGE.parent).with_suffix("").parts
    return ".".join(parts[:-1] if parts[-1] == "__init__" else parts)


def modules() -> dict[str, pathlib.Path]:
    return {module_name(path): path for path in PACKAGE.rglob("*.py")}


KNOWN = modules()


def imports_of(path: pathlib.Path) -> list[tuple[str, tuple[str, ...], int]]:
    """(module imported, names taken from it, line) for every narrator import in the file."""
    found = []
    for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
        if isinstance(node, ast.ImportFrom) and node.level == 0 and node.module and (
                node.module == "narrator" or node.module.startswith("narrator.")):
            names = tuple(alias.name for alias in node.names)
            submodules = [f"{node.module}.{name}" for name in names if f"{node.module}.{name}" in KNOWN]
            if submodules:
                found.extend((module, (), node.lineno) for module in submodules)
            else:
                found.append((node.module, names, node.lineno))
        elif isinstance(node, ast.Import):
            found.extend((alias.name, (), node.lineno) for alias in node.names
                         if alias.name.startswith("narrator."))
    return found


def unit(module: str) -> str:
    parts = module.split(".")
    return "__init__" if len(parts) == 1 else parts[1]


def test_every_part_of_the_package_has_a_rank():
    assert {unit(module) for module in KNOWN} <= set(RANKS), set(map(unit, KNOWN)) - set(RANKS)


@pytest.mark.parametrize("module", sorted(KNOWN))
def test_imports_point_down_the_layers(module):
    source = unit(module)
    for imported, _names, line in imports_of(KNOWN[module]):
        target = unit(imported)
        assert RANKS[target] <= RANKS[source], (
            f"{module}:{line} imports {imported}: {source} (rank {RANKS[source]}) may not import "
            f"{target} (rank {RANKS[target]})")


@pytest.mark.parametrize("module", sorted(name for name in KNOWN if unit(name) not in ("engine", "scale")))
def test_no_private_engine_name_outside_the_engine(module):
    for imported, names, line in imports_of(KNOWN[module]):
        if unit(imported) == "engine":
            private = [name for name in names if name.startswith("_")]
            assert not private, f"{module}:{line} imports {private} from {imported}"


def circles(graph: dict[str, set[str]]) -> list[list[str]]:
    """Every strongly connected group of two or more modules (Tarjan 1972)."""
    index: dict[str, int] = {}
    low: dict[str, int] = {}
    stack: list[str] = []
    on_stack: set[str] = set()
    found: list[list[str]] = []

    def visit(node: str) -> None:
        index[node] = low[node] = len(index)
        stack.append(node)
        on_stack.add(node)
        for other in sorted(graph.get(node, ())):
            if other not in index:
                visit(other)
                low[node] = min(low[node], low[other])
            elif other in on_stack:
                low[node] = min(low[node], index[other])
        if low[node] == index[node]:
            group = []
            while True:
                member = stack.pop()
                on_stack.discard(member)
                group.append(member)
                if member == node:
                    break
            if len(group) > 1:
                found.append(sorted(group))

    for node in sorted(graph):
        if node not in index:
            visit(node)
    return found


def test_the_circle_finder_finds_a_circle():
    assert circles({"a": {"b"}, "b": {"c"}, "c": {"a"}, "d": {"a"}}) == [["a", "b", "c"]]
    assert circles({"a": {"b"}, "b": set()}) == []


def test_no_modules_import_each_other_around_a_circle():
    graph: dict[str, set[str]] = {}
    for module, path in KNOWN.items():
        for imported, _names, _line in imports_of(path):
            # "from narrator.x import y" needs narrator.x; a package's __init__ is its own node.
            target = imported if imported in KNOWN else imported.rsplit(".", 1)[0]
            if target != module and target in KNOWN:
                graph.setdefault(module, set()).add(target)
    assert circles(graph) == []
