"""Stock (issue 25): an optional inventory export, Days of cover on Profit, low stock in Direction, spend held
on Budget, the low-stock products on the Guide, and nothing changed without the export.

The three-product account below is laid out by hand (period 30 days, budget shift share 25%, both defaults):

    product  price cost fees  units revenue  spend   margin  TACoS  spend share  sales share  ratio
    P1       20    6    2     60    1200     60      60%     5%     1/3          4/7          0.583  strong: grow
    P2       10    8    1     30    300      90      10%     30%    1/2          1/7          3.5    loss:   cut
    P3       20    6    2     30    600      30      60%     5%     1/6          2/7          0.583  strong: grow

Budget without stock: P2's cut gives up 25% of 90 = 22.5, shared by revenue between P1 (1200/1800 = 15, so 75)
and P3 (7.5, so 37.5). With two units of P1 left, its cover is 2 / (60 / 30) = 1 day, below the 30-day minimum
(a rule of thumb, common practice): P1 reads low stock and keeps 60, and P3 receives the whole 22.5 (52.5).
"""
from __future__ import annotations

import csv
import math
import shutil
import tempfile
from pathlib import Path

import openpyxl
import pandas as pd
import pytest
from hypothesis import HealthCheck, given, settings as hsettings

from accounts import accounts, write_account
from conftest import BUILT_ON, DEMO
from bids_io import CHECKED as BIDS_CHECKED, bids_table
from oracle import bids_oracle, profit_oracle
from oracle_mix import budget_oracle
from profit_io import HEADER_ROW as PROFIT_HEADER_ROW, PROFIT_CHECKED, profit_table
from test_mix_budget import block, find_header
from workbook_io import mismatches, open_values, same
from sheetbuilder.errors import InputProblems
from sheetbuilder.pipeline import build, load, plan_workbook
from sheetbuilder.sheets.dashboard import LOW_LIST

CATALOG = """product_id,product_name,price,unit_cost,fees_per_unit
P1,Widget,20.00,6.00,2.00
P2,Gadget,10.00,8.00,1.00
P3,Gizmo,20.00,6.00,2.00
"""
STORE_SALES = "product_id,units,revenue\nP1,60,1200.00\nP2,30,300.00\nP3,30,600.00\n"
AD_PRODUCTS = """campaign,ad_group,product_id,ad_type,impressions,clicks,spend,ad_sales,orders
C1,G1,P1,product ads,1000,60,60.00,400.00,20
C1,G2,P2,product ads,1000,90,90.00,100.00,10
C1,G3,P3,product ads,1000,30,30.00,200.00,10
"""
LOW_FIGURE = "Products low on stock"  # the Key figures line; the list below has the same title


def _account(folder: Path, inventory: str | None) -> Path:
    folder.mkdir(parents=True, exist_ok=True)
    for name, text in (("catalog.csv", CATALOG), ("store_sales.csv", STORE_SALES), ("ad_products.csv", AD_PRODUCTS)):
        (folder / name).write_text(text, encoding="utf-8")
    if inventory is not None:
        (folder / "inventory.csv").write_text(inventory, encoding="utf-8")
    return folder


def _plan(folder: Path):
    inputs, settings, _ = load(folder)
    return plan_workbook(inputs, settings, BUILT_ON)


def _by_product(plan, table: str, columns: list[str]) -> dict:
    frame = plan.tables[table].frame.set_index("product_id")
    return {p: tuple(frame.loc[p, c] for c in columns) for p in frame.index}


def test_a_product_with_two_units_left_that_would_grow_reads_low_stock_and_its_spend_is_not_raised(tmp_path):
    without = _plan(_account(tmp_path / "without", None))
    assert ("grow", 75.0) == _by_product(without, "Budget products", ["direction", "proposed"])["P1"]
    plan = _plan(_account(tmp_path / "with", "product_id,units_available\nP1,2\nP2,500\nP3,500\n"))
    profit = _by_product(plan, "Profit", ["cover", "status", "direction"])
    assert (1.0, "strong", "low stock") == profit["P1"]
    assert (500.0, "strong", "grow") == profit["P3"]
    budget = _by_product(plan, "Budget products", ["direction", "spend", "proposed"])
    assert {"P1": ("low stock", 60.0, 60.0), "P2": ("cut", 90.0, 67.5), "P3": ("grow", 30.0, 52.5)} == budget


