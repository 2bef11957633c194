"""The package's folders are its layers: imports run one way and never in a loop.

Every module of ``pycore/tamis`` is read with :mod:`ast` (never imported) and
each import it makes, at the top or inside a function, is an edge; so is a
string naming a module of the package in full (``"tamis.exchange.ops:op_merge"``
in ``tamis.api.OPS``, ``"tamis.demo"`` in ``tamis.cli``), which is imported
later by :func:`importlib.import_module`. The test fails on any cycle and on
any edge from a layer to a layer above it (the table in DEVELOPERS.md).
"""

from __future__ import annotations

import ast
import re
from pathlib import Path

import pytest

PACKAGE_DIR = Path(__file__).resolve().parent.parent / "pycore" / "tamis"

#: The layers, lowest first; a module belongs to the first prefix it matches (longest prefixes listed
#: first within a layer). A module may import its own layer (without a loop) and the layers below.
LAYERS = (
    ("shared vocabulary", ("tamis.errors", "tamis.checks", "tamis.registry", "tamis")),
    ("lab", ("tamis.lab",)),
    ("criteria", ("tamis.criteria",)),
    ("project", ("tamis.project",)),
    ("exchange", ("tamis.exchange",)),
    ("boundary", ("tamis.api",)),
    ("demo", ("tamis.demo",)),
    ("command line", ("tamis.cli", "tamis.cli_text", "tamis.__main__")),
)

_DYNAMIC = re.compile(r"tamis(?:\.[a-z_]+)+(?::[a-z_]+)?")


def module_name(path: Path, root: Path = PACKAGE_DIR) -> str:
    parts = list(path.relative_to(root.parent).with_suffix("").parts)
    if parts[-1] == "__init__":
        parts.pop()
    return ".".join(parts)


def all_modules(root: Path = PACKAGE_DIR) -> dict[str, Path]:
    return {module_name(p, root): p for p in sorted(root.rglob("*.py"))}


def layer_of(module: str) -> int:
    for rank, (_, prefixes) in enumerate(LAYERS):
        for prefix in prefixes:
            if module == prefix or (prefix != "tamis" and module.startswith(prefix + ".")):
                return rank
    raise AssertionError(f"{module} is in no layer: add it to LAYERS here and to the table in DEVELOPERS.md")


def _docstrings(tree: ast.AST) -> set[int]:
    ids = set()
    for node in ast.walk(tree):
        if isinstance(node, (ast.Module, ast.ClassDef, ast.FunctionDef, ast.AsyncFunctionDef)) and node.body:
            first = node.body[0]
            if isinstance(first, ast.Expr) and isinstance(first.value, ast.Constant):
                ids.add(id(first.value))
    return ids


def imports_of(module: str, source: str, modules) -> set[str]:
    """The modules of the package that ``module`` (whose text is ``source``) imports."""
    is_package = module == "tamis" or any(m.startswith(module + ".") for m in modules)
    package = module if is_package else module.rpartition(".")[0]
    tree = ast.parse(source)
    docs = _docstrings(tree)
    out: set[str] = set()

    def add(name: str) -> None:
        while name and name not in modules:  # ``tamis.lab.curve.Curve`` -> ``tamis.lab.curve``
            name = name.rpartition(".")[0]
        if name:
            out.add(name)

    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            for alias in node.names:
                add(alias.name)
        elif isinstance(node, ast.ImportFrom):
            if node.level:
                base = package.split(".")
                base = base[:len(base) - (node.level - 1)]
                target = ".".join(base + ([node.module] if node.module else []))
            else:
                target = node.module or ""
            if not target.startswith("tamis"):
                continue
            add(target)
            for alias in node.names:  # ``from . import summaries``: the submodule
                if f"{target}.{alias.name}" in modules:
                    out.add(f"{target}.{alias.name}")
        elif isinstance(node, ast.Constant) and isinstance(node.value, str) and id(node) not in docs:
            if _DYNAMIC.fullmatch(node.value):
                add(node.value.split(":")[0])
    out.discard(module)
    return out


def import_graph(root: Path = PACKAGE_DIR) -> dict[str, set[str]]:
    modules = all_modules(root)
    return {m: imports_of(m, p.read_text(encoding="utf-8"), modules) for m, p in modules.items()}


def find_cycle(graph: dict[str, set[str]]) -> list[str] | None:
    """One import loop as ``[a, b, ..., a]``, or None."""
    state: dict[str, int] = {}  # 1 on the current path, 2 done
    stack: list[str] = []

    def visit(m: str):
        state[m] = 1
        stack.append(m)
        for n in sorted(graph.get(m, ())):
            if state.get(n) == 1:
                return stack[stack.index(n):] + [n]
            if n not in state:
                found = visit(n)
                if found:
                    return found
        stack.pop()
        state[m] = 2
        return None

    for m in sorted(graph):
        if m not in state:
            found = visit(m)
            if found:
                return found
    return None


def upward_imports(graph: dict[str, set[str]]) -> list[str]:
    return sorted(f"{a} ({LAYERS[layer_of(a)][0]}) imports {b} ({LAYERS[layer_of(b)][0]})"
                  for a, targets in graph.items() for b in targets if layer_of(b) > layer_of(a))


GRAPH = import_graph()


def test_every_module_is_in_a_layer():
    for m in GRAPH:
        layer_of(m)


def test_no_import_loop():
    assert find_cycle(GRAPH) is None, " -> ".join(find_cycle(GRAPH))


def test_no_import_runs_up_a_layer():
    assert upward_imports(GRAPH) == []


def test_the_graph_sees_function_level_and_named_imports():
    """The walk finds what it must: the ops the API names as strings, the commands
    of the CLI, and the layers' ordinary imports."""
    assert "tamis.exchange.ops" in GRAPH["tamis.api"]
    assert "tamis.project.evaluate" in GRAPH["tamis.api"]
    assert {"tamis.demo", "tamis.exchange.office", "tamis.cli_text"} <= GRAPH["tamis.cli"]
    assert "tamis.lab.reduction" in GRAPH["tamis.criteria.base"]
    assert "tamis.exchange.summaries" in GRAPH["tamis.exchange.office"]


def test_the_checks_find_a_planted_loop_and_an_upward_import(tmp_path):
    """The same functions on a small package written here: a loop through a
    function-level import, and a lab module importing the criteria."""
    pkg = tmp_path / "tamis"
    (pkg / "lab").mkdir(parents=True)
    (pkg / "criteria").mkdir()
    for f in ("__init__.py", "lab/__init__.py", "criteria/__init__.py"):
        (pkg / f).write_text("")
    (pkg / "lab" / "a.py").write_text("def f():\n    from ..criteria import b\n")
    (pkg / "criteria" / "b.py").write_text("from ..lab.a import f\n")
    graph = import_graph(pkg)
    assert find_cycle(graph) == ["tamis.criteria.b", "tamis.lab.a", "tamis.criteria.b"]
    assert upward_imports(graph) == ["tamis.lab.a (lab) imports tamis.criteria (criteria)",
                                     "tamis.lab.a (lab) imports tamis.criteria.b (criteria)"]


@pytest.mark.parametrize("module, layer", [("tamis", "shared vocabulary"), ("tamis.registry", "shared vocabulary"),
                                           ("tamis.lab.curve", "lab"), ("tamis.exchange.ops", "exchange"),
                                           ("tamis.cli_text", "command line")])
def test_layer_names(module, layer):
    assert LAYERS[layer_of(module)][0] == layer
