"""Decimal comma or point decided per file and per column from the file's own values, and one
currency per account. Sources: Unicode CLDR (each locale's decimal and group symbols: 1,234.5 and
1.234,5 are both in use), ISO 4217 (currency codes); a `;` delimiter in decimal-comma locales'
CSV files is common practice.
"""
from __future__ import annotations

import minimal
import pytest

from sheetbuilder.errors import ERROR, InputProblems
from sheetbuilder.pipeline import load
from sheetbuilder.reading.evidence import separator_form


def _errors(folder) -> list[tuple[str, int | None, str | None, str]]:
    with pytest.raises(InputProblems) as caught:
        load(folder)
    return [(p.file, p.row, p.column, p.message) for p in caught.value.problems if p.severity == ERROR]


CATALOG_INTEGERS = """product_id,product_name,price,unit_cost,fees_per_unit
P1,Widget,20,"3,911",2
P2,Gadget,10,4,1
"""


def test_a_lone_three_digit_group_with_nothing_to_decide_is_refused_with_both_readings(tmp_path):
    assert [("catalog.csv", 2, "unit_cost", "'3,911' could be 3911 (a comma grouping thousands) or 3.911 (a decimal "
             "comma) and nothing in the file says which; set decimal_comma = true or false in settings.toml, or write "
             "it without the separator or with more decimals")
            ] == _errors(minimal.write_account(tmp_path, {"catalog.csv": CATALOG_INTEGERS}))


@pytest.mark.parametrize("setting, expected", [("true", 3.911), ("false", 3911.0)])
def test_decimal_comma_in_settings_settles_the_lone_group(tmp_path, setting, expected):
    # The other files' amounts are whole: with 25.00 there, their own values would say point, whatever the setting.
    folder = minimal.write_account(tmp_path, {"catalog.csv": CATALOG_INTEGERS,
                                              "ad_products.csv": minimal.AD_PRODUCTS.replace(".00", ""),
                                              "store_sales.csv": minimal.STORE_SALES.replace(".00", ""),
                                              "settings.toml": f"decimal_comma = {setting}\n"})
    inputs, _, problems = load(folder)
    assert expected == pytest.approx(inputs.get("catalog")["unit_cost"].iloc[0])
    assert [("catalog.csv", 2, "unit_cost", f"read 1 value(s) such as '3,911' as {expected:g} because settings.toml "
             f"has decimal_comma = {setting}; nothing in the file shows its decimal separator, so check them (rows 2)")
            ] == [(p.file, p.row, p.column, p.message) for p in problems if "decimal_comma =" in p.message]


def test_a_point_decimal_in_the_column_decides_a_comma_groups_thousands(tmp_path):
    catalog = CATALOG_INTEGERS.replace(",10,4,1", ",10,4.50,1")
    inputs, _, _ = load(minimal.write_account(tmp_path, {"catalog.csv": catalog}))
    assert [3911.0, 4.5] == inputs.get("catalog")["unit_cost"].tolist()


def test_a_point_written_with_decimal_comma_set_follows_the_files_own_points(tmp_path):
    catalog = CATALOG_INTEGERS.replace('"3,911"', "3.911").replace(",10,4,1", ",10,4.50,1")
    inputs, _, _ = load(minimal.write_account(tmp_path, {"catalog.csv": catalog, "settings.toml": "decimal_comma = true\n"}))
    assert [3.911, 4.5] == inputs.get("catalog")["unit_cost"].tolist()


def test_a_fraction_and_a_percent_with_a_decimal_comma_read_as_written(tmp_path):
    catalog = ("product_id;product_name;price;unit_cost;fees_per_unit;target_acos\n"
               "P1;Widget;20;8;2;0,125\nP2;Gadget;10;4;1;12,5 %\n")
    inputs, _, _ = load(minimal.write_account(tmp_path, {"catalog.csv": catalog}))
    assert [0.125, 0.125] == inputs.get("catalog")["target_acos"].tolist()


def _notes(problems) -> list[tuple[str, int | None, str | None, str]]:
    return [(p.file, p.row, p.column, p.message) for p in problems if "read with a decimal comma" in p.message]


def test_a_file_read_with_a_decimal_comma_says_so_naming_its_first_such_value(tmp_path):
    catalog = "product_id;product_name;price;unit_cost;fees_per_unit\nP1;Widget;20;8,50;2\nP2;Gadget;10;4;1\n"
    inputs, _, problems = load(minimal.write_account(tmp_path, {"catalog.csv": catalog}))
    assert [8.5, 4.0] == inputs.get("catalog")["unit_cost"].tolist()
    assert [("catalog.csv", 2, "unit_cost", "amounts are read with a decimal comma (the file's values write a decimal "
             "comma): '8,50' is read as 8.5")] == _notes(problems)


