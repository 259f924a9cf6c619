"""Readers: header matching, numbers as exports write them, encodings, delimiters and .xlsx."""
from __future__ import annotations

import minimal

import math
from pathlib import Path

import openpyxl
import pandas as pd
import pytest

from sheetbuilder.pipeline import build, load
from sheetbuilder.errors import InputProblems

CATALOG = """product_id,product_name,price,unit_cost,fees_per_unit,target_acos
P1,Widget,20.00,8.00,2.00,25%
P2,Gadget,10.00,4.00,1.00,
"""
STORE_SALES = """product_id,units,revenue
P1,10,200.00
P2,5,50.00
"""
AD_HEADER = "campaign,ad_group,product_id,ad_type,impressions,clicks,spend,ad_sales,orders"
AD_PRODUCTS = AD_HEADER + """
C1,G1,P1,product ads,1000,50,25.00,100.00,5
C1,G1,P2,product ads,500,20,10.00,30.00,2
"""


def write_account(folder: Path, files: dict[str, str | bytes | None] | None = None) -> Path:
    """The minimal account with this module's catalog and ad rows; files overrides a file's text."""
    return minimal.write_account(folder, {"catalog.csv": CATALOG, "store_sales.csv": STORE_SALES,
                                          "ad_products.csv": AD_PRODUCTS, **(files or {})})


def table(folder: Path, name: str) -> pd.DataFrame:
    """The validated frame of one table (the load must succeed)."""
    inputs, _, _ = load(folder)
    return inputs.get(name)


def problems_of(folder: Path) -> list:
    with pytest.raises(InputProblems) as caught:
        load(folder)
    return caught.value.problems


def ads_with(header_of_spend: str, spend: str = "25.00") -> str:
    """ad_products.csv with the spend column's header and first spend cell replaced."""
    return (AD_HEADER.replace("spend", header_of_spend) + "\n"
            f"C1,G1,P1,product ads,1000,50,{spend},100.00,5\n"
            "C1,G1,P2,product ads,500,20,10.00,30.00,2\n")


# Header matching

@pytest.mark.parametrize("header", ["Ad Spend", "AD_SPEND", "ad-spend", " spend ", "SPEND"])
def test_header_matching_ignores_case_spaces_and_punctuation(tmp_path, header):
    frame = table(write_account(tmp_path, {"ad_products.csv": ads_with(header)}), "ad_products")
    assert [25.0, 10.0] == frame["spend"].tolist()
    assert header == frame.attrs["headers"]["spend"]


@pytest.mark.parametrize("header", ["Cost", "Amount Spent", "Total Spend"])
def test_generic_synonyms_find_the_spend_column(tmp_path, header):
    frame = table(write_account(tmp_path, {"ad_products.csv": ads_with(header)}), "ad_products")
    assert [25.0, 10.0] == frame["spend"].tolist()


def test_trade_synonyms_read_a_whole_export(tmp_path):
    ads = ("Campaign Name,Ad Group,SKU,Ad Type,Impr.,Clicks,Cost,Attributed Sales,Conversions\n"
           "C1,G1,P1,product ads,1000,50,25.00,100.00,5\n")
    frame = table(write_account(tmp_path, {"ad_products.csv": ads}), "ad_products")
    assert ["C1", "G1", "P1", 1000.0, 25.0, 100.0, 5.0] == [
        frame.iloc[0][k] for k in ("campaign", "ad_group", "product_id", "impressions", "spend", "ad_sales",
                                   "orders")]


def test_explicit_column_mapping_in_settings(tmp_path):
    toml = '[columns.ad_products]\nspend = "Money Burned (USD)"\n'
    folder = write_account(tmp_path, {"ad_products.csv": ads_with("Money Burned (USD)"), "settings.toml": toml})
    assert [25.0, 10.0] == table(folder, "ad_products")["spend"].tolist()


def test_explicit_mapping_to_a_header_the_file_lacks_is_reported(tmp_path):
    toml = '[columns.ad_products]\nspend = "Money Burned"\n'
    problems = problems_of(write_account(tmp_path, {"settings.toml": toml}))
    assert [("ad_products.csv", 1, "Money Burned")] == [(p.file, p.row, p.column) for p in problems]


def test_two_columns_that_could_both_be_spend_are_reported(tmp_path):
    ads = (AD_HEADER.replace("spend", "Cost,Ad Cost") + "\n"
           "C1,G1,P1,product ads,1000,50,25.00,25.00,100.00,5\n")
    problems = problems_of(write_account(tmp_path, {"ad_products.csv": ads}))
    assert [("ad_products.csv", 1, "Cost")] == [(p.file, p.row, p.column) for p in problems]
    assert "several columns could be 'spend'" in problems[0].message


