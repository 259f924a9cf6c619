"""The Budget sheet: a budget-neutral shift of spend from products to cut to products to grow,
and each campaign's daily budget scaled to follow its products.

Product level: a share of the spend of every product whose Direction (Profit) is cut
moves to the products whose Direction is grow, in proportion to their revenue, so total
spend stays the same (a product low on stock reads low stock, not grow: its spend is held).
Nothing moves unless there is both a product to cut and one to grow.
Campaign level: each campaign's daily budget is scaled by its products' final-to-current
spend (a spend-weighted blend where it serves several), within the maximum change per
run, rounded to the currency unit (campaigns with no ad rows have nothing to follow and are
not listed). Decision and Final work as on the Bids sheet.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pandas as pd

from sheetbuilder.sheets.decisions import NOTES, apply_decision, decision_formula, decision_validation, editable, notes_column
from sheetbuilder.sheets.lists import running_key
from sheetbuilder.workbook.columns import ColumnDef, PlannedTable, plan_table
from sheetbuilder.workbook.formula import block_sum, col_letter, keyed_row, quote_sheet
from sheetbuilder.reading.numbers import ROUNDING_NUDGE, cents, cents_formula, round_half_away
from sheetbuilder.sheets.inputs import InputSheet
from sheetbuilder.reading.settings import Settings
from sheetbuilder.workbook.spec import DATA, INPUT, Cell, Highlight, Sheet, Table

SHEET = "Budget"
HEADER_ROW = 4


@dataclass
class BudgetContext:
    """What the Budget columns' references read besides the frame."""

    settings: Settings
    profit: pd.DataFrame
    products: pd.DataFrame | None = None
    links: pd.DataFrame | None = None
    totals: dict[str, Any] = field(default_factory=dict)


# The product's Profit row, checked against Profit's Position column (a user may sort Profit).
_AT_PROFIT = keyed_row("{rng:profit.pos}", "{c:prow}")


def _from_profit(key: str):
    return lambda df, ctx: df["prow"].map(lambda r: ctx.profit[key].iloc[int(r) - 1])


def _proposed_spend(df: pd.DataFrame, ctx: BudgetContext) -> pd.Series:
    share = ctx.settings.budget_shift_share
    cut, grow = float(df["cut_spend"].sum()), float(df["grow_rev"].sum())
    if cut == 0 or grow == 0:
        return df["spend"].astype(float)
    out = np.where(df["direction"] == "cut", df["spend"] * (1 - share),
                   np.where(df["direction"] == "grow", df["spend"] + share * cut * df["revenue"] / grow, df["spend"]))
    return pd.Series(out, index=df.index, dtype=float)



