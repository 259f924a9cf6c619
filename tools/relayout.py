"""Lay the package out by role, so that the folder tree reads as the pipeline (issue 14, item 1).

Usage, from the repository root, on a committed tree:

    python tools/relayout.py            # move the modules and rewrite every reference
    python tools/relayout.py --dry-run  # say what would move and which files would change

What it does, in this order:

1. Stops, changing nothing, when ``sheetbuilder/`` holds a module or a folder that MAPPING does
   not name (one added since this script was written): it lists them ("add these to MAPPING").
2. Rewrites every tracked or new text file except this script and its test:
   - in Python files, each import of a moved module, in every form (``from sheetbuilder.x import``,
     ``from sheetbuilder import x``, ``import sheetbuilder.x``, and relative imports, which become
     absolute); a renamed module imported as a name keeps its old name as an alias
     (``from sheetbuilder.sheets import profit as plan_profit``), so no code below the import changes;
   - everywhere, dotted names (``"sheetbuilder.pipeline.render"`` in a monkeypatch,
     ``python -m sheetbuilder.x``, ``:mod:`` references) and paths (``sheetbuilder/x.py``);
   - in back-quoted prose, ``x.py`` and ``x.NAME`` when NAME is defined in module x;
   - in ``tests/test_architecture.py``, module names written as strings (relative to the package),
     and the xlsxwriter exceptions of modules that leave the package;
   - ``pyproject.toml``: pytest's ``pythonpath`` gains the repository root when a module leaves the
     package for a top-level folder (``benchmarks/``), so tests can import it under plain ``pytest``.
3. ``git mv`` each module, and writes each new package's ``__init__.py`` (a docstring only).
4. Regenerates the module table of DEVELOPERS.md (the one under ``| module | holds |``), grouped by
   package; a row's text is kept, a module without a row gets its docstring's first paragraph.

Idempotent: a second run finds nothing to move and nothing to rewrite. A module named in MAPPING that
is no longer in the tree is skipped with a note. Nothing is committed: review ``git status`` and commit.
"""
from __future__ import annotations

import argparse
import ast
import re
import subprocess
import sys
import textwrap
from dataclasses import dataclass, field
from pathlib import Path

PACKAGE = "sheetbuilder"

# Each new package, in pipeline order, and what it holds (its __init__ docstring and its row in the table).
PACKAGES = {
    "sheetbuilder.reading": "Reading the exports: the input contract, the guard, numbers, encodings, headers, "
                            "dates and totals rows, the readers, the settings file and `inspect`.",
    "sheetbuilder.sheets": "The planners: one module per sheet, each pure (frames and settings in, "
                           "a spec.Sheet out).",
    "sheetbuilder.workbook": "The workbook: the sheet specification, column definitions and formula text, "
                             "the palette, the one renderer, and writing files atomically.",
    "sheetbuilder.weekly": "The weekly round: reading last week's saved workbook, carrying typed values, "
                           "following up last week's changes, exporting this week's.",
    "benchmarks": "Long-running developer tools kept out of the library: the benchmark and the readers' "
                  "fuzz soak (run from the repository root, `python -m benchmarks.bench`).",
}

