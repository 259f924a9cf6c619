"""Our tables are found by their defined names, not their header text.

A user renames headers, inserts a column on Terms and re-sorts the Bids rows of a saved
workbook, then LibreOffice saves it: every typed Decision is still carried by --previous.
Keys and typed columns come from the planners' declarations (EDITABLE_COLUMNS), not from
header text restated here.
"""
from __future__ import annotations

import re

import openpyxl
import pytest
from openpyxl.utils import get_column_letter

from conftest import BUILT_ON, DEMO, require_libreoffice
from sheetbuilder.weekly.carry import read_edits
from sheetbuilder.weekly.changes import export_changes
from sheetbuilder.pipeline import build
from sheetbuilder.sheets.bids import EDITABLE_COLUMNS as BIDS
from sheetbuilder.sheets.budget import CAMPAIGN_EDITABLE_COLUMNS as CAMPAIGNS
from sheetbuilder.sheets.terms import EDITABLE_COLUMNS as TERMS
from tools.recalc import libreoffice_convert
from sheetbuilder.weekly.saved import named_area


def _column(wb, decl, key):
    """(sheet, 1-based column, first row, last row) of a declared column, by its defined name."""
    area = named_area(wb, decl.name_of(key))
    return wb[area.sheet], area.first_col + 1, area.first_row + 1, area.last_row + 1


def _type(wb, decl, rows: dict[tuple, object]) -> None:
    """Type values in the declared typed column of the rows with the given keys."""
    ws, value_col, first, last = _column(wb, decl, decl.value)
    key_cols = [_column(wb, decl, k)[1] for k in decl.keys]
    for r in range(first, last + 1):
        key = tuple(ws.cell(r, c).value for c in key_cols)
        if key in rows:
            ws.cell(r, value_col).value = rows.pop(key)
    assert {} == rows  # every row was found


def _shift_names(wb, sheet: str, from_col: int) -> None:
    """Rewrite defined names as a spreadsheet program does when a column is inserted at from_col (1-based).

    openpyxl's insert_cols moves cells but not defined names; LibreOffice and Excel move every
    name pointing at or right of the inserted column one column to the right. This simulates that.
    """
    def shift(match):
        col = openpyxl.utils.column_index_from_string(match.group(1))
        return "$" + get_column_letter(col + 1 if col >= from_col else col) + "$"
    for name in list(wb.defined_names):
        defined = wb.defined_names[name]
        if defined.attr_text.startswith(sheet + "!"):
            defined.attr_text = re.sub(r"\$([A-Z]+)\$", shift, defined.attr_text)


@pytest.fixture(scope="module")
def rearranged(tmp_path_factory):
    require_libreoffice()
    work = tmp_path_factory.mktemp("layout")
    first = build(DEMO, work / "week1.xlsx", built_on=BUILT_ON)
    bids = first.plan.tables["Bids"].frame
    terms = first.plan.tables["Terms"].frame
    campaigns = first.plan.tables["Budget campaigns"].frame
    bid_typed = {tuple(r[k] for k in BIDS.keys): v for (_, r), v in zip(bids.iloc[[0, 3, 7]].iterrows(),
                                                                        (0.41, "keep", 0.93))}
    term_typed = {tuple(r[k] for k in TERMS.keys): v for (_, r), v in zip(terms.iloc[[1, 5]].iterrows(),
                                                                         ("skip", "block"))}
    campaign_typed = {(campaigns.iloc[0]["campaign"],): 17.0}
    wb = openpyxl.load_workbook(first.output)
    _type(wb, BIDS, dict(bid_typed))
    _type(wb, TERMS, dict(term_typed))
    _type(wb, CAMPAIGNS, dict(campaign_typed))
    header_row = _column(wb, BIDS, BIDS.value)[2] - 1
    for decl in (BIDS, TERMS):  # every key and typed header renamed
        for key in (*decl.keys, decl.value):
            ws, col, _, _ = _column(wb, decl, key)
            ws.cell(header_row, col).value = f"my {key}"
    ws, _, first_row, last_row = _column(wb, BIDS, BIDS.value)
    body = [[c.value for c in row] for row in ws.iter_rows(min_row=first_row, max_row=last_row)]
    for r, values in enumerate(reversed(body), start=first_row):  # re-sorted: the rows in reverse order
        for c, v in enumerate(values, start=1):
            ws.cell(r, c).value = v
    at = _column(wb, TERMS, "ad_group")[1] + 1  # a column inserted between Ad group and the next one
    wb["Terms"].insert_cols(at)
    _shift_names(wb, "Terms", at)
    wb.save(work / "rearranged.xlsx")
    saved = libreoffice_convert([work / "rearranged.xlsx"], work / "saved")[0]
    return {"saved": saved, "bids": bid_typed, "terms": term_typed, "campaigns": campaign_typed, "work": work}


