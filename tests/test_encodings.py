"""Encodings are chosen strictly: one encoding per file, never a silent fallback that garbles text.

Byte values are from the UTF-8 definition (The Unicode Standard, chapter 3.9, table 3-7) and the
Windows-1252 code page (Microsoft's published table: E9 is é, 80 is €, 81 is unassigned).
"""
from __future__ import annotations

import minimal
import openpyxl
import pytest
import xlsxwriter

from sheetbuilder.reading.encodings import NotText, decode
from sheetbuilder.errors import ERROR, WARNING, InputProblems
from sheetbuilder.pipeline import build, load

CATALOG = ("product_id,product_name,price,unit_cost,fees_per_unit\n"
           "P1,Caf\u00e9 Mug,20.00,8.00,2.00\n"
           "P2,Gadget,10.00,4.00,1.00\n")


def _problems(folder) -> list:
    with pytest.raises(InputProblems) as caught:
        load(folder)
    return caught.value.problems


def test_mixed_valid_and_invalid_utf8_is_refused_with_row_and_byte_offset(tmp_path):
    good = CATALOG.encode("utf-8")                     # row 2 holds café as C3 A9
    data = good + b"P3,Th\xe9 Pot,5.00,2.00,1.00\n"    # row 4 holds a lone E9
    offset = len(good) + len(b"P3,Th")
    problems = _problems(minimal.write_account(tmp_path, {"catalog.csv": data}))
    assert [("catalog.csv", 4, None, ERROR)] == [(p.file, p.row, p.column, p.severity) for p in problems]
    assert f"byte offset {offset}" in problems[0].message


def test_a_pure_cp1252_file_is_read_as_cp1252_and_says_so(tmp_path):
    data = CATALOG.replace("Gadget", "Gadget \u20ac").encode("cp1252")
    assert b"Caf\xe9" in data and b"\x80" in data
    folder = minimal.write_account(tmp_path / "in", {"catalog.csv": data})
    inputs, _, problems = load(folder)
    assert ["Caf\u00e9 Mug", "Gadget \u20ac"] == inputs.get("catalog")["product_name"].tolist()
    notes = [p for p in problems if p.file == "catalog.csv"]
    assert [WARNING] == [p.severity for p in notes]
    assert "read as cp1252" in notes[0].message
    result = build(folder, tmp_path / "out.xlsx")
    guide = openpyxl.load_workbook(result.output)["Guide"]
    record = [r[1] for r in guide.iter_rows(values_only=True) if r[0] == "Input: catalog"]
    assert 1 == len(record) and record[0].startswith("catalog.csv (cp1252 (Windows Western))")


def test_a_utf8_file_with_accents_is_never_read_as_cp1252(tmp_path):
    text = CATALOG.replace("Gadget", "\u00c9t\u00e9 \u05e9\u05dc\u05d5\u05dd \u00fc\u00df")
    inputs, _, problems = load(minimal.write_account(tmp_path, {"catalog.csv": text.encode("utf-8")}))
    assert ["Caf\u00e9 Mug", "\u00c9t\u00e9 \u05e9\u05dc\u05d5\u05dd \u00fc\u00df"] == \
        inputs.get("catalog")["product_name"].tolist()
    assert {"catalog": "UTF-8"} == {k: v for k, v in inputs.encodings.items() if k == "catalog"}
    assert [] == [p for p in problems if p.file == "catalog.csv"]


@pytest.mark.parametrize("text", ["caf\u00e9", "\u00c3\u00a9t\u00e9", "na\u00efve \u20ac5", "\u00fcber"])
def test_text_that_is_valid_utf8_decodes_as_utf8(text):
    assert (text, "UTF-8") == (decode(text.encode("utf-8")).text, decode(text.encode("utf-8")).encoding)


def test_a_byte_undefined_in_cp1252_and_invalid_in_utf8_is_refused_with_its_offset():
    with pytest.raises(NotText) as caught:
        decode(b"a,b\nx,\x81y\n")
    assert 2 == caught.value.row
    assert "byte offset 6" in str(caught.value)


def test_a_nul_byte_in_a_csv_is_an_error_naming_its_row(tmp_path):
    data = CATALOG.replace("Gadget", "Gad\x00get").encode("utf-8")
    problems = _problems(minimal.write_account(tmp_path, {"catalog.csv": data}))
    assert [("catalog.csv", 3)] == [(p.file, p.row) for p in problems]
    assert "NUL" in problems[0].message


def test_a_nul_character_in_an_xlsx_cell_is_an_error_naming_its_row(tmp_path):
    folder = minimal.write_account(tmp_path, {"catalog.csv": None})
    book = xlsxwriter.Workbook(str(folder / "catalog.xlsx"))  # openpyxl refuses to write a NUL
    sheet = book.add_worksheet()
    for r, row in enumerate((["product_id", "product_name", "price", "unit_cost", "fees_per_unit"],
                             ["P1", "Widget", 20, 8, 2], ["P2", "Gad\x00get", 10, 4, 1])):
        for col, value in enumerate(row):
            sheet.write_string(r, col, value) if isinstance(value, str) else sheet.write_number(r, col, value)
    book.close()
    problems = _problems(folder)
    assert [("catalog.xlsx", 3)] == [(p.file, p.row) for p in problems]
    assert "NUL" in problems[0].message


@pytest.mark.parametrize("codec, name", [("utf-16", "UTF-16"), ("utf-32", "UTF-32"), ("utf-8-sig", "UTF-8")])
def test_a_byte_order_mark_names_the_encoding(codec, name):
    decoded = decode(CATALOG.encode(codec))
    assert CATALOG == decoded.text
    assert decoded.encoding.startswith(name)