# Old module (a file directly in sheetbuilder/) -> new dotted name. Top-level modules that stay are in STAYS.
MAPPING = {
    # reading/: files in, validated frames and problem records out
    "contract": "sheetbuilder.reading.contract",
    "guard": "sheetbuilder.reading.guard",
    "numbers": "sheetbuilder.reading.numbers",
    "encodings": "sheetbuilder.reading.encodings",
    "headers": "sheetbuilder.reading.headers",
    "periods": "sheetbuilder.reading.periods",
    "totals": "sheetbuilder.reading.totals",
    "normalise": "sheetbuilder.reading.normalise",
    "readers": "sheetbuilder.reading.readers",
    "settings": "sheetbuilder.reading.settings",
    "inspection": "sheetbuilder.reading.inspection",
    # sheets/: one planner per sheet, named for the sheet
    "plan_inputs": "sheetbuilder.sheets.inputs",
    "plan_settings": "sheetbuilder.sheets.settings",
    "plan_profit": "sheetbuilder.sheets.profit",
    "plan_groups": "sheetbuilder.sheets.groups",
    "blends": "sheetbuilder.sheets.blends",
    "plan_bids": "sheetbuilder.sheets.bids",
    "plan_terms": "sheetbuilder.sheets.terms",
    "plan_lists": "sheetbuilder.sheets.lists",
    "plan_mix": "sheetbuilder.sheets.mix",
    "plan_budget": "sheetbuilder.sheets.budget",
    "plan_actions": "sheetbuilder.sheets.actions",
    "plan_followup": "sheetbuilder.sheets.followup",
    "history": "sheetbuilder.sheets.history",
    "plan_unmatched": "sheetbuilder.sheets.unmatched",
    "plan_dashboard": "sheetbuilder.sheets.dashboard",
    "plan_guide": "sheetbuilder.sheets.guide",
    "anchors": "sheetbuilder.sheets.anchors",  # the names one planner provides and others read (issue 14, glue)
    # workbook/: the specification, formula text, styles, the renderer, safe writing
    "spec": "sheetbuilder.workbook.spec",
    "formula": "sheetbuilder.workbook.formula",
    "columns": "sheetbuilder.workbook.columns",
    "palette": "sheetbuilder.workbook.palette",
    "render": "sheetbuilder.workbook.render",
    "atomic": "sheetbuilder.workbook.atomic",
    "csv_safe": "sheetbuilder.workbook.csv_safe",
    # weekly/: last week's workbook in, this week's changes out
    "saved": "sheetbuilder.weekly.saved",
    "carry": "sheetbuilder.weekly.carry",
    "followup": "sheetbuilder.weekly.followup",
    "change_list": "sheetbuilder.weekly.change_list",  # a saved workbook's change list (issue 14, glue)
    "changes": "sheetbuilder.weekly.changes",
    # out of the library (issue 14: "the benchmark and the soak moved out ... into their own top-level folder")
    "bench": "benchmarks.bench",
    "soak": "benchmarks.soak",
}
# Modules that stay at the top of the package: the facade, the pipeline, the one error hierarchy, the CLI.
STAYS = ("__init__", "__main__", "errors", "pipeline", "assemble", "recalc", "cli")
TOP_LEVEL_TEXT = "The facade, the one exception hierarchy, the pipeline, recalculation and the command line."

SUFFIXES = {".py", ".md", ".toml", ".sh", ".cfg", ".ini", ".txt", ".yml", ".yaml"}
EXTRA_FILES = {".ci/run", "tasks.sh"}
SELF = {"tools/relayout.py", "tests/test_relayout.py"}
# Globs written in prose that name the planners as a family.
PROSE = (("`plan_*.py`", "`sheets/*.py`"), ("`plan_<sheet>.py`", "`sheets/<sheet>.py`"))
ARCH_TEST = "tests/test_architecture.py"
LINE = 120


class Stop(Exception):
    """The tree is not what this script knows; nothing was changed."""


@dataclass
class Layout:
    mapping: dict[str, str]
    stays: tuple[str, ...] = STAYS
    packages: dict[str, str] = field(default_factory=dict)

    def new(self, dotted: str) -> str:
        """The new dotted name of an old one (unchanged when it does not name a mapped module)."""
        parts = dotted.split(".")
        if parts[0] == PACKAGE and len(parts) > 1 and parts[1] in self.mapping:
            return ".".join([self.mapping[parts[1]], *parts[2:]])
        return dotted

    def is_module(self, dotted: str) -> bool:
        parts = dotted.split(".")
        return len(parts) == 2 and parts[0] == PACKAGE and (parts[1] in self.mapping or parts[1] in self.stays)

    def path(self, dotted: str) -> str:
        return dotted.replace(".", "/") + ".py"

    def moved(self) -> dict[str, str]:
        return {old: new for old, new in self.mapping.items() if new != f"{PACKAGE}.{old}"}

    def leaving(self) -> set[str]:
        """Old modules whose new home is outside the package."""
        return {old for old, new in self.mapping.items() if not new.startswith(PACKAGE + ".")}