@pytest.mark.libreoffice
def test_decisions_under_renamed_headers_in_moved_columns_and_sorted_rows_are_read(rearranged):
    edits = read_edits(rearranged["saved"])
    assert rearranged["bids"] == edits.decisions["Bids"]
    assert rearranged["terms"] == edits.decisions["Terms"]
    assert rearranged["campaigns"] == edits.decisions["Budget campaigns"]
    assert [] == edits.lost


def _typed(value) -> bool:
    return value is not None and value == value and value != ""


@pytest.mark.libreoffice
def test_decisions_under_renamed_headers_are_carried_into_next_week(rearranged):
    result = build(DEMO, rearranged["work"] / "week2.xlsx", built_on=BUILT_ON, previous=rearranged["saved"])
    assert [] == result.carry.unmatched
    frame = result.plan.tables["Bids"].frame
    got = {tuple(r[k] for k in BIDS.keys): r["decision"] for _, r in frame.iterrows() if _typed(r["decision"])}
    assert rearranged["bids"] == got
    frame = result.plan.tables["Terms"].frame
    got = {tuple(r[k] for k in TERMS.keys): r["decision"] for _, r in frame.iterrows() if _typed(r["decision"])}
    assert rearranged["terms"] == got


@pytest.mark.libreoffice
def test_decisions_under_renamed_headers_and_sorted_rows_are_exported(rearranged):
    result = export_changes(rearranged["saved"], rearranged["work"] / "changes.csv")
    assert result.computed
    bids = {(r[1], r[2], r[3], r[4]): r[6] for r in result.rows if r[0] == "bid"}
    for key, value in rearranged["bids"].items():
        if value != "keep":
            assert value == bids[key]
    budgets = {(r[1],): r[6] for r in result.rows if r[0] == "budget"}
    assert rearranged["campaigns"] == {k: budgets[k] for k in rearranged["campaigns"]}
    adds = {(r[1], r[2], r[3]) for r in result.rows if r[0] in ("add keyword", "add product target")}
    negatives = {(r[1], r[2], r[3]) for r in result.rows if r[0] == "add negative"}
    for key, value in rearranged["terms"].items():
        assert key not in adds  # skip: never added; block: negated where it ran
        if value == "block":
            assert key in negatives


@pytest.mark.libreoffice
def test_libreoffice_moves_the_names_with_the_inserted_column(rearranged):
    wb = openpyxl.load_workbook(rearranged["saved"], read_only=True)
    area = named_area(wb, TERMS.name_of("term"))
    assert "Terms" == area.sheet
    assert TERMS.headers["term"] != wb["Terms"].cell(area.first_row, area.first_col + 1).value  # header renamed
    wb.close()


def test_a_decision_column_found_by_neither_name_nor_header_is_reported(tmp_path):
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = BIDS.sheet
    ws.append(["Campaign", "Ad group", "Target", "Match type", "My call"])
    ws.append(["C1", "G1", "kw", "exact", 0.5])
    wb.save(tmp_path / "renamed.xlsx")
    edits = read_edits(tmp_path / "renamed.xlsx")
    assert {} == edits.decisions
    assert [BIDS.label] == [label for label, _ in edits.lost]
