"""Mix and Budget: three-way truth against tests/oracle_mix.py, the budget properties, a live
edit, and the charts.

The ad-type benchmark shares and the shift share are settings whose defaults are the
trade's rules of thumb (common practice, no source).
"""
from __future__ import annotations

import re
import zipfile

import pytest
from hypothesis import HealthCheck, given, settings

from accounts import accounts, write_account
from conftest import BUILT_ON, DEMO
from oracle import profit_oracle
from oracle_mix import budget_oracle, mix_oracle
from reference_columns import (BUDGET_CAMPAIGNS, BUDGET_PRODUCTS, MIX_BY_MATCH, MIX_PRODUCTS, MIX_TOP,
                               MIX_TYPES)
from workbook_io import mismatches, open_values
from sheetbuilder.pipeline import load, plan_workbook


def find_header(ws, first_header, after=0):
    """The 1-based row whose first cell is first_header (after a given row)."""
    for row in range(after + 1, ws.max_row + 1):
        if ws.cell(row, 1).value == first_header:
            return row
    raise KeyError(first_header)


def block(ws, header_row, key_cols=1):
    """{key: {header: value}} of the table whose header is header_row, up to its first blank row."""
    headers = [c.value for c in ws[header_row]]
    out = {}
    for r in range(header_row + 1, ws.max_row + 1):
        cells = [ws.cell(r, i + 1).value for i in range(len(headers))]
        if cells[0] in (None, ""):
            break
        key = cells[0] if key_cols == 1 else tuple(cells[:key_cols])
        out[key] = {h: v for h, v in zip(headers, cells) if h}
    return out


def oracles(folder, settings_changes=None):
    inputs, s, _ = load(folder)
    if settings_changes:
        s = s.replace(**settings_changes)
    profit, _ = profit_oracle(inputs.tables, s)
    return mix_oracle(inputs.tables, s, profit), budget_oracle(inputs.tables, s, profit)


def _check(path, folder, label, settings_changes=None):
    mix, (products, campaigns) = oracles(folder, settings_changes)
    wb = open_values(path)
    ws = wb["Mix"]
    types = block(ws, find_header(ws, "Ad type"))
    types.pop("Total", None)
    assert sorted(mix["types"]) == sorted(types), label
    problems = mismatches(mix["types"], types, MIX_TYPES, label + " types")
    top = block(ws, find_header(ws, "Product"))
    problems += mismatches(mix["top"], top, MIX_TOP, label + " top")
    if mix["by_match"]:
        row = find_header(ws, "Match type")
        problems += mismatches(mix["by_match"], block(ws, row), MIX_BY_MATCH, label + " by match")
        got = block(ws, find_header(ws, "Product ID", row), key_cols=2)
        assert sorted(mix["products"]) == sorted(got), label
        problems += mismatches(mix["products"], got, MIX_PRODUCTS, label + " products")
    ws = wb["Budget"]
    got = block(ws, find_header(ws, "Product ID"))
    got.pop("Total", None)
    problems += mismatches(products, got, BUDGET_PRODUCTS, label + " budget")
    if campaigns:
        got = block(ws, find_header(ws, "Campaign"))
        assert sorted(campaigns) == sorted(got), label
        problems += mismatches(campaigns, got, BUDGET_CAMPAIGNS, label + " campaigns")
    assert [] == problems


def test_demo_mix_and_budget_cached_values_equal_reference(demo_build):
    _check(demo_build.output, DEMO, "demo cached")


@pytest.mark.slow  # several seconds: the fast lane stays under two minutes
def test_demo_mix_says_which_ad_types_do_not_run(tmp_path):
    import shutil
    from sheetbuilder.pipeline import build
    folder = tmp_path / "two_types"
    shutil.copytree(DEMO, folder)
    text = (folder / "ad_products.csv").read_text().replace("display ads", "brand ads")
    (folder / "ad_products.csv").write_text(text)
    ws = open_values(build(folder, tmp_path / "t.xlsx", built_on=BUILT_ON).output)["Mix"]
    rows = block(ws, find_header(ws, "Ad type"))
    assert (0, 0.05, "not running") == (rows["display ads"]["Spend"], rows["display ads"]["Benchmark share"],
                                         rows["display ads"]["Note"])