# Bids and Terms (issue 25: a low-stock product is never told to grow). P1 (ad group G1) and P3 (G3) sell alike;
# each ad group has a keyword worth raising and one worth cutting, and a search term with an order. By hand, with
# the defaults (target ACoS 30%, k = 20 clicks), steps of at most +20% and -30% (settings.toml): "kw good" (40
# clicks, CPC 0.50, 8 orders of 20.00) has smoothed CVR (8 + 20 x 1/3) / 60 = 0.244, smoothed ACoS 0.50 / (0.244 x 20) = 0.102,
# value bid 0.50 x 0.30 / 0.102 = 1.47: a raise, capped at 0.60. "kw poor" (40 clicks, CPC 1.00, 1 order of 10.00)
# has smoothed CVR (1 + 6.67) / 60 = 0.128, smoothed ACoS 1.00 / (0.128 x 10) = 0.78, value bid 1.00 x 0.30 / 0.78
# = 0.38 < 1.00 x 0.70: a cut, capped at 0.70.
TARGETS = """campaign,ad_group,target,match_type,state,bid,impressions,clicks,spend,ad_sales,orders
C1,G1,kw good,exact,enabled,0.50,900,40,20.00,160.00,8
C1,G1,kw poor,exact,enabled,1.00,900,40,40.00,10.00,1
C1,G3,kw good,exact,enabled,0.50,900,40,20.00,160.00,8
C1,G3,kw poor,exact,enabled,1.00,900,40,40.00,10.00,1
"""
SEARCH_TERMS = """campaign,ad_group,target,match_type,search_term,impressions,clicks,spend,ad_sales,orders
C1,G1,kw poor,exact,kw poor cheap,100,5,5.00,20.00,1
C1,G3,kw poor,exact,kw poor cheap,100,5,5.00,20.00,1
"""


def _with_targets(folder: Path) -> Path:
    (folder / "targets.csv").write_text(TARGETS, encoding="utf-8")
    (folder / "search_terms.csv").write_text(SEARCH_TERMS, encoding="utf-8")
    (folder / "settings.toml").write_text("max_bid_raise = 0.20\nmax_bid_cut = 0.30\n", encoding="utf-8")
    return folder


def _bids(plan) -> dict:
    frame = plan.tables["Bids"].frame
    return {(g, t): (b, p, r) for g, t, b, p, r in zip(frame["ad_group"], frame["target"], frame["bid"],
                                                     frame["proposed"], frame["reason"])}


def test_a_keyword_of_a_low_stock_product_is_not_raised_with_the_reason_and_its_cut_still_applies(tmp_path):
    without = _bids(_plan(_with_targets(_account(tmp_path / "without", None))))
    assert (0.50, 0.60, "raise, capped at maximum raise") == without[("G1", "kw good")]
    plan = _plan(_with_targets(_account(tmp_path / "with", "product_id,units_available\nP1,2\nP2,500\nP3,500\n")))
    bids = _bids(plan)
    assert (0.50, 0.50, "low stock: not raised") == bids[("G1", "kw good")]
    assert without[("G1", "kw poor")] == bids[("G1", "kw poor")]  # its cut applies as without the stock export
    assert bids[("G1", "kw poor")][1] < bids[("G1", "kw poor")][0]
    assert (0.50, 0.60, "raise, capped at maximum raise") == bids[("G3", "kw good")]  # P3 has stock: raised
    final = plan.tables["Bids"].frame.set_index(["ad_group", "target"])["final"]
    assert 0.50 == final[("G1", "kw good")]


def test_a_search_term_of_a_low_stock_product_is_not_promoted_and_not_on_harvest(tmp_path):
    plan = _plan(_with_targets(_account(tmp_path, "product_id,units_available\nP1,2\nP2,500\nP3,500\n")))
    terms = plan.tables["Terms"].frame
    assert {"G1": ("low stock", "low stock"), "G3": ("promote", "promote")} == {
        g: (v, f) for g, v, f in zip(terms["ad_group"], terms["verdict"], terms["final"])}
    harvest = plan.tables["Harvest"].frame
    assert ["G3"] == [g for g in harvest["ad_group"] if g != ""]  # the list's spare rows are blank


