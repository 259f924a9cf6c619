"""A unit cost that is not there is missing, never zero: the product is built with its margin blank
and named in a warning, as a product absent from the catalog is. Filling the cost on in_catalog
gives the margin live.
"""
from __future__ import annotations

import minimal
import pytest

from conftest import BUILT_ON, edit_workbook
from profit_io import profit_table
from sheetbuilder.errors import WARNING
from sheetbuilder.pipeline import build, load
from tools.recalc import formulas_values

CATALOG = """product_id,product_name,price,unit_cost,fees_per_unit
P1,Widget,20.00,,2.00
P2,Gadget,10.00,n/a,1.00
"""


@pytest.fixture(scope="module")
def built(tmp_path_factory):
    folder = minimal.write_account(tmp_path_factory.mktemp("costs"), {"catalog.csv": CATALOG})
    return build(folder, folder / "book.xlsx", built_on=BUILT_ON)


def test_a_blank_or_non_numeric_unit_cost_gives_a_blank_margin_not_a_profit(built):
    rows, _, _ = profit_table(built.output)
    assert [(None, None, "no margin"), (None, None, "no margin")] == [
        (rows[p]["Margin before ads"], rows[p]["Net profit after ads"], rows[p]["Status"]) for p in ("P1", "P2")]


def test_each_product_without_a_cost_is_named_with_what_to_do(built):
    named = [(p.file, p.row, p.column, p.severity) for p in built.warnings if "has no unit cost" in p.message]
    assert [("catalog.csv", 2, "unit_cost", WARNING), ("catalog.csv", 3, "unit_cost", WARNING)] == named
    message = next(p.message for p in built.warnings if "has no unit cost" in p.message)
    assert ("product 'P1' has no unit cost (blank or not a number), so it is built with its margin blank, as a "
            "product absent from the catalog; fill the cost on in_catalog (or in the catalog file) to see its "
            "profit") == message


@pytest.mark.slow  # several seconds: the fast lane stays under two minutes
def test_filling_the_cost_on_in_catalog_gives_the_margin_live(built, tmp_path):
    edited = edit_workbook(built.output, tmp_path / "edited.xlsx", [("in_catalog", "D2", 8.0)])
    values = formulas_values(edited)
    _, _, where = profit_table(built.output)
    margin = values[("PROFIT", where["P1"]["Margin before ads"])]
    assert 0.5 == pytest.approx(margin)  # (20 - 8 - 2) / 20


def test_a_cost_with_digits_that_does_not_read_is_still_an_error(tmp_path):
    from sheetbuilder.errors import InputProblems
    catalog = CATALOG.replace(",,2.00", ",8 dollars,2.00")
    with pytest.raises(InputProblems) as caught:
        load(minimal.write_account(tmp_path, {"catalog.csv": catalog}))
    assert [("catalog.csv", 2, "unit_cost")] == [(p.file, p.row, p.column) for p in caught.value.problems
                                                 if p.severity == "error"]


def test_a_formula_cost_saved_without_its_value_is_refused_naming_the_cell(tmp_path):
    import openpyxl
    folder = minimal.write_account(tmp_path, {"catalog.csv": None})
    wb = openpyxl.Workbook()  # openpyxl writes a formula and no value: it does not calculate
    ws = wb.active
    ws.title = "Products"
    ws.append(["product_id", "product_name", "price", "unit_cost", "fees_per_unit"])
    ws.append(["P1", "Widget", 20, "=C2*0.4", 2])
    ws.append(["P2", "Gadget", 10, 4, 1])
    wb.save(folder / "catalog.xlsx")
    from sheetbuilder.errors import InputProblems
    with pytest.raises(InputProblems) as caught:
        load(folder)
    assert [("catalog.xlsx", "the cells D2 of the sheet 'Products' hold formulas with no stored value (1 cell(s)): "
             "the file was saved by a program that does not calculate, so their values are unknown. Open it in a "
             "spreadsheet program and save it again, or type the values")] == [
        (p.file, p.message) for p in caught.value.problems if p.severity == "error"]


def _catalog_book(folder, sheets: dict[str, list[list]]):
    import openpyxl
    wb = openpyxl.Workbook()
    wb.remove(wb.active)
    for name, rows in sheets.items():
        ws = wb.create_sheet(name)
        for row in rows:
            ws.append(row)
    wb.save(folder / "catalog.xlsx")


CATALOG_ROWS = [["product_id", "product_name", "price", "unit_cost", "fees_per_unit"],
                ["P1", "Widget", 20, 8, 2], ["P2", "Gadget", 10, 4, 1]]
