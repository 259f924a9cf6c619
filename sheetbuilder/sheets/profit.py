"""The Profit sheet: profit after advertising, one row per product.

Definitions (common practice in the trade, no single source): TACoS = ad spend /
revenue; ACoS = ad spend / ad sales; margin before ads = (price - unit cost - fees per
unit) / price, or the catalog's margin; break-even ACoS = margin before ads; net margin
after ads = margin before ads - TACoS; net profit after ads = revenue x margin before
ads - ad spend; the shares and their ratio compare each product's part of the spend
with its part of the sales.

Each product's rows on in_store_sales and in_ad_products form one contiguous block;
its first and last positions are written as data in hidden columns and summed with
SUM(INDEX(..):INDEX(..)), so the sheet's cost grows with rows, not rows x products.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pandas as pd

from sheetbuilder.sheets.decisions import NOTES, editable, notes_column
from sheetbuilder.sheets.blends import stock_as_values
from sheetbuilder.workbook.columns import ColumnDef, PlannedTable, blank_div, plan_table
from sheetbuilder.workbook.formula import block_sum, keyed_row
from sheetbuilder.sheets.inputs import InputSheet
from sheetbuilder.reading.readers import Inputs
from sheetbuilder.reading.settings import Settings
from sheetbuilder.workbook.spec import DATA, INPUT, Cell, Highlight, Sheet, Table
from sheetbuilder.workbook.palette import DIRECTION_STATES, STATUS_STATES

SHEET = "Profit"
HEADER_ROW = 4  # 0-based: title, caution, warning, blank, then the header
ATTRIBUTION_WARNING = ("Warning: the period ended less than the attribution window before this workbook was "
                       "built, so recent ad sales are still being credited; ACoS and profit after ads look "
                       "worse than they will be.")
CAUTION = ("Decision aid only: review before changing a live ad account. Not financial or tax advice.")


@dataclass
class ProfitContext:
    """What the Profit columns' references read besides the frame."""

    settings: Settings
    catalog: pd.DataFrame | None
    totals: dict[str, Any] = field(default_factory=dict)


def _block(table: str, column: str) -> str:
    """Formula summing one column over a product's block of rows on an in_ sheet."""
    first, last = {"store_sales": ("sales_first", "sales_last"), "ad_products": ("ad_first", "ad_last")}[table]
    rng = "{rng:%s.%s}" % (table, column)
    return f'=IF({{c:{first}}}="",0,{block_sum(rng, "{c:" + first + "}", "{c:" + last + "}")})'


def _cat(column: str) -> str:
    """Formula text reading one catalog column at the product's catalog row (checked against in_catalog's
    position column, so a sorted in_catalog still gives each product its own row)."""
    return "INDEX({rng:catalog.%s},{c:cat_at})" % column


def _catalog_value(df: pd.DataFrame, ctx: ProfitContext, column: str) -> pd.Series:
    """The catalog's value of column for each product (NaN where the product is not in it)."""
    if ctx.catalog is None or not len(ctx.catalog):
        return pd.Series(np.nan, index=df.index)
    lookup = ctx.catalog.set_index("product_id")[column]
    return df["product_id"].map(lookup).astype(float)


def _margin(df: pd.DataFrame, ctx: ProfitContext) -> pd.Series:
    price = _catalog_value(df, ctx, "price")
    computed = blank_div(price - _catalog_value(df, ctx, "unit_cost") - _catalog_value(df, ctx, "fees_per_unit"),
                         price)
    given = _catalog_value(df, ctx, "margin")
    return given.where(given.notna(), computed)


def _target(df: pd.DataFrame, ctx: ProfitContext) -> pd.Series:
    given = _catalog_value(df, ctx, "target_acos")
    target = given.where(given.notna(), ctx.settings.default_target_acos)
    return df["target_override"].where(df["target_override"].notna(), target)