PRODUCT_DEFS: list[ColumnDef] = [
    ColumnDef("product_id", "Product ID", "text", "The product (as on Profit).", lambda df, ctx: df["product_id"],
              kind=DATA, width=14, total="Total"),
    ColumnDef("direction", "Direction", "label", "From Profit: cut, grow, hold, no ads, or low stock (its spend held).",
              _from_profit("direction"),
              "=INDEX({rng:profit.direction},%s)" % _AT_PROFIT, width=10),
    ColumnDef("revenue", "Revenue", "money", "From Profit.", _from_profit("revenue"),
              "=INDEX({rng:profit.revenue},%s)" % _AT_PROFIT, width=12, total="={sum:revenue}",
              total_reference=lambda df, ctx: float(df["revenue"].sum())),
    ColumnDef("spend", "Current spend", "money", "The product's ad spend in the period (Profit).",
              _from_profit("ad_spend"), "=INDEX({rng:profit.ad_spend},%s)" % _AT_PROFIT, width=12, total="={sum:spend}",
              total_reference=lambda df, ctx: float(df["spend"].sum())),
    ColumnDef("proposed", "Proposed spend", "money",
              "Cut products give up the shift share of their spend; grow products receive it in proportion to "
              "their revenue; total spend is unchanged.", _proposed_spend,
              '=IF(OR({tot:cut_spend}=0,{tot:grow_rev}=0),{c:spend},IF({c:direction}="cut",'
              '{c:spend}*(1-budget_shift_share),IF({c:direction}="grow",{c:spend}+budget_shift_share*'
              '{tot:cut_spend}*{c:revenue}/{tot:grow_rev},{c:spend})))', width=12, total="={sum:proposed}",
              total_reference=lambda df, ctx: float(df["proposed"].sum())),
    ColumnDef("change", "Change", "money", "Proposed minus current spend, to the cent.",
              lambda df, ctx: (df["proposed"] - df["spend"]).map(cents), "=" + cents_formula("{c:proposed}-{c:spend}"), width=11),
    ColumnDef("change_pct", "Change %", "percent", "Proposed / current spend - 1.",
              lambda df, ctx: (df["proposed"] / df["spend"].where(df["spend"] != 0)) - 1,
              '=IF({c:spend}=0,"",{c:proposed}/{c:spend}-1)', width=9),
    ColumnDef("decision", "Decision", "text_input",
              "Input: blank follows the proposal; type a spend to use it, or keep.",
              lambda df, ctx: df["decision"], kind=INPUT, width=10),
    ColumnDef("final", "Final spend", "money", "The Decision if given, else the proposal.",
              lambda df, ctx: apply_decision(df, "proposed", "spend"), decision_formula("proposed", "spend"),
              width=12, total="={sum:final}",
              total_reference=lambda df, ctx: float(pd.to_numeric(df["final"], errors="coerce").sum())),
    ColumnDef("cut_spend", "Spend to cut", "money", "Helper: the spend of a product to cut.",
              lambda df, ctx: df["spend"].where(df["direction"] == "cut", 0.0),
              '=IF({c:direction}="cut",{c:spend},0)', width=8, hidden=True, total='=SUMIFS({rng:profit.ad_spend},{rng:profit.direction},"cut")',
              total_reference=lambda df, ctx: float(df["cut_spend"].sum())),
    ColumnDef("grow_rev", "Revenue to grow", "money", "Helper: the revenue of a product to grow.",
              lambda df, ctx: df["revenue"].where(df["direction"] == "grow", 0.0),
              '=IF({c:direction}="grow",{c:revenue},0)', width=8, hidden=True, total='=SUMIFS({rng:profit.revenue},{rng:profit.direction},"grow")',
              total_reference=lambda df, ctx: float(df["grow_rev"].sum())),
    ColumnDef("ratio", "Final / current", "ratio", "Working: the spend change campaigns follow (1 without spend).",
              lambda df, ctx: (pd.to_numeric(df["final"], errors="coerce") / df["spend"].where(df["spend"] != 0))
              .fillna(1.0), '=IF({c:spend}=0,1,IF(ISNUMBER({c:final}),{c:final}/{c:spend},1))', width=8, hidden=True),
    ColumnDef("prow", "Profit row", "int", "Helper: the product's position on Profit.", lambda df, ctx: df["prow"],
              kind=DATA, width=6, hidden=True),
    notes_column(),  # the user's notes at the right end
]


def _link_sum(key: str) -> str:
    return block_sum("{rng:links.%s}" % key, "{row:lfirst}", "{row:llast}")


def _scale(df: pd.DataFrame, ctx: BudgetContext) -> pd.Series:
    links = ctx.links
    out = []
    for first, last in zip(df["lfirst"], df["llast"]):
        if pd.isna(first):
            out.append(1.0)
            continue
        block = links.iloc[int(first) - 1:int(last)]
        weight = float(block["spend"].sum())
        out.append(float(block["ratio"].sum()) / len(block) if weight == 0 else float(block["weighted"].sum()) / weight)
    return pd.Series(out, index=df.index, dtype=float)


def _proposed_budget(df: pd.DataFrame, ctx: BudgetContext) -> pd.Series:
    m = ctx.settings.max_budget_change
    factor = df["scale"].clip(lower=1 - m, upper=1 + m)
    return (df["budget"] * factor).map(lambda v: round_half_away(v + ROUNDING_NUDGE, 0))


