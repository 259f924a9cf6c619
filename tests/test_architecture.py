"""The package's shape: module sizes, layers without loops, one module that writes workbooks.

Read from the source with `ast`, so the checks hold whatever the modules do at import time, and
an import inside a function counts as much as one at the top of a module. The size limit and
the layering are the project's rules (DEVELOPERS.md, Architecture).
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
# The package's layers, bottom first: a folder (or top-level module) imports only from its own layer
# and the layers below it, and no two of them import each other, directly or through others.
# '' is the facade (sheetbuilder/__init__.py).
LAYERS: tuple[tuple[str, ...], ...] = (
    ("errors", "version", "values"),        # the exceptions, the version, one helper per question about a cell value
    ("reading", "workbook"),                # reading the exports; writing a workbook (spec, formulas, renderer)
    ("sheets", "assemble"),                 # planning: one planner per sheet, and plan_workbook glueing them
    ("weekly",),                            # the weekly round: the only code that reads a saved workbook
    ("pipeline",),                          # build: load, carry, plan, write
    ("batch",),                             # many accounts: one build each on a process pool, then the overview
    ("cli", "__main__", ""),                # the command line and the facade
)


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


def room(module: str) -> str:
    """The folder a module is in, or the module itself at the package's top level ('' for the facade)."""
    return module.split(".")[0]


def room_graph(graph: dict[str, set[str]]) -> dict[str, set[str]]:
    """{room: the other rooms its modules import}."""
    out: dict[str, set[str]] = {}
    for name, deps in graph.items():
        out.setdefault(room(name), set()).update(room(d) for d in deps if room(d) != room(name))
    return out


def upward_imports(graph: dict[str, set[str]], layers=LAYERS) -> list[tuple[str, str]]:
    """(module, imported module) for every import of a room in a higher layer than the importer's (or in none)."""
    level = {r: i for i, rooms in enumerate(layers) for r in rooms}
    return sorted((name, dep) for name, deps in graph.items() for dep in deps
                  if level.get(room(dep), len(layers)) > level.get(room(name), -1))


def test_no_module_in_the_package_is_over_800_lines():
    sizes = {name or "__init__": len(path.read_text(encoding="utf-8").splitlines())
             for name, path in _modules().items()}
    assert {} == {name: n for name, n in sizes.items() if n > MAX_LINES}


def test_package_modules_import_each_other_without_a_cycle():
    assert [] == _cycles(_graph())


def test_every_folder_and_top_level_module_has_its_layer():
    assert set() == set(room_graph(_graph())) - {r for rooms in LAYERS for r in rooms}


def test_no_folder_imports_a_folder_in_a_layer_above_it():
    assert [] == upward_imports(_graph())


def test_no_two_folders_import_each_other_directly_or_through_others():
    assert [] == _cycles(room_graph(_graph()))


def test_the_layer_check_finds_an_import_from_a_layer_above_and_a_loop_between_folders():
    graph = {"sheets.profit": {"weekly.carry", "workbook.spec"}, "weekly.carry": {"sheets.inputs"},
             "sheets.inputs": set(), "workbook.spec": set()}
    assert [("sheets.profit", "weekly.carry")] == upward_imports(graph)
    assert [["sheets", "weekly"]] == _cycles(room_graph(graph))


def test_an_import_inside_a_function_counts(tmp_path):
    path = tmp_path / "probe.py"
    path.write_text("def f():\n    from sheetbuilder.weekly.saved import open_workbook\n", encoding="utf-8")
    inside, _ = _imports("sheets.probe", path, {"weekly.saved": path})
    assert [("sheets.probe", "weekly.saved")] == upward_imports({"sheets.probe": inside})


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