def _status(df: pd.DataFrame, ctx: ProfitContext) -> pd.Series:
    s = ctx.settings
    net = df["net_margin"]
    return pd.Series(np.select(
        [((df["revenue"] == 0) | (df["stock"] == 0)) & (df["ad_spend"] > 0), df["revenue"] == 0, df["margin"].isna(),
         net < 0, net < s.thin_margin, net >= s.strong_margin],
        ["loss", "no sales", "no margin", "loss", "thin", "strong"], "healthy"), index=df.index, dtype=object)


def _direction(df: pd.DataFrame, ctx: ProfitContext) -> pd.Series:
    ratio = df["ratio"]
    weak = df["status"].isin(["loss", "thin"])
    low = df["low"] == 1
    return pd.Series(np.select([df["ad_spend"] == 0, df["revenue"] == 0, ratio.isna() & low, ratio.isna(),
                                weak & (ratio > 1), low, (df["status"] == "strong") & (ratio < 1)],
                               ["no ads", "cut", LOW_STOCK, "hold", "cut", LOW_STOCK, "grow"], "hold"),
                     index=df.index, dtype=object)


LOW_STOCK = "low stock"
NO_SALES = "no sales"


def _cover(df: pd.DataFrame, ctx: ProfitContext) -> pd.Series:
    """Units available / units sold per day: blank where the stock is unknown, no sales where none sold."""
    days = df["stock"] * ctx.settings.period_days / df["units"].where(df["units"] != 0)
    out = pd.Series(days.tolist(), index=df.index, dtype=object)
    out[df["stock"].notna() & (df["units"] == 0)] = NO_SALES
    return out


def _low(df: pd.DataFrame, ctx: ProfitContext) -> pd.Series:
    number = df["cover"].map(lambda v: isinstance(v, float) and not np.isnan(v))
    below = df["cover"].where(number, np.inf).astype(float) < ctx.settings.min_days_of_cover
    return (number & below).astype(float)


def _seeking(margin, ctx: ProfitContext):
    """Break-even x e / (1 + e): the ACoS of most profit after ads (in the formula's order of operations)."""
    e = ctx.settings.click_elasticity
    return margin * e / (1 + e)


def _aim(df: pd.DataFrame, ctx: ProfitContext) -> pd.Series:
    s = ctx.settings
    margin, target = df["margin"], df["target_acos"]
    known = margin.notna()
    if s.seek_profit == "yes":
        seeking = np.maximum(0.0, np.minimum(np.minimum(target, margin), _seeking(margin, ctx)))
        return target.where(~known, seeking).astype(float)
    capped = known & (target > margin) & (s.cap_target_at_break_even == "yes")
    return target.where(~capped, margin.clip(lower=0.0)).astype(float)


def _aim_why(df: pd.DataFrame, ctx: ProfitContext) -> pd.Series:
    s = ctx.settings
    out = []
    for margin, target in zip(df["margin"], df["target_acos"]):
        if pd.isna(margin):
            out.append(AIM_NO_MARGIN)
        elif margin <= 0 and (s.seek_profit == "yes" or s.cap_target_at_break_even == "yes"):
            out.append(AIM_LOSS)
        elif s.seek_profit == "yes":
            out.append(AIM_TARGET if target <= _seeking(margin, ctx) else AIM_PROFIT)
        else:
            out.append(AIM_BREAK_EVEN if target > margin and s.cap_target_at_break_even == "yes" else AIM_TARGET)
    return pd.Series(out, index=df.index, dtype=object)


def _target_check(df: pd.DataFrame, ctx: ProfitContext) -> pd.Series:
    above = df["margin"].notna() & (df["target_acos"] > df["margin"])
    s = ctx.settings
    text = ABOVE_AIMED if s.seek_profit == "yes" else ABOVE_CAPPED if s.cap_target_at_break_even == "yes" \
        else ABOVE_UNCAPPED
    return pd.Series(np.where(above, text, ""), index=df.index, dtype=object)