# Numbers

@pytest.mark.parametrize("text, expected", [
    ('"$1,234.56"', 1234.56), ("1234.56", 1234.56), ("USD 12.50", 12.5), ("€3", 3.0), ("1.5e3", 1500.0),
    ('"1,234"', 1234.0), ("12.50€", 12.5), ("US$ 3", 3.0), ("12 kr", 12.0),
])
def test_money_as_exports_write_it(tmp_path, text, expected):
    frame = table(write_account(tmp_path, {"ad_products.csv": ads_with("spend", text)}), "ad_products")
    assert expected == pytest.approx(frame["spend"].iloc[0])


def test_percent_sign_in_target_acos(tmp_path):
    catalog = CATALOG.replace("25%", "36%")
    assert 0.36 == pytest.approx(table(write_account(tmp_path, {"catalog.csv": catalog}), "catalog")
                                 ["target_acos"].iloc[0])


def test_bare_30_in_target_acos_reads_as_30_percent(tmp_path):
    catalog = CATALOG.replace("25%", "30")
    assert 0.30 == pytest.approx(table(write_account(tmp_path, {"catalog.csv": catalog}), "catalog")
                                 ["target_acos"].iloc[0])


def test_a_share_written_as_a_fraction_stays(tmp_path):
    catalog = CATALOG.replace("25%", "0.3")
    assert 0.30 == pytest.approx(table(write_account(tmp_path, {"catalog.csv": catalog}), "catalog")
                                 ["target_acos"].iloc[0])


def test_parenthesised_amount_is_negative_and_so_a_problem(tmp_path):
    problems = problems_of(write_account(tmp_path, {"ad_products.csv": ads_with("spend", "(12.50)")}))
    assert [("ad_products.csv", 2, "spend")] == [(p.file, p.row, p.column) for p in problems]
    assert "'(12.50)' is negative; expected zero or more" == problems[0].message


def _comma_decimals(text: str) -> str:
    """A CSV text as a decimal-comma export writes it: semicolons between cells, commas in numbers."""
    return text.replace(",", ";").replace(".", ",")


def test_decimal_comma_from_settings(tmp_path):
    ads = (AD_HEADER.replace(",", ";") + "\n"
           "C1;G1;P1;product ads;1.000;50;1.234,56;100,00;5\n"
           "C1;G1;P2;product ads;500;20;10,00;30,00;2\n")
    folder = write_account(tmp_path, {"ad_products.csv": ads, "catalog.csv": _comma_decimals(CATALOG),
                                      "store_sales.csv": _comma_decimals(STORE_SALES),
                                      "settings.toml": "decimal_comma = true\n"})
    inputs, _, _ = load(folder)
    assert [1234.56, 10.0] == pytest.approx(inputs.get("ad_products")["spend"].tolist())
    assert [1000.0, 500.0] == inputs.get("ad_products")["impressions"].tolist()
    assert [20.0, 10.0] == pytest.approx(inputs.get("catalog")["price"].tolist())


def test_decimal_comma_does_not_change_numbers_stored_in_an_xlsx(tmp_path):
    folder = write_account(tmp_path, {"catalog.csv": None, "store_sales.csv": _comma_decimals(STORE_SALES),
                                      "ad_products.csv": _comma_decimals(AD_PRODUCTS),
                                      "settings.toml": "decimal_comma = true\n"})
    _write_xlsx(folder / "catalog.xlsx", [
        ["product_id", "product_name", "price", "unit_cost", "fees_per_unit"],
        ["P1", "Widget", 20.5, 8.25, "2,10"],
        ["P2", "Gadget", 10, 4, 1],
    ])
    frame = table(folder, "catalog")
    assert [20.5, 10.0] == pytest.approx(frame["price"].tolist())
    assert [2.1, 1.0] == pytest.approx(frame["fees_per_unit"].tolist())


def test_a_decimal_comma_without_the_setting_is_read_from_the_files_own_evidence(tmp_path):
    ads = AD_HEADER.replace(",", ";") + "\nC1;G1;P1;product ads;1000;50;12,50;100;5\n"  # 12,50: two decimals
    assert [12.5] == table(write_account(tmp_path, {"ad_products.csv": ads}), "ad_products")["spend"].tolist()


