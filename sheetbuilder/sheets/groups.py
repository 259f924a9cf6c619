"""The Groups sheet: which products each ad group advertises, and how their values blend.

One row per campaign, ad group and product (from in_ad_products), sorted so each ad
group's products form one block. A target in an ad group that advertises several
products uses their spend-weighted blend of aim ACoS, conversion rate, order value
and price (equal weights where the ad group has no spend); the weighted columns here are
what the ad-group blends table below sums over each block, once per ad group.
"""
from __future__ import annotations

from dataclasses import dataclass, field, replace
from typing import Any

import numpy as np
import pandas as pd

from sheetbuilder.sheets.blends import BLEND_TITLE, BlendContext, blend_columns, blend_frame, stock_as_values
from sheetbuilder.workbook.columns import ColumnDef, PlannedTable, plan_table
from sheetbuilder.workbook.formula import block_sum, keyed_row
from sheetbuilder.sheets.inputs import InputSheet
from sheetbuilder.reading.settings import Settings
from sheetbuilder.workbook.spec import DATA, Cell, Sheet, Table

SHEET = "Groups"
HEADER_ROW = 2


@dataclass
class GroupsContext:
    """What the Groups columns' references read besides the frame."""

    profit: pd.DataFrame
    totals: dict[str, Any] = field(default_factory=dict)


# The product's Profit row, checked against Profit's Position column (a user may sort Profit): computed once
# per row in the prow_at helper column, which every lookup of the row reads.
_AT_PROFIT = "{c:prow_at}"


def _profit_value(key: str):
    def compute(df: pd.DataFrame, ctx: GroupsContext) -> pd.Series:
        values = ctx.profit[key].to_numpy(dtype=float)
        return pd.Series(values[df["prow"].to_numpy(dtype=int) - 1] if len(df) else [], index=df.index, dtype=float)
    return compute


def _weighted(key: str, header: str, profit_key: str, help: str) -> ColumnDef:
    """A product's blend weight times one of its Profit values: what its ad group's blend sums."""
    def compute(df: pd.DataFrame, ctx: GroupsContext) -> pd.Series:
        return df["weight"] * _profit_value(profit_key)(df, ctx)
    return ColumnDef(key, header, "ratio", help, compute, "={c:weight}*INDEX({rng:profit.%s},%s)" % (profit_key, _AT_PROFIT),
                     width=11)


def _above(df: pd.DataFrame, profit: pd.DataFrame) -> pd.Series:
    """1 where the row's product (its Profit row) has a target ACoS above break-even."""
    checks = profit["target_check"].to_numpy()
    return pd.Series([1.0 if checks[int(r) - 1] else 0.0 for r in df["prow"]], index=df.index, dtype=float)


DEFS: list[ColumnDef] = [
    ColumnDef("campaign", "Campaign", "text", "The campaign.", lambda df, ctx: df["campaign"], kind=DATA, width=24),
    ColumnDef("ad_group", "Ad group", "text", "The ad group.", lambda df, ctx: df["ad_group"], kind=DATA, width=22),
    ColumnDef("product_id", "Product ID", "text", "A product the ad group advertises.",
              lambda df, ctx: df["product_id"], kind=DATA, width=12),
    ColumnDef("spend", "Ad spend", "money", "The product's ad spend in this ad group: its weight in the blend.",
              lambda df, ctx: df["spend"],
              "=" + block_sum("{rng:ad_products.spend}", "{c:ad_first}", "{c:ad_last}"), width=12,
              export=True),
    ColumnDef("weight", "Blend weight", "money",
              "The product's weight in its ad group's blend: its ad spend, or 1 each where the ad group has no spend "
              "(equal weights).", lambda df, ctx: df["weight"], kind=DATA, width=10, export=True),
    _weighted("w_target", "Weight x aim ACoS", "aim_acos",
              "Blend weight x the ACoS the product's bids aim at (Profit's Aim ACoS, live)."),
    ColumnDef("above", "Above break-even", "int", "1 where your target ACoS of the product is above its break-even ACoS.",
              lambda df, ctx: _above(df, ctx.profit),
              '=IF(INDEX({rng:profit.target_check},%s)<>"",1,0)' % _AT_PROFIT, width=8),
    # Weight x CVR and x order value: the ad export's figures (Profit's ad clicks, orders and sales) times the
    # ad export's spend, so no input can change them: plain values, as the blends they feed.
    replace(_weighted("w_cvr", "Weight x CVR", "prod_cvr", "Blend weight x the product's ad conversion rate (Profit)."),
            export=True),
    replace(_weighted("w_aov", "Weight x order value", "prod_aov",
                      "Blend weight x the product's ad sales per order (Profit)."), export=True),
    _weighted("w_price", "Weight x price", "prod_price",
              "Blend weight x the product's price (its order value without one) (Profit)."),
    ColumnDef("prow", "Profit row", "int", "Helper: the product's position on Profit.",
              lambda df, ctx: df["prow"], kind=DATA, width=8, hidden=True),
    ColumnDef("prow_at", "Profit row now", "int", "Helper: the product's row on Profit, checked against Profit's "
              "Position column (found again when Profit was sorted).", lambda df, ctx: df["prow"],
              "=" + keyed_row("{rng:profit.pos}", "{c:prow}"), width=8, hidden=True),
    ColumnDef("ad_first", "Ad first row", "int", "Helper: first of the rows on in_ad_products.",
              lambda df, ctx: df["ad_first"], kind=DATA, width=8, hidden=True),
    ColumnDef("ad_last", "Ad last row", "int", "Helper: last of the rows on in_ad_products.",
              lambda df, ctx: df["ad_last"], kind=DATA, width=8, hidden=True),
    ColumnDef("low", "Low stock", "int", "1 where the product is low on stock (Profit's Low stock: Days of cover "
              "below the minimum on Settings).", _profit_value("low"), "=INDEX({rng:profit.low},%s)" % _AT_PROFIT,
              width=8),
]