def test_no_units_available_with_ad_spend_is_a_loss_and_never_grows(tmp_path):
    plan = _plan(_account(tmp_path, "product_id,units_available\nP1,500\nP2,500\nP3,0\n"))
    # P3's clicks cannot convert: a loss; its ratio (0.583) is below 1, so it is not cut, and it cannot grow.
    assert (0.0, "loss", "low stock") == _by_product(plan, "Profit", ["cover", "status", "direction"])["P3"]
    assert ("grow", 60.0 + 22.5) == _by_product(plan, "Budget products", ["direction", "proposed"])["P1"]


def test_days_of_cover_reads_no_sales_where_nothing_sold_and_blank_where_the_stock_is_unknown(tmp_path):
    folder = _account(tmp_path, "product_id,units_available\nP1,500\nP2,500\nP4,7\n")
    (folder / "store_sales.csv").write_text(STORE_SALES + "P4,0,0.00\n", encoding="utf-8")
    plan = _plan(folder)
    cover = {p: c for p, (c,) in _by_product(plan, "Profit", ["cover"]).items()}
    assert "no sales" == cover["P4"] and math.isnan(cover["P3"]) and 250.0 == cover["P1"]  # 500 / (60 / 30)
    inputs, _, problems = load(folder)
    assert any("'P3'" in p.message and "stock is unknown" in p.message for p in problems)


def test_per_warehouse_rows_are_summed_per_product(tmp_path):
    plan = _plan(_account(tmp_path, "product_id,warehouse,units_available\nP1,North,1\nP1,South,1\n"
                                    "P2,North,500\nP3,North,500\n"))
    assert ("low stock", 2.0) == _by_product(plan, "Profit", ["direction", "stock"])["P1"]


@pytest.mark.parametrize("text, where", [
    ("product_id,units_available\nP1,2\nP2,500\nP1,40\n", "inventory.csv row 4"),
    ("product_id,location,units_available\nP1,North,2\nP2,North,500\nP1,North,40\n", "inventory.csv row 4"),
])
def test_a_product_repeated_without_a_location_to_tell_its_rows_apart_is_refused(tmp_path, text, where):
    with pytest.raises(InputProblems) as refused:
        load(_account(tmp_path, text))
    message = str(refused.value)
    assert "product 'P1'" in message and "rows 2, 4" in message and where.split()[0] in message


def test_an_inventory_export_as_it_arrives_reads_title_totals_and_unit_headers(tmp_path):
    text = ('"Inventory snapshot, 2026-11-29"\n\n'
            "SKU,Warehouse,Units available (units),Units inbound (units),Restock lead time (days)\n"
            "P1,Main,2,100,21\nP2,Main,500,0,\nP3,Main,500,0,35\nTotal,,1002,100,\n")
    folder = _account(tmp_path / "raw", text)
    inputs, _, _ = load(folder)
    stock = inputs.get("inventory")
    assert [2.0, 500.0, 500.0] == stock["units_available"].tolist()
    assert [100.0, 0.0, 0.0] == stock["units_inbound"].tolist()
    assert [21.0, 35.0] == stock["lead_time_days"].dropna().tolist()  # a blank lead time is unknown, never 0
    out = build(folder, tmp_path / "raw.xlsx", built_on=BUILT_ON)
    rows, _, _ = profit_table(out.output)
    assert ("low stock", 1.0) == (rows["P1"]["Direction"], rows["P1"]["Days of cover"])


def test_digit_only_ids_in_the_inventory_are_matched_as_the_other_exports_write_them(tmp_path):
    folder = _account(tmp_path, None)
    for name in ("catalog.csv", "store_sales.csv", "ad_products.csv"):
        path = folder / name
        path.write_text(path.read_text(encoding="utf-8").replace("P1", "101"), encoding="utf-8")
    (folder / "inventory.csv").write_text("product_id,units_available\n00101,2\nP2,500\nP3,500\n", encoding="utf-8")
    assert ("low stock",) == _by_product(_plan(folder), "Profit", ["direction"])["101"]


