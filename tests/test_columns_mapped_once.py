"""A units column is never read as orders, and a mapping that sends one column to two fields is refused."""
from __future__ import annotations

import minimal
import pytest

from sheetbuilder.errors import ERROR, InputProblems
from sheetbuilder.pipeline import load


def _errors(folder) -> list[tuple[str, str | None, str]]:
    with pytest.raises(InputProblems) as caught:
        load(folder)
    return [(p.file, p.column, p.message) for p in caught.value.problems if p.severity == ERROR]


def test_an_ad_units_column_without_orders_is_refused_saying_why(tmp_path):
    ads = minimal.AD_PRODUCTS.replace(",orders\n", ",Ad Units\n", 1)
    assert [("ad_products.csv", "orders", "missing column 'orders' (also accepted: adorders, conversions, purchases, "
             "totalorders); the file has 'Ad Units', which counts units: an order may hold several units, so units "
             "are never read as orders (conversion rates count orders per click); export with an orders column")
            ] == _errors(minimal.write_account(tmp_path, {"ad_products.csv": ads}))


def test_mapping_orders_to_a_units_column_in_settings_is_refused(tmp_path):
    ads = minimal.AD_PRODUCTS.replace(",orders\n", ",Ad Units\n", 1)
    settings = '[columns.ad_products]\norders = "Ad Units"\n'
    errors = _errors(minimal.write_account(tmp_path, {"ad_products.csv": ads, "settings.toml": settings}))
    assert ("ad_products.csv", "Ad Units", "settings.toml maps 'orders' to this header, which counts units: an order "
            "may hold several units, so units are never read as orders (conversion rates count orders per click); "
            "export with an orders column") == errors[0]


def test_one_column_mapped_to_two_fields_is_refused(tmp_path):
    catalog = minimal.CATALOG.replace("unit_cost,fees_per_unit", "Cost per unit,fees_per_unit")
    settings = '[columns.catalog]\nunit_cost = "Cost per unit"\nfees_per_unit = "Cost per unit"\n'
    assert [("catalog.csv", "Cost per unit", "this one column is mapped to 'unit_cost' and 'fees_per_unit'; each "
             "column holds one field. Map one of them to another column in settings.toml [columns.catalog]")
            ] == _errors(minimal.write_account(tmp_path, {"catalog.csv": catalog, "settings.toml": settings}))


def test_many_cells_with_one_problem_print_as_one_line(tmp_path):
    rows = "".join(f"C1,G{i},P1,product ads,100,lots,1.00,0,0\n" for i in range(7))
    errors = _errors(minimal.write_account(tmp_path, {"ad_products.csv": minimal.AD_PRODUCTS + rows}))
    assert [("ad_products.csv", "clicks", "7 cells alike (first rows 4, 5, 6, 7, 8, ...): 'lots' is not a whole "
             "number; expected a count such as 1234 or 1,234")] == errors


DISPLAY_ADS = """campaign,ad_group,product_id,ad_type,impressions,clicks,spend,ad_sales,orders
C1,G1,P1,product ads,1000,50,25.00,100.00,5
D1,G1,P2,display ads,5000,2,10.00,60.00,6
"""


def test_orders_above_clicks_on_display_ads_are_read_as_the_clicks_and_said(tmp_path):
    inputs, _, problems = load(minimal.write_account(tmp_path, {"ad_products.csv": DISPLAY_ADS}))
    assert [5.0, 2.0] == inputs.get("ad_products")["orders"].tolist()  # conversion at most one order per click
    assert [60.0] == inputs.get("ad_products")["ad_sales"].tolist()[1:]
    assert [("ad_products.csv", 3, "orders", "1 row(s) have more orders than clicks (display, video or view-through "
             "ads, which credit orders to views; rows 3): their orders are read as their clicks, so conversion rates "
             "stay at most one order per click; their ad sales are kept as written")] == [
        (p.file, p.row, p.column, p.message) for p in problems if "more orders than clicks" in p.message]


def test_orders_above_clicks_elsewhere_are_refused_unless_the_setting_accepts_them(tmp_path):
    ads = DISPLAY_ADS.replace("display ads", "product ads")
    assert [("ad_products.csv", "orders", "orders (6) are more than clicks (2); expected at most one order per click "
             "outside display and video ads (set orders_above_clicks = \"accept\" in settings.toml if this export "
             "counts view-through orders)")] == _errors(minimal.write_account(tmp_path, {"ad_products.csv": ads}))
    inputs, _, _ = load(minimal.write_account(tmp_path, {"ad_products.csv": ads,
                                                         "settings.toml": 'orders_above_clicks = "accept"\n'}))
    assert [5.0, 2.0] == inputs.get("ad_products")["orders"].tolist()


TWO_ROW_CATALOG = """,,,Cost per unit,
product_id,product_name,price,Goods,Fees
P1,Widget,20.00,8.00,2.00
P2,Gadget,10.00,4.00,1.00
"""


def test_a_two_row_header_is_read_as_one_and_the_advice_names_the_goods_column(tmp_path):
    assert [("catalog.csv", "unit_cost", "missing column 'unit_cost' (also accepted: cost, cogs, costofgoods, "
             "landedcost, productcost); did you mean 'Cost per unit Goods'? If so, add to settings.toml: "
             "[columns.catalog] unit_cost = \"Cost per unit Goods\"")
            ] == _errors(minimal.write_account(tmp_path, {"catalog.csv": TWO_ROW_CATALOG}))


def test_following_the_advice_reads_goods_as_the_unit_cost_and_fees_as_the_fees(tmp_path):
    folder = minimal.write_account(tmp_path, {"catalog.csv": TWO_ROW_CATALOG, "settings.toml":
                                              '[columns.catalog]\nunit_cost = "Cost per unit Goods"\n'})
    inputs, _, problems = load(folder)
    catalog = inputs.get("catalog")
    assert ([8.0, 4.0], [2.0, 1.0]) == (catalog["unit_cost"].tolist(), catalog["fees_per_unit"].tolist())
    assert any("rows 1 and 2 were read as one header" in p.message for p in problems)


def test_a_title_line_above_the_header_is_not_joined_to_it(tmp_path):
    sales = "Sales report,2026\n" + minimal.STORE_SALES
    inputs, _, problems = load(minimal.write_account(tmp_path, {"store_sales.csv": sales}))
    assert ["product_id", "units", "revenue"] == list(inputs.get("store_sales").attrs["columns"].values())
    assert not any("read as one header" in p.message for p in problems)