OLD_ROWS = [CATALOG_ROWS[0], ["P1", "Widget", 20, 5, 2], ["P2", "Gadget", 10, 3, 1]]


@pytest.mark.parametrize("names", [("Archive", "Products"), ("Costs 2025", "Costs 2026")])
def test_of_two_sheets_with_the_catalogs_columns_the_current_one_is_read_by_its_name(tmp_path, names):
    folder = minimal.write_account(tmp_path, {"catalog.csv": None})
    _catalog_book(folder, {names[0]: OLD_ROWS, names[1]: CATALOG_ROWS})
    inputs, _, problems = load(folder)
    assert [8.0, 4.0] == inputs.get("catalog")["unit_cost"].tolist()
    assert any(f"read the sheet '{names[1]}'" in p.message for p in problems)


def test_two_sheets_nothing_tells_apart_are_refused(tmp_path):
    folder = minimal.write_account(tmp_path, {"catalog.csv": None})
    _catalog_book(folder, {"Sheet A": OLD_ROWS, "Sheet B": CATALOG_ROWS})
    from sheetbuilder.errors import InputProblems
    with pytest.raises(InputProblems) as caught:
        load(folder)
    assert [("catalog.xlsx", "the sheets 'Sheet A', 'Sheet B' could each hold this table (the same columns) and "
             "nothing in their names says which is current; keep one sheet in the file, or rename the other as an "
             "archive")] == [(p.file, p.message) for p in caught.value.problems if p.severity == "error"]


def _hidden(tmp_path, rows: list[list], column: str | None = None, row: int | None = None):
    """Load an account whose catalog.xlsx holds rows on one sheet with one column or row hidden:
    (catalog unit costs, the notes that mention hidden)."""
    import openpyxl
    folder = minimal.write_account(tmp_path, {"catalog.csv": None})
    _catalog_book(folder, {"Products": rows})
    wb = openpyxl.load_workbook(folder / "catalog.xlsx")
    if column:
        wb["Products"].column_dimensions[column].hidden = True
    if row:
        wb["Products"].row_dimensions[row].hidden = True
    wb.save(folder / "catalog.xlsx")
    inputs, _, problems = load(folder)
    return inputs.get("catalog")["unit_cost"].tolist(), [(p.column, p.message) for p in problems if "hidden" in p.message]


def test_a_hidden_old_cost_column_yields_to_the_visible_landed_cost(tmp_path):
    rows = [["product_id", "product_name", "price", "Unit Cost", "Landed Cost", "fees_per_unit"],
            ["P1", "Widget", 20, 5, 8, 2], ["P2", "Gadget", 10, 3, 4, 1]]
    assert ([8.0, 4.0], [(None, "skipped the hidden column(s) 'Unit Cost': visible columns hold this table's fields")]
            ) == _hidden(tmp_path, rows, column="D")


def test_a_hidden_old_row_of_a_product_yields_to_its_visible_row(tmp_path):
    rows = [CATALOG_ROWS[0], ["P1", "Widget", 20, 5, 2], *CATALOG_ROWS[1:]]
    assert ([8.0, 4.0], [(None, "skipped the hidden row(s) 2: a visible row holds the same product")]
            ) == _hidden(tmp_path, rows, row=2)


def test_a_hidden_column_no_visible_one_replaces_is_read_and_named(tmp_path):
    assert ([8.0, 4.0], [("unit_cost", "this column is hidden in the sheet; read as 'unit_cost' since no visible "
                                       "column holds it")]) == _hidden(tmp_path, CATALOG_ROWS, column="D")


@pytest.mark.slow
@pytest.mark.parametrize("engine", ["libreoffice", "gnumeric"])
def test_libreoffice_and_gnumeric_keep_the_margin_blank_and_fill_it_from_a_typed_cost(built, tmp_path, engine):
    from conftest import require_gnumeric, require_libreoffice
    from tools.recalc import gnumeric_convert, libreoffice_convert
    (require_libreoffice if engine == "libreoffice" else require_gnumeric)()
    edited = edit_workbook(built.output, tmp_path / "edited.xlsx", [("in_catalog", "D2", 8.0)])
    convert = libreoffice_convert if engine == "libreoffice" else gnumeric_convert
    [out] = convert([edited], tmp_path / "out")
    rows, _, _ = profit_table(out)
    assert 0.5 == pytest.approx(rows["P1"]["Margin before ads"])  # (20 - 8 - 2) / 20
    assert rows["P2"]["Margin before ads"] in (None, "")  # blank: Gnumeric stores an empty text, LibreOffice nothing