def _guide_low(path: Path) -> tuple[object, list[str]]:
    """The Guide's low-stock count and the products its low-stock list names (values as stored)."""
    ws = open_values(path)["Guide"]
    count, names = None, []
    for r in range(1, ws.max_row + 1):
        if ws.cell(r, 1).value == LOW_FIGURE:
            count = ws.cell(r, 2).value
        if ws.cell(r, 1).value == LOW_LIST:
            names = [ws.cell(r + 2 + k, 2).value for k in range(5) if ws.cell(r + 2 + k, 2).value]
    # (after LibreOffice recalculates, a line the edit emptied may show its link's address: read the count's lines)
    return count, names[:int(count)] if isinstance(count, (int, float)) else names


@pytest.mark.slow  # several seconds: the fast lane stays under two minutes
def test_the_demo_guide_lists_its_low_stock_products_on_its_first_screen(demo_build):
    # The demo (tools/make_demo.py): LF-1002 has 2 units, LF-1019 none, LF-1014 twelve days' worth.
    count, names = _guide_low(demo_build.output)
    assert 3 == count
    assert ["LF-1019  Glass Food Storage Set 10pc", "LF-1002  Galvanized Raised Bed Kit",
            "LF-1014  Solar Path Lights 8-Pack"] == names
    ws = openpyxl.load_workbook(demo_build.output)["Guide"]
    title = next(r for r in range(1, ws.max_row + 1) if ws.cell(r, 1).value == LOW_LIST)
    assert title <= 40  # on the first screen, above the how-to


def test_without_an_inventory_export_the_guide_names_no_stock(tmp_path):
    out = build(_account(tmp_path, None), tmp_path / "none.xlsx", built_on=BUILT_ON)
    assert (None, []) == _guide_low(out.output)


# Live edit (LibreOffice): units available typed on in_inventory for three demo products.
STOCK_EDITS = {"LF-1002": 5000, "LF-1014": 5000, "LF-1021": 3}


def stock_edits(src: Path) -> list[tuple[str, str, object]]:
    """The in_inventory cells to change: [(sheet, cell, value)] (used by test_live_edit.make_edits)."""
    ws = openpyxl.load_workbook(src)["in_inventory"]
    headers = [c.value for c in ws[1]]
    col = headers.index("units_available")
    return [("in_inventory", row[col].coordinate, STOCK_EDITS[row[0].value])
            for row in ws.iter_rows(min_row=2) if row[0].value in STOCK_EDITS]


def _edited_tables():
    inputs, settings, _ = load(DEMO)
    tables = dict(inputs.tables)
    stock = tables["inventory"].copy()
    stock["units_available"] = [float(STOCK_EDITS.get(p, u)) for p, u in zip(stock["product_id"],
                                                                              stock["units_available"])]
    tables["inventory"] = stock
    return tables, settings


@pytest.mark.libreoffice
def test_changing_units_available_moves_direction_budget_and_the_guide(libreoffice):
    tables, settings = _edited_tables()
    expected, _ = profit_oracle(tables, settings)
    assert ("grow", "grow", "low stock") == tuple(expected[p]["Direction"] for p in ("LF-1002", "LF-1014", "LF-1021"))
    path = libreoffice["edit_stock"]
    rows, _, _ = profit_table(path)
    assert [] == mismatches(expected, rows, PROFIT_CHECKED, "after a stock edit")
    products, _ = budget_oracle(tables, settings, expected)
    ws = open_values(path)["Budget"]
    got = block(ws, find_header(ws, "Product ID"))
    got.pop("Total", None)
    assert [] == mismatches(products, got, ["Direction", "Current spend", "Proposed spend", "Final spend"], "budget")
    assert products["LF-1021"]["Proposed spend"] == products["LF-1021"]["Current spend"]
    bids_expected = bids_oracle(tables, settings, expected)
    bids, _ = bids_table(path)
    assert [] == mismatches(bids_expected, bids, BIDS_CHECKED, "bids after a stock edit")
    # LF-1002 restocked: its auto targets that read "low stock: not raised" as built are raised again, live.
    raised = {"raise to value bid", "raise, capped at maximum raise"}
    assert raised & {r["Reason"] for r in bids.values() if r["Product ID"] == "LF-1002"}
    count, names = _guide_low(path)
    assert 2 == count
    assert ["LF-1019  Glass Food Storage Set 10pc", "LF-1021  Stainless Spice Rack 20 Jars"] == names


