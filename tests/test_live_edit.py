"""Live edits: change an input cell in a built workbook, recalculate with LibreOffice,
and the dependent cells change exactly as the independent reference predicts.

An edit also reaches every dependent cell: the recalculated workbook equals, cell by cell, the
workbook built from exports that already hold the edited value; and the export-only cells (plain
values in the grey export style) hold the reference's values.

Also a canary: a workbook whose cached values were written wrong on purpose must come
back from LibreOffice with the true values, proving it recalculated rather than
passing cached values through.
"""
from __future__ import annotations

import copy
import shutil

import openpyxl
import openpyxl.utils
import pandas as pd
import pytest

from conftest import BUILT_ON, DEMO, edit_workbook
from bids_io import CHECKED as BIDS_CHECKED, HEADER_ROW as BIDS_HEADER_ROW, bids_oracle_for, bids_table
from terms_io import (HARVEST_HEADERS, LIST_HEADER_ROW, NEGATIVE_HEADERS, TERMS_CHECKED, TERMS_HEADER_ROW, list_table,
                      terms_oracle_for, terms_table)
from profit_io import HEADER_ROW as PROFIT_HEADER_ROW, PROFIT_HEADERS, oracle_for, profit_table
from workbook_io import mismatches, open_values, same, styled
from sheetbuilder.sheets.settings_sheet import typed_name
from sheetbuilder.workbook.palette import EXPORT_FONT
from sheetbuilder.pipeline import build, load, write_atomically
from sheetbuilder.sheets.terms import DEFS as TERMS_DEFS
from sheetbuilder.sheets.bids import DEFS as BIDS_DEFS
from sheetbuilder.workbook.spec import FORMULA

COST_PRODUCT = "LF-1012"  # strong with a spend-to-sales ratio above 1 in the demo
NEW_THIN = 0.19
# Its catalog target is 35%, its break-even 48%, its profit-seeking aim 48% x 0.6 / 1.6 = 18%: a target of 10% is
# below every cap, so the aim and the bids follow it down.
TARGET_PRODUCT, NEW_TARGET = "LF-1012", 0.10
TYPED = {"keep": "keep", "bid": 0.55}
NEW_MULTIPLE = 0.5  # the demo uses the default 1.0


def _catalog_cell(path, product, column):
    ws = openpyxl.load_workbook(path)["in_catalog"]
    headers = [c.value for c in ws[1]]
    for row in ws.iter_rows(min_row=2):
        if row[0].value == product:
            return row[headers.index(column)].coordinate
    raise KeyError(product)


def _cell_in_row(path, sheet, header_row, key_header, key, column):
    """The coordinate of column in the row whose key_header cell is key."""
    ws = openpyxl.load_workbook(path)[sheet]
    headers = [c.value for c in ws[header_row]]
    for row in ws.iter_rows(min_row=header_row + 1):
        if row[headers.index(key_header)].value == key:
            return row[headers.index(column)].coordinate
    raise KeyError(key)


def _decision_rows(demo_build):
    """Two targets (their rows in targets.csv) whose proposal moves the bid: for 'keep' and a typed bid."""
    frame = demo_build.plan.tables["Bids"].frame
    moving = frame[frame["proposed"] != frame["bid"]]
    return int(moving["_row"].iloc[0]), int(moving["_row"].iloc[1])


def _bids_decision_cell(src, file_row):
    """The Decision cell of the Bids row for the target in file_row of targets.csv."""
    ws = openpyxl.load_workbook(src)["in_targets"]
    headers = [c.value for c in ws[1]]
    position = next(i for i, row in enumerate(ws.iter_rows(min_row=2, values_only=True), start=1)
                    if row[headers.index("source_row")] == file_row)
    return _cell_in_row(src, "Bids", BIDS_HEADER_ROW, "Target row", position, "Decision")


def _first_promote(demo_build):
    frame = demo_build.plan.tables["Terms"].frame
    return int(frame.loc[frame["verdict"] == "promote", "pos"].iloc[0])


def _named_cell(path, name):
    """The typed Value cell of the setting name (its formulas read the checked In use cell beside it)."""
    wb = openpyxl.load_workbook(path)
    sheet, coord = wb.defined_names[typed_name(name)].attr_text.split("!")
    return sheet, coord.replace("$", "")