@pytest.mark.libreoffice
def test_demo_mix_and_budget_libreoffice_equal_reference(libreoffice):
    _check(libreoffice["demo"], DEMO, "demo LibreOffice")


def test_generated_mix_and_budget_cached_values_equal_reference(generated, work):
    for i, (_, result) in enumerate(generated):
        _check(result.output, work / f"gen{i}", f"generated {i}")


@pytest.mark.libreoffice
def test_generated_mix_and_budget_libreoffice_equal_reference(libreoffice, generated, work):
    for i, (_, result) in enumerate(generated):
        _check(libreoffice[result.output.stem], work / f"gen{i}", f"generated {i} LibreOffice")


@pytest.mark.slow
@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(account=accounts())
def test_the_budget_shift_keeps_total_spend_and_moves_the_right_way(account, tmp_path_factory):
    folder = write_account(account, tmp_path_factory.mktemp("budget"))
    inputs, s, _ = load(folder)
    plan = plan_workbook(inputs, s, BUILT_ON)
    products = plan.tables["Budget products"].frame
    assert products["spend"].sum() == pytest.approx(products["proposed"].sum(), abs=0.005)  # to the cent
    cut, grow = products["direction"] == "cut", products["direction"] == "grow"
    assert (products.loc[cut, "proposed"] <= products.loc[cut, "spend"] + 1e-9).all()
    assert (products.loc[grow, "proposed"] >= products.loc[grow, "spend"] - 1e-9).all()
    if "Budget campaigns" in plan.tables:
        c = plan.tables["Budget campaigns"].frame
        limit = s.max_budget_change * c["budget"] + 0.5 + 1e-9  # rounded to the currency unit
        assert ((c["proposed"] - c["budget"]).abs() <= limit).all()


@pytest.mark.libreoffice
def test_a_shift_share_of_zero_leaves_every_spend_as_it_is(libreoffice):
    ws = open_values(libreoffice["edit_shift"])["Budget"]
    rows = block(ws, find_header(ws, "Product ID"))
    rows.pop("Total")
    assert rows and all(r["Proposed spend"] == pytest.approx(r["Current spend"], abs=1e-9) for r in rows.values())
    _check(libreoffice["edit_shift"], DEMO, "after shift edit", {"budget_shift_share": 0.0})


def _chart_refs(path):
    with zipfile.ZipFile(path) as z:
        charts = sorted(n for n in z.namelist() if re.fullmatch(r"xl/charts/chart\d+\.xml", n))
        return [(re.findall(r"<c:f>([^<]+)</c:f>", z.read(n).decode()),
                 re.findall(r"<a:t>([^<]+)</a:t>", z.read(n).decode())) for n in charts]


def test_the_mix_charts_are_native_and_plot_the_mix_tables(demo_build):
    charts = _chart_refs(demo_build.output)
    titles = [t[0] for _, t in charts]
    assert ["Ad-type share of spend against the benchmark", "Spend share against sales share, top products",
            "ACoS by match type"] == titles
    ws = open_values(demo_build.output)["Mix"]
    type_row = find_header(ws, "Ad type")
    refs, _ = charts[0]
    assert f"Mix!$A${type_row + 1}:$A${type_row + 3}" in refs  # three ad types in the demo
    top_row = find_header(ws, "Product")
    refs, _ = charts[1]
    assert f"Mix!$B${top_row + 1}:$B${top_row + 9}" in refs  # eight products and All others
    assert all(r.startswith("Mix!") for refs, _ in charts for r in refs)
