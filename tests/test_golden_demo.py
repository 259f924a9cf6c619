"""The demo workbook against the saved sample output_samples/demo.xlsx (the golden file).

Any change in the demo's output (a formula, a cached value, a number format, a column width,
a merged range, a defined name, a data validation, the sheet order) fails here, after the
normalisation documented in tests/golden.py (the build date, the version strings and the
cached text of the date-dependent attribution warning). A deliberate change is a regenerated
sample in the same commit: `./tasks.sh golden` (writes output_samples/demo.xlsx only; no
LibreOffice needed) or `./tasks.sh samples` (the sample and every PNG render).
"""
from __future__ import annotations

import copy
import datetime as dt
from pathlib import Path

import pytest
from openpyxl.utils import column_index_from_string, get_column_letter
from openpyxl.utils.cell import coordinate_from_string

from golden import NORMALISED, differences, normalise, snapshot
from sheetbuilder.pipeline import build

ROOT = Path(__file__).resolve().parent.parent
SAMPLE = ROOT / "output_samples" / "demo.xlsx"
SHOWN = 20
REGENERATE = "./tasks.sh golden"


def report(diffs: list[str]) -> str:
    head = "\n".join(diffs[:SHOWN])
    more = f"\n... and {len(diffs) - SHOWN} more" if len(diffs) > SHOWN else ""
    return (f"{len(diffs)} difference(s) between {SAMPLE.relative_to(ROOT)} and the demo built now "
            f"(first {min(SHOWN, len(diffs))}):\n{head}{more}\n"
            f"If the change is deliberate, regenerate the sample with `{REGENERATE}` and commit it with the change.")


@pytest.fixture(scope="module")
def demo_raw(demo_build):
    """The demo's snapshot before normalisation (read once: reading takes seconds)."""
    return snapshot(demo_build.output)


@pytest.fixture(scope="module")
def demo_snapshot(demo_raw):
    return normalise(copy.deepcopy(demo_raw))


def test_the_demo_workbook_equals_the_saved_sample_after_normalisation(demo_snapshot):
    diffs = differences(normalise(snapshot(SAMPLE)), demo_snapshot)
    if diffs:
        pytest.fail(report(diffs), pytrace=False)


@pytest.mark.slow  # moved out of the fast lane, which must stay under two minutes
def test_a_build_on_another_date_and_version_differs_only_in_what_the_normalisation_replaces(
        demo_raw, demo_snapshot, tmp_path, monkeypatch):
    import sheetbuilder.sheets.guide as plan_guide
    monkeypatch.setattr(plan_guide, "__version__", "9.9.9")
    later = build(ROOT / "demo_inputs", tmp_path / "later.xlsx", built_on=dt.date(2027, 3, 15))
    later_raw = snapshot(later.output)
    raw = differences(demo_raw, later_raw)
    assert {"Guide", "Settings", "Profit"} == {d.split("!")[0] for d in raw}  # the snapshot does see the date
    assert [] == differences(demo_snapshot, normalise(later_raw))


def test_a_changed_cell_is_reported_with_its_sheet_cell_expected_and_got(demo_snapshot):
    changed = copy.deepcopy(demo_snapshot)
    formula, cached, fmt = changed["Profit"]["cells"]["B5"]
    changed["Profit"]["cells"]["B5"] = (formula, cached, "0.000")
    changed["Profit"]["merged"].append("A200:B200")
    assert [f"Profit!B5 number format: expected {fmt!r} got '0.000'",
            "Profit merged ranges: expected [] got ['A200:B200'] (only the differing ones)"] == \
        differences(demo_snapshot, changed)


def test_the_normalisation_replaces_only_the_build_record_the_built_on_cells_and_the_warning(demo_snapshot):
    def what(sheet, coord, cell):
        if isinstance(cell[0], str) and "built_on" in cell[0]:
            return (sheet, "warning formula's cached value")
        col, row = coordinate_from_string(coord)
        label = demo_snapshot[sheet]["cells"][f"{get_column_letter(column_index_from_string(col) - 1)}{row}"][0]
        return (sheet, label)
    replaced = sorted(what(sheet, coord, cell) for sheet in demo_snapshot["sheets"]
                      for coord, cell in demo_snapshot[sheet]["cells"].items() if NORMALISED in cell)
    assert sorted([("Guide", "Tool version"), ("Guide", "Built on"), ("Settings", "Built on"),
                   ("Guide", "warning formula's cached value"), ("Profit", "warning formula's cached value")]) == replaced