# ---------------------------------------------------------------- checking the tree

def unknown_entries(root: Path, layout: Layout) -> list[str]:
    """Modules and folders directly in sheetbuilder/ that the layout does not name."""
    known_dirs = {p.split(".", 1)[1] for p in layout.packages if p.startswith(PACKAGE + ".")} | {"__pycache__"}
    out = []
    for entry in sorted((root / PACKAGE).iterdir()):
        if entry.is_file() and entry.suffix == ".py":
            if entry.stem not in layout.mapping and entry.stem not in layout.stays:
                out.append(f"{PACKAGE}/{entry.name}")
        elif entry.is_dir() and entry.name not in known_dirs and any(entry.rglob("*.py")):
            out.append(f"{PACKAGE}/{entry.name}/")
    return out


def plan_moves(root: Path, layout: Layout) -> tuple[list[tuple[str, str]], list[str]]:
    """([(source, destination)] still to move, notes)."""
    moves, notes = [], []
    for old, new in layout.moved().items():
        src, dst = f"{PACKAGE}/{old}.py", layout.path(new)
        if (root / src).exists() and (root / dst).exists():
            raise Stop(f"both {src} and {dst} exist: merge them by hand first")
        if (root / src).exists():
            moves.append((src, dst))
        elif not (root / dst).exists():
            notes.append(f"skipped {old}: neither {src} nor {dst} is in the tree")
    return moves, notes


# ---------------------------------------------------------------- rewriting Python imports

def module_of(rel: str) -> tuple[list[str], bool]:
    """(dotted parts of the module at this relative path, whether it is a package's __init__)."""
    parts = rel[:-3].split("/")
    if parts[-1] == "__init__":
        return parts[:-1], True
    return parts, False


def _offsets(source: bytes) -> list[int]:
    starts, pos = [0], 0
    for line in source.splitlines(keepends=True):
        pos += len(line)
        starts.append(pos)
    return starts


def _from_lines(groups: list[tuple[str, list[str]]], indent: str) -> str:
    lines = []
    for module, names in groups:
        one = f"from {module} import {', '.join(names)}"
        if len(indent) + len(one) <= LINE:
            lines.append(one)
            continue
        head, body, rows = f"from {module} import (", "", []
        for name in names:
            piece = name + ", "
            if len(indent) + len(head) + len(body) + len(piece) > LINE and body:
                rows.append(body.rstrip())
                body = ""
            body += piece
        rows.append(body.rstrip().rstrip(",") + ")")
        pad = indent + " " * len(head)
        lines.append(head + ("\n" + pad).join(rows))
    return ("\n" + indent).join(lines)