ABOVE_AIMED = "above break-even: bids use the aim"
ABOVE_CAPPED = "above break-even: bids use break-even"
ABOVE_UNCAPPED = "above break-even: each ad sale loses money"
AIM_TARGET = "your target"
AIM_BREAK_EVEN = "break-even"
AIM_PROFIT = "profit-seeking (click elasticity on Settings)"
AIM_LOSS = "no positive margin: aim 0, bids cut"
AIM_NO_MARGIN = "your target (no margin known)"
# The profit-seeking aim: break-even x e / (1 + e), e the click elasticity in use on Settings.
_SEEKING = "{c:margin}*click_elasticity/(1+click_elasticity)"


def _account_cvr(df: pd.DataFrame, ctx: ProfitContext) -> float:
    clicks, orders = float(df["ad_clicks"].sum()), float(df["ad_orders"].sum())
    return 0.0 if clicks == 0 else orders / clicks


def _account_aov(df: pd.DataFrame, ctx: ProfitContext) -> float:
    orders = float(df["ad_orders"].sum())
    return 0.0 if orders == 0 else float(df["ad_sales"].sum()) / orders


def _product_cvr(df: pd.DataFrame, ctx: ProfitContext) -> pd.Series:
    own = blank_div(df["ad_orders"], df["ad_clicks"])
    return own.where((df["ad_clicks"] != 0) & (df["ad_orders"] != 0), _account_cvr(df, ctx))


def _product_aov(df: pd.DataFrame, ctx: ProfitContext) -> pd.Series:
    own = blank_div(df["ad_sales"], df["ad_orders"])
    return own.where(df["ad_orders"] != 0, _account_aov(df, ctx))


def _product_price(df: pd.DataFrame, ctx: ProfitContext) -> pd.Series:
    price = _catalog_value(df, ctx, "price")
    return price.where(price > 0, df["prod_aov"])


def _sum_of(key: str):
    return lambda df, ctx: float(df[key].sum())


def _ratio_total(num: str, den: str):
    return lambda df, ctx: blank_div(ctx.totals[num], ctx.totals[den])


def _rev_with_margin_total(df, ctx):
    return float(df["rev_with_margin"].sum())


