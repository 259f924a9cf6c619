"""Rows repeated within an export are refused, never summed: the same download pasted twice doubles
revenue and spend. Rows of different days (the per-day form) are summed per key, as before.
"""
from __future__ import annotations

import minimal
import pytest

from sheetbuilder.errors import ERROR, InputProblems
from sheetbuilder.pipeline import load


def _errors(folder) -> list[tuple[str, int | None, str]]:
    with pytest.raises(InputProblems) as caught:
        load(folder)
    return [(p.file, p.row, p.message) for p in caught.value.problems if p.severity == ERROR]


COPY_RULE = ("A row repeated in every cell (its date and any order number included) is the same data pasted or "
             "downloaded twice, and summing it would count it twice; remove the copies")


def test_store_sales_pasted_twice_is_refused_naming_the_first_repeated_rows(tmp_path):
    sales = minimal.STORE_SALES + "".join(minimal.STORE_SALES.splitlines(keepends=True)[1:])
    assert [("store_sales.csv", 4, "rows 2, 4 are the same in every column; 2 row(s) of the file repeat an earlier "
             "row exactly. " + COPY_RULE)] == _errors(minimal.write_account(tmp_path, {"store_sales.csv": sales}))


def test_identical_search_term_rows_are_refused(tmp_path):
    header = "campaign,ad_group,target,match_type,search_term,impressions,clicks,spend,ad_sales,orders\n"
    row = "C1,G1,widget,broad,blue widget,10,2,1.00,0,0\n"
    terms = header + row + "C1,G1,widget,broad,red widget,5,1,0.50,0,0\n" + row
    assert [("search_terms.csv", 4, "rows 2, 4 are the same in every column; 1 row(s) of the file repeat an earlier "
             "row exactly. " + COPY_RULE)] == _errors(minimal.write_account(tmp_path, {"search_terms.csv": terms}))


def test_rows_differing_only_in_a_column_not_read_are_kept(tmp_path):
    sales = "order,product_id,units,revenue\nA1,P1,1,20.00\nA2,P1,1,20.00\nA3,P2,5,50.00\n"
    inputs, _, _ = load(minimal.write_account(tmp_path, {"store_sales.csv": sales}))
    assert [20.0, 20.0, 50.0] == inputs.get("store_sales")["revenue"].tolist()  # two orders of P1, both counted


def test_the_same_rows_on_two_days_are_summed_not_refused(tmp_path):
    sales = ("date,product_id,units,revenue\n2026-11-23,P1,10,200.00\n2026-11-23,P2,5,50.00\n"
             "2026-11-24,P1,10,200.00\n2026-11-24,P2,5,50.00\n")
    inputs, _, _ = load(minimal.write_account(tmp_path, {"store_sales.csv": sales}))
    assert [400.0, 100.0] == inputs.get("store_sales")["revenue"].tolist()


def test_a_second_file_for_the_same_table_is_refused_not_summed(tmp_path):
    folder = minimal.write_account(tmp_path, {"store sales.csv": minimal.STORE_SALES})
    assert [(tmp_path.name, None,
             "several files could hold 'store_sales': store sales.csv, store_sales.csv; keep one or name it in "
             "[files]")] == _errors(folder)