def _cost_for_thin(folder):
    """A unit cost that leaves COST_PRODUCT a net margin of 5%: thin, and so 'cut'."""
    inputs, _, _ = load(folder)
    cat = inputs.tables["catalog"].set_index("product_id").loc[COST_PRODUCT]
    sales = inputs.tables["store_sales"]
    ads = inputs.tables["ad_products"]
    tacos = ads.loc[ads.product_id == COST_PRODUCT, "spend"].sum() / sales.loc[
        sales.product_id == COST_PRODUCT, "revenue"].sum()
    return round(cat.price * (1 - tacos - 0.05) - cat.fees_per_unit, 2)


def make_edits(demo_build, work):
    """The edited copies of the demo workbook that the LibreOffice batch recalculates."""
    src = demo_build.output
    cost = _cost_for_thin(DEMO)
    out = {
        "edit_cost": edit_workbook(src, work / "edit_cost.xlsx",
                                   [("in_catalog", _catalog_cell(src, COST_PRODUCT, "unit_cost"), cost)]),
        "edit_thin": edit_workbook(src, work / "edit_thin.xlsx", [(*_named_cell(src, "thin_margin"), NEW_THIN)]),
    }
    keep_row, bid_row = _decision_rows(demo_build)
    out["edit_target"] = edit_workbook(src, work / "edit_target.xlsx", [
        ("Profit", _cell_in_row(src, "Profit", PROFIT_HEADER_ROW, "Product ID", TARGET_PRODUCT, "Your target ACoS"),
         NEW_TARGET)])
    out["edit_decision"] = edit_workbook(src, work / "edit_decision.xlsx", [
        ("Bids", _bids_decision_cell(src, keep_row), TYPED["keep"]),
        ("Bids", _bids_decision_cell(src, bid_row), TYPED["bid"])])
    out["edit_multiple"] = edit_workbook(src, work / "edit_multiple.xlsx",
                                         [(*_named_cell(src, "block_spend_multiple"), NEW_MULTIPLE)])
    out["edit_skip"] = edit_workbook(src, work / "edit_skip.xlsx", [
        ("Terms", _cell_in_row(src, "Terms", TERMS_HEADER_ROW, "Position", _first_promote(demo_build), "Decision"),
         "skip")])
    out["edit_shift"] = edit_workbook(src, work / "edit_shift.xlsx", [(*_named_cell(src, "budget_shift_share"), 0)])
    from test_stock import stock_edits  # units available typed on in_inventory (issue 25), checked there
    out["edit_stock"] = edit_workbook(src, work / "edit_stock.xlsx", stock_edits(src))
    from test_aim_live import aim_edits  # the click elasticity and seek_profit typed on Settings, checked there
    out.update(aim_edits(src, work))
    spec = copy.deepcopy(demo_build.plan.spec)
    for column in spec.sheet("Profit").table.columns:
        if column.kind == FORMULA:
            column.values = [12345.0] * len(column.values)
    write_atomically(spec, work / "canary.xlsx")
    out["canary"] = work / "canary.xlsx"
    return out


@pytest.mark.libreoffice
def test_raising_a_unit_cost_makes_the_product_thin_and_cut(libreoffice):
    before, _ = oracle_for(DEMO)
    expected, _ = oracle_for(DEMO, catalog_edits={(COST_PRODUCT, "unit_cost"): _cost_for_thin(DEMO)})
    assert ("strong", "hold") == (before[COST_PRODUCT]["Status"], before[COST_PRODUCT]["Direction"])
    assert ("thin", "cut") == (expected[COST_PRODUCT]["Status"], expected[COST_PRODUCT]["Direction"])
    rows, _, _ = profit_table(libreoffice["edit_cost"])
    assert [] == mismatches(expected, rows, PROFIT_HEADERS, "after cost edit")