CAMPAIGN_DEFS: list[ColumnDef] = [
    ColumnDef("campaign", "Campaign", "text", "The campaign.", lambda df, ctx: df["campaign"], kind=DATA, width=26),
    ColumnDef("state", "State", "text", "From in_campaigns.", lambda df, ctx: df["state"], kind=DATA, width=9),
    ColumnDef("budget", "Daily budget", "money", "From in_campaigns.", lambda df, ctx: df["budget"],
              "=INDEX({rng:campaigns.daily_budget},{row:crow})", width=11),
    ColumnDef("c_spend", "Ad spend", "money", "The campaign's ad spend over its products.",
              lambda df, ctx: df["c_spend"], '=%s' % _link_sum("spend"), width=11),
    ColumnDef("scale", "Spend change", "ratio",
              "Its products' final / current spend, blended by their spend in the campaign (1 where none).", _scale,
              '=IF({c:c_spend}=0,%s/({row:llast}-{row:lfirst}+1),%s/{c:c_spend})'
              % (_link_sum("ratio"), _link_sum("weighted")), width=9),
    ColumnDef("proposed", "Proposed budget", "money",
              "Daily budget x spend change, within the maximum change, rounded to the currency unit.",
              _proposed_budget, '=ROUND({c:budget}*MIN(1+max_budget_change,MAX(1-max_budget_change,{c:scale}))'
                                '+0.000000001,0)', width=11),
    ColumnDef("change", "Change", "money", "Proposed minus current budget, to the cent.",
              lambda df, ctx: (df["proposed"] - df["budget"]).map(cents), "=" + cents_formula("{c:proposed}-{c:budget}"), width=10),
    ColumnDef("decision", "Decision", "text_input", "Input: blank follows the proposal; a budget; or keep.",
              lambda df, ctx: df["decision"], kind=INPUT, width=10),
    ColumnDef("final", "Final budget", "money", "The Decision if given, else the proposal.",
              lambda df, ctx: apply_decision(df, "proposed", "budget"), decision_formula("proposed", "budget"),
              width=11),
    ColumnDef("products", "Products", "text", "The products the campaign advertises (in_ad_products).",
              lambda df, ctx: df["products"], kind=DATA, width=18),
    *running_key("c", "Changes", 'AND({c:final}<>{c:budget},{c:state}="enabled")',
                 lambda df: (df["final"] != df["budget"]) & (df["state"] == "enabled"), "cpos"),
]

LINK_DEFS: list[ColumnDef] = [
    ColumnDef("campaign", "Campaign", "text", "The campaign.", lambda df, ctx: df["campaign"], kind=DATA, width=26),
    ColumnDef("product_id", "Product ID", "text", "A product it advertises.", lambda df, ctx: df["product_id"],
              kind=DATA, width=14),
    ColumnDef("spend", "Ad spend", "money", "The product's spend in the campaign: its weight.",
              lambda df, ctx: df["spend"],
              "=" + block_sum("{rng:ad_products.spend}", "{row:ad_first}", "{row:ad_last}"),
              width=11),
    ColumnDef("ratio", "Spend change", "ratio", "The product's final / current spend (above).",
              lambda df, ctx: df["brow"].map(lambda r: ctx.products["ratio"].iloc[int(r) - 1]).astype(float),
              "=INDEX({rng:self.ratio},{row:brow})", width=9),
    ColumnDef("weighted", "Spend x change", "ratio", "Ad spend x spend change.",
              lambda df, ctx: df["spend"] * df["ratio"], "={c:spend}*{c:ratio}", width=10),
]

# A product's spend is an outcome of bids and budgets, never set to the cent: a typed spend counts as applied
# (and stops being carried) once the export's spend is within 5% of it or one currency unit, whichever is larger.
# 5% is about the week-to-week noise of a steady product's ad spend; the unit keeps a small spend from never
# expiring over cents. A campaign's daily budget is typed into the ad console as it is: equal to the cent.
SPEND_APPLIED_WITHIN = (0.05, 1.0)