DEFS: list[ColumnDef] = [
    ColumnDef("product_id", "Product ID", "text", "The product's identifier, as in your exports.",
              lambda df, ctx: df["product_id"], kind=DATA, width=12, total="Total"),
    ColumnDef("product_name", "Product name", "text", "From the catalog.",
              lambda df, ctx: df["product_name"], kind=DATA, width=30),
    ColumnDef("units", "Units", "int", "Units sold in the period, with or without ads (store sales).",
              lambda df, ctx: df["units"], _block("store_sales", "units"), width=9,
              total="={sum:units}", total_reference=_sum_of("units")),
    ColumnDef("revenue", "Revenue", "money", "All sales of the product in the period (store sales).",
              lambda df, ctx: df["revenue"], _block("store_sales", "revenue"), width=13,
              total="={sum:revenue}", total_reference=_sum_of("revenue")),
    ColumnDef("ad_spend", "Ad spend", "money", "What the product's ads cost in the period.",
              lambda df, ctx: df["ad_spend"], _block("ad_products", "spend"), width=12,
              total="={sum:ad_spend}", total_reference=_sum_of("ad_spend")),
    ColumnDef("ad_sales", "Ad sales", "money", "Sales the ad platform credits to the product's ads.",
              lambda df, ctx: df["ad_sales"], _block("ad_products", "ad_sales"), width=12,
              total="={sum:ad_sales}", total_reference=_sum_of("ad_sales")),
    ColumnDef("tacos", "TACoS", "percent", "Total advertising cost of sales: ad spend / revenue.",
              lambda df, ctx: blank_div(df["ad_spend"], df["revenue"]),
              '=IF({c:revenue}=0,"",{c:ad_spend}/{c:revenue})', width=9,
              total='=IF({t:revenue}=0,"",{t:ad_spend}/{t:revenue})', total_reference=_ratio_total("ad_spend", "revenue")),
    ColumnDef("acos", "ACoS", "percent", "Advertising cost of sales: ad spend / ad sales.",
              lambda df, ctx: blank_div(df["ad_spend"], df["ad_sales"]),
              '=IF({c:ad_sales}=0,"",{c:ad_spend}/{c:ad_sales})', width=9,
              total='=IF({t:ad_sales}=0,"",{t:ad_spend}/{t:ad_sales})', total_reference=_ratio_total("ad_spend", "ad_sales")),
    ColumnDef("margin", "Margin before ads", "percent",
              "(price - unit cost - fees per unit) / price, or the catalog's margin when given.",
              _margin,
              '=IF({c:cat_row}="","",IF(%s<>"",%s,IF(OR(%s=0,%s=""),"",(%s-%s-%s)/%s)))'
              % (_cat("margin"), _cat("margin"), _cat("price"), _cat("unit_cost"), _cat("price"), _cat("unit_cost"),
                 _cat("fees_per_unit"), _cat("price")), width=10,
              total='=IF({sum:rev_with_margin}=0,"",{sum:gross}/{sum:rev_with_margin})'),
    ColumnDef("breakeven", "Break-even ACoS", "percent",
              "The ACoS at which ads eat the whole margin: equal to the margin before ads.",
              lambda df, ctx: df["margin"], "={c:margin}", width=10),
    ColumnDef("target_acos", "Target ACoS", "percent",
              "Your target ACoS (last column) if typed, else the catalog's, else the default target from Settings.",
              _target, '=IF({c:target_override}<>"",{c:target_override},IF({c:cat_row}="",default_target_acos,'
              'IF(%s<>"",%s,default_target_acos)))' % (_cat("target_acos"), _cat("target_acos")), width=9),
    ColumnDef("net_margin", "Net margin after ads", "percent", "Margin before ads minus TACoS.",
              lambda df, ctx: df["margin"] - df["tacos"],
              '=IF(OR({c:margin}="",{c:tacos}=""),"",{c:margin}-{c:tacos})', width=10,
              total='=IF({sum:rev_with_margin}=0,"",{t:net_profit}/{sum:rev_with_margin})'),
    ColumnDef("net_profit", "Net profit after ads", "money", "Revenue x margin before ads, minus ad spend.",
              lambda df, ctx: df["revenue"] * df["margin"] - df["ad_spend"],
              '=IF({c:margin}="","",{c:revenue}*{c:margin}-{c:ad_spend})', width=13,
              total="={sum:net_profit}", total_reference=_sum_of("net_profit")),
    ColumnDef("sales_share", "Sales share", "percent", "The product's revenue / all products' revenue.",
              lambda df, ctx: blank_div(df["revenue"], ctx.totals["revenue"]),
              '=IF({tot:revenue}=0,"",{c:revenue}/{tot:revenue})', width=9,
              total="={sum:sales_share}", total_reference=_sum_of("sales_share")),
    ColumnDef("spend_share", "Spend share", "percent", "The product's ad spend / all ad spend.",
              lambda df, ctx: blank_div(df["ad_spend"], ctx.totals["ad_spend"]),
              '=IF({tot:ad_spend}=0,"",{c:ad_spend}/{tot:ad_spend})', width=9,
              total="={sum:spend_share}", total_reference=_sum_of("spend_share")),
    ColumnDef("ratio", "Spend-to-sales ratio", "ratio",
              "Spend share / sales share: above 1, the product takes more of the spend than it brings of the sales.",
              lambda df, ctx: blank_div(df["spend_share"], df["sales_share"].fillna(0)).where(df["spend_share"].notna()),
              '=IF({c:sales_share}="","",IF({c:sales_share}=0,"",IF({c:spend_share}="","",{c:spend_share}/{c:sales_share})))',
              width=10),
    ColumnDef("cover", "Days of cover", "int",
              "With an inventory export: units available / units sold per day in the period (period length on "
              "Settings); no sales where none sold; blank without an inventory export or for a product it lacks.",
              _cover, '=IF({c:stock}="","",IF({c:units}=0,"%s",{c:stock}*period_days/{c:units}))' % NO_SALES,
              width=9),
    ColumnDef("status", "Status", "label",
              "loss (ad spend with no sales or with no units available, or net margin below 0), no sales (revenue "
              "0, no ad spend), no margin "
              "(not in the catalog), thin (below the thin threshold), strong (at or above the strong threshold), "
              "else healthy.",
              _status,
              '=IF(AND({c:ad_spend}>0,OR({c:revenue}=0,AND({c:stock}<>"",{c:stock}=0))),"loss",IF({c:revenue}=0,"no sales",IF({c:margin}="","no margin",IF({c:net_margin}<0,"loss",'
              'IF({c:net_margin}<thin_margin,"thin",IF({c:net_margin}>=strong_margin,"strong","healthy"))))))',
              width=10),
    ColumnDef("direction", "Direction", "label",
              "no ads where the product has no ad spend (worth launching when its margin is strong); cut where "
              "it spends with no sales, or the status is loss or thin and the spend-to-sales ratio is above 1; "
              "low stock where Days of cover is below the minimum on Settings (never grow, no extra budget); "
              "grow where it is strong and the ratio is below 1; else hold.",
              _direction,
              '=IF({c:ad_spend}=0,"no ads",IF({c:revenue}=0,"cut",IF({c:ratio}="",IF({c:low}=1,"%s","hold"),'
              'IF(AND(OR({c:status}="loss",{c:status}="thin"),{c:ratio}>1),"cut",IF({c:low}=1,"%s",'
              'IF(AND({c:status}="strong",{c:ratio}<1),"grow","hold"))))))' % (LOW_STOCK, LOW_STOCK), width=10),
    ColumnDef("target_override", "Your target ACoS", "percent_input",
              "Input: type a target ACoS for the product to override the catalog and the default; its Aim ACoS and "
              "bids follow (up to the profit-seeking aim while seek_profit is yes).",
              lambda df, ctx: df["target_override"], kind=INPUT, width=10),
    ColumnDef("target_check", "Target check", "label",
              "Where your target ACoS is above break-even, each ad-driven sale at that target loses money before any "
              "other cost; says what the bids use instead.",
              _target_check, '=IF({c:margin}="","",IF({c:target_acos}>{c:margin},IF(seek_profit="yes","%s",'
              'IF(cap_target_at_break_even="yes","%s","%s")),""))' % (ABOVE_AIMED, ABOVE_CAPPED, ABOVE_UNCAPPED),
              width=40),
    ColumnDef("aim_acos", "Aim ACoS", "percent",
              "The ACoS the product's bids aim at. With seek_profit yes: the lowest of Target ACoS, break-even and "
              "break-even x e / (1 + e), the ACoS that earns the most profit after ads when clicks grow as bid^e "
              "(e: click elasticity on Settings), never below 0. With seek_profit no: Target ACoS, capped at "
              "break-even (never below 0) when cap_target_at_break_even is yes. Target ACoS where no margin is known.",
              _aim, '=IF({c:margin}="",{c:target_acos},IF(seek_profit="yes",MAX(0,MIN({c:target_acos},{c:margin},'
              '%s)),IF(AND(cap_target_at_break_even="yes",{c:target_acos}>{c:margin}),MAX(0,{c:margin}),'
              '{c:target_acos})))' % _SEEKING, width=9),
    # Helper columns: row positions written as data, and two sums for the margin totals.
    ColumnDef("cat_row", "Catalog row", "int", "Helper: the product's position on in_catalog.",
              lambda df, ctx: df["cat_row"], kind=DATA, width=8, hidden=True),
    ColumnDef("sales_first", "Sales first row", "int", "Helper: first of the product's rows on in_store_sales.",
              lambda df, ctx: df["sales_first"], kind=DATA, width=8, hidden=True),
    ColumnDef("sales_last", "Sales last row", "int", "Helper: last of the product's rows on in_store_sales.",
              lambda df, ctx: df["sales_last"], kind=DATA, width=8, hidden=True),
    ColumnDef("ad_first", "Ad first row", "int", "Helper: first of the product's rows on in_ad_products.",
              lambda df, ctx: df["ad_first"], kind=DATA, width=8, hidden=True),
    ColumnDef("ad_last", "Ad last row", "int", "Helper: last of the product's rows on in_ad_products.",
              lambda df, ctx: df["ad_last"], kind=DATA, width=8, hidden=True),
    ColumnDef("ad_clicks", "Ad clicks", "int", "Helper: clicks on the product's ads.",
              lambda df, ctx: df["ad_clicks"], _block("ad_products", "clicks"), width=8, hidden=True,
              total="={sum:ad_clicks}", total_reference=_sum_of("ad_clicks")),
    ColumnDef("ad_orders", "Ad orders", "int", "Helper: orders from the product's ads.",
              lambda df, ctx: df["ad_orders"], _block("ad_products", "orders"), width=8, hidden=True,
              total="={sum:ad_orders}", total_reference=_sum_of("ad_orders")),
    ColumnDef("prod_cvr", "Product CVR", "percent",
              "Helper: the product's ad orders / ad clicks; the account's rate where it has no clicks or orders.",
              _product_cvr, '=IF(OR({c:ad_clicks}=0,{c:ad_orders}=0),{tot:prod_cvr},{c:ad_orders}/{c:ad_clicks})',
              width=8, hidden=True, total='=IF({t:ad_clicks}=0,0,{t:ad_orders}/{t:ad_clicks})',
              total_reference=_account_cvr),
    ColumnDef("prod_aov", "Product order value", "money",
              "Helper: the product's ad sales / ad orders; the account's where it has no orders.",
              _product_aov, '=IF({c:ad_orders}=0,{tot:prod_aov},{c:ad_sales}/{c:ad_orders})',
              width=8, hidden=True, total='=IF({t:ad_orders}=0,0,{t:ad_sales}/{t:ad_orders})',
              total_reference=_account_aov),
    ColumnDef("prod_price", "Product price", "money",
              "Helper: the catalog price; the product's order value where the catalog gives none.",
              _product_price, '=IF({c:cat_row}="",{c:prod_aov},IF(%s>0,%s,{c:prod_aov}))' % (_cat("price"), _cat("price")),
              width=8, hidden=True),
    ColumnDef("gross", "Gross profit before ads", "money", "Helper: revenue x margin before ads.",
              lambda df, ctx: df["revenue"] * df["margin"], '=IF({c:margin}="","",{c:revenue}*{c:margin})',
              width=8, hidden=True, total="={sum:gross}", total_reference=_sum_of("gross")),
    ColumnDef("rev_with_margin", "Revenue with a margin", "money", "Helper: revenue of products with a margin.",
              lambda df, ctx: df["revenue"].where(df["margin"].notna(), 0.0),
              '=IF({c:margin}="",0,{c:revenue})', width=8, hidden=True,
              total="={sum:rev_with_margin}", total_reference=_rev_with_margin_total),
    ColumnDef("pos", "Position", "int", "Helper: the row's place as built; other sheets find the product by it "
              "after Profit is sorted.", lambda df, ctx: df["pos"], kind=DATA, width=8, hidden=True),
    # Stock (an inventory export): the product's block of rows on in_inventory, summed; blank where it has none.
    ColumnDef("inv_first", "Stock first row", "int", "Helper: first of the product's rows on in_inventory.",
              lambda df, ctx: df["inv_first"], kind=DATA, width=8, hidden=True),
    ColumnDef("inv_last", "Stock last row", "int", "Helper: last of the product's rows on in_inventory.",
              lambda df, ctx: df["inv_last"], kind=DATA, width=8, hidden=True),
    ColumnDef("stock", "Units available", "int", "Helper: the product's units available (in_inventory, every "
              "location summed); blank without an inventory export or for a product it lacks.",
              lambda df, ctx: df["stock"], '=IF({c:inv_first}="","",%s)'
              % block_sum("{rng:inventory.units_available}", "{c:inv_first}", "{c:inv_last}"), width=8, hidden=True),
    ColumnDef("low", "Low stock", "int", "Helper: 1 where Days of cover is below the minimum days of cover.",
              _low, '=IF(ISNUMBER({c:cover}),IF({c:cover}<min_days_of_cover,1,0),0)', width=8, hidden=True),
    ColumnDef("cat_at", "Catalog row now", "int", "Helper: the product's row on in_catalog, checked against its "
              "position column (found again when in_catalog was sorted); computed once for every catalog lookup.",
              lambda df, ctx: df["cat_row"], '=IF({c:cat_row}="","",%s)' % keyed_row("{rng:catalog.position}", "{c:cat_row}"),
              width=8, hidden=True),
    # Shown beside Aim ACoS while the helpers between them are hidden (placed here, the helpers keep their letters).
    ColumnDef("aim_why", "Why this aim", "label",
              "Which rule set Aim ACoS: your target; break-even (the cap); profit-seeking (break-even x e / (1 + e) "
              "is below your target); no positive margin (every ad sale loses money: aim 0, so the bids are cut "
              "step by step toward the floor); or your target where no margin is known.",
              _aim_why, '=IF({c:margin}="","%s",IF(AND({c:margin}<=0,OR(seek_profit="yes",'
              'cap_target_at_break_even="yes")),"%s",IF(seek_profit="yes",IF({c:target_acos}<=%s,"%s","%s"),'
              'IF(AND(cap_target_at_break_even="yes",{c:target_acos}>{c:margin}),"%s","%s"))))'
              % (AIM_NO_MARGIN, AIM_LOSS, _SEEKING, AIM_TARGET, AIM_PROFIT, AIM_BREAK_EVEN, AIM_TARGET), width=30),
    notes_column(),  # the user's notes at the right end
]
STOCK = ("stock", "cover", "low")  # without an inventory export written as values (blank, blank, 0): see stock_as_values