def test_a_lone_three_digit_group_read_by_the_semicolon_delimiter_names_both_readings(tmp_path):
    # A ';' delimiter means a decimal comma (common practice, no source); 8,500 alone could still group thousands.
    catalog = "product_id;product_name;price;unit_cost;fees_per_unit\nP1;Widget;20;8,500;2\nP2;Gadget;10;4;1\n"
    inputs, _, problems = load(minimal.write_account(tmp_path, {"catalog.csv": catalog}))
    assert [8.5, 4.0] == inputs.get("catalog")["unit_cost"].tolist()
    assert [("catalog.csv", 2, "unit_cost", "amounts are read with a decimal comma (a ';' delimiter (common practice "
             "in decimal-comma locales)): '8,500' is read as 8.5; it could be 8500 (a comma grouping thousands) or "
             "8.500 (a decimal comma): set decimal_comma = true or false in settings.toml to say which")
            ] == _notes(problems)


def test_a_file_written_with_decimal_points_has_no_decimal_comma_note(tmp_path):
    catalog = "product_id,product_name,price,unit_cost,fees_per_unit\nP1,Widget,20,8.50,2\nP2,Gadget,10,4,1\n"
    _, _, problems = load(minimal.write_account(tmp_path, {"catalog.csv": catalog}))
    assert [] == _notes(problems)


@pytest.mark.parametrize("text, form", [("1,234.56", "point"), ("1.234,56", "comma"), ("0,125", "comma"),
                                        ("12,5 %", "comma"), ("1.234.567", "comma"), ("3,911", "ambiguous"),
                                        ("3.911", "ambiguous"), ("$12", None), ("12.3456", "point")])
def test_what_one_value_shows_of_its_decimal_separator(text, form):
    assert form == separator_form(text)


def test_a_column_mixing_two_currencies_is_refused_naming_the_rows(tmp_path):
    ads = minimal.AD_PRODUCTS.replace(",25.00,100.00,", ",$ 25.00,$ 999.60,").replace(",10.00,30.00,", ",10.00,333.20 €,")
    assert [("ad_products.csv", 3, "ad_sales", "the column mixes currencies: '$' (row 2) and '€' (row 3); an account "
             "holds one currency (ISO 4217), and amounts in two are not added up. Split the file by marketplace, or "
             "convert the amounts to one currency")] == _errors(minimal.write_account(tmp_path, {"ad_products.csv": ads}))


def test_files_in_different_currencies_are_refused(tmp_path):
    sales = "product_id,units,revenue\nP1,10,EUR 200.00\nP2,5,EUR 50.00\n"
    ads = minimal.AD_PRODUCTS.replace(",25.00,", ",USD 25.00,")
    assert [("store_sales.csv, ad_products.csv", None, None, "the exports hold amounts in different currencies "
             "(store_sales.csv EUR; ad_products.csv USD); an account holds one currency (ISO 4217). Put each "
             "marketplace's exports in a folder of its own")
            ] == _errors(minimal.write_account(tmp_path, {"store_sales.csv": sales, "ad_products.csv": ads}))


def test_the_currency_found_is_shown_on_the_guide_and_a_dollar_sign_agrees_with_usd(tmp_path):
    import openpyxl
    from conftest import BUILT_ON
    from sheetbuilder.pipeline import build
    sales = "product_id,units,Revenue (USD)\nP1,10,200.00\nP2,5,50.00\n"
    ads = minimal.AD_PRODUCTS.replace(",25.00,", ",$25.00,")
    folder = minimal.write_account(tmp_path, {"store_sales.csv": sales, "ad_products.csv": ads})
    result = build(folder, folder / "book.xlsx", built_on=BUILT_ON)
    guide = {r[0]: r[1] for r in openpyxl.load_workbook(result.output)["Guide"].iter_rows(values_only=True) if r[0]}
    assert "USD" == guide["Currency in the exports"]
    assert [] == [p for p in result.warnings if "currency" in p.message]


def test_a_currency_other_than_currency_symbol_is_a_warning(tmp_path):
    ads = minimal.AD_PRODUCTS.replace(",25.00,", ",25.00 €,")
    _, _, problems = load(minimal.write_account(tmp_path, {"ad_products.csv": ads}))
    assert ["the amounts are in EUR, as their currency marks and headers show, but currency_symbol is '$'; set it "
            "in settings.toml so the workbook labels amounts rightly"] == [
        p.message for p in problems if "currency_symbol is" in p.message]