@pytest.mark.libreoffice
def test_raising_the_thin_threshold_changes_statuses_as_predicted(libreoffice):
    before, _ = oracle_for(DEMO)
    expected, _ = oracle_for(DEMO, settings_changes={"thin_margin": NEW_THIN})
    changed = sorted(p for p in expected if expected[p]["Status"] != before[p]["Status"])
    assert changed, "the edit should change at least one status"
    rows, _, _ = profit_table(libreoffice["edit_thin"])
    assert [] == mismatches(expected, rows, PROFIT_HEADERS, "after threshold edit")
    assert all("thin" == rows[p]["Status"] for p in changed)


@pytest.mark.libreoffice
def test_libreoffice_replaces_wrong_cached_values(libreoffice, demo_build):
    expected, _ = oracle_for(DEMO)
    canary, _, _ = profit_table(demo_build.output.parent / "canary.xlsx")
    assert 12345.0 == canary[COST_PRODUCT]["Revenue"]
    rows, _, _ = profit_table(libreoffice["canary"])
    assert [] == mismatches(expected, rows, PROFIT_HEADERS, "canary")


@pytest.mark.libreoffice
def test_lowering_a_products_target_acos_below_its_aim_lowers_only_its_bids(libreoffice):
    before = bids_oracle_for(DEMO)
    expected = bids_oracle_for(DEMO, target_overrides={TARGET_PRODUCT: NEW_TARGET})
    rows, _ = bids_table(libreoffice["edit_target"])
    assert [] == mismatches(expected, rows, BIDS_CHECKED, "after target edit")
    mine = [k for k, r in rows.items() if TARGET_PRODUCT in r["Product ID"]]
    assert all(rows[k]["Proposed bid"] <= before[k]["Proposed bid"] for k in mine)
    assert any(rows[k]["Proposed bid"] < before[k]["Proposed bid"] for k in mine)
    others = [k for k in rows if k not in mine]
    assert [before[k]["Proposed bid"] for k in others] == [rows[k]["Proposed bid"] for k in others]
    # A lower aim makes a click worth less at the aim: its value bids fall and its waste probabilities rise.
    priced = [k for k in mine if before[k]["Waste probability"] is not None]
    assert priced
    assert all(rows[k]["Value bid"] < before[k]["Value bid"] for k in priced)
    assert all(rows[k]["Waste probability"] >= before[k]["Waste probability"] for k in priced)
    assert any(rows[k]["Waste probability"] > before[k]["Waste probability"] + 1e-6 for k in priced)


@pytest.mark.libreoffice
def test_typed_decisions_set_the_final_bid(libreoffice, demo_build):
    keep_row, bid_row = _decision_rows(demo_build)
    expected = bids_oracle_for(DEMO, decisions={keep_row: TYPED["keep"], bid_row: TYPED["bid"]})
    rows, _ = bids_table(libreoffice["edit_decision"])
    assert [] == mismatches(expected, rows, BIDS_CHECKED, "after decisions")
    assert rows[keep_row]["Current bid"] == rows[keep_row]["Final bid"] != rows[keep_row]["Proposed bid"]
    assert TYPED["bid"] == rows[bid_row]["Final bid"]


@pytest.mark.libreoffice
def test_lowering_the_spend_multiple_grows_the_negatives_list_in_order(libreoffice):
    _, _, before = terms_oracle_for(DEMO)
    _, _, expected = terms_oracle_for(DEMO, settings_changes={"block_spend_multiple": NEW_MULTIPLE})
    assert len(expected) > len(before)
    got = list_table(libreoffice["edit_multiple"], "Negatives")
    assert [] == mismatches(expected, got, NEGATIVE_HEADERS, "after multiple edit")
    assert len(expected) == len(got)
    terms_after = [r["Search term"] for _, r in sorted(got.items())]
    kept = [t for t in terms_after if t in {r["Search term"] for r in before.values()}]
    assert [r["Search term"] for _, r in sorted(before.items())] == kept  # the old entries keep their order


@pytest.mark.libreoffice
def test_typing_skip_takes_a_term_off_the_harvest_list(libreoffice, demo_build):
    position = _first_promote(demo_build)
    _, before, _ = terms_oracle_for(DEMO)
    terms, expected, _ = terms_oracle_for(DEMO, decisions={position: "skip"})
    got = list_table(libreoffice["edit_skip"], "Harvest")
    assert len(before) - 1 == len(got)
    assert [] == mismatches(expected, got, HARVEST_HEADERS, "after skip")
    rows, _ = terms_table(libreoffice["edit_skip"])
    assert "skip" == rows[position]["Final"]
    assert [] == mismatches(terms, rows, TERMS_CHECKED, "Terms after skip")


