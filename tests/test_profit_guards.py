"""Recommendations that protect profit, on a small account written inline with expected
values worked out by hand from the rules:

- ad spend with no sales is a loss: Status loss, Direction cut, counted on the dashboard,
  its spend moved by the budget shift like any other cut product's;
- a product with no ad spend reads `no ads` and receives nothing from the shift;
- a target ACoS above break-even ACoS is flagged on Profit and Bids; with seek_profit off and
  cap_target_at_break_even on the bids aim at break-even, with seek_profit on (the default) at
  break-even x e / (1 + e). The break-even rule
  (above it, each ad-driven sale loses money before any other cost) is common practice in
  the trade, no single source.
"""
from __future__ import annotations

import openpyxl
import pytest

from bids_io import bids_table
from conftest import BUILT_ON
from minimal import write_account
from profit_io import profit_table
from sheetbuilder.pipeline import build

CATALOG = """product_id,product_name,price,unit_cost,fees_per_unit
P1,Widget,20.00,8.00,2.00
P2,Gadget,10.00,4.00,1.00
P3,Gizmo,30.00,10.00,2.00
P4,Doohickey,10.00,7.00,1.00
"""
STORE_SALES = """product_id,units,revenue
P1,10,200.00
P3,4,120.00
P4,10,100.00
"""
AD_PRODUCTS = """campaign,ad_group,product_id,ad_type,impressions,clicks,spend,ad_sales,orders
C1,G1,P1,product ads,1000,50,10.00,100.00,5
C1,G2,P2,product ads,800,40,15.00,0.00,0
C1,G3,P4,product ads,500,20,5.00,50.00,5
"""
TARGETS = """campaign,ad_group,target,match_type,state,bid,impressions,clicks,spend,ad_sales,orders
C1,G1,widget,exact,enabled,0.50,100,10,5.00,20.00,1
C1,G3,doohickey,exact,enabled,0.50,100,10,2.50,25.00,2
"""


@pytest.fixture(scope="module", params=[("yes", "no"), ("no", "no"), ("yes", "yes")], ids=lambda p: "cap %s, seek %s" % p)
def built(request, tmp_path_factory):
    cap, seek = request.param
    folder = write_account(tmp_path_factory.mktemp("guards"), {
        "catalog.csv": CATALOG, "store_sales.csv": STORE_SALES, "ad_products.csv": AD_PRODUCTS,
        "targets.csv": TARGETS,
        "settings.toml": f'cap_target_at_break_even = "{cap}"\nseek_profit = "{seek}"\n'})
    return request.param, build(folder, folder / "book.xlsx", built_on=BUILT_ON)


def test_spend_with_no_sales_is_a_loss_to_cut_and_counts_on_the_dashboard(built):
    _, result = built
    rows, _, _ = profit_table(result.output)
    assert ("loss", "cut") == (rows["P2"]["Status"], rows["P2"]["Direction"])
    guide = openpyxl.load_workbook(result.output, data_only=True)["Guide"]
    figures = {r[0]: r[1] for r in guide.iter_rows(values_only=True) if r and isinstance(r[0], str)}
    assert 1 == figures["Products losing money after ads"]


def test_a_product_without_ads_reads_no_ads_and_gets_no_budget(built):
    _, result = built
    rows, _, _ = profit_table(result.output)
    assert "no ads" == rows["P3"]["Direction"]  # margin 60%, sells, no ad spend
    assert "grow" == rows["P1"]["Direction"]  # net margin 45%, spend share 1/3 below sales share 10/21
    budget = result.plan.tables["Budget products"].frame.set_index("product_id")
    # 25% of the cut product's 15.00 goes to the only grow product; nothing to the product without ads.
    assert 11.25 == pytest.approx(budget.loc["P2", "proposed"])
    assert 13.75 == pytest.approx(budget.loc["P1", "proposed"])
    assert 0.0 == budget.loc["P3", "proposed"]
    assert 5.0 == pytest.approx(budget.loc["P4", "proposed"])


# By hand: P4's margin (10 - 7 - 1) / 10 = 20% under the default 30% target; P1's (20 - 8 - 2) / 20 = 50% over it.
# With seek_profit yes and e = 0.6 the aims are 20% x 0.6 / 1.6 = 7.5% and 50% x 0.6 / 1.6 = 18.75% (< 30%).
EXPECTED = {  # (cap, seek): (P4 aim, P4 why, P4 check, doohickey's check on Bids, P1 aim, P1 why)
    ("yes", "no"): (0.20, "break-even", "above break-even: bids use break-even", "target capped at break-even",
                    0.30, "your target"),
    ("no", "no"): (0.30, "your target", "above break-even: each ad sale loses money", "target above break-even",
                   0.30, "your target"),
    ("yes", "yes"): (0.075, "profit-seeking (click elasticity on Settings)", "above break-even: bids use the aim",
                     "target above break-even: aim used", 0.1875, "profit-seeking (click elasticity on Settings)"),
}


def test_a_target_above_break_even_is_flagged_and_the_aim_follows_the_settings(built):
    settings, result = built
    p4_aim, p4_why, p4_check, group_check, p1_aim, p1_why = EXPECTED[settings]
    rows, _, _ = profit_table(result.output)
    p4 = rows["P4"]
    assert 0.20 == pytest.approx(p4["Break-even ACoS"])
    assert 0.30 == pytest.approx(p4["Target ACoS"])
    assert (p4_aim, p4_why, p4_check) == (pytest.approx(p4["Aim ACoS"]), p4["Why this aim"], p4["Target check"])
    assert (p1_aim, p1_why) == (pytest.approx(rows["P1"]["Aim ACoS"]), rows["P1"]["Why this aim"])
    assert rows["P1"]["Target check"] in (None, "")  # 30% target under a 50% margin
    bids, _ = bids_table(result.output)
    by_target = {r["Target"]: r for r in bids.values()}
    assert p4_aim == pytest.approx(by_target["doohickey"]["Aim ACoS"])
    assert group_check == by_target["doohickey"]["Target check"]
    assert p1_aim == pytest.approx(by_target["widget"]["Aim ACoS"])
    assert by_target["widget"]["Target check"] in (None, "")
