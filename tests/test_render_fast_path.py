"""The formula fast path writes what xlsxwriter's stock write_formula writes, and the whitelist holds."""
from __future__ import annotations

import datetime as dt
import zipfile
from pathlib import Path

import openpyxl
import pytest
import xlsxwriter
from openpyxl.formula.translate import Translator

from sheetbuilder.pipeline import build, load, plan_workbook
from sheetbuilder.errors import FormulaNotPortable
from sheetbuilder.workbook.formula import check_portable
from sheetbuilder.workbook.render import _cached, put_formula, shareable, workbook_options
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


# Shared formulas (ECMA-376 Part 1, 18.3.1.40: a group's later cells hold the first cell's formula with its
# relative references moved by the rows between them). openpyxl's Translator implements that moving; it is
# the outside check here.
@pytest.mark.parametrize("template, expected", [
    ("=IF(D{r}=0,\"\",E{r}/D{r})", True),
    ("=INT(SUM(AP{p}))+IF(S{r}=\"promote\",1,0)", True),
    ("=INDEX(Groups!$F$9:$F$20,AA{r})*min_promote_orders", True),
    ("=LOG10(B{r})+ATAN2(1,2)", True),
    ("=IF(A{r}=\"B{r}\",1,0)", False),          # {r} inside text is not a reference
    ("=A{r}+{r}", False),                       # {r} as a number does not move
    ("=A{r}+Settings!B5", False),               # a relative row that is not the cell's own
    ("=A{r}+Settings!$B5", False),
    ("=A{r}+Settings!B$5", True),
    ("=SUM(3:3)+A{r}", False),                  # a relative row range
    ("=INT(SUM(Y{p}))+IF(V{r}<>O{r},1,6/9128)", True),
], ids=lambda v: str(v))
def test_a_template_is_shared_only_when_every_relative_row_is_its_own_or_the_one_above(template, expected):
    assert expected == shareable(template)


def test_every_shared_column_of_the_demo_reads_on_each_row_as_its_own_formula(plan):
    checked = 0
    for sheet in plan.spec.sheets:
        for table in [t for t in [sheet.table, *sheet.more] if t]:
            first = table.first_row + 2  # the 1-based row of the first body row
            for c in table.columns:
                if c.kind != FORMULA or not isinstance(c.formula, str) or not shareable(c.formula):
                    continue
                origin = c.formula.replace("{r}", str(first)).replace("{p}", str(first - 1))
                for row in (first + 1, first + 7, first + 500):
                    want = c.formula.replace("{r}", str(row)).replace("{p}", str(row - 1))
                    assert want == Translator(origin, f"A{first}").translate_formula(f"A{row}"), (sheet.name, c.header)
                checked += 1
    assert checked > 50


def test_a_built_workbook_writes_shared_groups_that_read_back_as_every_row_s_formula(tmp_path):
    path = tmp_path / "demo.xlsx"
    build(DEMO, path, built_on=dt.date(2026, 12, 2))
    with zipfile.ZipFile(path) as z:
        xml = b"".join(z.read(n) for n in z.namelist() if n.startswith("xl/worksheets/sheet"))
    assert b'<f t="shared" si="0"/>' in xml
    inputs, settings, _ = load(DEMO)
    profit = plan_workbook(inputs, settings, dt.date(2026, 12, 2)).spec.sheet("Profit").table
    ws = openpyxl.load_workbook(path)["Profit"]
    for col, c in enumerate(profit.columns, start=1):
        if c.kind == FORMULA and isinstance(c.formula, str):
            for i in range(profit.n_rows):
                r = profit.first_row + 2 + i
                assert c.formula.replace("{r}", str(r)).replace("{p}", str(r - 1)) == ws.cell(r, col).value


def test_a_column_of_per_row_formulas_is_written_as_one_shared_group_per_run_of_equal_formulas(tmp_path):
    # Actions holds two blocks of rows, each with its own formula per column: each block's run of equal
    # formulas is one group (ECMA-376 Part 1, 18.3.1.40), and every row reads back as its planned formula.
    path = tmp_path / "demo.xlsx"
    build(DEMO, path, built_on=dt.date(2026, 12, 2))
    inputs, settings, _ = load(DEMO)
    actions = plan_workbook(inputs, settings, dt.date(2026, 12, 2)).spec.sheet("Actions").table
    ws = openpyxl.load_workbook(path)["Actions"]
    listed, runs = 0, 0
    for col, c in enumerate(actions.columns, start=1):
        if c.kind != FORMULA:
            continue
        if isinstance(c.formula, str):  # a block left empty: the other's formula down the whole column
            runs += actions.n_rows > 1 and shareable(c.formula)
            continue
        for i, template in enumerate(c.formula):
            r = actions.first_row + 2 + i
            assert template.replace("{r}", str(r)).replace("{p}", str(r - 1)) == ws.cell(r, col).value
            listed += 1
            runs += i + 1 < len(c.formula) and c.formula[i + 1] == template and (i == 0 or c.formula[i - 1] != template)
    assert listed > 100 and runs > 10
    with zipfile.ZipFile(path) as z:
        book = z.read("xl/workbook.xml").decode()
        sheet_id = book.split('<sheet name="Actions" sheetId="')[1].split('"')[0]
        xml = z.read(f"xl/worksheets/sheet{sheet_id}.xml")
    assert runs == xml.count(b'<f t="shared" ref=')
