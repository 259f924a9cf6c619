"""Ad-group blends shared by the Bids and Terms sheets, computed once per ad group.

The blends table on the Groups sheet holds one row per ad group (after a first row with
the account's values): its block of product rows on Groups, its spend, and the blended
aim ACoS, CVR, order value, price, zero-order clicks, low stock (1 where any of its
products is low on stock, whatever its spend) and target check. A Bids or Terms
row fetches what it needs with one INDEX on its blends row, written as data, so no blend
is recomputed per keyword or per search term.

A row that belongs to an ad group (a target, a search term) takes its product's values
from that ad group's block of rows on the Groups sheet: the first and last positions
are written as data and the block is summed with SUM(INDEX(..):INDEX(..)). Where the ad
group advertises several products, their values are blended by each product's ad spend
in the group (equal weights where the group has no spend); where it advertises none,
the account's values stand in.
"""
from __future__ import annotations

from dataclasses import dataclass, field, replace
from typing import Any, Callable

import numpy as np
import pandas as pd

from sheetbuilder.workbook.columns import ColumnDef
from sheetbuilder.workbook.formula import block_sum as formula_block_sum
from sheetbuilder.workbook.spec import DATA


def block_sum(column: str) -> str:
    """Formula text summing a Groups column over the row's ad-group block."""
    return formula_block_sum("{rng:groups.%s}" % column, "{c:gfirst}", "{c:glast}")


def blend_formula(weighted: str, fallback: str) -> str:
    """The blend over the ad group's products, weighted by the Groups weights (the account's value without one)."""
    return '=IF({c:gfirst}="",%s,%s/{c:g_weight})' % (fallback, block_sum(weighted))


def block_sums(df: pd.DataFrame, groups: pd.DataFrame, column: str) -> pd.Series:
    """Per row, the sum of a Groups column over its ad group's block (NaN without one)."""
    if not len(groups):
        return pd.Series(np.nan, index=df.index)
    block = groups.groupby([groups["campaign"], groups["ad_group"]], sort=False)
    first = block.cumcount().eq(0).to_numpy()
    starts = np.arange(1, len(groups) + 1, dtype=float)[first]
    keys = pd.MultiIndex.from_frame(groups.loc[first, ["campaign", "ad_group"]])
    by_first = pd.Series(block[column].sum().reindex(keys).to_numpy(), index=starts)
    return df["gfirst"].map(by_first)


def blend(weighted: str, fallback: Callable[[Any], float]):
    """Reference of blend_formula, computed per ad group with pandas."""
    def compute(df: pd.DataFrame, ctx: Any) -> pd.Series:
        out = block_sums(df, ctx.groups, weighted) / df["g_weight"]
        return out.where(df["gfirst"].notna(), fallback(ctx)).astype(float)
    return compute


def attach_groups(frame: pd.DataFrame, groups: pd.DataFrame) -> pd.DataFrame:
    """frame with its ad group's block on Groups (gfirst, glast), products and a product label."""
    pos = pd.Series(np.arange(1, len(groups) + 1, dtype=float), index=groups.index)
    blocks = pd.DataFrame({"campaign": groups["campaign"], "ad_group": groups["ad_group"], "pos": pos,
                           "product_id": groups["product_id"]})
    agg = blocks.groupby(["campaign", "ad_group"], sort=False).agg(
        gfirst=("pos", "min"), glast=("pos", "max"), products=("product_id", list))
    agg["brow"] = np.arange(2, len(agg) + 2, dtype=float)  # row 1 of the blends table holds the account's values
    out = frame.join(agg, on=["campaign", "ad_group"])
    out["brow"] = out["brow"].fillna(1.0)
    out["products"] = out["products"].map(lambda p: p if isinstance(p, list) else [])
    out["product_label"] = out["products"].map(
        lambda p: "" if not p else (p[0] if len(p) == 1 else "shared: " + ", ".join(p)))
    out["sort_product"] = out["products"].map(lambda p: p[0] if p else "\uffff")
    out["shared"] = out["products"].map(len) > 1
    return out


BLEND_TITLE = ("Ad-group blends: each ad group's values computed once, blended by its products' ad spend "
               "(row 1: the account's values, for targets whose ad group advertises no product)")


