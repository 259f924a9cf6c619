"""The user's own notes and columns: a Notes column on Profit, Bids, Terms and Budget, and any column added to
its right, carried to next week's workbook by the row's key (never by position), never read as a Decision."""
from __future__ import annotations

import datetime as dt

import openpyxl
import pandas as pd
import pytest

from conftest import BUILT_ON, DEMO
from sheetbuilder.cli import carried_summary
from sheetbuilder.pipeline import build
from sheetbuilder.reading.settings import Settings
from sheetbuilder.sheets.decisions import NO_SAVED_VALUE, OWN_COLUMNS_CAP
from sheetbuilder.sheets.typed import EDITABLE_TABLES, OwnColumn, keyed_column
from sheetbuilder.sheets.unmatched import unmatched_sheet_rows
from sheetbuilder.weekly.carry import Edits, apply_edits, read_edits
from sheetbuilder.weekly.changes import export_changes

# Every test here builds the demo several times: the whole module runs in the slow lane, so the fast
# lane stays under two minutes; CI runs both.
pytestmark = pytest.mark.slow

# Text a spreadsheet would read as a formula or trim, and text with nothing special: each must come back as typed.
HOSTILE = ("=HYPERLINK(\"http://example.invalid\",\"x\")", "+1+2", "  two spaces each side  ", "-3", "@SUM(A1)")
TARGETS = pd.DataFrame({"campaign": ["C1", "C1", "C2"], "ad_group": ["G1", "G1", "G2"],
                        "target": ["red pot", "blue pot", "tall pot"], "match_type": ["exact", "phrase", "broad"],
                        "bid": [0.5, 0.6, 0.7]})


def _bids_edits(notes: dict, own: list[OwnColumn] | None = None, refused=None) -> Edits:
    return Edits("last.xlsx", notes={"Bids": notes}, own={"Bids": own} if own else {}, own_refused=refused or [])


# ------------------------------------------------------------------------------------------------ pure carrying

def test_a_note_is_carried_by_its_key_whatever_order_the_rows_are_planned_in():
    typed = {("C1", "G1", "red pot", "exact"): "ask the supplier", ("C2", "G2", "tall pot", "broad"): "seasonal"}
    result = apply_edits(_bids_edits(typed), {"targets": TARGETS}, Settings())
    # This week's rows in another order (a sorted sheet last week, a new spend order this week): found by key.
    rows = [("C2", "G2", "tall pot", "broad"), ("C1", "G1", "blue pot", "phrase"), ("C1", "G1", "red pot", "exact")]
    assert ["seasonal", None, "ask the supplier"] == keyed_column(result, "Bids", result.notes["Bids"], rows)
    assert [] == result.unmatched
    assert [("Bids", "Notes", "ask the supplier"), ("Bids", "Notes", "seasonal")] == sorted(
        (r.sheet, r.column, r.value) for r in result.carried)


def test_a_note_is_never_a_decision_and_marks_no_typed_cell():
    result = apply_edits(_bids_edits({("C1", "G1", "red pot", "exact"): "keep"}), {"targets": TARGETS}, Settings())
    assert {} == result.decisions  # 'keep' in Notes decides nothing
    assert [()] == [r.compared for r in result.carried]  # no compared key: carried_marks shades no Decision cell


@pytest.mark.parametrize("text", HOSTILE)
def test_a_note_comes_back_exactly_as_typed(text):
    result = apply_edits(_bids_edits({("C1", "G1", "red pot", "exact"): text}), {"targets": TARGETS}, Settings())
    assert [text] == keyed_column(result, "Bids", result.notes["Bids"], [("C1", "G1", "red pot", "exact")])


def test_a_note_whose_row_is_gone_is_listed_on_unmatched_edits_and_in_the_summary():
    typed = {("C9", "G9", "gone pot", "exact"): "=not a formula", ("C1", "G1", "red pot", "exact"): "kept"}
    result = apply_edits(_bids_edits(typed), {"targets": TARGETS}, Settings())
    assert [["Bids", "C9 / G9 / gone pot / exact", "Notes", "=not a formula",
             "its row is no longer in the targets export"]] == unmatched_sheet_rows(result)[1:]
    assert {("C1", "G1", "red pot", "exact"): "kept"} == result.notes["Bids"]
    assert "1 edit(s) could not be carried" in carried_summary(result)
    assert "1 of them: your own notes or values of your own columns (Bids C9 / G9 / gone pot / exact)." in carried_summary(
        result)