# What a user types on Budget (products, then campaigns) and the keys that find its row again.
EDITABLE_COLUMNS = editable(PRODUCT_DEFS, "Budget", SHEET, "sb_budget", ("product_id",), "decision",
                            ("catalog", "store_sales", "ad_products"), table="Budget products", numeric="spend",
                            words=("keep",), current="spend", input_current="spend", notes=NOTES,
                            applied_within=SPEND_APPLIED_WITHIN)
CAMPAIGN_EDITABLE_COLUMNS = editable(CAMPAIGN_DEFS, "Budget campaigns", SHEET, "sb_budget_campaigns", ("campaign",),
                                     "decision", ("campaigns",), numeric="budget", words=("keep",), current="budget",
                                     input_current="daily_budget")


def _ranges(defs: list[ColumnDef], prefix: str, first_body_row: int, n: int) -> dict[str, str]:
    last = first_body_row + max(n, 1)
    return {f"{prefix}.{d.key}": f"{quote_sheet(SHEET)}!${col_letter(i)}${first_body_row + 1}:${col_letter(i)}${last}"
            for i, d in enumerate(defs)}


def _links(ad_layout: InputSheet | None, profit: pd.DataFrame) -> pd.DataFrame:
    """One row per (campaign, product), sorted by campaign, with its block on in_ad_products."""
    cols = ["campaign", "product_id", "spend", "ad_first", "ad_last", "brow"]
    if ad_layout is None or not len(ad_layout.frame):
        return pd.DataFrame(columns=cols)
    frame = ad_layout.frame
    pos = pd.Series(np.arange(1, len(frame) + 1, dtype=float), index=frame.index)
    g = pd.DataFrame({"spend": frame["spend"], "pos": pos}).groupby([frame["campaign"], frame["product_id"]])
    out = pd.DataFrame({"spend": g["spend"].sum(), "ad_first": g["pos"].min(), "ad_last": g["pos"].max()}).reset_index()
    out.columns = ["campaign", "product_id", "spend", "ad_first", "ad_last"]
    prow = pd.Series(np.arange(1, len(profit) + 1, dtype=float), index=profit["product_id"].to_numpy())
    out["brow"] = out["product_id"].map(prow)
    return out.sort_values(["campaign", "product_id"]).reset_index(drop=True)[cols].astype(
        {"campaign": object, "product_id": object})


