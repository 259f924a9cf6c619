"""Renamed and copied tabs, and values typed over a formula on any sheet, in a saved workbook (issue 21).

The demo workbook is edited with openpyxl (fast; the same actions through LibreOffice are in
tests/test_survives_real_hands.py). A rename is done as spreadsheet programs do it: the tab's name
and every workbook-level defined name pointing at it (LibreOffice and Excel both rewrite them; the
copy of a tab keeps none of the workbook's names, as LibreOffice's own copy shows). openpyxl keeps
formulas and drops their saved values when it saves, as a program that does not recalculate does.
"""
from __future__ import annotations

import io
import re
from collections import Counter
from pathlib import Path

import openpyxl
import pytest

from conftest import BUILT_ON, DEMO
from sheetbuilder.cli import main
from sheetbuilder.pipeline import build
from sheetbuilder.weekly.carry import read_edits
from sheetbuilder.weekly.changes import export_changes
from sheetbuilder.weekly.sheet_xml import CellReader, stream_cells

COST, DECISION, TARGET = 7.5, 0.77, 0.05


def _header(ws, first: str) -> tuple[int, list]:
    """(1-based header row, headers) of the table whose first header is first."""
    for r in range(1, 12):
        if ws.cell(r, 1).value == first:
            return r, [c.value for c in ws[r]]
    raise AssertionError(f"{ws.title}: no header {first!r}")


def _cell(ws, first: str, header: str, body_row: int = 0):
    """The cell of column header in the body_row-th body row (0-based) of the table starting with first."""
    r, headers = _header(ws, first)
    return ws.cell(r + 1 + body_row, headers.index(header) + 1)


def _bids_key(ws, body_row: int = 0) -> tuple:
    return tuple(_cell(ws, "Campaign", h, body_row).value for h in ("Campaign", "Ad group", "Target", "Match type"))


def _rename(wb, old: str, new: str) -> None:
    """Rename a tab as a spreadsheet program does: its defined names follow it."""
    wb[old].title = new
    for dn in wb.defined_names.values():
        dn.attr_text = re.sub(rf"(?<![\w']){re.escape(old)}!|'{re.escape(old)}'!", f"'{new}'!", dn.attr_text)


@pytest.fixture(scope="module")
def demo(demo_build) -> Path:
    return demo_build.output  # only read: every edit is saved to a copy


def _edited(demo: Path, dst: Path, edit) -> Path:
    wb = openpyxl.load_workbook(demo)
    edit(wb)
    wb.save(dst)
    return dst


def _bid_changes(result) -> dict[tuple, float]:
    return {tuple(r[1:5]): r[6] for r in result.rows if r[0] == "bid"}


@pytest.mark.slow  # builds next week's workbook with --previous
def test_renamed_tabs_keep_changes_and_carrying_working(demo, tmp_path):
    catalog_cell = {}

    def edit(wb):
        _cell(wb["Bids"], "Campaign", "Decision").value = DECISION
        cost = _cell(wb["in_catalog"], "product_id", "unit_cost", 1)
        cost.value = COST
        catalog_cell["product"] = _cell(wb["in_catalog"], "product_id", "product_id", 1).value
        catalog_cell["bid"] = _bids_key(wb["Bids"])
        _rename(wb, "in_catalog", "Catalog")
        _rename(wb, "Bids", "My bids")
        _rename(wb, "in_store_sales", "Sales")  # no defined name: found by its header row
    edited = _edited(demo, tmp_path / "renamed.xlsx", edit)
    result = export_changes(edited, tmp_path / "changes.csv")
    assert result.computed
    assert DECISION == _bid_changes(result)[catalog_cell["bid"]]
    assert [] == [p for p in result.problems if p.file != "Actions"]  # only the demo's adds without a destination
    carry = build(DEMO, tmp_path / "next.xlsx", built_on=BUILT_ON, previous=edited).carry
    carried = {(r.sheet, r.key, r.column): r.value for r in carry.carried}
    assert COST == carried[("in_catalog", catalog_cell["product"], "unit_cost")]
    assert DECISION == carried[("Bids", " / ".join(catalog_cell["bid"]), "Decision")]
    assert [] == carry.unmatched


