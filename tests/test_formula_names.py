"""A setting's name in formula text is checked against the workbook's defined names when planning.

Formulas read a setting by its bare defined name (``thin_margin``); a spreadsheet program shows
#NAME? in every cell of a formula whose name is not defined (Microsoft, "How to correct a
#NAME? error"; common practice in LibreOffice too: Err:525). The build refuses such a formula
instead (DEVELOPERS.md, "Adding a computed column").
"""
from __future__ import annotations

import pytest

from conftest import BUILT_ON, DEMO
from sheetbuilder.errors import UnknownName
from sheetbuilder.pipeline import load, plan_workbook
from sheetbuilder.sheets import profit
from sheetbuilder.workbook.columns import ColumnDef
from sheetbuilder.workbook.formula import bare_names, check_names


def test_the_names_a_formula_reads_are_its_bare_words_only():
    formula = ("=IF(AND({c:margin}<thin_margin,'Follow-up'!$B$7>0),\"thin_margin is low\",IF(ISNUMBER(in_targets!"
               "$C$2:$C$9),SUM(D{r}:D{p})*1E-09,#N/A))+INDEX({rng:profit.revenue},{row:tpos})+built_on-TRUE")
    assert {"thin_margin", "built_on"} == bare_names(formula)


def test_a_formula_reading_a_name_nothing_defines_is_refused_with_its_sheet_and_name():
    with pytest.raises(UnknownName, match=r"Profit: .*thin_margn"):
        check_names([("Profit", "=IF(L6<thin_margn,1,0)")], {"thin_margin", "strong_margin"})
    check_names([("Profit", "=IF(L6<thin_margin,1,0)")], {"thin_margin"})  # a defined one passes


def test_planning_a_column_whose_formula_misspells_a_setting_fails(monkeypatch):
    misspelt = ColumnDef("thin_gap", "Thin gap", "percent", "How far the net margin is above the thin threshold.",
                         lambda df, ctx: df["net_margin"], "={c:net_margin}-thin_margn")
    monkeypatch.setattr(profit, "DEFS", [*profit.DEFS, misspelt])
    inputs, settings, _ = load(DEMO)
    with pytest.raises(UnknownName, match="thin_margn"):
        plan_workbook(inputs, settings, BUILT_ON)
