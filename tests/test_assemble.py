"""The glue between sheets: named anchors, planning steps that run only with their sources, no placeholder
ranges, the renderer refusing overlapping blocks, and a planning bug reported as an internal error."""
from __future__ import annotations

import datetime as dt
import shutil
from pathlib import Path

import pytest

from minimal import write_account

import sheetbuilder.weekly.record as record  # where a saved workbook is planned again
from sheetbuilder.sheets.anchors import Anchors, DuplicateAnchor, MissingAnchor, without_absent
from sheetbuilder.assemble import SHEET_ORDER, STEPS, plan_workbook
from sheetbuilder.cli import EXIT_BUG, main
from sheetbuilder.workbook.columns import ColumnDef
from sheetbuilder.pipeline import load
from sheetbuilder.weekly.record import read_saved_workbook
from sheetbuilder.workbook.render import OverlappingBlocks, render
from sheetbuilder.workbook.spec import DATA, Cell, Column, Sheet, Table, WorkbookSpec

DEMO = Path(__file__).resolve().parent.parent / "demo_inputs"
BUILT_ON = dt.date(2026, 12, 2)


def test_reading_an_anchor_no_step_provides_is_an_internal_error():
    anchors = Anchors()
    anchors.provide("profit", {"profit.revenue": "Profit!$C$5:$C$9"})
    assert "Profit!$C$5:$C$9" == anchors["profit.revenue"]
    with pytest.raises(MissingAnchor, match="bids.final"):
        anchors["bids.final"]


def test_two_steps_providing_one_anchor_is_an_internal_error():
    anchors = Anchors()
    anchors.provide("inputs", {"negatives.term": "in_negatives!$C$2:$C$9"})
    with pytest.raises(DuplicateAnchor, match="negatives.term is provided by both inputs and lists"):
        anchors.provide("lists", {"negatives.term": "Negatives!$D$5:$D$9"})


def test_a_cell_anchor_keeps_its_cached_value():
    anchors = Anchors()
    anchors.provide_cell("budget", "budget.shifted", "Budget!$B$3", 12.5)
    assert ("Budget!$B$3", 12.5) == (anchors["budget.shifted"], anchors.value("budget.shifted"))


def test_a_read_of_an_absent_optional_table_is_written_as_a_blank_and_other_reads_are_kept():
    anchors = Anchors()
    anchors.provide("bids", {"bids.final": "Bids!$P$5:$P$9"})
    d = ColumnDef("new", "New", "money", "", lambda df, ctx: df["k"],
                  '=IF({c:seg}=1,INDEX({rng:bids.final},{c:pos}),IF({c:seg}=2,MATCH({c:j},{rng:harvest.n_key},1),'
                  'INDEX({rng:harvest.start_bid},{c:pos})))')
    [out] = without_absent([d], anchors, ("bids", "harvest"))
    assert '=IF({c:seg}=1,INDEX({rng:bids.final},{c:pos}),IF({c:seg}=2,"",""))' == out.formula



def test_a_blanked_read_may_hold_nested_parentheses_and_quoted_text_in_its_other_arguments():
    anchors = Anchors()
    anchors.provide("bids", {"bids.a_key": "Bids!$X$5:$X$9"})
    d = ColumnDef("pos", "Pos", "int", "", lambda df, ctx: df["k"],
                  '=IF({c:seg}=1,MATCH({c:k},{rng:bids.a_key},1),IF({c:seg}=3,'
                  'MATCH({c:k}-(INT(Bids!$X$5)+MIN(INT(Terms!$AQ$13),9)),{rng:harvest.n_key},1),'
                  'IF({c:note}="a (b, c)",INDEX({rng:budget_campaigns.c_key},MAX(1,{c:k})),"")))')
    [out] = without_absent([d], anchors, ("bids", "harvest", "budget_campaigns"))
    assert ('=IF({c:seg}=1,MATCH({c:k},{rng:bids.a_key},1),IF({c:seg}=3,"",'
            'IF({c:note}="a (b, c)","","")))') == out.formula

def test_an_account_without_targets_or_search_terms_builds_without_their_sheets_or_placeholder_ranges(tmp_path):
    for name in ("catalog.csv", "store_sales.csv", "ad_products.csv", "campaigns.csv"):
        shutil.copy(DEMO / name, tmp_path / name)
    inputs, settings, _ = load(tmp_path)
    plan = plan_workbook(inputs, settings, BUILT_ON)
    names = [s.name for s in plan.spec.sheets]
    assert not {"Bids", "Terms", "Harvest", "Negatives", "Groups", "Keys"} & set(names)
    assert {"Guide", "Settings", "Profit", "Mix", "Budget", "Actions"} <= set(names)
    assert [] == [f for f in _formulas(plan) if "$ZZ$" in f]


