"""The Groups sheet: which products each ad group advertises, and how their values blend.

One row per campaign, ad group and product (from in_ad_products), sorted so each ad
group's products form one block. A target in an ad group that advertises several
products uses their spend-weighted blend of target ACoS, conversion rate and order
value; the weighted columns here are what the Bids sheet sums over the block.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pandas as pd

from .columns import ColumnDef, PlannedTable, plan_table
from .formula import block_sum
from .plan_inputs import InputSheet
from .spec import DATA, Cell, Sheet, Table

SHEET = "Groups"
HEADER_ROW = 2


@dataclass
class GroupsContext:
    """What the Groups columns' references read besides the frame."""

    profit: pd.DataFrame
    totals: dict[str, Any] = field(default_factory=dict)


def _profit_value(key: str):
    def compute(df: pd.DataFrame, ctx: GroupsContext) -> pd.Series:
        values = ctx.profit[key].to_numpy(dtype=float)
        return pd.Series(values[df["prow"].to_numpy(dtype=int) - 1] if len(df) else [], index=df.index, dtype=float)
    return compute


def _profit_index(key: str) -> str:
    return "=INDEX({rng:profit.%s},{c:prow})" % key


DEFS: list[ColumnDef] = [
    ColumnDef("campaign", "Campaign", "text", "The campaign.", lambda df, ctx: df["campaign"], kind=DATA, width=24),
    ColumnDef("ad_group", "Ad group", "text", "The ad group.", lambda df, ctx: df["ad_group"], kind=DATA, width=22),
    ColumnDef("product_id", "Product ID", "text", "A product the ad group advertises.",
              lambda df, ctx: df["product_id"], kind=DATA, width=12),
    ColumnDef("spend", "Ad spend", "money", "The product's ad spend in this ad group: its weight in the blend.",
              lambda df, ctx: df["spend"],
              "=" + block_sum("{rng:ad_products.spend}", "{c:ad_first}", "{c:ad_last}"), width=12),
    ColumnDef("target_acos", "Target ACoS", "percent",
              "The target ACoS the product's bids aim at (Profit's Bid target ACoS).",
              _profit_value("bid_target"), _profit_index("bid_target"), width=10),
    ColumnDef("above", "Above break-even", "int", "1 where the product's target ACoS is above its break-even ACoS.",
              lambda df, ctx: pd.Series([1.0 if ctx.profit["target_check"].iloc[int(r) - 1] else 0.0
                                         for r in df["prow"]], index=df.index, dtype=float),
              '=IF(INDEX({rng:profit.target_check},{c:prow})<>"",1,0)', width=8),
    ColumnDef("cvr", "Product CVR", "percent", "The product's ad conversion rate (from Profit's working columns).",
              _profit_value("prod_cvr"), _profit_index("prod_cvr"), width=10),
    ColumnDef("aov", "Product order value", "money", "The product's ad sales per order (from Profit's working columns).",
              _profit_value("prod_aov"), _profit_index("prod_aov"), width=12),
    ColumnDef("price", "Product price", "money", "The product's catalog price (its order value without one).",
              _profit_value("prod_price"), _profit_index("prod_price"), width=10),
    ColumnDef("w_target", "Spend x target ACoS", "ratio", "Ad spend x target ACoS, summed per ad group for the blend.",
              lambda df, ctx: df["spend"] * df["target_acos"], "={c:spend}*{c:target_acos}", width=11),
    ColumnDef("w_cvr", "Spend x CVR", "ratio", "Ad spend x product CVR.",
              lambda df, ctx: df["spend"] * df["cvr"], "={c:spend}*{c:cvr}", width=11),
    ColumnDef("w_aov", "Spend x order value", "ratio", "Ad spend x product order value.",
              lambda df, ctx: df["spend"] * df["aov"], "={c:spend}*{c:aov}", width=11),
    ColumnDef("w_price", "Spend x price", "ratio", "Ad spend x product price.",
              lambda df, ctx: df["spend"] * df["price"], "={c:spend}*{c:price}", width=11),
    ColumnDef("prow", "Profit row", "int", "Helper: the product's position on Profit.",
              lambda df, ctx: df["prow"], kind=DATA, width=8, hidden=True),
    ColumnDef("ad_first", "Ad first row", "int", "Helper: first of the rows on in_ad_products.",
              lambda df, ctx: df["ad_first"], kind=DATA, width=8, hidden=True),
    ColumnDef("ad_last", "Ad last row", "int", "Helper: last of the rows on in_ad_products.",
              lambda df, ctx: df["ad_last"], kind=DATA, width=8, hidden=True),
]


def group_frame(ad_layout: InputSheet | None, profit: pd.DataFrame) -> pd.DataFrame:
    """One row per (campaign, ad group, product), sorted by campaign and ad group."""
    columns = ["campaign", "ad_group", "product_id", "spend", "prow", "ad_first", "ad_last"]
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
    return out[columns].astype({"campaign": object, "ad_group": object, "product_id": object})


def plan_groups(ad_layout: InputSheet | None, profit: PlannedTable, ranges: dict[str, str]
                ) -> tuple[Sheet, PlannedTable]:
    """The Groups sheet and its reference frame."""
    base = group_frame(ad_layout, profit.frame)
    planned = plan_table(DEFS, base, GroupsContext(profit.frame), HEADER_ROW + 1, ranges, with_totals=False)
    above = [[Cell("Ad groups and the products they advertise", style="title")],
             [Cell("A target in an ad group with several products uses their blend, weighted by ad spend "
                   "(equal weights where the group has no spend).", style="note")]]
    sheet = Sheet(SHEET, above=above, table=Table(HEADER_ROW, planned.columns), freeze=(HEADER_ROW + 1, 3),
                  tab_color="#5B6F80")
    return sheet, planned