# Property: with ample stock everywhere (every cover at least the minimum), every planned figure equals the
# build without an inventory export; only the stock columns themselves differ.
STOCK_COLUMNS = {"Profit": {"inv_first", "inv_last", "stock", "cover", "low"}}


@pytest.mark.slow
@hsettings(max_examples=20, deadline=None, database=None, suppress_health_check=list(HealthCheck))
@given(accounts(max_products=5, max_ad_rows=8, max_targets=6, max_terms=6))
def test_with_ample_stock_everywhere_every_figure_equals_the_build_without_inventory(account):
    base = Path(tempfile.mkdtemp())
    try:
        folder = write_account(account, base / "without")
        try:
            inputs, settings, _ = load(folder)
        except InputProblems:
            return
        without = plan_workbook(inputs, settings, BUILT_ON)
        ids = sorted({p for t in ("catalog", "store_sales", "ad_products") if inputs.get(t) is not None
                      for p in inputs.get(t)["product_id"]})
        stocked = shutil.copytree(folder, base / "with")
        with open(stocked / "inventory.csv", "w", newline="", encoding="utf-8") as fh:
            csv.writer(fh).writerows([["product_id", "units_available"], *[[p, 10 ** 9] for p in ids]])
        inputs2, settings2, _ = load(stocked)
        plan = plan_workbook(inputs2, settings2, BUILT_ON)
        assert sorted(without.tables) == sorted(plan.tables)
        for name, table in without.tables.items():
            drop = STOCK_COLUMNS.get(name, set())
            pd.testing.assert_frame_equal(table.frame.drop(columns=list(drop & set(table.frame))),
                                          plan.tables[name].frame.drop(columns=list(drop & set(table.frame))),
                                          obj=name, check_like=True)  # stock columns are values without one
            totals = plan.tables[name].totals_values
            assert sorted(table.totals_values) == sorted(totals), name
            assert all(same(v, totals[k]) for k, v in table.totals_values.items()), name
        assert (plan.tables["Profit"].frame["low"] == 0).all()
    finally:
        shutil.rmtree(base)


@pytest.mark.slow  # plans the demo's change list twice
def test_the_changes_command_reads_units_available_as_typed_on_in_inventory(demo_build, tmp_path):
    """`changes` plans the change list from the in_ sheets as saved: a stock typed on in_inventory moves the
    daily budgets of the campaigns selling that product, as the independent reference says."""
    from conftest import edit_workbook
    from sheetbuilder.weekly.changes import COLUMNS, export_changes
    edited = edit_workbook(demo_build.output, tmp_path / "edited.xlsx", stock_edits(demo_build.output))
    result = export_changes(edited, tmp_path / "changes.csv")
    tables, settings = _edited_tables()
    _, campaigns = budget_oracle(tables, settings, profit_oracle(tables, settings)[0])
    at = {k: COLUMNS.index(k) for k in ("kind", "campaign", "new")}
    budgets = {row[at["campaign"]]: row[at["new"]] for row in result.rows if row[at["kind"]] == "budget"}
    enabled = set(tables["campaigns"].loc[tables["campaigns"]["state"] == "enabled", "campaign"])
    expected = {c: r["Proposed budget"] for c, r in campaigns.items()
                if r["Proposed budget"] != r["Daily budget"] and c in enabled}  # Actions lists enabled campaigns
    assert sorted(expected) == sorted(budgets)
    assert all(same(expected[c], float(budgets[c])) for c in expected)
    before = {row[at["campaign"]]: row[at["new"]] for row in export_changes(
        demo_build.output, tmp_path / "before.csv").rows if row[at["kind"]] == "budget"}
    assert before != budgets  # the edit moved at least one budget
