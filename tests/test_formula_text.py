"""Tier 1: the exact formula text each planned column writes, on a two-product account written here.

The account is small enough to lay out by hand: in_catalog rows 2-3 (P1, P2), in_store_sales
rows 2-4 (P1 twice, then P2), in_ad_products rows 2-3 (P1, P2). Profit's header is row 5, so
its first body row is 6 and its totals row 8. Each expected formula below is written from
that layout and the column's rule (DEVELOPERS.md, "Rules for formula text"), not copied
from the planner, so a changed formula fails here with the column named.
"""
from __future__ import annotations

import datetime as dt

import pytest

from sheetbuilder.pipeline import load, plan_workbook

CATALOG = """product_id,product_name,price,unit_cost,fees_per_unit,target_acos,margin
P1,Widget,20.00,8.00,2.00,30%,
P2,Gadget,10.00,4.00,1.00,,
"""
STORE_SALES = """product_id,units,revenue
P1,4,80.00
P1,6,120.00
P2,5,50.00
"""
AD_PRODUCTS = """campaign,ad_group,product_id,ad_type,impressions,clicks,spend,ad_sales,orders
C1,G1,P1,product ads,1000,50,25.00,100.00,5
C1,G1,P2,product ads,500,20,10.00,30.00,2
"""


def _block(first: str, last: str, rng: str) -> str:
    """A product's block sum as DEVELOPERS.md describes it: positions written as data, summed between INDEXes."""
    return f'=IF({first}6="",0,SUM(INDEX({rng},{first}6):INDEX({rng},{last}6)))'


# The product's catalog row, computed once in the hidden column AN: its catalog position (Profit W) when
# in_catalog's position column (M, after the seven catalog columns and their five exported_ twins) still holds it
# there, else found by exact MATCH (in_catalog sorted).
AT_CATALOG = "IF(INDEX(in_catalog!$M$2:$M$3,W6)=W6,W6,MATCH(W6,in_catalog!$M$2:$M$3,0))"


def _cat(letter: str) -> str:
    """The product's value in one in_catalog column, read at its checked catalog row (AN)."""
    return f"INDEX(in_catalog!${letter}$2:${letter}$3,AN6)"