@dataclass
class BlendContext:
    """What the blends table's references read: the Groups frame, the settings and the account's values."""

    groups: pd.DataFrame
    settings: Any
    account_cvr: float
    account_aov: float
    totals: dict[str, Any] = field(default_factory=dict)


def blend_frame(groups: pd.DataFrame) -> pd.DataFrame:
    """One row per ad group of the Groups sheet (its block's first and last rows), after the account's row."""
    pos = np.arange(1, len(groups) + 1, dtype=float)
    blocks = pd.DataFrame({"campaign": groups["campaign"].to_numpy(), "ad_group": groups["ad_group"].to_numpy(),
                           "pos": pos})
    agg = blocks.groupby(["campaign", "ad_group"], sort=False).agg(gfirst=("pos", "min"), glast=("pos", "max"))
    agg = agg.reset_index()
    account = pd.DataFrame({"campaign": ["(account)"], "ad_group": ["(no products)"], "gfirst": [np.nan],
                            "glast": [np.nan]})
    out = pd.concat([account, agg], ignore_index=True)
    return out.astype({"campaign": object, "ad_group": object, "gfirst": float, "glast": float})


GROUP_ABOVE = ("target above break-even: aim used", "target capped at break-even", "target above break-even")


def _target_check(df: pd.DataFrame, ctx: Any) -> pd.Series:
    above = block_sums(df, ctx.groups, "above").fillna(0.0) > 0
    s = ctx.settings
    text = GROUP_ABOVE[0] if s.seek_profit == "yes" else GROUP_ABOVE[1] if s.cap_target_at_break_even == "yes" \
        else GROUP_ABOVE[2]
    return pd.Series(np.where(above, text, ""), index=df.index, dtype=object)


def blend_columns() -> list[ColumnDef]:
    """The blends table: per ad group, its block on Groups, its spend and the blended values, computed once."""
    return [
        ColumnDef("campaign", "Campaign", "text", "The campaign.", lambda df, ctx: df["campaign"], kind=DATA, width=24),
        ColumnDef("ad_group", "Ad group", "text", "The ad group.", lambda df, ctx: df["ad_group"], kind=DATA, width=22),
        ColumnDef("gfirst", "Group first row", "int", "First of the ad group's rows in the table above.",
                  lambda df, ctx: df["gfirst"], kind=DATA, width=8),
        ColumnDef("glast", "Group last row", "int", "Last of the ad group's rows in the table above.",
                  lambda df, ctx: df["glast"], kind=DATA, width=8),
        ColumnDef("g_weight", "Group weight", "money",
                  "The sum of the ad group's blend weights (its ad spend, or its count of products without spend).",
                  lambda df, ctx: block_sums(df, ctx.groups, "weight").fillna(0.0),
                  '=IF({c:gfirst}="",0,%s)' % block_sum("weight"), width=12, export=True),
        target_acos_column(),
        ColumnDef("p_cvr", "Product CVR", "percent", "The product's (or blend's) ad conversion rate.",
                  blend("w_cvr", lambda ctx: ctx.account_cvr),
                  blend_formula("w_cvr", "{rng:profit_total.prod_cvr}"), export=True, width=10),
        ColumnDef("p_aov", "Product order value", "money", "The product's (or blend's) ad sales per order.",
                  blend("w_aov", lambda ctx: ctx.account_aov),
                  blend_formula("w_aov", "{rng:profit_total.prod_aov}"), export=True, width=12),
        ColumnDef("p_price", "Product price", "money", "The product's (or blend's) price: the block rule's yardstick.",
                  blend("w_price", lambda ctx: ctx.account_aov),
                  blend_formula("w_price", "{rng:profit_total.prod_aov}"), width=10),
        zero_order_column(),
        ColumnDef("target_check", "Target check", "label",
                  "Where a product of the ad group has a target ACoS above its break-even ACoS (see Profit).",
                  _target_check, '=IF({c:gfirst}="","",IF(%s>0,IF(seek_profit="yes","%s",IF(cap_target_at_break_even='
                                 '"yes","%s","%s")),""))' % (block_sum("above"), *GROUP_ABOVE),
                  width=22),
        ColumnDef("p_low", "Low stock", "int",
                  "1 where any product of the ad group is low on stock (Profit's Days of cover below the minimum): "
                  "its targets are not raised and its search terms not promoted.",
                  lambda df, ctx: (block_sums(df, ctx.groups, "low").fillna(0.0) > 0).astype(float),
                  '=IF({c:gfirst}="",0,IF(%s>0,1,0))' % block_sum("low"), width=8),
    ]


