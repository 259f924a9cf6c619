"""Digit-only product IDs are one product however a spreadsheet wrote them: 00101, 101 and 101.0
(leading zeros dropped, a number stored with '.0'). Compared as text otherwise.
"""
from __future__ import annotations

import minimal
import pytest

from sheetbuilder.errors import ERROR, InputProblems, WARNING
from sheetbuilder.pipeline import load

CATALOG = """product_id,product_name,price,unit_cost,fees_per_unit
00101,Widget,20.00,8.00,2.00
00102,Gadget,10.00,4.00,1.00
"""
STORE_SALES = """product_id,units,revenue
101,10,200.00
102.0,5,50.00
"""
AD_PRODUCTS = """campaign,ad_group,product_id,ad_type,impressions,clicks,spend,ad_sales,orders
C1,G1,0101,product ads,1000,50,25.00,100.00,5
C1,G1,00102,product ads,500,20,10.00,30.00,2
"""


def test_ids_losing_their_zeros_or_gaining_a_stored_point_zero_match_the_catalog(tmp_path):
    inputs, _, problems = load(minimal.write_account(tmp_path, {"catalog.csv": CATALOG, "store_sales.csv": STORE_SALES,
                                                                "ad_products.csv": AD_PRODUCTS}))
    assert ["00101", "00102"] == inputs.get("store_sales")["product_id"].tolist()
    assert ["00101", "00102"] == inputs.get("ad_products")["product_id"].tolist()
    assert [] == [p for p in problems if "not in the catalog" in p.message]
    noted = [(p.file, p.row, p.severity) for p in problems if "written differently" in p.message]
    assert [("store_sales.csv", 2, WARNING), ("ad_products.csv", 2, WARNING)] == noted


def test_one_number_written_two_ways_in_one_file_is_refused(tmp_path):
    catalog = CATALOG + "101,Other widget,5.00,1.00,1.00\n"
    with pytest.raises(InputProblems) as caught:
        load(minimal.write_account(tmp_path, {"catalog.csv": catalog}))
    errors = [(p.file, p.row, p.message) for p in caught.value.problems if p.severity == ERROR]
    assert [("catalog.csv", 4, "the product IDs '00101' (row 2), '101' (row 4) are one number written two ways; "
             "digit-only IDs are compared without leading zeros (a spreadsheet drops them), so these would be one "
             "product. Write each product's ID one way")] == errors


def test_ids_with_letters_are_compared_as_written(tmp_path):
    sales = minimal.STORE_SALES.replace("P1,", "p1,")
    _, _, problems = load(minimal.write_account(tmp_path, {"store_sales.csv": sales}))
    assert ["product 'p1' is not in the catalog; it is built with its margin blank (add it to the catalog to see its "
            "profit)"] == [p.message for p in problems if "not in the catalog" in p.message]