# Profit, body row 6: {header: formula}. Columns A Product ID ... P Spend-to-sales ratio, Q Days of cover, R Status,
# S Direction, T Your target ACoS, U Target check, V Aim ACoS, then the hidden helpers W catalog row, X/Y
# store-sales block, Z/AA ad block, AB ad clicks ... AH revenue with a margin, AI position, AJ/AK in_inventory block,
# AL units available (a value here: the account has no inventory export), AM low stock.
PROFIT_ROW_1 = {
    "Units": _block("X", "Y", "in_store_sales!$B$2:$B$4"),
    "Revenue": _block("X", "Y", "in_store_sales!$C$2:$C$4"),
    "Ad spend": _block("Z", "AA", "in_ad_products!$G$2:$G$3"),
    "Ad sales": _block("Z", "AA", "in_ad_products!$H$2:$H$3"),
    "TACoS": '=IF(D6=0,"",E6/D6)',
    "ACoS": '=IF(F6=0,"",E6/F6)',
    "Margin before ads": f'=IF(W6="","",IF({_cat("G")}<>"",{_cat("G")},IF(OR({_cat("C")}=0,{_cat("D")}=""),"",'
                         f'({_cat("C")}-{_cat("D")}-{_cat("E")})/{_cat("C")})))',
    "Break-even ACoS": "=I6",
    "Target ACoS": f'=IF(T6<>"",T6,IF(W6="",default_target_acos,IF({_cat("F")}<>"",{_cat("F")},'
                   'default_target_acos)))',
    "Net margin after ads": '=IF(OR(I6="",G6=""),"",I6-G6)',
    "Net profit after ads": '=IF(I6="","",D6*I6-E6)',
    "Sales share": '=IF($D$8=0,"",D6/$D$8)',
    "Spend share": '=IF($E$8=0,"",E6/$E$8)',
    "Spend-to-sales ratio": '=IF(N6="","",IF(N6=0,"",IF(O6="","",O6/N6)))',
    # Days of cover (issue 25): units available / (units sold / period days), blank when the stock is unknown.
    # Ad spend with no sales is a loss (issue 9), and so is ad spend with no units available (issue 25); a product
    # with no ad spend reads "no ads"; no sales with spend is cut.
    "Status": '=IF(AND(E6>0,OR(D6=0,AND(AL6<>"",AL6=0))),"loss",IF(D6=0,"no sales",IF(I6="","no margin",'
              'IF(L6<0,"loss",IF(L6<thin_margin,"thin",IF(L6>=strong_margin,"strong","healthy"))))))',
    # Below the minimum days of cover a product is never told to grow (cut still applies).
    "Direction": '=IF(E6=0,"no ads",IF(D6=0,"cut",IF(P6="",IF(AM6=1,"low stock","hold"),'
                 'IF(AND(OR(R6="loss",R6="thin"),P6>1),"cut",IF(AM6=1,"low stock",'
                 'IF(AND(R6="strong",P6<1),"grow","hold"))))))',
    # U and V: a target above break-even (K > I) is flagged with what the bids use instead; V, the aim: with
    # seek_profit yes the lowest of target, break-even and break-even x e / (1 + e) (never below 0), else the
    # target capped at break-even while cap_target_at_break_even is yes; the target where no margin is known.
    "Target check": '=IF(I6="","",IF(K6>I6,IF(seek_profit="yes","above break-even: bids use the aim",'
                    'IF(cap_target_at_break_even="yes","above break-even: bids use break-even",'
                    '"above break-even: each ad sale loses money")),""))',
    "Aim ACoS": '=IF(I6="",K6,IF(seek_profit="yes",MAX(0,MIN(K6,I6,I6*click_elasticity/(1+click_elasticity))),'
                'IF(AND(cap_target_at_break_even="yes",K6>I6),MAX(0,I6),K6)))',
    # AO, after the hidden helpers (so it shows beside V): which rule set the aim.
    "Why this aim": '=IF(I6="","your target (no margin known)",IF(AND(I6<=0,OR(seek_profit="yes",'
                    'cap_target_at_break_even="yes")),"no positive margin: aim 0, bids cut",IF(seek_profit="yes",'
                    'IF(K6<=I6*click_elasticity/(1+click_elasticity),"your target",'
                    '"profit-seeking (click elasticity on Settings)"),IF(AND(cap_target_at_break_even="yes",K6>I6),'
                    '"break-even","your target"))))',
    "Ad clicks": _block("Z", "AA", "in_ad_products!$F$2:$F$3"),
    "Ad orders": _block("Z", "AA", "in_ad_products!$I$2:$I$3"),
    "Product CVR": "=IF(OR(AB6=0,AC6=0),$AD$8,AC6/AB6)",
    "Product order value": "=IF(AC6=0,$AE$8,F6/AC6)",
    "Product price": f'=IF(W6="",AE6,IF({_cat("C")}>0,{_cat("C")},AE6))',
    "Gross profit before ads": '=IF(I6="","",D6*I6)',
    "Revenue with a margin": '=IF(I6="",0,D6)',
    "Catalog row now": f'=IF(W6="","",{AT_CATALOG})',
}
# With an inventory export (in_inventory rows 2-3: P1, P2), the stock columns are formulas: Days of cover (Q) from
# Units available (AL, the block sum of the product's in_inventory rows AJ..AK) and Low stock from Days of cover.
# Without one they are written as values (blank, blank, 0): no product can be low on stock.
STOCK_ROW_1 = {
    "Days of cover": '=IF(AL6="","",IF(C6=0,"no sales",AL6*period_days/C6))',
    "Units available": '=IF(AJ6="","",SUM(INDEX(in_inventory!$B$2:$B$3,AJ6):INDEX(in_inventory!$B$2:$B$3,AK6)))',
    "Low stock": '=IF(ISNUMBER(Q6),IF(Q6<min_days_of_cover,1,0),0)',
}
INVENTORY = """product_id,units_available
P1,40
P2,3
"""
# Profit's totals row 8: {header: formula} of every column with a formula total.
PROFIT_TOTALS = {
    "Units": "=SUM(C6:C7)", "Revenue": "=SUM(D6:D7)", "Ad spend": "=SUM(E6:E7)", "Ad sales": "=SUM(F6:F7)",
    "TACoS": '=IF(D8=0,"",E8/D8)', "ACoS": '=IF(F8=0,"",E8/F8)',
    "Margin before ads": '=IF(SUM(AH6:AH7)=0,"",SUM(AG6:AG7)/SUM(AH6:AH7))',
    "Net margin after ads": '=IF(SUM(AH6:AH7)=0,"",M8/SUM(AH6:AH7))',
    "Net profit after ads": "=SUM(M6:M7)", "Sales share": "=SUM(N6:N7)", "Spend share": "=SUM(O6:O7)",
    "Ad clicks": "=SUM(AB6:AB7)", "Ad orders": "=SUM(AC6:AC7)",
    "Product CVR": "=IF(AB8=0,0,AC8/AB8)", "Product order value": "=IF(AC8=0,0,F8/AC8)",
    "Gross profit before ads": "=SUM(AG6:AG7)", "Revenue with a margin": "=SUM(AH6:AH7)",
}