def test_a_decimal_point_with_the_decimal_comma_setting_is_a_problem(tmp_path):
    folder = write_account(tmp_path, {"settings.toml": "decimal_comma = true\n",
                                      "store_sales.csv": "product_id;units;revenue\nP1;10;200,00\nP2;5;50,00\n",
                                      "catalog.csv": _comma_decimals(CATALOG),
                                      "ad_products.csv": _comma_decimals(AD_PRODUCTS).replace("25,00", "0.85")})
    problems = [p for p in problems_of(folder) if p.severity == "error"]
    assert [("ad_products.csv", 2, "spend")] == [(p.file, p.row, p.column) for p in problems]
    assert "decimal_comma = true, so a point only groups thousands" in problems[0].message


@pytest.mark.parametrize("text", ["12abc", "5 kg", "--5", "12e", "1,2,3", "N/A", "-"])
def test_text_that_only_starts_like_a_number_is_a_problem(tmp_path, text):
    problems = problems_of(write_account(tmp_path, {"ad_products.csv": ads_with("spend", f'"{text}"')}))
    assert [("ad_products.csv", 2, "spend")] == [(p.file, p.row, p.column) for p in problems]
    assert f"'{text}' is not a number; expected an amount" in problems[0].message


def test_blank_counts_and_money_read_as_zero_and_blank_target_acos_as_missing(tmp_path):
    ads = AD_HEADER + "\nC1,G1,P1,product ads,,,,,\n"
    folder = write_account(tmp_path, {"ad_products.csv": ads})
    inputs, _, _ = load(folder)
    row = inputs.get("ad_products").iloc[0]
    assert [0.0, 0.0, 0.0, 0.0, 0.0] == [row[k] for k in ("impressions", "clicks", "spend", "ad_sales", "orders")]
    assert math.isnan(inputs.get("catalog")["target_acos"].iloc[1])


def test_negative_margin_in_the_catalog_is_accepted(tmp_path):
    catalog = ("product_id,product_name,price,unit_cost,fees_per_unit,margin\n"
               "P1,Widget,20.00,8.00,2.00,-12%\nP2,Gadget,10.00,4.00,1.00,-20\n")
    frame = table(write_account(tmp_path, {"catalog.csv": catalog}), "catalog")
    assert [-0.12, -0.20] == pytest.approx(frame["margin"].tolist())


def test_fraction_in_a_count_column_is_a_problem(tmp_path):
    ads = AD_PRODUCTS.replace(",50,", ",50.5,")
    problems = problems_of(write_account(tmp_path, {"ad_products.csv": ads}))
    assert [("ad_products.csv", 2, "clicks")] == [(p.file, p.row, p.column) for p in problems]
    assert "is not a whole number" in problems[0].message


def test_a_header_row_pasted_among_the_data_is_one_problem_naming_its_row(tmp_path):
    # Two exports pasted into one file bring the second one's header along: said once, as what it is, not as a
    # wrong number in each of its cells.
    lines = AD_PRODUCTS.strip().splitlines()
    pasted = "\n".join([lines[0], lines[1], " " + lines[0].upper(), lines[2]]) + "\n"
    problems = problems_of(write_account(tmp_path, {"ad_products.csv": pasted}))
    assert [("ad_products.csv", 3, None, "error")] == [(p.file, p.row, p.column, p.severity) for p in problems]
    assert problems[0].message.startswith("this row repeats the header row")


# Encodings, delimiters, .xlsx

CAFE_CATALOG = ("product_id,product_name,price,unit_cost,fees_per_unit,target_acos\n"
                "P1,Caf\u00e9 Mug,20.00,8.00,2.00,25%\nP2,Gadget,10.00,4.00,1.00,\n")


def _frames_equal(a: pd.DataFrame, b: pd.DataFrame) -> None:
    pd.testing.assert_frame_equal(a, b)
    assert a.attrs["headers"] == b.attrs["headers"]


def test_utf8_with_bom_reads_like_plain_utf8(tmp_path):
    plain = table(write_account(tmp_path / "a", {"catalog.csv": CAFE_CATALOG}), "catalog")
    bom = table(write_account(tmp_path / "b", {"catalog.csv": CAFE_CATALOG.encode("utf-8-sig")}), "catalog")
    _frames_equal(plain, bom)
    assert "Caf\u00e9 Mug" == bom["product_name"].iloc[0]


