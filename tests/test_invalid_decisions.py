"""A Decision that is not a valid word or number is never ignored and never replaced by the proposal.

Typed as a person would (text in a numeric Decision, an unknown word, a formula that errors)
and saved by LibreOffice, which recalculates every formula: the Final column shows 'invalid',
`changes` refuses the row with the reason, and --previous lists it as unmatched with the reason.
"""
from __future__ import annotations

import openpyxl
import pytest

from conftest import BUILT_ON, DEMO, require_libreoffice
from sheetbuilder.weekly.changes import export_changes
from sheetbuilder.pipeline import build
from sheetbuilder.sheets.bids import EDITABLE_COLUMNS as BIDS
from sheetbuilder.sheets.budget import CAMPAIGN_EDITABLE_COLUMNS as CAMPAIGNS
from sheetbuilder.sheets.terms import EDITABLE_COLUMNS as TERMS
from tools.recalc import libreoffice_convert
from sheetbuilder.weekly.saved import named_area

TYPED = {"bid text": "about 0.40", "bid error": "=1/0", "budget": "lots", "term": "maybe"}


def _row_cells(wb, decl, index):
    """(typed cell, Final cell) of the index-th body row of a declared table (Final is right of the typed column)."""
    area = named_area(wb, decl.name_of(decl.value))
    ws = wb[area.sheet]
    return ws.cell(area.first_row + 1 + index, area.first_col + 1), ws.cell(area.first_row + 1 + index,
                                                                              area.first_col + 2)


@pytest.fixture(scope="module")
def saved(tmp_path_factory):
    require_libreoffice()
    work = tmp_path_factory.mktemp("invalid")
    first = build(DEMO, work / "week1.xlsx", built_on=BUILT_ON)
    wb = openpyxl.load_workbook(first.output)
    _row_cells(wb, BIDS, 0)[0].value = TYPED["bid text"]
    _row_cells(wb, BIDS, 1)[0].value = TYPED["bid error"]
    _row_cells(wb, CAMPAIGNS, 0)[0].value = TYPED["budget"]
    _row_cells(wb, TERMS, 0)[0].value = TYPED["term"]
    wb.save(work / "edited.xlsx")
    return work, first, libreoffice_convert([work / "edited.xlsx"], work / "saved")[0]


@pytest.mark.libreoffice
def test_the_final_column_shows_invalid_after_libreoffice_recalculates(saved):
    _, _, path = saved
    wb = openpyxl.load_workbook(path, data_only=True)
    for decl, index in ((BIDS, 0), (BIDS, 1), (CAMPAIGNS, 0), (TERMS, 0)):
        assert "invalid" == _row_cells(wb, decl, index)[1].value, (decl.label, index)


@pytest.mark.libreoffice
def test_changes_refuses_each_invalid_decision_with_the_reason(saved):
    work, first, path = saved
    result = export_changes(path, work / "changes.csv")
    messages = [p.message for p in result.problems]
    assert any("'about 0.40' is not a valid decision" in m for m in messages)
    assert any("formula error (#DIV/0!)" in m for m in messages)
    assert any("'lots' is not a valid decision" in m for m in messages)
    assert any("'maybe' is not a valid decision" in m for m in messages)
    assert "invalid" not in {r[6] for r in result.rows}  # never written
    bids = first.plan.tables["Bids"].frame
    for i in (0, 1):  # neither the proposal nor anything else is exported for these rows
        key = tuple(bids.iloc[i][k] for k in BIDS.keys)
        assert [] == [r for r in result.rows if r[0] == "bid" and tuple(r[1:5]) == key]


@pytest.mark.libreoffice
def test_previous_lists_each_invalid_decision_as_unmatched_with_the_reason(saved):
    work, _, path = saved
    result = build(DEMO, work / "week2.xlsx", built_on=BUILT_ON, previous=path)
    why = {r.sheet: [] for r in result.carry.unmatched}
    for r in result.carry.unmatched:
        why[r.sheet].append(r.why)
    assert 2 == len(why["Bids"])
    assert any("formula error (#DIV/0!)" in w for w in why["Bids"])
    assert ["'lots' is not a valid decision; expected a number or 'keep'"] == why["Budget campaigns"]
    assert 1 == len(why["Terms"])
    assert [] == result.carry.carried