@pytest.fixture(scope="module")
def two_products(tmp_path_factory):
    """The plan of the two-product account (planned only: nothing is rendered)."""
    folder = tmp_path_factory.mktemp("two")
    for name, text in (("catalog.csv", CATALOG), ("store_sales.csv", STORE_SALES),
                       ("ad_products.csv", AD_PRODUCTS)):
        (folder / name).write_text(text, encoding="utf-8")
    inputs, settings, _ = load(folder)
    return plan_workbook(inputs, settings, dt.date(2026, 12, 2))


def _row_1(column) -> str | None:
    """The formula a column writes in its first body row (row 6 on Profit), or None for a value column."""
    if column.formula is None:
        return None
    text = column.formula[0] if isinstance(column.formula, list) else column.formula
    return text.replace("{r}", "6").replace("{p}", "5")


def test_profit_columns_write_the_documented_formula_in_their_first_row(two_products):
    table = two_products.spec.sheet("Profit").table
    assert 5 - 1 == table.first_row
    written = {c.header: _row_1(c) for c in table.columns if c.formula is not None}
    assert PROFIT_ROW_1 == written


def test_profit_value_columns_hold_no_formula(two_products):
    table = two_products.spec.sheet("Profit").table
    assert ["Product ID", "Product name", "Days of cover", "Your target ACoS", "Catalog row", "Sales first row",
            "Sales last row", "Ad first row", "Ad last row", "Position", "Stock first row", "Stock last row",
            "Units available", "Low stock", "Notes"] == [c.header for c in table.columns if c.formula is None]


def test_with_an_inventory_export_the_stock_columns_write_the_documented_formulas(tmp_path):
    for name, text in (("catalog.csv", CATALOG), ("store_sales.csv", STORE_SALES),
                       ("ad_products.csv", AD_PRODUCTS), ("inventory.csv", INVENTORY)):
        (tmp_path / name).write_text(text, encoding="utf-8")
    inputs, settings, _ = load(tmp_path)
    table = plan_workbook(inputs, settings, dt.date(2026, 12, 2)).spec.sheet("Profit").table
    written = {c.header: _row_1(c) for c in table.columns if c.header in STOCK_ROW_1}
    assert STOCK_ROW_1 == written


def test_profit_totals_row_writes_the_documented_formulas(two_products):
    table = two_products.spec.sheet("Profit").table
    written = {c.header: t.formula for c, t in zip(table.columns, table.totals) if t is not None and t.formula}
    assert PROFIT_TOTALS == written