def rewrite_imports(text: str, rel: str, layout: Layout, notes: list[str]) -> str:
    """Every import that names a mapped module, rewritten to its new absolute name."""
    try:
        tree = ast.parse(text)
    except SyntaxError as exc:
        raise Stop(f"{rel} does not parse ({exc}); fix it first") from exc
    here, is_init = module_of(rel)
    base = here if is_init else here[:-1]
    source = text.encode("utf-8")
    starts = _offsets(source)
    edits = []
    for node in ast.walk(tree):
        if isinstance(node, ast.ImportFrom):
            if node.level:
                if node.level > len(base):
                    continue
                mod = ".".join(base[: len(base) - node.level + 1] + ([node.module] if node.module else []))
            else:
                mod = node.module or ""
            if mod != PACKAGE and not mod.startswith(PACKAGE + "."):
                continue
            groups: list[tuple[str, list[str]]] = []
            for alias in node.names:
                full = f"{mod}.{alias.name}"
                if layout.is_module(full):
                    target, _, leaf = layout.new(full).rpartition(".")
                    asname = alias.asname or (alias.name if leaf != alias.name else None)
                else:
                    target, leaf, asname = layout.new(mod), alias.name, alias.asname
                name = f"{leaf} as {asname}" if asname and asname != leaf else leaf
                if groups and groups[-1][0] == target:
                    groups[-1][1].append(name)
                else:
                    groups.append((target, [name]))
            unchanged = (node.level == 0 and len(groups) == 1 and groups[0][0] == mod
                         and groups[0][1] == [f"{a.name} as {a.asname}" if a.asname else a.name for a in node.names])
            if unchanged:
                continue
            start = starts[node.lineno - 1] + node.col_offset
            end = starts[node.end_lineno - 1] + node.end_col_offset
            old = source[start:end].decode("utf-8")
            simple = (len(groups) == 1 and groups[0][1] == [f"{a.name} as {a.asname}" if a.asname else a.name
                                                             for a in node.names])
            line_start = source[starts[node.lineno - 1]:start].decode("utf-8")
            indent = line_start if line_start.strip() == "" else None
            if simple and "#" in old:  # only the module changes: keep the wrapping and the comments
                prefix = re.match(r"from\s+[.\w]+", old).group(0)
                head = f"from {groups[0][0]}"
                new = head + old[len(prefix):]
                shift = len(head) - len(prefix)
                new = re.sub(r"\n( *)", lambda m: "\n" + " " * max(len(m.group(1)) + shift, 0), new)
            elif simple and indent is None:
                new = re.sub(r"^from\s+[.\w]+", f"from {groups[0][0]}", old, count=1)
            else:
                if "#" in old:
                    notes.append(f"{rel}:{node.lineno}: a comment inside a split import was dropped; check it")
                new = _from_lines(groups, indent) if indent is not None else "; ".join(
                    _from_lines([g], "") for g in groups)
            edits.append((start, end, new))
        elif isinstance(node, ast.Import):
            names, changed = [], False
            for alias in node.names:
                new_name = layout.new(alias.name)
                changed |= new_name != alias.name
                names.append(f"{new_name} as {alias.asname}" if alias.asname else new_name)
            if changed:
                start = starts[node.lineno - 1] + node.col_offset
                end = starts[node.end_lineno - 1] + node.end_col_offset
                edits.append((start, end, "import " + ", ".join(names)))
    for start, end, new in sorted(edits, reverse=True):
        source = source[:start] + new.encode("utf-8") + source[end:]
    return source.decode("utf-8")


# ---------------------------------------------------------------- rewriting names in any text

def defined_names(root: Path, old: str, layout: Layout) -> set[str]:
    """Top-level names a module defines (read from wherever it is now)."""
    for rel in (f"{PACKAGE}/{old}.py", layout.path(layout.mapping[old])):
        path = root / rel
        if path.exists():
            names = set()
            for node in ast.parse(path.read_text(encoding="utf-8")).body:
                if isinstance(node, (ast.FunctionDef, ast.AsyncFunctionDef, ast.ClassDef)):
                    names.add(node.name)
                elif isinstance(node, (ast.Assign, ast.AnnAssign)):
                    for target in node.targets if isinstance(node, ast.Assign) else [node.target]:
                        names |= {n.id for n in ast.walk(target) if isinstance(n, ast.Name)}
            return names
    return set()


def short(dotted: str) -> str:
    """A new name as prose writes it: relative to the package, or from the root when outside it."""
    return dotted.removeprefix(PACKAGE + ".")


