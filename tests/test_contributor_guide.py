"""The contributor guide stays true: DEVELOPERS.md's file lists name real files, and every sheet is described.

DEVELOPERS.md, "Changing the workbook: every file you touch", lists each file a new column
or a new sheet touches. Every path, module, `module.name` and test named there must exist,
so that moving a module fails here until the guide follows. Every sheet of the demo
workbook must have its line on the Guide (`sheets.guide.SHEETS_TEXT`) and its entry in the
README's "What each sheet shows".
"""
from __future__ import annotations

import importlib
import re
from pathlib import Path

import pytest

from conftest import BUILT_ON, DEMO
from sheetbuilder.pipeline import load, plan_workbook
from sheetbuilder.sheets.guide import SHEETS_TEXT

ROOT = Path(__file__).resolve().parent.parent
TESTS = ROOT / "tests"
GUIDE_HEADING = "## Changing the workbook: every file you touch"
NOT_CODE = {"profit.revenue"}  # a range name in the pipeline's ranges, written like module.name


def section(path: Path, heading: str) -> str:
    text = path.read_text(encoding="utf-8")
    start = text.index(heading)
    end = text.find("\n## ", start + len(heading))
    return text[start:end if end >= 0 else len(text)]


def code_spans(text: str) -> list[str]:
    return re.findall(r"`([^`\n]+)`", text)


def _module(name: str):
    for prefix in ("sheetbuilder.", ""):
        try:
            return importlib.import_module(prefix + name)
        except ImportError:
            continue
    return None


def _resolves(dotted: str) -> bool:
    """Whether module.name (or package.module.name, module.Class.name) names something that exists."""
    parts = dotted.split(".")
    for cut in range(len(parts) - 1, 0, -1):
        found = _module(".".join(parts[:cut]))
        if found is None:
            continue
        for attr in parts[cut:]:
            found = getattr(found, attr, None)
            if found is None:
                return False
        return True
    return False


def missing_names(text: str) -> list[str]:
    """The paths, modules, module.names and test names in text that do not exist."""
    defined_tests = {m for p in TESTS.glob("test_*.py") for m in re.findall(r"^def (test_\w+)", p.read_text(), re.M)}
    missing = []
    for span in code_spans(text):
        span = span.strip()
        looks_like_a_path = span.endswith((".py", ".md", ".xlsx")) or "/" in span
        if looks_like_a_path and ("<" in span or "{" in span):  # a placeholder names no file: name a real one
            missing.append(span)
            continue
        if "<" in span or "{" in span or " " in span or "(" in span or span in NOT_CODE:
            continue
        if looks_like_a_path:
            candidates = [ROOT / span, ROOT / "sheetbuilder" / span, TESTS / span]
            if not any(list(c.parent.glob(c.name)) for c in candidates):
                missing.append(span)
        elif span.startswith("test_"):
            if span not in defined_tests:
                missing.append(span)
        elif re.fullmatch(r"[a-z_]+(\.[a-z_]+)*\.[A-Za-z_]+", span):
            if not _resolves(span):
                missing.append(span)
    return missing


def test_every_file_module_and_test_the_contributor_guide_names_exists():
    assert [] == missing_names(section(ROOT / "DEVELOPERS.md", GUIDE_HEADING))


def test_the_name_check_catches_a_placeholder_path_and_a_stale_dotted_name():
    text = ("`sheetbuilder/plan_<sheet>.py`, `tests/oracle_{sheet}.py`, `sheets.typed.NO_SUCH_TABLES`, "
            "`sheetbuilder/sheets/typed.py`, `sheets.typed.DECISION_TABLES`, `workbook.columns.ColumnDef`")
    assert ["sheetbuilder/plan_<sheet>.py", "tests/oracle_{sheet}.py", "sheets.typed.NO_SUCH_TABLES"] == \
        missing_names(text)


def test_the_name_check_catches_a_moved_module_a_missing_test_and_a_missing_name():
    text = "`sheetbuilder/plan_nowhere.py`, `test_nothing_like_this`, `columns.no_such_helper`, `workbook.columns.plan_table`"
    assert ["sheetbuilder/plan_nowhere.py", "test_nothing_like_this", "columns.no_such_helper"] == missing_names(text)


@pytest.fixture(scope="module")
def demo_sheets() -> list[str]:
    inputs, settings, _ = load(DEMO)
    return [s.name for s in plan_workbook(inputs, settings, BUILT_ON).spec.sheets]


def _described(name: str) -> str:
    return "in_ sheets" if name.startswith("in_") else name


def test_every_sheet_of_the_demo_is_described_on_the_guide(demo_sheets):
    described = {name for name, _ in SHEETS_TEXT}
    assert [] == [s for s in demo_sheets if _described(s) not in described]


def test_every_sheet_of_the_demo_is_named_in_the_readme_sheet_list(demo_sheets):
    listed = section(ROOT / "README.md", "## What each sheet shows")
    assert [] == [s for s in demo_sheets if f"**{_described(s)}**" not in listed]
