"""`changes` plans a saved workbook for its change list alone (assemble.SHOWN_ONLY left out, the keyword
history's totals without its packed weeks): the same change list, tables and formula columns as the full plan.

Expected values: the full plan of the same record (the build's own planning, which the three-way tests check
against the independent reference), on the demo, the generated accounts and a benchmark account, each with a
Decision typed on Bids and on Terms, a target typed on Profit and a value typed over a Bids formula. The change
list is made once, by plan_actions, and kept on the planned Actions table: it must equal one made afresh.
"""
from __future__ import annotations

import datetime as dt
from pathlib import Path

import openpyxl
import pandas as pd
import pytest

from benchmarks.accounts import make_account
from sheetbuilder.assemble import SHOWN_ONLY
from sheetbuilder.pipeline import build
from sheetbuilder.sheets.actions import every_change
from sheetbuilder.weekly.changes import export_changes
from sheetbuilder.weekly.record import plan_saved, read_saved_workbook
from sheetbuilder.workbook.spec import FORMULA


def _header(ws, first: str) -> tuple[int, list]:
    for r in range(1, 12):
        if ws.cell(r, 1).value == first:
            return r, [c.value for c in ws[r]]
    raise AssertionError(f"{ws.title}: no header {first!r}")


def _type(ws, first: str, header: str, value, body_row: int = 0) -> None:
    r, headers = _header(ws, first)
    ws.cell(r + 1 + body_row, headers.index(header) + 1).value = value


def _edited(built: Path, dst: Path) -> Path:
    """The workbook with typed edits, saved by openpyxl (formula values dropped, formulas kept)."""
    wb = openpyxl.load_workbook(built)
    if "Bids" in wb.sheetnames:
        _type(wb["Bids"], "Campaign", "Decision", 0.77)
        _type(wb["Bids"], "Campaign", "Proposed bid", 1.23, 1)  # typed over a formula
    if "Terms" in wb.sheetnames:
        _type(wb["Terms"], "Campaign", "Decision", "block")
    _type(wb["Profit"], "Product ID", "Your target ACoS", 0.2)
    wb.save(dst)
    return dst


def _formula_tables(plan) -> dict:
    """{sheet: [(first row, rows, [(header, kind, formula)])]} of every table holding a formula."""
    return {s.name: [(t.first_row, t.n_rows, [(c.header, c.kind, c.formula if c.kind == FORMULA else None)
                                              for c in t.columns])
                     for t in (s.table, *s.more) if t is not None and any(c.kind == FORMULA for c in t.columns)]
            for s in plan.spec.sheets}


def _same_as_the_full_plan(workbook: Path) -> None:
    record = read_saved_workbook(workbook, for_changes=True)  # planned for its change list
    full, full_problems = plan_saved(record)
    narrow = record.planned
    assert full_problems == record.plan_problems
    assert sorted(full.tables) == sorted(narrow.tables)
    for name, table in full.tables.items():
        assert table.frame.equals(narrow.tables[name].frame), name
        for column, twin in zip(table.columns, narrow.tables[name].columns, strict=True):  # NaN in place is equal
            assert pd.Series(column.values, dtype=object).equals(pd.Series(twin.values, dtype=object)), name
    expected = {k: v for k, v in _formula_tables(full).items() if v}
    assert expected == {k: v for k, v in _formula_tables(narrow).items() if v}
    left_out = {s.name for s in full.spec.sheets} - {s.name for s in narrow.spec.sheets}
    assert not left_out & set(expected)  # the sheets left out hold no formula table
    # The change list `changes` writes is the one plan_actions kept: the same as one made afresh from the tables.
    fresh, fresh_bids = every_change({k: v for k, v in full.tables.items() if k != "Actions"})
    kept, kept_bids = every_change(narrow.tables)
    assert fresh_bids == kept_bids
    assert fresh.equals(kept)


def test_the_demo_planned_for_its_change_list_gives_the_full_plans_tables(demo_build, tmp_path):
    assert {"guide", "keyword_history"} == SHOWN_ONLY
    _same_as_the_full_plan(demo_build.output)
    edited = _edited(demo_build.output, tmp_path / "edited.xlsx")
    _same_as_the_full_plan(edited)
    result = export_changes(edited, tmp_path / "changes.csv")
    assert [("Bids", "Proposed bid")] == [(p.file, p.column) for p in result.overwritten]
    assert 0.77 in [r[6] for r in result.rows if r[0] == "bid"]  # the typed Decision is the new bid


@pytest.mark.slow  # the demo case runs in the fast lane
def test_generated_accounts_planned_for_their_change_lists_give_the_full_plans_tables(generated, tmp_path):
    for i, (_, built) in enumerate(generated[:4]):
        _same_as_the_full_plan(_edited(built.output, tmp_path / f"gen{i}.xlsx"))


@pytest.mark.slow  # builds a benchmark account of 600 ad rows with a keyword history sheet
def test_a_benchmark_account_planned_for_its_change_list_gives_the_full_plans_tables(tmp_path):
    folder = tmp_path / "account"
    folder.mkdir()
    make_account(folder, 600, terms_ratio=3)
    built = build(folder, tmp_path / "built.xlsx", built_on=dt.date(2026, 12, 2)).output
    _same_as_the_full_plan(built)
    _same_as_the_full_plan(_edited(built, tmp_path / "edited.xlsx"))
