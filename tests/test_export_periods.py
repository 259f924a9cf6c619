"""The period each export covers, read from its dated rows, its title block or its file name, and
exports covering different periods refused (or built as they are, labelled, when a setting says so).

Dates are read as ISO 8601 writes them (2026-11-01, and 20261101 in file names); a slashed date
whose day/month order nothing decides is refused or settled by date_order.
"""
from __future__ import annotations

import datetime as dt

import minimal
import pytest

from sheetbuilder.errors import ERROR, WARNING, InputProblems
from sheetbuilder.pipeline import load
from sheetbuilder.reading.periods import Period, declared_period

SALES_MONTH = "Sales report\nDate range: 2026-11-01 - 2026-11-30\n\n" + minimal.STORE_SALES
ADS_WEEK = "Advertised products\nDate range: 2026-11-24 - 2026-11-30\n" + minimal.AD_PRODUCTS


def _refusal(folder) -> list[str]:
    with pytest.raises(InputProblems) as caught:
        load(folder)
    return [p.message for p in caught.value.problems if p.severity == ERROR]


def test_a_title_row_stating_a_date_range_gives_the_files_period(tmp_path):
    ads = "Advertised products\nDate range: 2026-11-01 - 2026-11-30\n" + minimal.AD_PRODUCTS
    inputs, settings, _ = load(minimal.write_account(tmp_path, {"store_sales.csv": SALES_MONTH,
                                                                "ad_products.csv": ads}))
    assert Period(dt.date(2026, 11, 1), dt.date(2026, 11, 30)) == inputs.period
    assert (30, dt.date(2026, 11, 30)) == (settings.period_days, settings.period_end)


def test_a_month_of_sales_beside_a_week_of_ads_is_refused_naming_both_periods_and_the_fix(tmp_path):
    messages = _refusal(minimal.write_account(tmp_path, {"store_sales.csv": SALES_MONTH, "ad_products.csv": ADS_WEEK}))
    assert [("the exports cover different periods (ad_products.csv 2026-11-24 to 2026-11-30 (7 days); "
             "store_sales.csv 2026-11-01 to 2026-11-30 (30 days)); revenue, ad spend and the figures that combine "
             "them (TACoS, net profit after ads) would compare different days. Download every export for the same "
             "date range, or set period_mismatch = \"accept\" in settings.toml to build from them as they are")
            ] == messages


def test_period_mismatch_accept_builds_with_a_warning_saying_the_days_differ(tmp_path):
    folder = minimal.write_account(tmp_path, {"store_sales.csv": SALES_MONTH, "ad_products.csv": ADS_WEEK,
                                              "settings.toml": 'period_mismatch = "accept"\n'})
    inputs, _, problems = load(folder)
    assert [200.0, 50.0] == inputs.get("store_sales")["revenue"].tolist()  # as written, not scaled
    accepted = [p for p in problems if "period_mismatch = \"accept\"" in p.message]
    assert [WARNING] == [p.severity for p in accepted]
    assert "compare different days, as written" in accepted[0].message


def test_the_file_name_holding_two_iso_dates_gives_the_period(tmp_path):
    folder = minimal.write_account(tmp_path, {"store_sales.csv": None, "sales 2026-11-24 to 2026-11-30.csv":
                                              minimal.STORE_SALES, "ad_products.csv": ADS_WEEK,
                                              "settings.toml": '[files]\nstore_sales = "sales 2026-11-24 to '
                                                               '2026-11-30.csv"\n'})
    inputs, _, _ = load(folder)
    assert Period(dt.date(2026, 11, 24), dt.date(2026, 11, 30)) == inputs.period


def test_a_file_name_in_iso_basic_form_beside_a_title_of_another_week_is_refused(tmp_path):
    folder = minimal.write_account(tmp_path, {"store_sales.csv": None, "sales_20261101_20261107.csv":
                                              minimal.STORE_SALES, "ad_products.csv": ADS_WEEK,
                                              "settings.toml": '[files]\nstore_sales = "sales_20261101_20261107.csv"\n'})
    messages = _refusal(folder)
    assert 1 == len(messages)
    assert "sales_20261101_20261107.csv 2026-11-01 to 2026-11-07 (7 days)" in messages[0]


def test_an_undated_file_beside_dated_ones_is_named_in_a_warning(tmp_path):
    _, _, problems = load(minimal.write_account(tmp_path, {"ad_products.csv": ADS_WEEK}))
    named = [p for p in problems if p.file == "store_sales.csv"]
    assert [("states no period (no dates in its rows, title or file name) while the other exports cover "
             "2026-11-24 to 2026-11-30 (7 days); check it was downloaded for the same days", WARNING)
            ] == [(p.message, p.severity) for p in named]


