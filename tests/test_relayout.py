"""tools/relayout.py on a small made-up repository: moves, rewritten imports, a second run, refusals.

The script itself is run once on the real tree by `python tools/relayout.py` from the repository root.
"""
from __future__ import annotations

import importlib.util
import subprocess
import sys
from pathlib import Path

import pytest

SCRIPT = Path(__file__).resolve().parent.parent / "tools" / "relayout.py"
_spec = importlib.util.spec_from_file_location("relayout", SCRIPT)
relayout = importlib.util.module_from_spec(_spec)
sys.modules["relayout"] = relayout
_spec.loader.exec_module(relayout)

FILES = {
    "sheetbuilder/__init__.py": "from .pipeline import build  # noqa: F401\n",
    "sheetbuilder/errors.py": "class Failed(Exception):\n    pass\n",
    "sheetbuilder/contract.py": "X = 1\n",
    "sheetbuilder/plan_a.py": '"""The A sheet."""\nfrom .contract import X\n\n\ndef plan_a():\n    return X\n',
    "sheetbuilder/pipeline.py": ("from . import contract as c\nfrom .errors import Failed  # noqa: F401\n"
                                 "from .plan_a import plan_a\n\n\ndef build():\n    return plan_a() + c.X\n"),
    "sheetbuilder/bench.py": "from .pipeline import build\n\nprint(build())\n",
    "tests/test_x.py": ("from sheetbuilder import errors, plan_a\nimport sheetbuilder.contract\n\n"
                        'PATCHED = "sheetbuilder.plan_a.plan_a"\nRUN = "python -m sheetbuilder.bench"\n'),
    "DEVELOPERS.md": ("# Guide\n\n| module | holds |\n| --- | --- |\n| `contract.py` | the contract |\n"
                      "| `plan_*.py` | one module per sheet |\n| `bench.py` | the benchmark |\n\n"
                      "See `plan_a.plan_a` and `plan_a.py`.\n"),
}
LAYOUT = relayout.Layout(
    mapping={"contract": "sheetbuilder.reading.contract", "plan_a": "sheetbuilder.sheets.a",
             "bench": "benchmarks.bench", "gone": "sheetbuilder.sheets.gone"},
    stays=("__init__", "errors", "pipeline"),
    packages={"sheetbuilder.reading": "Reading.", "sheetbuilder.sheets": "Sheets.", "benchmarks": "Tools."})


@pytest.fixture
def repo(tmp_path):
    for rel, text in FILES.items():
        (tmp_path / rel).parent.mkdir(parents=True, exist_ok=True)
        (tmp_path / rel).write_text(text, encoding="utf-8")
    git = ["git", "-c", "user.name=t", "-c", "user.email=t@example.invalid"]
    subprocess.run([*git, "init", "-q"], cwd=tmp_path, check=True)
    subprocess.run([*git, "add", "."], cwd=tmp_path, check=True)
    subprocess.run([*git, "commit", "-qm", "flat"], cwd=tmp_path, check=True)
    return tmp_path


def _run(root):
    return relayout.relayout(root, LAYOUT, say=lambda *_: None)


def test_modules_move_and_every_import_form_is_rewritten(repo):
    result = _run(repo)
    assert ["sheetbuilder/contract.py -> sheetbuilder/reading/contract.py",
            "sheetbuilder/plan_a.py -> sheetbuilder/sheets/a.py",
            "sheetbuilder/bench.py -> benchmarks/bench.py"] == result["moved"]
    assert ("from sheetbuilder.reading import contract as c\nfrom sheetbuilder.errors import Failed  # noqa: F401\n"
            "from sheetbuilder.sheets.a import plan_a\n\n\ndef build():\n    return plan_a() + c.X\n"
            ) == (repo / "sheetbuilder/pipeline.py").read_text()
    assert ("from sheetbuilder import errors\nfrom sheetbuilder.sheets import a as plan_a\n"
            "import sheetbuilder.reading.contract\n\n"
            'PATCHED = "sheetbuilder.sheets.a.plan_a"\nRUN = "python -m benchmarks.bench"\n'
            ) == (repo / "tests/test_x.py").read_text()
    assert ("from sheetbuilder.pipeline import build\n\nprint(build())\n"
            == (repo / "benchmarks/bench.py").read_text())
    assert ["skipped gone: neither sheetbuilder/gone.py nor sheetbuilder/sheets/gone.py is in the tree"
            ] == result["notes"]


def test_the_relaid_package_imports_and_runs(repo):
    _run(repo)
    done = subprocess.run([sys.executable, "-m", "benchmarks.bench"], cwd=repo, capture_output=True, text=True)
    assert (0, "2\n") == (done.returncode, done.stdout), done.stderr


def test_the_module_table_is_grouped_by_package_and_prose_follows(repo):
    _run(repo)
    text = (repo / "DEVELOPERS.md").read_text()
    assert ("| module | holds |\n| --- | --- |\n"
            "| **`sheetbuilder/`** | " + relayout.TOP_LEVEL_TEXT + " |\n"
            "| `sheetbuilder/__init__.py` |  |\n| `sheetbuilder/errors.py` |  |\n"
            "| `sheetbuilder/pipeline.py` |  |\n"
            "| **`sheetbuilder/reading/`** | Reading. |\n| `sheetbuilder/reading/contract.py` | the contract |\n"
            "| **`sheetbuilder/sheets/`** | Sheets. |\n| `sheetbuilder/sheets/a.py` | the A sheet |\n"
            "| **`benchmarks/`** | Tools. |\n| `benchmarks/bench.py` | the benchmark |\n\n"
            "See `sheets.a.plan_a` and `sheets/a.py`.\n") == text.split("\n\n", 1)[1]


def test_a_second_run_changes_nothing(repo):
    _run(repo)
    before = {p: p.read_bytes() for p in repo.rglob("*") if p.is_file() and ".git" not in p.parts}
    assert ([], []) == (_run(repo)["moved"], _run(repo)["changed"])
    assert before == {p: p.read_bytes() for p in repo.rglob("*") if p.is_file() and ".git" not in p.parts}


def test_a_module_the_mapping_does_not_name_stops_the_run_before_any_change(repo):
    (repo / "sheetbuilder/anchors.py").write_text("A = 1\n")
    with pytest.raises(relayout.Stop, match="sheetbuilder/anchors.py"):
        _run(repo)
    assert FILES["sheetbuilder/pipeline.py"] == (repo / "sheetbuilder/pipeline.py").read_text()
    assert (repo / "sheetbuilder/contract.py").exists()