# What a user types on Profit (a product's own target ACoS) and the key that finds its row again.
EDITABLE_COLUMNS = editable(DEFS, "Profit", SHEET, "sb_profit", ("product_id",), "target_override",
                            ("catalog", "store_sales", "ad_products"), numeric="target", result="", notes=NOTES,
                            same_figure="target_acos")

# Totals that need the whole frame are filled after the body (see _fill_totals).
_LATE_TOTALS = {
    "margin": lambda df: blank_div(float(df["gross"].sum()), float(df["rev_with_margin"].sum())),
    "net_margin": lambda df: blank_div(float(df["net_profit"].sum()), float(df["rev_with_margin"].sum())),
}


def product_frame(inputs: Inputs, layouts: dict[str, InputSheet]) -> pd.DataFrame:
    """One row per product found anywhere, with its block positions and block sums."""
    ids: set[str] = set()
    for name in ("catalog", "store_sales", "ad_products"):
        frame = inputs.get(name)
        if frame is not None:
            ids.update(frame["product_id"])
    df = pd.DataFrame({"product_id": sorted(ids)}, dtype=object)
    cat = layouts["catalog"].frame if "catalog" in layouts else None
    if cat is not None and len(cat):
        pos = pd.Series(range(1, len(cat) + 1), index=cat["product_id"].to_numpy())
        df["cat_row"] = df["product_id"].map(pos).astype(float)
        df["product_name"] = df["product_id"].map(cat.set_index("product_id")["product_name"]).fillna("")
    else:
        df["cat_row"] = np.nan
        df["product_name"] = ""
    df["product_name"] = df["product_name"].astype(object)
    for table, first, last, sums in (("store_sales", "sales_first", "sales_last", {"units": "units", "revenue": "revenue"}),
                                     ("ad_products", "ad_first", "ad_last", {"ad_spend": "spend", "ad_sales": "ad_sales",
                                                                            "ad_clicks": "clicks", "ad_orders": "orders"})):
        layout = layouts.get(table)
        if layout is None or not len(layout.frame):
            df[first] = df[last] = np.nan
            for key in sums:
                df[key] = 0.0
            continue
        fl = layout.first_last()
        df[first] = df["product_id"].map(fl["first"]).astype(float)
        df[last] = df["product_id"].map(fl["last"]).astype(float)
        grouped = layout.frame.groupby("product_id")
        for key, column in sums.items():
            df[key] = df["product_id"].map(grouped[column].sum()).fillna(0.0).astype(float)
    layout = layouts.get("inventory")
    if layout is None or not len(layout.frame):
        df["inv_first"] = df["inv_last"] = df["stock"] = np.nan
    else:
        fl = layout.first_last()
        df["inv_first"] = df["product_id"].map(fl["first"]).astype(float)
        df["inv_last"] = df["product_id"].map(fl["last"]).astype(float)
        df["stock"] = df["product_id"].map(layout.frame.groupby("product_id")["units_available"].sum()).astype(float)
    df["target_override"] = np.nan
    df["pos"] = np.arange(1, len(df) + 1, dtype=float)
    return df


