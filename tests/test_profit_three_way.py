"""Three-way truth for the Profit sheet: independent reference = cached value = recalculated.

The reference is tests/oracle.py, written from the trade's definitions (common practice,
no single source). Cached = recalculated for every formula cell of the workbook, by the
`formulas` library and by LibreOffice, is checked in test_recalc_engines.py; here the
LibreOffice-recalculated Profit values are also compared with the reference directly.
"""
from __future__ import annotations

import datetime as dt

import openpyxl
import pytest
from hypothesis import HealthCheck, given, settings

from accounts import accounts, write_account
from conftest import BUILT_ON, DEMO
from profit_io import HEADER_ROW, PROFIT_CHECKED, PROFIT_HEADERS, oracle_for, profit_table
from workbook_io import mismatches, open_values
from sheetbuilder.pipeline import build

TOTAL_HEADERS = ["Units", "Revenue", "Ad spend", "Ad sales", "TACoS", "ACoS", "Margin before ads",
                 "Net margin after ads", "Net profit after ads", "Sales share", "Spend share"]


def _check_against_oracle(path, folder, label):
    rows, totals, _ = profit_table(path)
    expected, expected_totals = oracle_for(folder)
    problems = mismatches(expected, rows, PROFIT_CHECKED, label)
    problems += mismatches({"Total": expected_totals}, {"Total": totals}, TOTAL_HEADERS, label + " totals")
    assert [] == problems
    assert sorted(expected) == sorted(rows)


def test_profit_headers_are_the_documented_ones(demo_build):
    ws = open_values(demo_build.output)["Profit"]
    assert PROFIT_HEADERS == [c.value for c in ws[HEADER_ROW]][: len(PROFIT_HEADERS)]


def test_sheets_come_in_documented_order(demo_build):
    names = openpyxl.load_workbook(demo_build.output, read_only=True).sheetnames
    assert ["Guide", "Settings", "Profit", "Bids", "Terms", "Harvest", "Negatives", "Mix", "Budget", "Actions",
            "Keyword history", "Groups", "Keys"] == names[:13]
    assert all(n.startswith("in_") for n in names[13:])


def test_every_computed_profit_cell_is_a_formula(demo_build):
    ws = openpyxl.load_workbook(demo_build.output)["Profit"]
    computed = PROFIT_HEADERS[2:]
    headers = [c.value for c in ws[HEADER_ROW]]
    for row in ws.iter_rows(min_row=HEADER_ROW + 1, max_row=ws.max_row):
        if row[0].value is None:
            break
        for h, cell in zip(headers, row):
            if h in computed and not (row[0].value == "Total" and cell.value is None):
                assert str(cell.value).startswith("="), f"{cell.coordinate} ({h}) is not a formula"


def test_demo_cached_values_equal_reference(demo_build):
    _check_against_oracle(demo_build.output, DEMO, "demo cached")


@pytest.mark.libreoffice
def test_demo_libreoffice_recalculation_equals_reference(libreoffice):
    _check_against_oracle(libreoffice["demo"], DEMO, "demo LibreOffice")


@pytest.mark.libreoffice
def test_demo_libreoffice_shows_the_attribution_warning(libreoffice, demo_build):
    # The demo period ended 2026-11-29, built 2026-12-02: 3 days inside a 7-day window.
    ws = open_values(libreoffice["demo"])["Profit"]
    assert ws["A3"].value.startswith("Warning: the period ended less than the attribution window")
    guide = open_values(libreoffice["demo"])["Guide"]
    assert any(str(c.value).startswith("Warning:") for row in guide.iter_rows() for c in row if c.value)


def test_generated_cached_values_equal_reference(generated, work):
    for i, (_, result) in enumerate(generated):
        _check_against_oracle(result.output, work / f"gen{i}", f"generated {i} cached")


@pytest.mark.libreoffice
def test_generated_libreoffice_recalculation_equals_reference(libreoffice, generated, work):
    for i, (_, result) in enumerate(generated):
        _check_against_oracle(libreoffice[result.output.stem], work / f"gen{i}", f"generated {i} LibreOffice")


@pytest.mark.slow
@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(account=accounts())
def test_any_generated_account_caches_the_reference_values(account, tmp_path_factory):
    folder = write_account(account, tmp_path_factory.mktemp("acct"))
    result = build(folder, folder / "out.xlsx", built_on=BUILT_ON)
    _check_against_oracle(result.output, folder, "property")


@pytest.mark.slow  # several seconds: the fast lane stays under two minutes
def test_warning_is_blank_once_the_attribution_window_has_passed(tmp_path):
    result = build(DEMO, tmp_path / "later.xlsx", built_on=dt.date(2026, 12, 20))
    assert "" == (open_values(result.output)["Profit"]["A3"].value or "")