def test_profit_block_positions_are_the_hand_counted_rows(two_products):
    # The rows the block sums read: P1 owns in_store_sales positions 1-2 and in_ad_products 1; P2 the next.
    table = two_products.spec.sheet("Profit").table
    values = {c.header: list(c.values) for c in table.columns}
    assert [1, 2] == values["Catalog row"]
    assert [1, 2] == values["Position"]  # the key other sheets check after Profit is sorted
    catalog = {c.header: list(c.values) for c in two_products.spec.sheet("in_catalog").table.columns}
    assert [1, 2] == catalog["position"]
    assert ([1, 3], [2, 3]) == (values["Sales first row"], values["Sales last row"])
    assert ([1, 2], [1, 2]) == (values["Ad first row"], values["Ad last row"])


TARGETS = """campaign,ad_group,target,match_type,state,bid,impressions,clicks,spend,ad_sales,orders
C1,G1,widget,exact,enabled,0.50,100,10,5.00,20.00,1
"""


@pytest.fixture(scope="module")
def with_targets(tmp_path_factory):
    """The two-product account with one keyword in C1 / G1 (so Groups, its blends table and Bids are planned)."""
    folder = tmp_path_factory.mktemp("two_bids")
    for name, text in (("catalog.csv", CATALOG), ("store_sales.csv", STORE_SALES),
                       ("ad_products.csv", AD_PRODUCTS), ("targets.csv", TARGETS)):
        (folder / name).write_text(text, encoding="utf-8")
    inputs, settings, _ = load(folder)
    return plan_workbook(inputs, settings, dt.date(2026, 12, 2))


def _first_row(column, row: int) -> str | None:
    if column.formula is None:
        return None
    text = column.formula[0] if isinstance(column.formula, list) else column.formula
    return text.replace("{r}", str(row)).replace("{p}", str(row - 1))


def test_ad_group_blends_are_computed_once_on_groups_from_weight_times_value_sums(with_targets):
    # Groups: header row 3, C1/G1's products P1 and P2 on rows 4-5; D spend, E weight, F weight x Aim ACoS
    # (Profit V), G above break-even, H/I/J weight x CVR / order value / price, K Profit row as built, L the
    # Profit row now (computed once per row, read by every lookup). The blends table:
    # header row 8 (a blank row and its title between), row 9 the account's values, row 10 C1/G1.
    sheet = with_targets.spec.sheet("Groups")
    groups = {c.header: _first_row(c, 4) for c in sheet.table.columns}
    # K4 is checked against Profit's Position column (AI, after AH Revenue with a margin): Profit may be sorted.
    assert "=IF(INDEX(Profit!$AI$6:$AI$7,K4)=K4,K4,MATCH(K4,Profit!$AI$6:$AI$7,0))" == groups["Profit row now"]
    assert "=E4*INDEX(Profit!$V$6:$V$7,L4)" == groups["Weight x aim ACoS"]
    # export-only: plain values (spend, and spend x CVR or order value, all from the ad export)
    assert None is groups["Ad spend"] is groups["Blend weight"] is groups["Weight x CVR"] is groups[
        "Weight x order value"]
    assert "=E4*INDEX(Profit!$AF$6:$AF$7,L4)" == groups["Weight x price"]  # the catalog price is an input
    blends = sheet.more[0]
    assert 8 - 1 == blends.first_row
    row = {c.header: _first_row(c, 9) for c in blends.columns}
    block = "SUM(INDEX(Groups!$%s$4:$%s$5,C9):INDEX(Groups!$%s$4:$%s$5,D9))"
    assert '=IF(C9="",default_target_acos,%s/E9)' % (block % (("F",) * 4)) == row["Aim ACoS"]
    assert None is row["Product CVR"] is row["Product order value"]  # blends of export-only columns: values
    assert '=IF(C9="",Profit!$AE$8,%s/E9)' % (block % (("J",) * 4)) == row["Product price"]
    assert '=IF(OR(G9<=0,G9>=1),"",ROUNDUP(LN(1-zero_order_confidence)/LN(1-G9),0))' == row["Zero-order clicks"]
    values = {c.header: list(c.values) for c in blends.columns}
    # Row 9 has no block (the account's values); C1/G1 owns Groups positions 1-2, weights 25 + 10 (their spend).
    assert ([1.0], [2.0], [0.0, 35.0]) == (values["Group first row"][1:], values["Group last row"][1:],
                                           values["Group weight"])