def fetch(key: str, header: str, style: str, help: str, hidden: bool = True, width: float = 9) -> ColumnDef:
    """A Bids or Terms column fetching its ad group's blended value: one INDEX on the row's blends row."""
    def compute(df: pd.DataFrame, ctx: Any) -> pd.Series:
        values = ctx.blends[key].to_numpy(dtype=object)
        out = values[df["brow"].to_numpy(dtype=int) - 1] if len(df) else []
        return pd.Series(out, index=df.index, dtype=object if style == "label" else float)
    return ColumnDef(key, header, style, help, compute, "=INDEX({rng:blends.%s},{c:brow})" % key, width=width,
                     hidden=hidden)


def blended(key: str) -> str:
    """Formula text of the row's ad-group blend of key, read where a formula needs it (no column of its own)."""
    return "INDEX({rng:blends.%s},{c:brow})" % key


def with_blended(frame: pd.DataFrame, blends: pd.DataFrame, keys: tuple[str, ...]) -> pd.DataFrame:
    """frame with each row's ad-group blend of keys, for the references (the sheet reads them with blended)."""
    if not len(frame):
        return frame.assign(**{key: pd.Series(dtype=float) for key in keys})
    at = frame["brow"].to_numpy(dtype=int) - 1
    return frame.assign(**{key: blends[key].to_numpy(dtype=float)[at] for key in keys})


def blends_row_column() -> ColumnDef:
    """The row's position on the blends table (data): where its ad group's blended values are."""
    return ColumnDef("brow", "Blends row", "int", "Helper: the ad group's row in the ad-group blends table on Groups.",
                     lambda df, ctx: df["brow"], kind=DATA, width=8, hidden=True)


def target_acos_column() -> ColumnDef:
    """The blended aim ACoS of an ad group (the default target ACoS where it advertises no product)."""
    return ColumnDef("target_acos", "Aim ACoS", "percent",
                     "The ACoS the product's bids aim at (Profit's Aim ACoS), or the ad group's spend-weighted blend.",
                     blend("w_target", lambda ctx: ctx.settings.default_target_acos),
                     blend_formula("w_target", "default_target_acos"), width=10)


def zero_order_column() -> ColumnDef:
    """Clicks after which zero orders are unlikely at the product's CVR (the binomial threshold)."""
    import math

    def compute(df: pd.DataFrame, ctx: Any) -> pd.Series:
        conf = ctx.settings.zero_order_confidence
        return pd.Series([math.ceil(math.log(1 - conf) / math.log(1 - p)) if 0 < p < 1 else np.nan
                          for p in df["p_cvr"]], index=df.index, dtype=float)
    return ColumnDef("n_zero", "Zero-order clicks", "int",
                     "Working: clicks after which zero orders are unlikely at the product's CVR.",
                     compute, '=IF(OR({c:p_cvr}<=0,{c:p_cvr}>=1),"",'
                              'ROUNDUP(LN(1-zero_order_confidence)/LN(1-{c:p_cvr}),0))', width=9, hidden=True)


STOCK_RANGE = "inventory.units_available"  # the units on in_inventory: provided only with an inventory export


def stock_as_values(defs: list[ColumnDef], keys: set[str], ranges) -> list[ColumnDef]:
    """defs, with the stock columns named by keys written as values when the build has no inventory export.

    Without one (ranges lack STOCK_RANGE) no product is low on stock and no cell can make one so:
    the columns' formulas would give the same value on every row, so they are written as those
    values and cost no recalculation (a 10k-keyword account keeps its formula count).
    """
    if STOCK_RANGE in ranges:
        return list(defs)
    return [replace(d, formula=None, kind=DATA) if d.key in keys else d for d in defs]