def text_rewriter(root: Path, layout: Layout):
    moved = layout.moved()
    if not moved:
        return lambda text: text
    alternatives = "|".join(sorted(map(re.escape, moved), key=len, reverse=True))
    dotted = re.compile(rf"(?<![\w.]){PACKAGE}\.({alternatives})(?!\w)")
    paths = re.compile(rf"(?<![\w/]){PACKAGE}/({alternatives})\.py(?!\w)")
    # Prose names a module by its file name only inside the package ("`plan_guide.py`"); a module that leaves
    # the package keeps its file name in the prose of its new folder (benchmarks/: "`bench.py`").
    inside = "|".join(sorted((re.escape(o) for o, n in moved.items() if n.startswith(PACKAGE + ".")), key=len,
                             reverse=True)) or "(?!)"
    quoted_file = re.compile(rf"`({inside})\.py`")
    quoted_attr = re.compile(rf"`({inside})\.(\w+)")
    names = {old: defined_names(root, old, layout) for old in moved}

    def attr(m: re.Match) -> str:
        old, name = m.group(1), m.group(2)
        return f"`{short(moved[old])}.{name}" if name in names[old] else m.group(0)

    def rewrite(text: str) -> str:
        text = dotted.sub(lambda m: moved[m.group(1)], text)
        text = paths.sub(lambda m: layout.path(moved[m.group(1)]), text)
        text = quoted_file.sub(lambda m: f"`{layout.path(short(moved[m.group(1)]))}`", text)
        text = quoted_attr.sub(attr, text)
        for before, after in PROSE:
            text = text.replace(before, after)
        return text
    return rewrite


# ---------------------------------------------------------------- the architecture test

def _probe(fn: ast.AST) -> bool:
    """A test that reads made-up modules of its own: its module names are not the package's."""
    return isinstance(fn, ast.FunctionDef) and (
        "import_reader" in fn.name or "cycle_check" in fn.name or "tmp_path" in {a.arg for a in fn.args.args})


def rewrite_architecture_test(text: str, layout: Layout) -> str:
    """Module names written as strings become dotted names relative to the package; the
    xlsxwriter exceptions of modules that leave the package are dropped."""
    tree = ast.parse(text)
    source = text.encode("utf-8")
    starts = _offsets(source)
    skip = set()
    for fn in ast.walk(tree):
        if _probe(fn):
            skip |= {id(n) for n in ast.walk(fn)}
    edits = []
    leaving = layout.leaving()
    for node in ast.walk(tree):
        if id(node) in skip:
            continue
        targets = (node.targets if isinstance(node, ast.Assign)
                   else [node.target] if isinstance(node, ast.AnnAssign) else [])
        if not (any(isinstance(t, ast.Name) and t.id == "XLSXWRITER_EXCEPTIONS" for t in targets)
                and isinstance(node.value, ast.Dict)):
            continue
        d = node.value
        keep = [(k, v) for k, v in zip(d.keys, d.values) if not (isinstance(k, ast.Constant) and k.value in leaving)]
        if len(keep) == len(d.keys):
            continue
        body = ""
        for k, v in keep:
            key = ast.get_source_segment(text, k)
            if isinstance(k, ast.Constant) and k.value in layout.moved():
                key = f'"{short(layout.mapping[k.value])}"'
            body += f"\n    {key}: {ast.get_source_segment(text, v)},"
        start = starts[d.lineno - 1] + d.col_offset
        end = starts[d.end_lineno - 1] + d.end_col_offset
        edits.append((start, end, "{" + body + ("\n}" if keep else "}")))
        skip |= {id(n) for n in ast.walk(d)}
    for node in ast.walk(tree):
        if id(node) in skip or not isinstance(node, ast.Constant) or not isinstance(node.value, str):
            continue
        if node.value in layout.mapping and layout.mapping[node.value] != f"{PACKAGE}.{node.value}":
            start = starts[node.lineno - 1] + node.col_offset
            end = starts[node.end_lineno - 1] + node.end_col_offset
            old = source[start:end].decode("utf-8")
            quote = old[-1]
            edits.append((start, end, f"{quote}{short(layout.mapping[node.value])}{quote}"))
    for start, end, new in sorted(edits, reverse=True):
        source = source[:start] + new.encode("utf-8") + source[end:]
    return source.decode("utf-8")


# ---------------------------------------------------------------- pyproject and DEVELOPERS.md

def rewrite_pyproject(text: str, layout: Layout, root: Path) -> str:
    """Tests import the modules that left the package from the repository root, under plain `pytest` too."""
    if not any((root / f"{PACKAGE}/{old}.py").exists() or (root / layout.path(layout.mapping[old])).exists()
               for old in layout.leaving()):
        return text
    if re.search(r"(?m)^pythonpath\s*=", text) or "[tool.pytest.ini_options]" not in text:
        return text
    return text.replace("[tool.pytest.ini_options]\n", '[tool.pytest.ini_options]\npythonpath = ["."]\n', 1)


