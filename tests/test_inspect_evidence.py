"""`inspect` says, per file, what the reading decided: the period and where it was read, the currency,
the decimal separator and why, and the product-ID normalisation."""
from __future__ import annotations

import minimal

from sheetbuilder.reading.inspection import inspect_exports, report_lines


def test_inspect_shows_period_currency_numbers_and_ids_per_file(tmp_path):
    ads = ("Advertised products\nDate range: 2026-11-24 - 2026-11-30\n"
           + minimal.AD_PRODUCTS.replace(",", ";").replace(".", ",").replace(";25,00;", ";$25,00;"))
    sales = "Date range: 2026-11-24 - 2026-11-30\nproduct_id,units,revenue\n101,10,200.00\n102,5,50.00\n"
    catalog = minimal.CATALOG.replace("P1,", "0101,").replace("P2,", "0102,")
    folder = minimal.write_account(tmp_path, {"ad_products.csv": ads.replace(";P1;", ";101;").replace(";P2;", ";102;"),
                                              "store_sales.csv": sales, "catalog.csv": catalog})
    lines = report_lines(inspect_exports(folder))
    sales_at, ads_at = lines.index("store_sales.csv -> store_sales"), lines.index("ad_products.csv -> ad_products")
    period_at = next(i for i in range(ads_at, len(lines)) if lines[i].startswith("  period:"))
    assert ["  period: 2026-11-24 to 2026-11-30 (7 days) (from the title row 2 'Date range: 2026-11-24 - 2026-11-30')",
            "  currency: $ (a sign several currencies write) (marks: $)",
            "  numbers: decimal comma (the file's values write a decimal comma)",
            "  product IDs: digit-only IDs compared as numbers, without leading zeros or a stored '.0'; 2 written as "
            "the catalog writes them"] == lines[period_at:period_at + 4]
    assert "  numbers: decimal point (the file's values write a decimal point)" in lines[sales_at:ads_at]
    assert "  currency: no currency marked" in lines[sales_at:ads_at]
    assert "currency found: $ (a sign several currencies write)" in lines


def test_inspect_names_a_joined_two_row_header(tmp_path):
    catalog = ",,,Cost per unit,\nproduct_id,product_name,price,Goods,Fees\nP1,Widget,20.00,8.00,2.00\n"
    folder = minimal.write_account(tmp_path, {"catalog.csv": catalog, "settings.toml":
                                              '[columns.catalog]\nunit_cost = "Cost per unit Goods"\n'})
    lines = report_lines(inspect_exports(folder))
    assert ("  layout: rows 1 and 2 were read as one header (the upper row's labels group the columns below them): "
            "'product_id', 'product_name', 'price', 'Cost per unit Goods', 'Fees'") in lines
    assert "  unit_cost <- Cost per unit Goods" in lines
