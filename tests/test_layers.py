"""The layer rules of DEVELOPERS.md, enforced: imports flow one way, no cycles, short functions.

The core — the engine (``viscometry.gum``), the viscometer models (``viscometry.methods``),
the reference data (``viscometry.properties``) and the pure planning, conformity and
proficiency code — never imports an edge: files (``io``, ``audit``), the command line
(``cli``, ``commands``), widgets, plotting (``plots``, ``mc_plots``, ``planning_plots``),
reports or text rendering (``report``, ``text``), the compiled-model cache on disk
(``cache``) or worker processes (``parallel``). Imports inside functions count too; only
imports under ``if TYPE_CHECKING:`` (annotations, never run) are ignored. The tests read the
source with :mod:`ast`; nothing is imported to check it.
"""

from __future__ import annotations

import ast
from pathlib import Path

import pytest

PACKAGE = Path(__file__).resolve().parents[1] / "viscometry"

#: The core: modules and packages that must not reach an edge.
CORE = ("gum", "methods", "properties", "planning", "conformity", "proficiency", "fitting",
        "_checks", "errors", "units", "demo", "evidence", "polymer")  # fmt: skip
#: The edges the core must never import.
EDGES = ("io", "audit", "cli", "commands", "widgets", "plots", "mc_plots", "planning_plots",
         "report", "text", "workspace", "cache", "parallel",
         "evidence_text", "evidence_plots", "polymer_text",
         "evidence_qc_text", "evidence_qc_plots")  # fmt: skip
#: Longest function allowed, in lines of code (its docstring not counted).
MAX_FUNCTION_LINES = 80


def _module_name(path: Path) -> str:
    parts = path.relative_to(PACKAGE.parent).with_suffix("").parts
    return ".".join(parts[:-1] if parts[-1] == "__init__" else parts)


def _modules() -> dict[str, Path]:
    return {_module_name(p): p for p in sorted(PACKAGE.rglob("*.py"))}


def _is_type_checking(node: ast.If) -> bool:
    test = node.test
    return (isinstance(test, ast.Name) and test.id == "TYPE_CHECKING") or (
        isinstance(test, ast.Attribute) and test.attr == "TYPE_CHECKING"
    )


def _imports(path: Path) -> list[tuple[int, str]]:
    """(line, imported module) for every import that can run, at any depth."""
    module = _module_name(path)
    package = module if path.name == "__init__.py" else module.rpartition(".")[0]
    return _imports_in(path.read_text(encoding="utf-8"), package)


def _imports_in(text: str, package: str) -> list[tuple[int, str]]:
    found: list[tuple[int, str]] = []

    def visit(node: ast.AST) -> None:
        for child in ast.iter_child_nodes(node):
            if isinstance(child, ast.If) and _is_type_checking(child):
                for sub in child.orelse:
                    visit(sub)
                continue
            if isinstance(child, ast.Import):
                found.extend((child.lineno, a.name) for a in child.names)
            elif isinstance(child, ast.ImportFrom):
                base = child.module or ""
                if child.level:
                    anchor = package.rsplit(".", child.level - 1)[0] if child.level > 1 else package
                    base = f"{anchor}.{base}" if base else anchor
                # ``from pkg import mod`` imports pkg.mod; ``from mod import name`` imports mod.
                # (A parent package always runs first; that is not an import of the module.)
                found.extend((child.lineno, f"{base}.{a.name}") for a in child.names)
            visit(child)

    visit(ast.parse(text))
    return found


def _part(module: str) -> str:
    return module.split(".")[1] if module.startswith("viscometry.") else ""


@pytest.mark.parametrize("core", CORE)
def test_core_never_imports_an_edge(core: str) -> None:
    bad = [
        f"{path.relative_to(PACKAGE.parent)}:{line} imports {name}"
        for module, path in _modules().items()
        if _part(module) == core
        for line, name in _imports(path)
        if _part(name) in EDGES
    ]
    assert not bad, "the core reaches an edge:\n" + "\n".join(bad)


def test_the_layer_check_sees_a_violation() -> None:
    # The check must catch an edge import inside a function, and relative imports, and must
    # ignore one that only serves type annotations.
    text = (
        "from typing import TYPE_CHECKING\n"
        "if TYPE_CHECKING:\n    from viscometry.report import render_report\n"
        "def f():\n    from viscometry.text import statement\n    return statement\n"
        "def g():\n    from ..io import load_budget\n"
    )
    found = {name for _line, name in _imports_in(text, "viscometry.gum")}
    assert "viscometry.text.statement" in found and "viscometry.io.load_budget" in found
    assert not any(n.startswith("viscometry.report") for n in found)
    assert {_part(n) for n in found} & set(EDGES) == {"text", "io"}


def test_no_import_cycle() -> None:
    modules = _modules()
    graph: dict[str, set[str]] = {m: set() for m in modules}
    for module, path in modules.items():
        for _line, name in _imports(path):
            while name and name not in modules:
                name = name.rpartition(".")[0]
            if name and name != module:
                graph[module].add(name)
    cycles = _cycles(graph)
    assert not cycles, "import cycles:\n" + "\n".join(" -> ".join(c) for c in cycles)


def _cycles(graph: dict[str, set[str]]) -> list[list[str]]:
    """Strongly connected components with more than one module (Tarjan's algorithm)."""
    index: dict[str, int] = {}
    low: dict[str, int] = {}
    stack: list[str] = []
    on_stack: set[str] = set()
    out: list[list[str]] = []

    def connect(v: str) -> None:
        index[v] = low[v] = len(index)
        stack.append(v)
        on_stack.add(v)
        for w in sorted(graph[v]):
            if w not in index:
                connect(w)
                low[v] = min(low[v], low[w])
            elif w in on_stack:
                low[v] = min(low[v], index[w])
        if low[v] == index[v]:
            comp = []
            while True:
                w = stack.pop()
                on_stack.discard(w)
                comp.append(w)
                if w == v:
                    break
            if len(comp) > 1:
                out.append(sorted(comp))

    for v in sorted(graph):
        if v not in index:
            connect(v)
    return out


def test_cycle_finder_finds_a_cycle() -> None:
    assert _cycles({"a": {"b"}, "b": {"a"}, "c": set()}) == [["a", "b"]]


def test_no_function_longer_than_the_limit() -> None:
    long = []
    for path in sorted(PACKAGE.rglob("*.py")):
        for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
            if not isinstance(node, ast.FunctionDef | ast.AsyncFunctionDef):
                continue
            first = node.body[0]
            doc = 0
            if isinstance(first, ast.Expr) and isinstance(first.value, ast.Constant):
                if isinstance(first.value.value, str):
                    doc = first.end_lineno - first.lineno + 1  # type: ignore[operator]
            lines = node.end_lineno - node.lineno + 1 - doc  # type: ignore[operator]
            if lines > MAX_FUNCTION_LINES:
                long.append(
                    f"{path.relative_to(PACKAGE.parent)}:{node.lineno} {node.name}: {lines}"
                )
    assert not long, f"functions over {MAX_FUNCTION_LINES} lines:\n" + "\n".join(long)
