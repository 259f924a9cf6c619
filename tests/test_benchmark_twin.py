"""The benchmark's values-only twin (benchmarks/twin.py): the built workbook with every formula
removed and every cached value kept, and its partial twins that keep one part's formulas.
"""
from __future__ import annotations

import pytest

import re
import zipfile

from benchmarks.tokens import count_tokens, tokens_in
from benchmarks.twin import count_cells, idiom, make_twin, sheet_parts
from workbook_io import open_values


def _values(path):
    book = open_values(path)
    return {(ws.title, c.coordinate): c.value for ws in book for row in ws.iter_rows() for c in row
            if c.value not in (None, "")}


@pytest.mark.slow  # several seconds: the fast lane stays under two minutes
def test_the_twin_holds_no_formula_and_every_cached_value(demo_build, tmp_path):
    twin = tmp_path / "twin.xlsx"
    make_twin(demo_build.output, twin)
    assert 0 == count_cells(twin)["formula_cells"]
    assert _values(demo_build.output) == _values(twin)


def test_a_partial_twin_keeps_only_the_chosen_sheets_formulas(demo_build, tmp_path):
    counts = count_cells(demo_build.output)
    part = tmp_path / "profit_only.xlsx"
    make_twin(demo_build.output, part, keep=lambda sheet, formula: sheet == "Profit")
    assert {"Profit": counts["formulas_by_sheet"]["Profit"]} == count_cells(part)["formulas_by_sheet"]
    with zipfile.ZipFile(part) as z:
        assert list(sheet_parts(z)) == [ws.title for ws in open_values(demo_build.output)]


def test_formula_idioms_are_named_for_their_heaviest_function():
    assert "MATCH" == idiom('IF(A2="","",MATCH(A2,in_terms!$B$2:$B$9,0))')
    assert "block SUM(INDEX:INDEX)" == idiom("IF(W6=\"\",0,SUM(INDEX(x!$B$2:$B$9,W6):INDEX(x!$B$2:$B$9,X6)))")
    assert "INDEX" == idiom("INDEX(in_catalog!$C$2:$C$9,V6)")
    assert "IF/arithmetic" == idiom('IF(D6=0,"",E6/D6)')


def test_a_shared_formula_group_is_counted_in_every_cell_and_kept_or_turned_into_values_whole(demo_build, tmp_path):
    with zipfile.ZipFile(demo_build.output) as z:
        xml = z.read(sheet_parts(z)["Profit"]).decode("utf-8")
    written = xml.count("<f>") + xml.count('<f t="shared"')  # every formula cell: its own text or a group's
    assert xml.count('<f t="shared" si="') > xml.count(' ref="')  # the build writes groups (their first cells: ref)
    assert written == count_cells(demo_build.output)["formulas_by_sheet"]["Profit"]
    by_idiom = count_cells(demo_build.output)["idioms_by_sheet"]["Profit"]
    part = tmp_path / "index_only.xlsx"
    make_twin(demo_build.output, part, keep=lambda sheet, formula: sheet == "Profit" and idiom(formula) == "INDEX")
    assert {"INDEX": by_idiom["INDEX"]} == count_cells(part)["idioms_by_sheet"]["Profit"]
    with zipfile.ZipFile(part) as z:
        kept = z.read(sheet_parts(z)["Profit"]).decode("utf-8")
    # each group kept has its first cell (the formula text) in the part
    groups = set(re.findall(r'<f t="shared" ref="[^"]*" si="(\d+)"', kept))
    assert groups and groups == set(re.findall(r'<f t="shared" si="(\d+)"/>', kept))


def test_formula_tokens_count_names_numbers_strings_operators_and_brackets():
    # IF ( A1 = "" , 0 , Groups!$B$2 : B$9 ): 12, a leading $ opening no token of its own (counted by hand)
    assert 12 == tokens_in('IF(A1="",0,Groups!$B$2:$B$9)')
    assert 6 == tokens_in("ROUND(0.000000001,2)")  # ROUND ( 0.000000001 , 2 )


def test_formula_tokens_count_each_cell_of_a_shared_group_with_the_groups_text(demo_build, tmp_path):
    # Counted by hand: IF ( A1 = "" , "" , A1 & "" ) is 12 tokens; SUM ( B$2 : C3 ) is 6 (a range is three).
    import xlsxwriter
    path = tmp_path / "t.xlsx"
    wb = xlsxwriter.Workbook(str(path))
    ws = wb.add_worksheet("S")
    ws.write_formula("D1", '=IF(A1="","",A1&"")', None, "")
    ws.write_formula("E1", "=SUM(B$2:C3)", None, 0)
    wb.close()
    c = count_tokens(path)
    assert ({"S": 18}, {"S": 2}) == (dict(c["tokens"]), dict(c["cells"]))
    # the demo writes shared groups: each of their cells is counted
    assert count_cells(demo_build.output)["formulas_by_sheet"]["Profit"] == count_tokens(demo_build.output)["cells"]["Profit"]