def _docstring_line(path: Path) -> str:
    """The docstring's first paragraph as a table cell, written like the rows around it (lower case, no period)."""
    doc = ast.get_docstring(ast.parse(path.read_text(encoding="utf-8"))) or ""
    line = " ".join(doc.split("\n\n")[0].split()).replace("|", "\\|").rstrip(".")
    return line[:1].lower() + line[1:] if line[1:2].islower() or line[1:2] == " " else line


def rewrite_module_table(text: str, root: Path, layout: Layout, notes: list[str]) -> str:
    lines = text.split("\n")
    try:
        head = next(i for i, line in enumerate(lines) if re.match(r"^\|\s*module\s*\|\s*holds\s*\|\s*$", line))
    except StopIteration:
        notes.append("DEVELOPERS.md: no '| module | holds |' table; the module table was not regenerated")
        return text
    end = head + 2
    while end < len(lines) and lines[end].startswith("|"):
        end += 1
    by_path = {f"{PACKAGE}/{m}.py": m for m in (*layout.mapping, *layout.stays)}
    by_path |= {layout.path(new): old for old, new in layout.mapping.items()}
    rows = {}
    for line in lines[head + 2:end]:
        m = re.match(r"^\|\s*`([^`]+)`\s*\|\s*(.*?)\s*\|\s*$", line)
        if not m:
            continue
        name = m.group(1)
        old = by_path.get(name) or by_path.get(f"{PACKAGE}/{name}")
        if old:
            rows[old] = m.group(2)
    groups: dict[str, list[str]] = {pkg: [] for pkg in layout.packages}
    groups[PACKAGE] = [m for m in layout.stays]
    for old, new in layout.mapping.items():
        groups.setdefault(new.rpartition(".")[0], []).append(old)
    out = ["| module | holds |", "| --- | --- |"]
    order = [PACKAGE, *[p for p in groups if p != PACKAGE]]
    for pkg in order:
        present = [(old, layout.path(layout.mapping.get(old, f"{PACKAGE}.{old}"))) for old in groups[pkg]]
        present = [(old, rel) for old, rel in present if (root / rel).exists()]
        if not pkg.startswith(PACKAGE):  # outside the package: listed only where the table listed it before
            present = [(old, rel) for old, rel in present if old in rows]
        if not present:
            continue
        what = TOP_LEVEL_TEXT if pkg == PACKAGE else layout.packages.get(pkg, "")
        out.append(f"| **`{pkg.replace('.', '/')}/`** | {what} |")
        for old, rel in present:
            out.append(f"| `{rel}` | {rows.get(old) or _docstring_line(root / rel)} |")
    return "\n".join(lines[:head] + out + lines[end:])


# ---------------------------------------------------------------- running it

def git(root: Path, *args: str) -> str:
    return subprocess.run(["git", *args], cwd=root, check=True, capture_output=True, text=True).stdout


def text_files(root: Path) -> list[str]:
    listed = git(root, "ls-files", "--cached", "--others", "--exclude-standard").splitlines()
    return sorted(rel for rel in set(listed)
                  if (Path(rel).suffix in SUFFIXES or rel in EXTRA_FILES) and rel not in SELF
                  and (root / rel).is_file() and ".egg-info/" not in rel)


