"""Live edits: change an input cell in a built workbook, recalculate with LibreOffice,
and the dependent cells change exactly as the independent reference predicts.

Also a canary: a workbook whose cached values were written wrong on purpose must come
back from LibreOffice with the true values, proving it recalculated rather than
passing cached values through.
"""
from __future__ import annotations

import copy

import openpyxl
import pytest

from conftest import DEMO, edit_workbook
from profit_io import PROFIT_HEADERS, oracle_for, profit_table
from workbook_io import mismatches
from sheetbuilder.pipeline import load, write_atomically
from sheetbuilder.spec import FORMULA

COST_PRODUCT = "LF-1012"  # strong with a spend-to-sales ratio above 1 in the demo
NEW_THIN = 0.19


def _catalog_cell(path, product, column):
    ws = openpyxl.load_workbook(path)["in_catalog"]
    headers = [c.value for c in ws[1]]
    for row in ws.iter_rows(min_row=2):
        if row[0].value == product:
            return row[headers.index(column)].coordinate
    raise KeyError(product)


def _named_cell(path, name):
    wb = openpyxl.load_workbook(path)
    sheet, coord = wb.defined_names[name].attr_text.split("!")
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
