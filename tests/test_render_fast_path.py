"""The formula fast path writes what xlsxwriter's stock write_formula writes, and the whitelist holds."""
from __future__ import annotations

import datetime as dt
import zipfile
from pathlib import Path

import pytest
import xlsxwriter

from sheetbuilder.pipeline import load, plan_workbook
from sheetbuilder.errors import FormulaNotPortable
from sheetbuilder.workbook.formula import check_portable
from sheetbuilder.workbook.render import _cached, put_formula, workbook_options
from sheetbuilder.workbook.spec import FORMULA

DEMO = Path(__file__).resolve().parent.parent / "demo_inputs"
FIRST_BODY_ROW = 5  # 0-based row of the first Profit body row, as the renderer writes it
CACHED_VALUES = (1234.5, 0, -0.25, "", "strong", 'say "hold" & <cut>')


@pytest.fixture(scope="module")
def plan():
    inputs, settings, _ = load(DEMO)
    return plan_workbook(inputs, settings, dt.date(2026, 12, 2))


@pytest.fixture(scope="module")
def profit_formulas(plan):
    """(template, cached values) of each formula column of the Profit table."""
    columns = [c for c in plan.spec.sheet("Profit").table.columns if c.kind == FORMULA]
    assert columns, "the demo plan has no formula columns on Profit"
    return [(c.formula, [_cached(v) for v in c.values]) for c in columns]


def all_formulas(plan) -> list[str]:
    """Every formula of the planned workbook, '{r}' templates resolved to a row."""
    out = []
    for sheet in plan.spec.sheets:
        rows = [*sheet.above, *sheet.below]
        tables = [t for t in [sheet.table, *sheet.more] if t]
        rows += [t.totals for t in tables if t.totals]
        out += [cell.formula for cells in rows for cell in cells if cell is not None and cell.formula]
        for table in tables:
            for c in table.columns:
                if c.kind == FORMULA:
                    texts = c.formula if isinstance(c.formula, list) else [c.formula]
                    out += [t.replace("{r}", "6").replace("{p}", "5") for t in texts[:3]]
    return out


def sheet_xml(path: Path) -> bytes:
    with zipfile.ZipFile(path) as z:
        return z.read("xl/worksheets/sheet1.xml")


def write_book(path: Path, constant_memory: bool, cells, fast: bool) -> bytes:
    """Write cells [(row, col, formula, cached)] in row order with one method; the sheet XML."""
    wb = xlsxwriter.Workbook(str(path), {**workbook_options(), "constant_memory": constant_memory})
    ws = wb.add_worksheet("Profit")
    fmt = wb.add_format({"num_format": "0.00%"})
    for row, col, formula, cached in cells:
        if fast:
            put_formula(ws, row, col, formula, fmt, cached)
        else:
            ws.write_formula(row, col, formula, fmt, cached)
    wb.close()
    return sheet_xml(path)


def profit_cells(profit_formulas, n_rows: int):
    """The Profit formulas over n_rows rows, each column cycling through every kind of cached value."""
    cells = []
    for i in range(n_rows):
        rs = str(FIRST_BODY_ROW + i + 1)
        for col, (template, values) in enumerate(profit_formulas):
            cached = CACHED_VALUES[(i + col) % len(CACHED_VALUES)] if i % 2 else values[i % len(values)]
            cells.append((FIRST_BODY_ROW + i, col, template.replace("{r}", rs), cached))
    return cells


@pytest.mark.parametrize("constant_memory", [True, False], ids=["constant_memory", "in_memory"])
def test_put_formula_writes_the_same_sheet_xml_as_write_formula(tmp_path, profit_formulas, constant_memory):
    cells = profit_cells(profit_formulas, 12)

    stock = write_book(tmp_path / "stock.xlsx", constant_memory, cells, fast=False)
    fast = write_book(tmp_path / "fast.xlsx", constant_memory, cells, fast=True)

    assert stock == fast
    assert b"<f>" in fast