@pytest.mark.slow  # several seconds: the fast lane stays under two minutes
def test_renamed_tabs_whose_defined_names_are_gone_are_found_by_their_header_row(demo, tmp_path):
    key = {}

    def edit(wb):
        _cell(wb["Bids"], "Campaign", "Decision").value = DECISION
        key["bid"] = _bids_key(wb["Bids"])
        _rename(wb, "in_catalog", "Catalog")
        _rename(wb, "Bids", "My bids")
        for name in [n for n in wb.defined_names if n.startswith("sb_")]:  # an older workbook: no names of ours
            del wb.defined_names[name]
    edited = _edited(demo, tmp_path / "nameless.xlsx", edit)
    assert {"Bids": {key["bid"]: DECISION}} == read_edits(edited).decisions
    original = export_changes(demo, tmp_path / "original.csv")
    result = export_changes(edited, tmp_path / "changes.csv")
    assert result.computed
    assert {**_bid_changes(original), key["bid"]: DECISION} == _bid_changes(result)


@pytest.mark.slow  # builds next week's workbook with --previous
def test_decisions_typed_on_a_copied_sheet_are_named_not_read(demo, tmp_path):
    def copy(wb):
        wb.copy_worksheet(wb["Bids"]).title = "Bids (2)"
    same = _edited(demo, tmp_path / "copy.xlsx", copy)
    assert [] == [p for p in export_changes(same, tmp_path / "same.csv").problems if p.file != "Actions"]
    key = {}

    def typed_on_copy(wb):
        copy(wb)
        _cell(wb["Bids (2)"], "Campaign", "Decision").value = DECISION
        key["bid"] = _bids_key(wb["Bids"])
    edited = _edited(demo, tmp_path / "typed_on_copy.xlsx", typed_on_copy)
    assert {} == read_edits(edited).decisions  # never read from the copy
    result = export_changes(edited, tmp_path / "changes.csv")
    named = [p for p in result.problems if p.file == "Bids (2)"]
    assert 1 == len(named)
    assert named[0].message.startswith("Decisions on a copy of Bids ('Bids (2)') were not read; type them on Bids")
    assert _bid_changes(export_changes(demo, tmp_path / "original.csv")) == _bid_changes(result)
    built = build(DEMO, tmp_path / "next.xlsx", built_on=BUILT_ON, previous=edited)
    assert [("Bids (2)", " / ".join(key["bid"]), DECISION)] == [(r.sheet, r.key, r.value) for r in built.carry.unmatched]
    assert [named[0].message] == [w.message for w in built.warnings if w.file == "Bids (2)"]

    def cost_on_a_catalog_copy(wb):
        wb.copy_worksheet(wb["in_catalog"]).title = "in_catalog (2)"
        _cell(wb["in_catalog (2)"], "product_id", "unit_cost", 1).value = COST
    edits = read_edits(_edited(demo, tmp_path / "catalog_copy.xlsx", cost_on_a_catalog_copy))
    assert ({}, ["in_catalog (2)"]) == (edits.catalog, [c.copy for c in edits.copied])
    assert edits.copied[0].message().startswith("costs and prices on a copy of in_catalog ('in_catalog (2)') were "
                                                "not read; type them on in_catalog")