def warning_formula() -> str:
    """The live warning shown while ad sales may still be coming in."""
    return f'=IF(period_end="","",IF(built_on-period_end<attribution_days,"{ATTRIBUTION_WARNING}",""))'


def warning_value(settings: Settings, built_on) -> str:
    """The warning's value as the formula computes it."""
    if settings.period_end is None:
        return ""
    return ATTRIBUTION_WARNING if (built_on - settings.period_end).days < settings.attribution_days else ""


def plan_profit(inputs: Inputs, layouts: dict[str, InputSheet], settings: Settings, built_on,
                target_overrides: dict | None = None) -> tuple[Sheet, PlannedTable]:
    """The Profit sheet and its reference frame; target_overrides are carried 'Your target ACoS' values."""
    base = product_frame(inputs, layouts)
    if target_overrides:
        base["target_override"] = base["product_id"].map(target_overrides).astype(float)
    catalog = layouts["catalog"].frame if "catalog" in layouts else None
    ctx = ProfitContext(settings, catalog)
    ranges = {f"{t}.{col}": r for t, layout in layouts.items() for col, r in layout.ranges.items()}
    defs = stock_as_values(DEFS, set(STOCK), ranges)
    planned = plan_table(defs, base, ctx, HEADER_ROW + 1, ranges, with_totals=True)
    for key, compute in _LATE_TOTALS.items():
        i = [d.key for d in DEFS].index(key)
        value = compute(planned.frame)
        planned.totals_values[key] = value
        cell = planned.totals[i]
        planned.totals[i] = Cell(value, cell.formula, cell.style)
    keys = [d.key for d in DEFS]
    highlights = [Highlight(keys.index("status"), word, state) for word, state in STATUS_STATES.items()]
    highlights += [Highlight(keys.index("direction"), word, state) for word, state in DIRECTION_STATES.items()]
    above = [
        [Cell("Profit after ads, per product", style="title")],
        [Cell(CAUTION, style="note")],
        [Cell(warning_value(settings, built_on), warning_formula(), "alert")],
    ]
    sheet = Sheet(SHEET, above=above, table=Table(HEADER_ROW, planned.columns, planned.totals, highlights),
                  freeze=(HEADER_ROW + 1, 2), tab_color="#0B5C8A", sortable=True)
    return sheet, planned
