"""The package's shape: module sizes, no import cycle, one module that writes workbooks.

Read from the source with `ast`, so the checks hold whatever the modules do at import time.
The size limit and the layering are the project's rules (DEVELOPERS.md, Architecture).
"""
from __future__ import annotations

import ast
from pathlib import Path

PACKAGE = Path(__file__).resolve().parent.parent / "sheetbuilder"
MAX_LINES = 800
# Modules allowed to import xlsxwriter besides the renderer, each with its reason (none today: the
# benchmark, which times xlsxwriter's own write_formula, lives outside the package in benchmarks/).
XLSXWRITER_EXCEPTIONS: dict[str, str] = {}
# Folders beside the package that hold developer tools and tests: the library never imports them.
TOOL_FOLDERS = ("benchmarks", "tests", "study", "tools")


def _modules() -> dict[str, Path]:
    """{dotted name relative to the package ('' for __init__, 'a.b' for a/b.py): path}."""
    out = {}
    for path in sorted(PACKAGE.rglob("*.py")):
        parts = list(path.relative_to(PACKAGE).with_suffix("").parts)
        if parts[-1] == "__init__":
            parts = parts[:-1]
        out[".".join(parts)] = path
    return out


def _imports(name: str, path: Path, modules: dict[str, Path]) -> tuple[set[str], set[str]]:
    """(package modules name imports, top-level outside packages it imports), anywhere in the file."""
    inside, outside = set(), set()
    is_package = path.name == "__init__.py"
    here = name.split(".") if name else []
    base = here if is_package else here[:-1]
    for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
        if isinstance(node, ast.Import):
            for alias in node.names:
                if alias.name == "sheetbuilder" or alias.name.startswith("sheetbuilder."):
                    inside.add(alias.name.removeprefix("sheetbuilder").lstrip("."))
                else:
                    outside.add(alias.name.split(".")[0])
        elif isinstance(node, ast.ImportFrom):
            if node.level == 0:
                if node.module == "sheetbuilder" or node.module.startswith("sheetbuilder."):
                    target = node.module.removeprefix("sheetbuilder").lstrip(".")
                else:
                    outside.add(node.module.split(".")[0])
                    continue
            else:
                target = ".".join(base[: len(base) - (node.level - 1)] + ([node.module] if node.module else []))
            for alias in node.names:  # 'from . import x' imports the submodule x when there is one
                sub = f"{target}.{alias.name}" if target else alias.name
                inside.add(sub if sub in modules else target)
    return {m for m in inside if m != name}, outside


def _graph() -> dict[str, set[str]]:
    modules = _modules()
    return {name: _imports(name, path, modules)[0] for name, path in modules.items()}


def _cycles(graph: dict[str, set[str]]) -> list[list[str]]:
    """One cycle per strongly connected group of modules (Tarjan), each as a list of names."""
    index, low, stack, on_stack, out = {}, {}, [], set(), []

    def visit(v: str) -> None:
        index[v] = low[v] = len(index)
        stack.append(v)
        on_stack.add(v)
        for w in sorted(graph.get(v, ())):
            if w not in index:
                visit(w)
                low[v] = min(low[v], low[w])
            elif w in on_stack:
                low[v] = min(low[v], index[w])
        if low[v] == index[v]:
            group = []
            while True:
                w = stack.pop()
                on_stack.discard(w)
                group.append(w)
                if w == v:
                    break
            if len(group) > 1:
                out.append(sorted(group))

    for v in sorted(graph):
        if v not in index:
            visit(v)
    return out


def test_no_module_in_the_package_is_over_800_lines():
    sizes = {name or "__init__": len(path.read_text(encoding="utf-8").splitlines())
             for name, path in _modules().items()}
    assert {} == {name: n for name, n in sizes.items() if n > MAX_LINES}


def test_package_modules_import_each_other_without_a_cycle():
    graph = _graph()
    # The package's __init__ re-exports the pipeline and holds __version__, which plan_guide and
    # cli read: an edge back to the facade, safe because __version__ is set before the re-export.
    # Drop only the edges into the facade, so every cycle among the real modules still fails.
    graph = {name: {m for m in deps if m != ""} for name, deps in graph.items()}
    assert [] == _cycles(graph)


def test_the_cycle_check_finds_a_cycle():
    assert [["a", "b", "c"]] == _cycles({"a": {"b"}, "b": {"c"}, "c": {"a"}, "d": {"a"}})


def test_only_the_renderer_imports_xlsxwriter():
    modules = _modules()
    importers = {name for name, path in modules.items() if "xlsxwriter" in _imports(name, path, modules)[1]}
    assert {"workbook.render"} | set(XLSXWRITER_EXCEPTIONS) == importers


def test_the_package_imports_nothing_from_the_benchmark_the_tests_or_the_tools():
    root = PACKAGE.parent
    tool_modules = set(TOOL_FOLDERS) | {p.stem for folder in TOOL_FOLDERS for p in (root / folder).glob("*.py")}
    modules = _modules()
    found = {name: sorted(_imports(name, path, modules)[1] & tool_modules) for name, path in modules.items()}
    assert {} == {name: deps for name, deps in found.items() if deps}


def test_the_import_reader_sees_relative_and_absolute_imports(tmp_path):
    path = tmp_path / "probe.py"
    path.write_text("from .spec import Sheet\nfrom . import render\nimport sheetbuilder.errors\n"
                    "def f():\n    import xlsxwriter\n    from .formula import resolve\n", encoding="utf-8")
    modules = {"probe": path, "spec": path, "render": path, "errors": path, "formula": path}
    assert ({"spec", "render", "errors", "formula"}, {"xlsxwriter"}) == _imports("probe", path, modules)
