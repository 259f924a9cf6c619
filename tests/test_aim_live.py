"""Live edits of what the aim reads: the click elasticity and seek_profit typed on Settings, and a unit cost
typed on in_catalog, each recalculated by LibreOffice, move Profit's Aim ACoS and Bids' Aim ACoS and Value bid
exactly as the independent reference predicts (tests/oracle.py: aim_oracle, bids_oracle). A target typed on
Profit is checked in tests/test_live_edit.py. The edited copies join the one LibreOffice batch (conftest).
"""
from __future__ import annotations

import openpyxl
import pytest

from bids_io import CHECKED as BIDS_CHECKED, bids_oracle_for, bids_table
from conftest import DEMO, edit_workbook
from oracle import bids_oracle, profit_oracle
from profit_io import PROFIT_CHECKED, oracle_for, profit_table
from sheetbuilder.pipeline import load
from sheetbuilder.sheets.settings_sheet import typed_name
from workbook_io import mismatches

NEW_E = 1.5  # the demo uses the default 0.6: every profit-seeking aim rises from m x 0.375 to m x 0.6
AIM_HEADERS = ["Aim ACoS", "Why this aim", "Target check"]


def _typed_cell(path, key):
    sheet, coord = openpyxl.load_workbook(path).defined_names[typed_name(key)].attr_text.split("!")
    return sheet, coord.replace("$", "")


def aim_edits(src, work) -> dict:
    """The edited copies this module checks: {stem: path}."""
    return {"edit_elasticity": edit_workbook(src, work / "edit_elasticity.xlsx",
                                             [(*_typed_cell(src, "click_elasticity"), NEW_E)]),
            "edit_seek": edit_workbook(src, work / "edit_seek.xlsx", [(*_typed_cell(src, "seek_profit"), "no")])}


@pytest.mark.libreoffice
def test_typing_a_higher_click_elasticity_raises_the_profit_aims_and_the_value_bids(libreoffice):
    before, _ = oracle_for(DEMO)
    expected, _ = oracle_for(DEMO, settings_changes={"click_elasticity": NEW_E})
    rows, _, _ = profit_table(libreoffice["edit_elasticity"])
    assert [] == mismatches(expected, rows, PROFIT_CHECKED, "after elasticity edit")
    assert any(rows[p]["Aim ACoS"] > before[p]["Aim ACoS"] for p in rows)
    bids, _ = bids_table(libreoffice["edit_elasticity"])
    assert [] == mismatches(bids_oracle_for(DEMO, settings_changes={"click_elasticity": NEW_E}), bids, BIDS_CHECKED,
                            "Bids after elasticity edit")


@pytest.mark.libreoffice
def test_typing_no_in_seek_profit_brings_back_the_sellers_targets(libreoffice):
    expected, _ = oracle_for(DEMO, settings_changes={"seek_profit": "no"})
    rows, _, _ = profit_table(libreoffice["edit_seek"])
    assert [] == mismatches(expected, rows, PROFIT_CHECKED, "after seek_profit edit")
    assert {"your target", "break-even", "your target (no margin known)"} >= {r["Why this aim"] for r in rows.values()}
    bids, _ = bids_table(libreoffice["edit_seek"])
    assert [] == mismatches(bids_oracle_for(DEMO, settings_changes={"seek_profit": "no"}), bids, BIDS_CHECKED,
                            "Bids after seek_profit edit")


@pytest.mark.libreoffice
def test_a_unit_cost_edit_moves_the_products_aim_and_its_bids(libreoffice):
    from test_live_edit import COST_PRODUCT, _cost_for_thin
    edits = {(COST_PRODUCT, "unit_cost"): _cost_for_thin(DEMO)}
    before, _ = oracle_for(DEMO)
    expected, _ = oracle_for(DEMO, catalog_edits=edits)
    assert expected[COST_PRODUCT]["Aim ACoS"] < before[COST_PRODUCT]["Aim ACoS"]
    rows, _, _ = profit_table(libreoffice["edit_cost"])
    assert [] == mismatches(expected, rows, AIM_HEADERS, "aim after cost edit")
    inputs, settings, _ = load(DEMO)
    profit, _ = profit_oracle(inputs.tables, settings, catalog_edits=edits)
    bids, _ = bids_table(libreoffice["edit_cost"])
    assert [] == mismatches(bids_oracle(inputs.tables, settings, profit), bids, BIDS_CHECKED, "Bids after cost edit")