def test_cp1252_reads_like_utf8(tmp_path):
    data = CAFE_CATALOG.encode("cp1252")
    assert b"Caf\xe9 Mug" in data
    plain = table(write_account(tmp_path / "a", {"catalog.csv": CAFE_CATALOG}), "catalog")
    legacy = table(write_account(tmp_path / "b", {"catalog.csv": data}), "catalog")
    _frames_equal(plain, legacy)


def test_semicolon_delimited_csv_reads_like_comma(tmp_path):
    plain = table(write_account(tmp_path / "a"), "ad_products")
    semi = table(write_account(tmp_path / "b", {"ad_products.csv": AD_PRODUCTS.replace(",", ";")}), "ad_products")
    _frames_equal(plain, semi)


def test_tab_delimited_csv_reads_like_comma(tmp_path):
    plain = table(write_account(tmp_path / "a"), "store_sales")
    tabs = table(write_account(tmp_path / "b", {"store_sales.csv": STORE_SALES.replace(",", "\t")}), "store_sales")
    _frames_equal(plain, tabs)


def _write_xlsx(path: Path, rows: list[list]) -> None:
    wb = openpyxl.Workbook()
    ws = wb.active
    for row in rows:
        ws.append(row)
    wb.save(path)


def test_xlsx_catalog_reads_like_the_csv(tmp_path):
    csv_frame = table(write_account(tmp_path / "a", {"catalog.csv": CAFE_CATALOG}), "catalog")
    folder = write_account(tmp_path / "b", {"catalog.csv": None})
    _write_xlsx(folder / "catalog.xlsx", [
        ["product_id", "product_name", "price", "unit_cost", "fees_per_unit", "target_acos"],
        ["P1", "Caf\u00e9 Mug", 20, 8.0, 2, 0.25],
        ["P2", "Gadget", 10.0, 4, 1.0, None],
    ])
    xlsx_frame = table(folder, "catalog")
    _frames_equal(csv_frame, xlsx_frame)
    assert "catalog.xlsx" == xlsx_frame.attrs["file"]


def test_xlsx_problem_rows_are_spreadsheet_rows(tmp_path):
    folder = write_account(tmp_path, {"store_sales.csv": None})
    _write_xlsx(folder / "store_sales.xlsx", [
        ["product_id", "units", "revenue"], ["P1", 10, 200], [None, None, None], ["P2", "five", 50],
    ])
    problems = problems_of(folder)
    assert [("store_sales.xlsx", 4, "units")] == [(p.file, p.row, p.column) for p in problems]


def test_text_starting_with_equals_stays_text(tmp_path):
    catalog = CATALOG.replace("Widget", "=1+2").replace("Gadget", '"=HYPERLINK(""http://x"",""y"")"')
    folder = write_account(tmp_path / "in", {"catalog.csv": catalog})
    frame = table(folder, "catalog")
    assert ["=1+2", '=HYPERLINK("http://x","y")'] == frame["product_name"].tolist()
    out = build(folder, tmp_path / "out.xlsx").output
    ws = openpyxl.load_workbook(out)["in_catalog"]
    names = {ws.cell(r, 2).value: ws.cell(r, 2).data_type for r in range(2, ws.max_row + 1)
             if ws.cell(r, 2).value is not None}  # the open rows below the table are blank
    assert {"=1+2": "s", '=HYPERLINK("http://x","y")': "s"} == names


def test_text_starting_with_equals_in_xlsx_stays_text(tmp_path):
    folder = write_account(tmp_path, {"catalog.csv": None})
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.append(["product_id", "product_name", "price", "unit_cost", "fees_per_unit"])
    ws.append(["P1", None, 20, 8, 2])
    ws["B2"].value = "=1+2"
    ws["B2"].data_type = "s"
    ws.append(["P2", "Gadget", 10, 4, 1])
    wb.save(folder / "catalog.xlsx")
    assert ["=1+2", "Gadget"] == table(folder, "catalog")["product_name"].tolist()


def test_row_numbers_count_blank_lines_and_the_header(tmp_path):
    ads = AD_HEADER + "\n\nC1,G1,P1,product ads,1000,50,lots,100.00,5\n"
    problems = problems_of(write_account(tmp_path, {"ad_products.csv": ads}))
    assert [("ad_products.csv", 3, "spend")] == [(p.file, p.row, p.column) for p in problems]


def test_file_found_by_name_ignoring_case_and_punctuation(tmp_path):
    folder = write_account(tmp_path, {"ad_products.csv": None, "Ad-Products.CSV": AD_PRODUCTS})
    assert 2 == len(table(folder, "ad_products"))
