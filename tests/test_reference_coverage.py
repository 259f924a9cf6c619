"""Every planned formula column has an independent reference check, or is named with the reason it has none.

The three-way tests compare only the columns listed in tests/reference_columns.py. A new
ColumnDef whose header is in no list, and not in UNCOVERED, fails here (DEVELOPERS.md,
"Adding a computed column"); an UNCOVERED entry that no longer matches a planned column
fails too, so the list only ever names real gaps.
"""
from __future__ import annotations

import pytest

from conftest import BUILT_ON, DEMO
from reference_columns import COMPARED, UNCOVERED, formula_columns
from workbook_io import mismatches
from sheetbuilder.pipeline import load, plan_workbook
from sheetbuilder.reading.settings import SETTINGS


@pytest.fixture(scope="module")
def demo_plan():
    inputs, settings, _ = load(DEMO)
    return plan_workbook(inputs, settings, BUILT_ON)


def test_every_planned_formula_column_is_compared_with_the_reference_or_named_as_uncovered(demo_plan):
    unchecked = {(name, h) for name, headers in formula_columns(demo_plan).items() for h in headers
                 if h not in COMPARED.get(name, ())}
    assert sorted(UNCOVERED) == sorted(unchecked)


def test_every_compared_column_is_planned(demo_plan):
    planned = {name: {c.header for c in t.columns} for name, t in demo_plan.tables.items()}
    assert {} == {name: sorted(set(headers) - planned.get(name, set())) for name, headers in COMPARED.items()
                  if set(headers) - planned.get(name, set())}


def test_every_uncovered_column_gives_its_reason():
    assert [] == [key for key, reason in UNCOVERED.items() if len(reason) < 20]


def test_a_column_the_reference_does_not_compute_is_a_mismatch():
    expected = {"P1": {"Units": 3}}
    assert ["demo: P1 / Revenue: the reference has no value for this column"] == mismatches(
        expected, {"P1": {"Units": 3, "Revenue": 9.5}}, ["Units", "Revenue"], "demo")


def test_every_formula_cell_on_settings_is_an_in_use_check_or_the_count_the_reference_covers(demo_plan):
    # In use and Check are compared with tests/oracle_settings.py (test_settings_guarded, and after a paste in
    # LibreOffice in test_survives_real_hands); the count is checked there against the pasted values.
    from sheetbuilder.sheets.settings_sheet import CHECK, USED, VALUE
    sheet = next(s for s in demo_plan.spec.sheets if s.name == "Settings")
    places = {(r, c) for r, row in enumerate(sheet.above) for c, cell in enumerate(row)
              if cell is not None and cell.formula}
    live = [i for i, s in enumerate(SETTINGS) if s.live]
    assert {(2, VALUE)} | {(4 + i, col) for i in live for col in (USED, CHECK)} == places
