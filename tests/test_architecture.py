"""The package's import structure: the build flows one way.

Every import statement of every module (module level and inside functions, but not
under ``if TYPE_CHECKING:``) is read with :mod:`ast`, so the checks see what runs.
"""

from __future__ import annotations

import ast
from pathlib import Path

import pytest

PACKAGE = Path(__file__).resolve().parents[1] / "paleomap"


def _module_name(path: Path) -> str:
    parts = path.relative_to(PACKAGE.parent).with_suffix("").parts
    return ".".join(parts[:-1] if parts[-1] == "__init__" else parts)


def _is_type_checking(node: ast.If) -> bool:
    t = node.test
    return (isinstance(t, ast.Name) and t.id == "TYPE_CHECKING") or (
        isinstance(t, ast.Attribute) and t.attr == "TYPE_CHECKING"
    )


def _runtime_imports(path: Path, modules: set[str]) -> set[str]:
    """paleomap modules that ``path`` imports when it runs."""
    name = _module_name(path)
    package = name if path.name == "__init__.py" else name.rpartition(".")[0]
    out: set[str] = set()

    def visit(node):
        if isinstance(node, ast.If) and _is_type_checking(node):
            for child in node.orelse:
                visit(child)
            return
        if isinstance(node, ast.Import):
            for a in node.names:
                if a.name.split(".")[0] == "paleomap":
                    out.add(a.name)
        elif isinstance(node, ast.ImportFrom):
            if node.level:
                base = package.split(".")
                base = base[: len(base) - node.level + 1]
                target = ".".join(base + ([node.module] if node.module else []))
            else:
                target = node.module or ""
            if target.split(".")[0] != "paleomap":
                return
            out.add(target)
            for a in node.names:
                if f"{target}.{a.name}" in modules:
                    out.add(f"{target}.{a.name}")
        for child in ast.iter_child_nodes(node):
            visit(child)

    visit(ast.parse(path.read_text(encoding="utf-8")))
    # importing a.b.c runs a/__init__ and a/b/__init__ too, unless the importer is
    # inside that package (then its __init__ is already running)
    ancestors = {".".join(name.split(".")[:i]) for i in range(1, name.count(".") + 1)}
    closed = set()
    for m in out:
        parts = m.split(".")
        closed |= {".".join(parts[:i]) for i in range(2, len(parts) + 1)}
    return {m for m in closed - ancestors if m in modules and m != name}


@pytest.fixture(scope="module")
def graph() -> dict[str, set[str]]:
    files = sorted(PACKAGE.rglob("*.py"))
    modules = {_module_name(f) for f in files}
    return {_module_name(f): _runtime_imports(f, modules) for f in files}


def _reach(graph, start: str) -> set[str]:
    seen, todo = set(), [start]
    while todo:
        for m in graph.get(todo.pop(), ()):
            if m not in seen:
                seen.add(m)
                todo.append(m)
    return seen


def test_the_reader_sees_imports_inside_functions_and_skips_type_checking(tmp_path, graph):
    # the pipeline imports the writers inside write_build only, and names BuildResult
    # from results at module level
    assert "paleomap.io.writers" in graph["paleomap.pipeline"]
    assert "paleomap.results" in graph["paleomap.pipeline"]
    # figures name BuildResult under TYPE_CHECKING only: not a runtime import
    assert "paleomap.results" not in graph["paleomap.figures.migration"]


def test_no_import_circle(graph):
    circles = sorted(m for m in graph if m in _reach(graph, m))
    assert circles == []


@pytest.mark.parametrize(
    "module",
    ["paleomap.report", "paleomap.layers", "paleomap.results", "paleomap.figures.all"],
)
def test_figures_and_report_reach_neither_the_field_nor_the_pipeline(graph, module):
    reached = _reach(graph, module) | {module}
    assert not {m for m in reached if m.startswith("paleomap.field")}
    assert "paleomap.pipeline" not in reached
    assert "paleomap.chart" not in reached


def test_every_figure_module_reaches_neither_the_field_nor_the_pipeline(graph):
    for module in (m for m in graph if m.startswith("paleomap.figures")):
        reached = _reach(graph, module)
        assert not {m for m in reached if m.startswith("paleomap.field")}, module
        assert "paleomap.pipeline" not in reached, module


def test_io_imports_no_figures(graph):
    for module in (m for m in graph if m.startswith("paleomap.io")):
        assert not {m for m in _reach(graph, module) if m.startswith("paleomap.figures")}, module