# Sheets whose cells come before the edit or say how the file was built: the twin differs there by design
# (Profit and in_catalog show the target where it was typed; the Guide records the inputs' checksums).
_NOT_COMPARED_CELL_BY_CELL = {"Profit", "in_catalog", "Guide", "Settings"}
_SIZED_LISTS = {"Harvest", "Negatives", "Actions"}  # sized at build: their size lines and spare rows differ


def _twin_with_target(work):
    """The demo built from exports whose catalog already holds the new target: every cell the edit reaches, as
    the planner's reference computes it."""
    folder = work / "demo_target_twin"
    if not folder.exists():
        shutil.copytree(DEMO, folder)
        catalog = pd.read_csv(folder / "catalog.csv", dtype=str, keep_default_na=False)
        catalog.loc[catalog["product_id"] == TARGET_PRODUCT, "target_acos"] = f"{NEW_TARGET:.0%}"
        catalog.to_csv(folder / "catalog.csv", index=False)
    return build(folder, work / "demo_target_twin.xlsx", built_on=BUILT_ON).output


def _cells(ws, first_row):
    return {(r, c): v for r, row in enumerate(ws.iter_rows(min_row=first_row, values_only=True), start=first_row)
            for c, v in enumerate(row, start=1) if v is not None and v != ""}


@pytest.mark.libreoffice
def test_a_target_edit_reaches_every_dependent_cell_and_leaves_export_cells_as_exported(libreoffice, work):
    twin = open_values(_twin_with_target(work))
    edited = open_values(libreoffice["edit_target"])
    differ = []
    for name in twin.sheetnames:
        if name in _NOT_COMPARED_CELL_BY_CELL:
            continue
        first = LIST_HEADER_ROW if name in _SIZED_LISTS else 1
        want, got = _cells(twin[name], first), _cells(edited[name], first)
        differ += [f"{name}!{openpyxl.utils.get_column_letter(c)}{r}: want {want.get((r, c))!r}, "
                   f"got {got.get((r, c))!r}" for r, c in sorted(set(want) | set(got))
                   if not same(want.get((r, c)), got.get((r, c)))]
    assert [] == differ[:20]
    # The export-only columns hold exactly the reference's values, edit or not (their cells are plain values).
    expected = bids_oracle_for(DEMO, target_overrides={TARGET_PRODUCT: NEW_TARGET})
    rows, _ = bids_table(libreoffice["edit_target"])
    exported = [d.header for d in BIDS_DEFS if d.export]
    assert {"Clicks", "Spend", "Orders", "Current bid"} <= set(exported)
    assert [] == mismatches(expected, rows, exported, "export-only Bids columns after target edit")
    terms, _, _ = terms_oracle_for(DEMO)
    got_terms, _ = terms_table(libreoffice["edit_target"])
    exported_terms = [d.header for d in TERMS_DEFS if d.export and not d.hidden]
    assert [] == mismatches(terms, got_terms, exported_terms, "export-only Terms columns after target edit")


def test_export_only_cells_are_values_in_the_export_style_and_everything_else_stays_live(demo_build):
    wb = openpyxl.load_workbook(demo_build.output)
    for sheet, defs, header_row in (("Bids", BIDS_DEFS, BIDS_HEADER_ROW), ("Terms", TERMS_DEFS, TERMS_HEADER_ROW)):
        ws = wb[sheet]
        headers = [c.value for c in ws[header_row]]
        for d in defs:
            cell = ws.cell(header_row + 1, headers.index(d.header) + 1)
            is_formula = isinstance(cell.value, str) and cell.value.startswith("=")
            if d.export:
                font = styled(ws, header_row + 1, headers.index(d.header) + 1).font
                assert (False, EXPORT_FONT[1:]) == (is_formula, font.color.rgb[-6:]), (sheet, d.header)
            elif d.formula is not None:
                assert is_formula, (sheet, d.header)