def test_the_demo_plan_reads_no_placeholder_range_and_places_every_sheet_by_its_step():
    inputs, settings, _ = load(DEMO)
    plan = plan_workbook(inputs, settings, BUILT_ON)
    assert [] == [f for f in _formulas(plan) if "$ZZ$" in f]
    assert ["Guide", "Settings", "Profit", "Bids", "Terms", "Harvest", "Negatives", "Mix", "Budget", "Actions",
            "Groups", "Keys"] == [s.name for s in plan.spec.sheets if not s.name.startswith("in_")]
    # Steps that place no sheet of their own: the inputs' anchors, the lists (placed as harvest and negatives), the
    # Guide (placed as guide), the notes (filled into the sheets of profit, bids, terms and budget).
    assert {step.name for step in STEPS} - {"inputs", "lists", "guide", "notes"} <= set(SHEET_ORDER)


def test_the_renderer_refuses_a_table_planned_over_the_rows_above_it(tmp_path):
    column = Column("Value", "money", DATA, [1.0, 2.0])
    sheet = Sheet("S", above=[[Cell("title", style="title")], [Cell("note", style="note")], [Cell("x")]],
                  table=Table(1, [column]))
    with pytest.raises(OverlappingBlocks, match="planned from row 2, but the rows above it reach row 3"):
        render(WorkbookSpec([sheet], []), tmp_path / "out.xlsx")


def test_a_bug_while_planning_a_saved_workbook_exits_70_not_as_an_unreadable_file(tmp_path, monkeypatch, capsys):
    book = tmp_path / "book.xlsx"
    assert 0 == main(["build", str(write_account(tmp_path / "in")), "-o", str(book)])

    def broken(*args, **kwargs):
        raise ZeroDivisionError("a bug in planning")

    monkeypatch.setattr(record, "plan_workbook", broken)
    capsys.readouterr()
    assert EXIT_BUG == main(["changes", str(book), "-o", str(tmp_path / "changes.csv")])
    err = capsys.readouterr().err
    assert "internal error" in err and "not a workbook that can be read" not in err
    assert EXIT_BUG == main(["build", str(tmp_path / "in"), "-o", str(tmp_path / "next.xlsx"),
                             "--previous", str(book)])
    assert "not a workbook that can be read" not in capsys.readouterr().err


def test_the_previous_workbook_is_still_read_under_the_guard(tmp_path):
    from sheetbuilder.weekly.carry import PreviousWorkbookUnreadable
    book = tmp_path / "book.xlsx"
    book.write_bytes(b"PK\x03\x04 not really a zip")
    with pytest.raises(PreviousWorkbookUnreadable):
        read_saved_workbook(book, PreviousWorkbookUnreadable)


def _formulas(plan) -> list[str]:
    out = []
    for sheet in plan.spec.sheets:
        for t in ([sheet.table] if sheet.table else []) + list(sheet.more):
            for c in t.columns:
                out += c.formula if isinstance(c.formula, list) else [c.formula] if c.formula else []
        out += [c.formula for row in [*sheet.above, *sheet.below] for c in row if c is not None and c.formula]
    return out


def test_the_block_sum_is_written_by_one_helper():
    from sheetbuilder.workbook.formula import block_sum
    assert "SUM(INDEX({rng:t.c},{c:first}):INDEX({rng:t.c},{c:last}))" == block_sum("{rng:t.c}", "{c:first}", "{c:last}")
    package = Path(__file__).resolve().parent.parent / "sheetbuilder"
    writers = {p.name for p in package.rglob("*.py") if "SUM(INDEX(" in p.read_text(encoding="utf-8").replace(
        '"""SUM(INDEX(rng', "").replace("SUM(INDEX(..)", "")}
    assert {"formula.py", "bench.py"} >= writers


def test_a_decision_validation_is_planned_from_its_columns_words_and_rendered_only_by_the_renderer():
    from sheetbuilder.sheets.decisions import decision_validation
    from sheetbuilder.sheets.bids import EDITABLE_COLUMNS as BIDS
    from sheetbuilder.sheets.terms import DECISIONS, EDITABLE_COLUMNS as TERMS
    from sheetbuilder.workbook.render import validation_options
    bids = decision_validation(BIDS, 4, 17, 3, "type a bid or keep", "a bid or keep")
    assert {"validate": "custom", "value": '=OR(ISNUMBER(R5),R5="keep")', "error_title": "Not a decision",
            "error_message": "type a bid or keep", "input_title": "Decision",
            "input_message": "a bid or keep"} == validation_options(bids)
    assert 6 == bids.last_row
    terms = decision_validation(TERMS, 4, 9, 2, "choose one")
    assert {"validate": "list", "source": list(DECISIONS), "error_title": "Not a decision",
            "error_message": "choose one"} == validation_options(terms)