@pytest.mark.slow  # builds next week's workbook with --previous
def test_a_number_typed_over_a_formula_is_reported_with_where_to_type(demo, tmp_path, capsys):
    where = {}

    def product_row(wb) -> int:  # the product with the most keywords on Bids, so that its bids move
        ws = wb["Bids"]
        products = [_cell(ws, "Campaign", "Product ID", i).value for i in range(ws.max_row - _header(ws, "Campaign")[0])]
        most = Counter(p for p in products if p).most_common(1)[0][0]
        profit = wb["Profit"]
        return next(i for i in range(profit.max_row) if _cell(profit, "Product ID", "Product ID", i).value == most)

    def typed_over(wb):
        cell = _cell(wb["Profit"], "Product ID", "Target ACoS", product_row(wb))
        assert str(cell.value).startswith("=")
        cell.value = TARGET
        where["row"], where["product"] = cell.row, _cell(wb["Profit"], "Product ID", "Product ID", product_row(wb)).value

    def typed_in_its_column(wb):
        _cell(wb["Profit"], "Product ID", "Your target ACoS", product_row(wb)).value = TARGET
    edited = _edited(demo, tmp_path / "typed_over.xlsx", typed_over)
    twin = _edited(demo, tmp_path / "typed_in.xlsx", typed_in_its_column)
    result = export_changes(edited, tmp_path / "changes.csv")
    assert [("Profit", where["row"], "Target ACoS")] == [(p.file, p.row, p.column) for p in result.overwritten]
    message = result.overwritten[0].message
    assert message.startswith(f"{where['product']}: holds 0.05") and "type your target in 'Your target ACoS'" in message
    # The sheet computes with the typed number, so the list does too, as if typed where it belongs.
    expected = export_changes(twin, tmp_path / "twin.csv")
    assert expected.rows == result.rows
    assert _bid_changes(export_changes(demo, tmp_path / "original.csv")) != _bid_changes(result)
    carry = build(DEMO, tmp_path / "next.xlsx", built_on=BUILT_ON, previous=edited).carry
    assert {where["product"]: TARGET} == carry.targets
    assert 3 == main(["changes", str(edited), "-o", str(tmp_path / "cli.csv")])
    assert "1 cell(s) typed over a formula" in capsys.readouterr().err


@pytest.mark.slow  # several seconds: the fast lane stays under two minutes
def test_values_typed_over_formulas_on_any_sheet_are_reported_by_sheet_column_and_key(demo, tmp_path):
    typed = {("Bids", "Campaign", "Proposed bid", 2): 1.23, ("Terms", "Campaign", "Verdict", 0): "promote",
             ("Budget", "Product ID", "Final spend", 1): 99.0, ("Harvest", "Number", "Search term", 0): "my term",
             ("Actions", "Kind", "New", 0): 0.5}
    expected = []

    def edit(wb):
        for (sheet, first, header, body_row), value in typed.items():
            cell = _cell(wb[sheet], first, header, body_row)
            assert str(cell.value).startswith("=")
            cell.value = value
            expected.append((sheet, cell.row, header))
        expected.append(("Bids", None, _bids_key(wb["Bids"], 2)))
    edited = _edited(demo, tmp_path / "typed.xlsx", edit)
    *cells, (_, _, bids_key) = expected
    result = export_changes(edited, tmp_path / "changes.csv")
    assert sorted(cells) == sorted((p.file, p.row, p.column) for p in result.overwritten)
    bids = next(p for p in result.overwritten if p.file == "Bids")
    assert bids.message.startswith(" / ".join(bids_key) + ": holds 1.23 where the build wrote a formula")
    assert bids.message.endswith("type your decision in 'Decision'")


@pytest.mark.slow  # builds next week's workbook with --previous
def test_a_save_that_drops_formula_values_or_sorted_rows_report_nothing_typed_over(demo, tmp_path):
    def sort_bids(wb):  # rows moved whole (formulas with them), as a sort does
        ws = wb["Bids"]
        top, headers = _header(ws, "Campaign")
        rows = [[c.value for c in ws[r]] for r in range(top + 1, ws.max_row + 1)]
        rows.sort(key=lambda r: str(r[headers.index("Target")]), reverse=True)
        for r, values in enumerate(rows, start=top + 1):
            for c, v in enumerate(values, start=1):
                ws.cell(r, c).value = v
    resaved = _edited(demo, tmp_path / "resaved.xlsx", lambda wb: None)
    assert openpyxl.load_workbook(resaved, data_only=True)["Profit"]["K6"].value is None  # values dropped
    result = export_changes(resaved, tmp_path / "changes.csv")
    assert (True, []) == (result.unchecked, result.overwritten)
    assert [] == export_changes(_edited(demo, tmp_path / "sorted.xlsx", sort_bids), tmp_path / "s.csv").overwritten
    built = build(DEMO, tmp_path / "next.xlsx", built_on=BUILT_ON, previous=resaved)
    assert [] == [w for w in built.warnings if "formula" in w.message]