@pytest.mark.parametrize("constant_memory", [True, False], ids=["constant_memory", "in_memory"])
@pytest.mark.parametrize("cached", [3.25, 0, "", "no margin"], ids=["number", "zero", "blank", "text"])
def test_put_formula_matches_write_formula_for_each_kind_of_cached_value(tmp_path, profit_formulas,
                                                                         constant_memory, cached):
    cells = [(FIRST_BODY_ROW, col, t.replace("{r}", "6"), cached) for col, (t, _) in enumerate(profit_formulas)]

    stock = write_book(tmp_path / "stock.xlsx", constant_memory, cells, fast=False)
    fast = write_book(tmp_path / "fast.xlsx", constant_memory, cells, fast=True)

    assert stock == fast


@pytest.mark.parametrize("constant_memory", [True, False], ids=["constant_memory", "in_memory"])
def test_put_formula_matches_write_formula_for_every_formula_of_the_demo_workbook(tmp_path, plan, constant_memory):
    cells = [(i, 0, formula, 1.0) for i, formula in enumerate(all_formulas(plan))]

    stock = write_book(tmp_path / "stock.xlsx", constant_memory, cells, fast=False)
    fast = write_book(tmp_path / "fast.xlsx", constant_memory, cells, fast=True)

    assert stock == fast


@pytest.mark.parametrize("constant_memory", [True, False], ids=["constant_memory", "in_memory"])
def test_put_formula_matches_write_formula_across_skipped_rows(tmp_path, profit_formulas, constant_memory):
    template = profit_formulas[0][0]
    cells = [(row, 2, template.replace("{r}", str(row + 1)), 7.0) for row in (5, 6, 9, 40, 41, 1000)]

    stock = write_book(tmp_path / "stock.xlsx", constant_memory, cells, fast=False)
    fast = write_book(tmp_path / "fast.xlsx", constant_memory, cells, fast=True)

    assert stock == fast


def test_put_formula_refuses_a_cell_outside_the_sheet(tmp_path):
    wb = xlsxwriter.Workbook(str(tmp_path / "out.xlsx"), workbook_options())
    ws = wb.add_worksheet()
    try:
        with pytest.raises(ValueError):
            put_formula(ws, 1_048_576, 0, "=1+1", None, 2)
    finally:
        wb.close()


@pytest.mark.parametrize("formula", [
    '=XLOOKUP(A2,in_catalog!$A$2:$A$9,in_catalog!$C$2:$C$9)',
    '=SUM(FILTER(in_ad_products!$G$2:$G$9,in_ad_products!$C$2:$C$9=A2))',
    '=LET(x,D6,IF(x=0,"",E6/x))',
    '=SUM(OFFSET(in_store_sales!$B$2,T6-1,0,U6-T6+1,1))',
    '=SUM(INDIRECT("in_store_sales!B"&T6&":B"&U6))',
    '=IF(D6=0,"",IFERROR(XLOOKUP(A6,B:B,C:C),""))',
], ids=["XLOOKUP", "FILTER", "LET", "OFFSET", "INDIRECT", "XLOOKUP-nested"])
def test_check_portable_rejects_functions_outside_the_whitelist(formula):
    with pytest.raises(FormulaNotPortable):
        check_portable(formula)


@pytest.mark.parametrize("formula", ['=xlookup(A2,B:B,C:C)', '=Offset(A1,1,1)', '={SUM(A1:A3*B1:B3)}'],
                         ids=["xlookup", "Offset", "array-formula"])
def test_check_portable_rejects_non_portable_functions_written_in_lower_case(formula):
    with pytest.raises(FormulaNotPortable):
        check_portable(formula)


def test_check_portable_ignores_function_names_inside_text():
    check_portable('=IF(A6="","XLOOKUP(",A6)')


def test_check_portable_accepts_every_formula_of_the_demo_workbook(plan):
    formulas = all_formulas(plan)
    assert len(formulas) > 20

    rejected = []
    for formula in formulas:
        try:
            check_portable(formula)
        except FormulaNotPortable as exc:
            rejected.append(str(exc))

    assert [] == rejected