BLEND_DEFS: list[ColumnDef] = blend_columns()


def group_frame(ad_layout: InputSheet | None, profit: pd.DataFrame) -> pd.DataFrame:
    """One row per (campaign, ad group, product), sorted by campaign and ad group."""
    columns = ["campaign", "ad_group", "product_id", "spend", "weight", "prow", "ad_first", "ad_last"]
    if ad_layout is None or not len(ad_layout.frame):
        return pd.DataFrame(columns=columns)
    frame = ad_layout.frame
    pos = pd.Series(np.arange(1, len(frame) + 1), index=frame.index)
    keys = [frame["campaign"], frame["ad_group"], frame["product_id"]]
    g = pd.DataFrame({"spend": frame["spend"], "pos": pos}).groupby(keys, sort=True)
    out = pd.DataFrame({"spend": g["spend"].sum(), "ad_first": g["pos"].min(), "ad_last": g["pos"].max()})
    out = out.reset_index()
    out.columns = ["campaign", "ad_group", "product_id", "spend", "ad_first", "ad_last"]
    prow = pd.Series(np.arange(1, len(profit) + 1), index=profit["product_id"].to_numpy())
    out["prow"] = out["product_id"].map(prow)
    for c in ("ad_first", "ad_last", "prow"):
        out[c] = out[c].astype(float)
    group_spend = out.groupby(["campaign", "ad_group"])["spend"].transform("sum")
    out["weight"] = out["spend"].where(group_spend != 0, 1.0).astype(float)
    return out[columns].astype({"campaign": object, "ad_group": object, "product_id": object})


def plan_groups(ad_layout: InputSheet | None, profit: PlannedTable, ranges: dict[str, str], settings: Settings
                ) -> tuple[Sheet, PlannedTable, PlannedTable]:
    """The Groups sheet, its reference frame, and its ad-group blends table (below it) that Bids and Terms read."""
    base = group_frame(ad_layout, profit.frame)
    planned = plan_table(stock_as_values(DEFS, {"low"}, ranges), base, GroupsContext(profit.frame), HEADER_ROW + 1,
                         ranges, with_totals=False)
    blend_first = HEADER_ROW + max(len(base), 1) + 3  # a blank row and the title between the two tables
    ctx = BlendContext(planned.frame, settings, float(profit.totals_values["prod_cvr"]),
                       float(profit.totals_values["prod_aov"]))
    blends = plan_table(stock_as_values(BLEND_DEFS, {"p_low"}, ranges), blend_frame(planned.frame), ctx, blend_first + 1,
                        {**ranges, **planned.ranges(SHEET, "groups")}, with_totals=False)
    above = [[Cell("Ad groups and the products they advertise", style="title")],
             [Cell("A target in an ad group with several products uses their blend, weighted by ad spend "
                   "(equal weights where the group has no spend).", style="note")]]
    sheet = Sheet(SHEET, above=above, table=Table(HEADER_ROW, planned.columns), freeze=(HEADER_ROW + 1, 3),
                  tab_color="#5B6F80", more=[Table(blend_first, blends.columns, autofilter=False, title=BLEND_TITLE)])
    return sheet, planned, blends