def test_a_sheet_streams_row_by_row_with_formula_presence_not_values_and_stops_when_asked():
    part = (b'<worksheet xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main"><sheetData>'
            b'<row r="1"><c r="A1" t="inlineStr"><is><t>Key</t></is></c><c r="B1"><f>1+1</f></c></row>'
            b'<row r="3"><c r="A3"><v>4</v></c><c r="B3"><f>A3*2</f><v>8</v></c><c r="C3"><v>9</v></c></row>'
            b'<row r="4"><c r="A4"><v>5</v></c></row></sheetData></worksheet>')
    seen = []
    stream_cells(io.BytesIO(part), CellReader([], set(), float), lambda r, cells: seen.append((r, cells)) or r >= 2,
                 columns={0, 1})
    assert [(0, {0: ("Key", False), 1: (None, True)}), (2, {0: (4, False), 1: (None, True)})] == seen


@pytest.mark.slow  # two edited copies; the fast lane keeps the other typed-over checks
@pytest.mark.parametrize("moved", [-1, 3])
def test_a_value_typed_in_a_table_whose_header_rows_moved_is_still_reported(demo, tmp_path, moved):
    # Rows deleted (-1: the note) or inserted (3, short typed rows) above the Clashes table move its header row: the
    # check finds the header where it is now, and the value typed over its first Blocks formula at its new row.
    where = []

    def edit(wb):
        ws = wb["Keys"]
        top, _ = _header(ws, "Negative from term")
        if moved < 0:
            ws.delete_rows(2, -moved)
        else:
            ws.insert_rows(2, moved)
            for r in range(2, 2 + moved):
                ws.cell(r, 1).value = f"typed note {r}"
        header = top + moved
        assert ws.cell(header, 1).value == "Negative from term"
        headers = [c.value for c in ws[header]]
        cell = ws.cell(header + 1, headers.index("Blocks") + 1)
        assert str(cell.value).startswith("=")
        cell.value = 1
        where.append(("Keys", cell.row, "Blocks"))
    edited = _edited(demo, tmp_path / "moved.xlsx", edit)
    result = export_changes(edited, tmp_path / "changes.csv")
    assert where == [(p.file, p.row, p.column) for p in result.overwritten]


@pytest.mark.slow  # an edited copy of the demo and a changes run: several seconds
def test_a_value_typed_on_a_renamed_list_tab_is_reported_under_its_new_name(demo, tmp_path):
    # Harvest has no typed column and no defined name of ours: its tab renamed is found by its header row alone.
    where = []

    def edit(wb):
        cell = _cell(wb["Harvest"], "Number", "Search term")
        assert str(cell.value).startswith("=")
        cell.value = "my own term"
        where.append(("Promote these", cell.row, "Search term"))
        _rename(wb, "Harvest", "Promote these")
    result = export_changes(_edited(demo, tmp_path / "renamed.xlsx", edit), tmp_path / "changes.csv")
    assert where == [(p.file, p.row, p.column) for p in result.overwritten]
    assert "my own term" in result.overwritten[0].message


@pytest.mark.slow  # an edited copy of the demo and a changes run: several seconds
def test_a_sheet_of_formulas_that_cannot_be_found_is_named_as_not_checked(demo, tmp_path):
    # Keys deleted: nothing typed on it can be looked for, and the user is told so instead of hearing nothing.
    def edit(wb):
        del wb["Keys"]
    result = export_changes(_edited(demo, tmp_path / "no_keys.xlsx", edit), tmp_path / "changes.csv")
    assert [("Keys", None, None, "warning")] == [(p.file, p.row, p.column, p.severity) for p in result.overwritten]
    assert "could not be looked for" in result.overwritten[0].message
    assert result.written == export_changes(demo, tmp_path / "original.csv").written  # the list itself is unchanged