def test_notes_of_a_table_the_new_exports_lack_are_listed_not_dropped():
    result = apply_edits(_bids_edits({("C1", "G1", "red pot", "exact"): "x"}), {}, Settings())
    assert [("Bids", "Notes", "x", "the new exports have no targets table")] == [
        (r.sheet, r.column, r.value, r.why) for r in result.unmatched]


def test_a_note_holding_a_formula_with_no_saved_value_is_listed_with_what_to_do():
    result = apply_edits(_bids_edits({("C1", "G1", "red pot", "exact"): NO_SAVED_VALUE}), {"targets": TARGETS},
                         Settings())
    assert ["the cell holds a formula with no saved value; type the text itself"] == [r.why for r in result.unmatched]


def test_an_own_column_keeps_its_header_place_and_numbers_dates_and_text_by_key():
    day = dt.datetime(2026, 11, 3)
    own = [OwnColumn(1, "Checked", {("C1", "G1", "red pot", "exact"): 42.5, ("C2", "G2", "tall pot", "broad"): day,
                                    ("C9", "G9", "gone pot", "exact"): " old "}),
           OwnColumn(3, "Who", {("C1", "G1", "blue pot", "phrase"): "=me"})]
    result = apply_edits(_bids_edits({}, own), {"targets": TARGETS}, Settings())
    rows = [("C2", "G2", "tall pot", "broad"), ("C1", "G1", "blue pot", "phrase"), ("C1", "G1", "red pot", "exact")]
    checked, who = result.own_columns["Bids"]
    assert (1, "Checked", [day, None, 42.5]) == (checked.offset, checked.header,
                                                 keyed_column(result, "Bids", checked.values, rows))
    assert (3, "Who", [None, "=me", None]) == (who.offset, who.header, keyed_column(result, "Bids", who.values, rows))
    assert [("Bids", "C9 / G9 / gone pot / exact", "Checked", " old ")] == [
        (r.sheet, r.key, r.column, r.value) for r in result.unmatched]
    assert [("(your own column)", "Checked", "2 value(s)"), ("(your own column)", "Who", "1 value(s)")] == [
        (r.key, r.column, r.value) for r in result.carried]


# ------------------------------------------------------------------------------------ through a saved workbook

def _table(ws, first: str) -> tuple[int, list]:
    for row in ws.iter_rows(min_row=1, max_row=12):
        if row[0].value == first:
            return row[0].row, [c.value for c in row]
    raise AssertionError(first)


# Each table with a Notes column: its sheet, its first header and its key headers.
TABLES = {"Profit": ("Product ID", ("Product ID",)), "Bids": ("Campaign", ("Campaign", "Ad group", "Target", "Match type")),
          "Terms": ("Campaign", ("Campaign", "Ad group", "Search term")), "Budget": ("Product ID", ("Product ID",))}


def _noted(ws, first: str, keys: tuple[str, ...]) -> dict[tuple, tuple]:
    """{key: (note, own columns...)} of every row with a note or an own value."""
    top, headers = _table(ws, first)
    notes = headers.index("Notes")
    out = {}
    for r in range(top + 1, ws.max_row + 1):
        row = [c.value for c in ws[r]]
        if row[0] in (None, "Total"):
            break
        extra = tuple(row[notes:notes + 4]) + (None,) * (4 - len(row[notes:notes + 4]))
        if any(v is not None for v in extra):
            out[tuple(row[headers.index(k)] for k in keys)] = extra
    return out


@pytest.fixture(scope="module")
def noted(tmp_path_factory, demo_build):
    """The demo as built, notes typed on four sheets and two own columns beside Bids (openpyxl), then next week built
    with --previous from the same exports; (last week's path, its rows {sheet: {key: cells}}, next week's build)."""
    folder = tmp_path_factory.mktemp("notes")
    wb = openpyxl.load_workbook(demo_build.output)
    for i, (sheet, (head, _)) in enumerate(TABLES.items()):
        ws = wb[sheet]
        top, headers = _table(ws, head)
        col = headers.index("Notes") + 1
        for j, text in enumerate(HOSTILE[i:i + 2]):
            ws.cell(top + 2 + 3 * j, col).value = text
            ws.cell(top + 2 + 3 * j, col).data_type = "s"  # typed into a text cell: text, never a formula
        if sheet == "Bids":
            ws.cell(top, col + 1).value = "Checked on"
            ws.cell(top + 1, col + 1).value = dt.datetime(2026, 11, 3)
            ws.cell(top + 1, col + 1).number_format = "yyyy-mm-dd"
            ws.cell(top + 5, col + 1).value = 17.25
            ws.cell(top, col + 3).value = "Owner"
            ws.cell(top + 5, col + 3).value = "Sam's list"
    path = folder / "week1_noted.xlsx"
    wb.save(path)
    typed = {sheet: _noted(wb[sheet], head, keys) for sheet, (head, keys) in TABLES.items()}
    second = build(DEMO, folder / "week2.xlsx", built_on=BUILT_ON, previous=path)
    return path, typed, second