def test_a_bids_row_fetches_its_ad_group_blend_with_one_index_and_copies_its_exports_as_values(with_targets):
    table = with_targets.spec.sheet("Bids").table
    letters = {c.header: chr(ord("A") + i) if i < 26 else "A" + chr(ord("A") + i - 26)
               for i, c in enumerate(table.columns)}
    row = {c.header: _first_row(c, 5) for c in table.columns}
    brow = letters["Blends row"]
    assert f"=INDEX(Groups!$F$9:$F$10,{brow}5)" == row["Aim ACoS"]
    assert None is row["Product CVR"]  # its blend comes from the ad export alone: a plain value
    assert [2.0] == next(c.values for c in table.columns if c.header == "Blends row")
    assert {h: None for h in ("Impressions", "Clicks", "Spend", "Ad sales", "Orders", "CPC", "CVR", "ACoS",
                              "Current bid")} == {h: row[h] for h in ("Impressions", "Clicks", "Spend", "Ad sales",
                                                                       "Orders", "CPC", "CVR", "ACoS", "Current bid")}
    key = letters["Changes key"]
    final, bid, pos = letters["Final bid"], letters["Current bid"], letters["Position"]
    # the fraction is the row's Position (its own cell) over rows + 1: one formula for every row (shared)
    assert f"=INT(SUM({key}4))+IF({final}5<>{bid}5,1,{pos}5/2)" == row["Changes key"]


def test_a_bids_row_writes_the_value_bid_and_waste_probability_by_hand_and_its_pooled_figures_as_values(with_targets):
    # Hand-written from the method (README, Bids): the order value is the history's sales per order, else the
    # blend's (Groups' blends table, column H, rows 9-10), a plain value (exported figures only); the prior's shapes
    # are the fitted ones, else the product's CVR worth prior_clicks clicks, each in its working column; BETADIST(x,
    # a, b) is the beta distribution's cumulative probability.
    from openpyxl.utils import get_column_letter
    table = with_targets.spec.sheet("Bids").table
    c = {col.header: get_column_letter(i + 1) + "5" for i, col in enumerate(table.columns)}
    row = {col.header: _first_row(col, 5) for col in table.columns}
    cvr, ho, hc, hs = c["Posterior CVR"], c["History orders"], c["History clicks"], c["History ad sales"]
    fa, fb, w, pc = c["Prior a"], c["Prior b"], c["Converts probability"], c["Product CVR"]
    target, ratio, bid = c["Aim ACoS"], c["CPC-to-bid ratio"], c["Current bid"]
    value, pa, pb = c["Order value"], c["Prior a in use"], c["Prior b in use"]
    assert None is row["Order value"]
    assert f'=IF({fa}="",prior_clicks*{pc},{fa})' == row["Prior a in use"]
    assert f'=IF({fa}="",prior_clicks*(1-{pc}),{fb})' == row["Prior b in use"]
    assert f'=IF({pa}+{pb}+{hc}=0,"",{w}*({pa}+{ho})/({pa}+{pb}+{hc}))' == row["Posterior CVR"]
    assert f'=IF({cvr}="","",IF({cvr}*{value}=0,"",{cvr}*{value}*{target}/{ratio}))' == row["Value bid"]
    a = f'{pa}+{ho}'
    b = f'{pb}+{hc}-{ho}'
    assert (f'=IF(OR({c["Value bid"]}="",{target}<=0),"",IF(OR({a}<=0,{b}<=0),"",'
            f'1-{w}+{w}*BETADIST(MIN(1,{ratio}*{bid}/({value}*{target})),{a},{b})))') == row["Waste probability"]
    pooled = ("History clicks", "History orders", "History spend", "History ad sales", "CPC-to-bid ratio",
              "Ratio source", "Prior a", "Prior b", "Never-converting share", "Converts probability", "Order value")
    assert {h: None for h in pooled} == {h: row[h] for h in pooled}
