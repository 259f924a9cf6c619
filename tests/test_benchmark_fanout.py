"""The benchmark's dependency fan-out (benchmarks/fanout.py): which formula cells an edit reaches when,
as in LibreOffice and Excel, a formula depends on every cell of each range it names (not only on the
cell an INDEX picks) and on the cells its defined names name (common practice of both programs'
dependency tracking; the edit latency it explains is measured in benchmarks/, not here)."""
from __future__ import annotations

import openpyxl
from openpyxl.workbook.defined_name import DefinedName

from benchmarks.fanout import fan_out, read_formulas, unit_cost_cell


def _book(path):
    wb = openpyxl.Workbook()
    cat = wb.active
    cat.title = "in_catalog"
    cat.append(["product_id", "unit_cost"])
    cat.append(["P1", 5])
    cat.append(["P2", 7])
    p = wb.create_sheet("Profit")
    p["A1"] = "=INDEX(in_catalog!$B$2:$B$3,2)"   # picks P2's cost, but reads the whole range
    p["A2"] = "=in_catalog!B3"                   # P2's cost alone: not reached by P1's
    p["A3"] = "=A1*2"                            # a chain through the INDEX
    p["A4"] = '="in_catalog!B2"'                 # text that looks like a reference
    p["A5"] = "=first_cost+1"                    # a defined name for P1's cost
    p["A6"] = "=A2+A5"
    p["AB1"] = "=A3*3"                           # a two-letter column, read in turn by A7
    p["A7"] = "=IF(AB1>0,AB1,0)"
    wb.defined_names["first_cost"] = DefinedName("first_cost", attr_text="in_catalog!$B$2")
    wb.save(path)


def test_an_edit_reaches_every_formula_naming_its_range_or_its_cell_and_their_dependents(tmp_path):
    path = tmp_path / "book.xlsx"
    _book(path)
    formulas, names = read_formulas(path)
    edited = unit_cost_cell(path)
    assert ("in_catalog", 1, 2) == edited  # column B (0-based 1), the first product's row
    reached = fan_out(formulas, names, edited)
    # A1 through its 2-cell range, A3 through A1, A5 through the name, A6 through A5, AB1 (column 27) through A3
    # and A7 through AB1; A2 and A4 not at all.
    assert {("Profit", 0, 1): ("range2", "in_catalog", 1), ("Profit", 0, 3): ("cell", "Profit", 0),
            ("Profit", 0, 5): ("cell", "in_catalog", 1), ("Profit", 0, 6): ("cell", "Profit", 0),
            ("Profit", 27, 1): ("cell", "Profit", 0), ("Profit", 0, 7): ("cell", "Profit", 27)} == reached