def test_read_edits_finds_every_note_and_own_column_by_the_tables_defined_names(noted):
    path, typed, _ = noted
    edits = read_edits(path)
    assert {"Profit", "Bids", "Terms", "Budget"} == set(edits.notes)
    assert [(1, "Checked on", 2), (3, "Owner", 1)] == [(c.offset, c.header, len(c.values)) for c in edits.own["Bids"]]
    assert 8 == sum(len(v) for v in edits.notes.values())


def test_next_weeks_workbook_has_every_note_and_own_column_beside_the_same_key(noted):
    _, typed, second = noted
    wb = openpyxl.load_workbook(second.output)
    for sheet, (head, keys) in TABLES.items():
        assert typed[sheet] == _noted(wb[sheet], head, keys), sheet
    _, headers = _table(wb["Bids"], "Campaign")
    assert ["Notes", "Checked on", "", "Owner"] == [h or "" for h in headers[headers.index("Notes"):]]


def test_notes_are_carried_but_never_reach_the_change_list_or_actions(noted, demo_build, tmp_path):
    path, _, second = noted
    assert [] == [r for r in second.carry.unmatched]
    assert 8 + 2 == len(second.carry.carried)
    assert {} == second.carry.decisions
    plain = demo_build
    for sheet in ("Actions", "Follow-up"):
        if sheet in plain.plan.tables:
            assert plain.plan.tables[sheet].frame.equals(second.plan.tables[sheet].frame)
    assert export_changes(plain.output, tmp_path / "plain.csv").rows == export_changes(path, tmp_path / "n.csv").rows


def test_a_notes_column_is_plain_unlocked_text_at_the_right_end_of_each_table_with_room_for_own_columns(demo_build):
    built = demo_build
    wb = openpyxl.load_workbook(built.output)
    for decl in EDITABLE_TABLES:
        if not decl.notes:
            continue
        table = built.plan.tables[decl.table]
        notes = table.columns[-1]
        assert ("Notes", None, [None] * len(table.frame)) == (notes.header, notes.formula, list(notes.values))
        sheet = built.plan.spec.sheet(decl.sheet)
        assert OWN_COLUMNS_CAP == sheet.open_columns
        ws = wb[decl.sheet]
        top, headers = _table(ws, TABLES[decl.sheet][0])
        cell = ws.cell(top + 1, headers.index("Notes") + 1)
        assert ("@", False) == (cell.number_format, cell.protection.locked)  # text format: =... stays text


def test_a_column_of_ones_own_beside_a_table_built_before_notes_columns_is_carried(demo_build, tmp_path):
    # A workbook built before this version: no Notes column and no defined name over one (simulated by removing
    # them); the user's column right of the table's last built column still comes back, by key.
    wb = openpyxl.load_workbook(demo_build.output)
    for decl in EDITABLE_TABLES:
        if decl.notes:
            del wb.defined_names[decl.name_of(decl.notes)]
    ws = wb["Bids"]
    top, headers = _table(ws, "Campaign")
    col = headers.index("Notes") + 1
    ws.cell(top, col).value = None  # the older layout ended at the column before
    ws.cell(top, col + 1).value = "Supplier"
    ws.cell(top + 3, col + 1).value = "North depot"
    key = tuple(ws.cell(top + 3, headers.index(h) + 1).value for h in ("Campaign", "Ad group", "Target", "Match type"))
    wb.save(tmp_path / "old_edited.xlsx")
    edits = read_edits(tmp_path / "old_edited.xlsx")
    assert {} == edits.notes
    assert [OwnColumn(2, "Supplier", {key: "North depot"})] == edits.own["Bids"]
