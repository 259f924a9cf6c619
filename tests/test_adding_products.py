"""Adding a product: the build's row to fill on in_catalog, and rows a user adds below the table.

The demo's store sales name LF-1999, which its catalog lacks (demo_inputs/catalog.csv), so the build
writes a row for it on in_catalog with its price, unit cost and fees blank.
"""
from __future__ import annotations

from pathlib import Path

import openpyxl
import pytest

from conftest import BUILT_ON, DEMO, edit_workbook
from sheetbuilder.pipeline import build
from sheetbuilder.weekly.changes import export_changes

MISSING = "LF-1999"


def _catalog_row(ws, product: str) -> dict:
    header = [c.value for c in ws[1]]
    for row in ws.iter_rows(min_row=2):
        if row[0].value == product:
            return {h: c for h, c in zip(header, row) if h}
    raise AssertionError(f"{product} is not on {ws.title}")


def _profit_row(path: Path, product: str) -> dict:
    ws = openpyxl.load_workbook(path, data_only=True)["Profit"]
    header = [c.value for c in ws[5]]
    for row in ws.iter_rows(min_row=6, values_only=True):
        if row[0] == product:
            return dict(zip(header, row))
    raise AssertionError(f"{product} is not on Profit")


def test_the_build_writes_a_row_to_fill_on_in_catalog_for_a_product_the_catalog_lacks(demo_build):
    ws = openpyxl.load_workbook(demo_build.output)["in_catalog"]
    row = _catalog_row(ws, MISSING)
    assert [None, None, None] == [row[k].value for k in ("price", "unit_cost", "fees_per_unit")]
    assert row["unit_cost"].protection.locked is False  # an input cell, typed by the user
    cost_column = row["unit_cost"].column_letter
    rules = [(str(cf.sqref), r.formula) for cf in ws.conditional_formatting for r in cf.rules]
    last = max(r for r in range(1, ws.max_row + 1) if ws.cell(r, 1).value not in (None, ""))  # the open rows below
    assert [(f"{cost_column}2:{cost_column}{last}", ['""'])] == rules  # a blank unit cost is highlighted


@pytest.mark.slow  # builds the demo twice
def test_a_cost_typed_on_the_added_row_is_carried_next_week_and_gives_the_product_a_margin(work):
    first = build(DEMO, work / "add_first.xlsx", built_on=BUILT_ON)
    ws = openpyxl.load_workbook(first.output)["in_catalog"]
    row = _catalog_row(ws, MISSING)
    edited = edit_workbook(first.output, work / "add_typed.xlsx", [
        ("in_catalog", row["price"].coordinate, 20.0), ("in_catalog", row["unit_cost"].coordinate, 8.0),
        ("in_catalog", row["fees_per_unit"].coordinate, 2.0)])
    second = build(DEMO, work / "add_second.xlsx", built_on=BUILT_ON, previous=edited)
    carried = _catalog_row(openpyxl.load_workbook(second.output)["in_catalog"], MISSING)
    assert [20.0, 8.0, 2.0] == [carried[k].value for k in ("price", "unit_cost", "fees_per_unit")]
    assert (20.0 - 8.0 - 2.0) / 20.0 == _profit_row(second.output, MISSING)["Margin before ads"]


@pytest.mark.slow  # builds the demo three times
def test_a_row_the_user_adds_below_in_catalog_is_read_by_changes_and_kept_on_next_weeks_catalog(work):
    first = build(DEMO, work / "below_first.xlsx", built_on=BUILT_ON)
    ws = openpyxl.load_workbook(first.output)["in_catalog"]
    below = max(r for r in range(1, ws.max_row + 1) if ws.cell(r, 1).value not in (None, "")) + 1
    header = [c.value for c in ws[1]]
    typed = {"product_id": "LF-2001", "product_name": "Added by hand", "price": 30.0, "unit_cost": 12.0,
             "fees_per_unit": 3.0}
    edited = edit_workbook(first.output, work / "below_typed.xlsx",
                           [("in_catalog", f"{ws.cell(1, header.index(k) + 1).column_letter}{below}", v)
                            for k, v in typed.items()])
    result = export_changes(edited, work / "below_changes.csv")  # was: "not a workbook that can be read (TypeError)"
    assert result.written > 0
    second = build(DEMO, work / "below_second.xlsx", built_on=BUILT_ON, previous=edited)
    # The exports do not name LF-2001: its row stays on in_catalog with its name and typed cells, listed on
    # Carried edits (never dropped, so the cost is there the week it starts to sell) ...
    kept = _catalog_row(openpyxl.load_workbook(second.output)["in_catalog"], "LF-2001")
    assert ["Added by hand", 30.0, 12.0, 3.0] == [kept[k].value for k in ("product_name", "price", "unit_cost",
                                                                           "fees_per_unit")]
    assert {"price", "unit_cost", "fees_per_unit"} == {r.column for r in second.carry.carried if r.key == "LF-2001"}
    assert [] == [r for r in second.carry.unmatched if r.key == "LF-2001"]
    # ... and again the week after, from the workbook that carried it.
    third = build(DEMO, work / "below_third.xlsx", built_on=BUILT_ON, previous=second.output)
    again = _catalog_row(openpyxl.load_workbook(third.output)["in_catalog"], "LF-2001")
    assert ["Added by hand", 30.0, 12.0, 3.0] == [again[k].value for k in ("product_name", "price", "unit_cost",
                                                                            "fees_per_unit")]


def test_a_unit_cost_cleared_by_hand_is_carried_as_missing_not_as_zero(tmp_path):
    # Read as 0, the cleared cost would give the product a profit it does not have; missing leaves its margin blank.
    from minimal import write_account
    folder = write_account(tmp_path / "shop")
    first = build(folder, tmp_path / "week1.xlsx")
    book = openpyxl.load_workbook(first.output)
    ws = book["in_catalog"]
    header = [c.value for c in ws[1]]
    row = next(r for r in range(2, ws.max_row + 1) if ws.cell(r, header.index("product_id") + 1).value == "P2")
    edit_workbook(first.output, tmp_path / "cleared.xlsx", [("in_catalog", ws.cell(row, header.index("unit_cost") + 1)
                                                              .coordinate, None)])
    second = build(folder, tmp_path / "week2.xlsx", previous=tmp_path / "cleared.xlsx")
    carried = [(r.key, r.column, r.value) for r in second.carry.carried if r.sheet == "in_catalog"]
    assert [("P2", "unit_cost", None)] == carried
    assert "no margin" == second.plan.tables["Profit"].frame.set_index("product_id").loc["P2", "status"]