def relayout(root: Path, layout: Layout, dry_run: bool = False, say=print) -> dict[str, list[str]]:
    """Move and rewrite; returns {'moved': [...], 'changed': [...], 'notes': [...]}. Raises Stop."""
    clash = sorted(set(layout.mapping) & {p.split(".")[1] for p in layout.packages if p.startswith(PACKAGE + ".")})
    if clash:
        raise Stop(f"an old module and a new package share a name, which would make the rewriting ambiguous: {clash}")
    unknown = unknown_entries(root, layout)
    if unknown:
        raise Stop("modules or folders that MAPPING (tools/relayout.py) does not name; "
                   "add these to MAPPING (or STAYS) and run again:\n  " + "\n  ".join(unknown))
    moves, notes = plan_moves(root, layout)
    rewrite = text_rewriter(root, layout)
    changed = []
    for rel in text_files(root):
        path = root / rel
        text = path.read_text(encoding="utf-8")
        new = text
        if rel.endswith(".py"):
            new = rewrite_imports(new, rel, layout, notes)
        new = rewrite(new)
        if rel == ARCH_TEST:
            new = rewrite_architecture_test(new, layout)
        if rel == "pyproject.toml":
            new = rewrite_pyproject(new, layout, root)
        if new != text:
            changed.append(rel)
            if not dry_run:
                path.write_text(new, encoding="utf-8")
    for src, dst in moves:
        say(f"move {src} -> {dst}")
        if not dry_run:
            (root / dst).parent.mkdir(parents=True, exist_ok=True)
            git(root, "mv", src, dst)
    for pkg, what in layout.packages.items():
        init = root / pkg.replace(".", "/") / "__init__.py"
        if init.parent.exists() and not init.exists() and not dry_run:
            init.write_text('"""' + textwrap.fill(what, 100) + '\n"""\n', encoding="utf-8")
            git(root, "add", str(init.relative_to(root)))
            changed.append(str(init.relative_to(root)))
    dev = root / "DEVELOPERS.md"
    if dev.exists() and not dry_run:
        text = dev.read_text(encoding="utf-8")
        new = rewrite_module_table(text, root, layout, notes)
        if new != text:
            dev.write_text(new, encoding="utf-8")
            if "DEVELOPERS.md" not in changed:
                changed.append("DEVELOPERS.md")
    return {"moved": [f"{s} -> {d}" for s, d in moves], "changed": sorted(set(changed)), "notes": notes}


def leftovers(root: Path, layout: Layout) -> list[str]:
    """Lines still naming a renamed module as a file (anywhere) or as a word (in Markdown): prose to
    read again by hand. In Python a bare word is left alone: a planner function often bears its module's name."""
    renamed = [old for old, new in layout.mapping.items() if new.rpartition(".")[2] != old]
    if not renamed:
        return []
    names = "|".join(map(re.escape, renamed))
    as_file = re.compile(rf"(?<![\w/])({names})\.py\b")
    as_word = re.compile(rf"(?<![\w/.])({names})(?!\w)")
    out = []
    for rel in text_files(root):
        pattern = as_word if rel.endswith(".md") else as_file
        for n, line in enumerate((root / rel).read_text(encoding="utf-8").splitlines(), 1):
            if pattern.search(line):
                out.append(f"{rel}:{n}: {line.strip()[:100]}")
    return out


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--dry-run", action="store_true", help="say what would change, change nothing")
    args = ap.parse_args(argv)
    root = Path.cwd()
    if not (root / PACKAGE / "__init__.py").exists() or not (root / ".git").exists():
        print(f"run this from the repository root (the folder holding {PACKAGE}/ and .git)", file=sys.stderr)
        return 2
    layout = Layout(MAPPING, STAYS, PACKAGES)
    try:
        result = relayout(root, layout, dry_run=args.dry_run)
    except Stop as exc:
        print(f"relayout stopped, nothing changed: {exc}", file=sys.stderr)
        return 2
    verb = "would change" if args.dry_run else "changed"
    print(f"{len(result['moved'])} modules moved, {len(result['changed'])} files {verb}")
    for rel in result["changed"]:
        print(f"  {verb}: {rel}")
    for note in result["notes"]:
        print(f"note: {note}")
    rest = leftovers(root, layout)
    if rest:
        print("still naming an old file name (read these by hand):")
        for line in rest:
            print(f"  {line}")
    if not result["moved"] and not result["changed"]:
        print("nothing to do: the layout is already in place")
    return 0


if __name__ == "__main__":
    sys.exit(main())
