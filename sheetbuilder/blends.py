"""Ad-group blends shared by the Bids and Terms sheets.

A row that belongs to an ad group (a target, a search term) takes its product's values
from that ad group's block of rows on the Groups sheet: the first and last positions
are written as data and the block is summed with SUM(INDEX(..):INDEX(..)). Where the ad
group advertises several products, their values are blended by each product's ad spend
in the group (equal weights where the group has no spend); where it advertises none,
the account's values stand in.
"""
from __future__ import annotations

from typing import Any, Callable

import numpy as np
import pandas as pd

from .columns import ColumnDef
from .formula import block_sum as formula_block_sum
from .spec import DATA


def block_sum(column: str) -> str:
    """Formula text summing a Groups column over the row's ad-group block."""
    return formula_block_sum("{rng:groups.%s}" % column, "{c:gfirst}", "{c:glast}")


def blend_formula(plain: str, weighted: str, fallback: str) -> str:
    """Spend-weighted blend over the ad group's products; equal weights when it has no spend."""
    return ('=IF({c:gfirst}="",%s,IF({c:g_spend}=0,%s/({c:glast}-{c:gfirst}+1),%s/{c:g_spend}))'
            % (fallback, block_sum(plain), block_sum(weighted)))


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


def blend(plain: str, weighted: str, fallback: Callable[[Any], float]):
    """Reference of blend_formula, computed per ad group with pandas."""
    def compute(df: pd.DataFrame, ctx: Any) -> pd.Series:
        count = df["glast"] - df["gfirst"] + 1
        equal = block_sums(df, ctx.groups, plain) / count
        weighted_mean = block_sums(df, ctx.groups, weighted) / df["g_spend"].where(df["g_spend"] != 0)
        out = weighted_mean.where(df["g_spend"] != 0, equal)
        return out.where(df["gfirst"].notna(), fallback(ctx)).astype(float)
    return compute


def attach_groups(frame: pd.DataFrame, groups: pd.DataFrame) -> pd.DataFrame:
    """frame with its ad group's block on Groups (gfirst, glast), products and a product label."""
    pos = pd.Series(np.arange(1, len(groups) + 1, dtype=float), index=groups.index)
    blocks = pd.DataFrame({"campaign": groups["campaign"], "ad_group": groups["ad_group"], "pos": pos,
                           "product_id": groups["product_id"]})
    agg = blocks.groupby(["campaign", "ad_group"], sort=False).agg(
        gfirst=("pos", "min"), glast=("pos", "max"), products=("product_id", list))
    out = frame.join(agg, on=["campaign", "ad_group"])
    out["products"] = out["products"].map(lambda p: p if isinstance(p, list) else [])
    out["product_label"] = out["products"].map(
        lambda p: "" if not p else (p[0] if len(p) == 1 else "shared: " + ", ".join(p)))
    out["sort_product"] = out["products"].map(lambda p: p[0] if p else "\uffff")
    out["shared"] = out["products"].map(len) > 1
    return out


def group_columns() -> list[ColumnDef]:
    """The hidden working columns every ad-group row carries: block positions and blends."""
    return [
        ColumnDef("gfirst", "Group first row", "int", "Helper: first of the ad group's rows on Groups.",
                  lambda df, ctx: df["gfirst"], kind=DATA, width=8, hidden=True),
        ColumnDef("glast", "Group last row", "int", "Helper: last of the ad group's rows on Groups.",
                  lambda df, ctx: df["glast"], kind=DATA, width=8, hidden=True),
        ColumnDef("g_spend", "Group spend", "money", "Working: the ad group's ad spend (the blend's weights).",
                  lambda df, ctx: block_sums(df, ctx.groups, "spend").fillna(0.0),
                  '=IF({c:gfirst}="",0,%s)' % block_sum("spend"), width=9, hidden=True),
        ColumnDef("p_cvr", "Product CVR", "percent", "Working: the product's (or blend's) ad conversion rate.",
                  blend("cvr", "w_cvr", lambda ctx: ctx.account_cvr),
                  blend_formula("cvr", "w_cvr", "{rng:profit_total.prod_cvr}"), width=9, hidden=True),
        ColumnDef("p_aov", "Product order value", "money", "Working: the product's (or blend's) ad sales per order.",
                  blend("aov", "w_aov", lambda ctx: ctx.account_aov),
                  blend_formula("aov", "w_aov", "{rng:profit_total.prod_aov}"), width=9, hidden=True),
    ]


def target_acos_column(visible: bool) -> ColumnDef:
    """The blended target ACoS column (visible on Bids, a working column on Terms)."""
    return ColumnDef("target_acos", "Target ACoS", "percent",
                     "The product's target ACoS (Profit), or the ad group's spend-weighted blend.",
                     blend("target_acos", "w_target", lambda ctx: ctx.settings.default_target_acos),
                     blend_formula("target_acos", "w_target", "default_target_acos"), width=9, hidden=not visible)


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