def plan_budget(profit: PlannedTable, campaigns: InputSheet | None, ad_layout: InputSheet | None,
                settings: Settings, ranges: dict[str, str], decide=None
                ) -> tuple[Sheet, dict[str, PlannedTable], dict[str, tuple[str, float]]]:
    """The Budget sheet, its tables (products, campaigns, links), and its anchors {name: (cell, value)}."""
    ctx = BudgetContext(settings, profit.frame)
    n = len(profit.frame)
    base = pd.DataFrame({"product_id": profit.frame["product_id"].astype(object).to_numpy(),
                         "prow": np.arange(1, n + 1, dtype=float), "decision": [None] * n})
    if decide is not None:
        base["decision"] = decide("Budget", [(p,) for p in base["product_id"]])
    first = HEADER_ROW + 1
    own = _ranges(PRODUCT_DEFS, "self", first, n)
    products = plan_table(PRODUCT_DEFS, base, ctx, first, {**ranges, **own}, with_totals=True)
    ctx.products = products.frame
    tables = {"Budget products": products}
    keys = [d.key for d in PRODUCT_DEFS]
    shifted = float(products.totals_values["cut_spend"]) * settings.budget_shift_share \
        if products.totals_values["cut_spend"] and products.totals_values["grow_rev"] else 0.0
    total_cell = lambda key: f"${col_letter(keys.index(key))}${first + n + 1}"  # noqa: E731
    shifted_formula = (f'=IF(OR({total_cell("cut_spend")}=0,{total_cell("grow_rev")}=0),0,'
                       f'{total_cell("cut_spend")}*budget_shift_share)')
    above = [[Cell("Budget: shift spend from products to cut to products to grow", style="title")],
             [Cell("Decision aid only: review before changing a live ad account. The shift keeps total spend "
                   "unchanged; type a spend or budget, or keep, in Decision to override.", style="note")],
             [Cell("Spend shifted"), Cell(shifted, shifted_formula, "money_total")]]
    provides = {"budget.shifted": (f"{quote_sheet(SHEET)}!$B${len(above)}", shifted)}  # the cell just written
    validations = []
    more: list[Table] = []
    if campaigns is not None and len(campaigns.frame):
        links = _links(ad_layout, profit.frame)
        cframe = campaigns.frame
        crow = np.arange(1, len(cframe) + 1, dtype=float)
        cbase = pd.DataFrame({"campaign": cframe["campaign"].astype(object).to_numpy(),
                              "state": cframe["state"].astype(object).to_numpy(),
                              "budget": cframe["daily_budget"].to_numpy(dtype=float), "crow": crow})
        cbase = cbase.loc[cbase["budget"].notna()].reset_index(drop=True)
        lpos = pd.Series(np.arange(1, len(links) + 1, dtype=float))
        blocks = pd.DataFrame({"campaign": links["campaign"], "pos": lpos}).groupby("campaign")["pos"]
        cbase["lfirst"] = cbase["campaign"].map(blocks.min())
        cbase["llast"] = cbase["campaign"].map(blocks.max())
        cbase = cbase.loc[cbase["lfirst"].notna()].reset_index(drop=True)  # campaigns with no ad rows: nothing to follow
        cbase["c_spend"] = cbase["campaign"].map(links.groupby("campaign")["spend"].sum()).fillna(0.0)
        cbase["products"] = cbase["campaign"].map(links.groupby("campaign")["product_id"].agg(", ".join)).astype(
            object)
        cbase["decision"] = decide("Budget campaigns", [(c,) for c in cbase["campaign"]]) if decide else None
        cbase["cpos"] = np.arange(1, len(cbase) + 1, dtype=float)
        cbase["n_plus"] = float(len(cbase) + 1)
        c_first = first + n + 1 + 4
        l_first = c_first + 1 + len(cbase) + 4
        link_ranges = _ranges(LINK_DEFS, "links", l_first + 1, len(links))
        link_table = plan_table(LINK_DEFS, links, ctx, l_first + 1, {**ranges, **own}, with_totals=False)
        ctx.links = link_table.frame
        camp = plan_table(CAMPAIGN_DEFS, cbase, ctx, c_first + 1, {**ranges, **link_ranges}, with_totals=False)
        # Largest build-time change first (the money at stake), then as in in_campaigns; planned again in that order.
        order = (-camp.frame["change"].abs().round(2)).sort_values(kind="stable").index
        cbase = cbase.loc[order].reset_index(drop=True)
        cbase["cpos"] = np.arange(1, len(cbase) + 1, dtype=float)
        camp = plan_table(CAMPAIGN_DEFS, cbase, ctx, c_first + 1, {**ranges, **link_ranges}, with_totals=False)
        more = [Table(c_first, camp.columns, autofilter=False, title="Campaign daily budgets"),
                Table(l_first, link_table.columns, autofilter=False,
                      title="How each campaign blends its products (working rows)")]
        tables.update({"Budget campaigns": camp, "Budget links": link_table})
        if len(cbase):
            validations.append(decision_validation(
                CAMPAIGN_EDITABLE_COLUMNS, c_first + 1, [d.key for d in CAMPAIGN_DEFS].index("decision"), len(cbase),
                "Leave blank, type a budget, or type keep."))
    if n:
        validations.append(decision_validation(EDITABLE_COLUMNS, first, keys.index("decision"), n,
                                               "Leave blank, type a spend, or type keep."))
    col = keys.index("direction")
    sheet = Sheet(SHEET, above=above, table=Table(HEADER_ROW, products.columns, products.totals,
                                                  highlights=[Highlight(col, "cut", "Plum"),
                                                              Highlight(col, "grow", "Ocean")]),
                  more=more, validations=validations, freeze=(HEADER_ROW + 1, 1), tab_color="#24475E")
    return sheet, tables, provides