def test_a_slashed_title_range_nothing_decides_is_refused_with_both_readings(tmp_path):
    ads = "Date range: 01/11/2026 - 07/11/2026\n" + minimal.AD_PRODUCTS
    messages = _refusal(minimal.write_account(tmp_path, {"ad_products.csv": ads}))
    assert [("the title row 1 'Date range: 01/11/2026 - 07/11/2026' states a period that does not read: the dates "
             "01/11/2026 and 07/11/2026 could be read as 2026-11-01 to 2026-11-07 (7 days) or 2026-01-11 to "
             "2026-07-11 (182 days); set date_order = \"dmy\" or \"mdy\" in settings.toml")] == messages


@pytest.mark.parametrize("order, expected", [("dmy", Period(dt.date(2026, 11, 1), dt.date(2026, 11, 7))),
                                             ("mdy", Period(dt.date(2026, 1, 11), dt.date(2026, 7, 11)))])
def test_date_order_settles_a_slashed_title_range(order, expected):
    assert expected == declared_period([["Date range: 01/11/2026 - 07/11/2026"]], "ads", order)[0]


def test_a_title_with_one_date_states_no_period():
    assert (None, "", None) == declared_period([["Report made 2026-12-01"]], "ads")


def test_dated_rows_outside_the_stated_period_are_refused(tmp_path):
    ads = ("Date range: 2026-11-24 - 2026-11-30\nDate," + minimal.AD_PRODUCTS.splitlines()[0] + "\n"
           + "".join(f"2026-11-20,{line}\n" for line in minimal.AD_PRODUCTS.splitlines()[1:]))
    messages = _refusal(minimal.write_account(tmp_path, {"ad_products.csv": ads}))
    assert [("the title row 1 'Date range: 2026-11-24 - 2026-11-30' states 2026-11-24 to 2026-11-30 (7 days) but its "
             "rows are dated 2026-11-20 to 2026-11-20 (1 days); download the export again for one date range")
            ] == messages


def _daily_sales(days: list[str]) -> str:
    return "date,product_id,units,revenue\n" + "".join(f"{d},P1,1,20.00\n{d},P2,1,10.00\n" for d in days)


def test_ambiguous_dates_print_as_one_line_with_the_count_and_first_rows(tmp_path):
    days = [f"0{i}/11/2026" for i in range(1, 8)]  # days 1 to 7: each could be a month
    with pytest.raises(InputProblems) as caught:
        load(minimal.write_account(tmp_path, {"store_sales.csv": _daily_sales(days)}))
    assert [("store_sales.csv", 2, "date", "14 cells alike (first rows 2, 3, 4, 5, 6, ...): '01/11/2026' could be "
             "day/month or month/day and no date in the column says which; set date_order = \"dmy\" or \"mdy\" in "
             "settings.toml, or write dates as 2026-11-23")
            ] == [(p.file, p.row, p.column, p.message) for p in caught.value.problems if p.severity == ERROR]


@pytest.mark.parametrize("order, start", [("dmy", dt.date(2026, 11, 1)), ("mdy", dt.date(2026, 1, 11))])
def test_date_order_settles_a_daily_column_within_days_1_to_12(tmp_path, order, start):
    days = [f"0{i}/11/2026" for i in range(1, 8)]
    folder = minimal.write_account(tmp_path, {"store_sales.csv": _daily_sales(days),
                                              "settings.toml": f'date_order = "{order}"\n'})
    inputs, _, _ = load(folder)
    assert start == inputs.period.start


def test_a_day_above_12_anywhere_in_the_column_decides_the_order(tmp_path):
    days = [f"0{i}/11/2026" for i in range(1, 8)] + ["13/11/2026"]
    inputs, _, _ = load(minimal.write_account(tmp_path, {"store_sales.csv": _daily_sales(days)}))
    assert Period(dt.date(2026, 11, 1), dt.date(2026, 11, 13)) == inputs.period


@pytest.mark.parametrize("name", ["store_sales 2026-11-24 to 2026-11-30.csv", "store_sales_20261124_20261130.csv"])
def test_a_file_named_for_its_table_and_period_is_found_and_dated(tmp_path, name):
    folder = minimal.write_account(tmp_path, {"store_sales.csv": None, name: minimal.STORE_SALES,
                                              "ad_products.csv": ADS_WEEK})
    inputs, _, _ = load(folder)
    assert (name, Period(dt.date(2026, 11, 24), dt.date(2026, 11, 30))) == (inputs.sources["store_sales"].name,
                                                                           inputs.period)
