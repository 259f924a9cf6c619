"""The Bids sheet: a proposed bid for every live keyword and product target.

Method (sources on the Guide):
- History: each keyword's clicks, orders, spend, ad sales and clicks x bid summed over every week of
  the keyword history, this week included (this week's row alone without one); see sheets/pooled.py.
- Pooled conversion rates: per product, a Beta prior of keyword conversion rates fitted by the method
  of moments with clicks as weights (Kleinman 1973), with a share of never-converting keywords fitted
  by one reweighting round; each keyword's posterior mean CVR from its history (empirical Bayes).
  Fallback: the product's CVR worth prior_clicks clicks (live). Values: the history, the prior, the
  probability the keyword converts at all and the CPC-to-bid ratio depend only on exported figures.
- Value per click: a click is worth CVR x order value (H. R. Varian, "Position auctions", 2007);
  value bid = posterior CVR x order value x target ACoS / CPC-to-bid ratio.
- Cutting waste on evidence: P(waste), the posterior probability that a click is worth less than it
  costs at the target, = (1 - w) + w x BETADIST(MIN(1, CPC / (order value x target ACoS)), a, b), the
  CPC being the ratio x the current bid; at or above waste_confidence the cut goes to the value bid at
  once (past the maximum cut, down to the floor).
- Steps, not jumps: otherwise the proposal moves toward the value bid, never past it, by at most the
  maximum cut or raise, rounded to the cent; a raise stops at the bid ceiling and a cut at the bid
  floor (a bid already beyond one is not pushed the other way).
- Data guards, on history clicks and orders, after the cut on evidence (a keyword whose history has
  decided is never held for lack of clicks or spend): no clicks hold; no orders and history spend below
  the exploration allowance (exploration_orders x target ACoS x order value) hold ("exploring"); zero
  orders after n = ceil(ln(1 - confidence) / ln(1 - product CVR)) clicks cuts by the maximum cut; a row
  with no orders never rises. Rule 3 (not enough data: fewer than min_clicks) is no longer chosen
  (study/gap.md: holding for the minimum clicks bought waste and no profit); its number is kept.
- Stock: a target whose ad group advertises a product low on stock (Profit's Days of cover below the
  minimum) is never raised (rule 11, "low stock: not raised"); cuts still apply.

Each target's product values come from its ad group's block of rows on the Groups
sheet (first and last positions written as data), so the sheet stays linear in rows.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any, Callable

import numpy as np
import pandas as pd
from scipy.special import betainc  # the regularised incomplete beta: BETADIST's definition

from sheetbuilder.sheets.blends import attach_groups, blended, blends_row_column, fetch, stock_as_values, with_blended
from sheetbuilder.sheets.decisions import NOTES, apply_decision, decision_formula, decision_validation, editable, notes_column
from sheetbuilder.sheets.lists import running_key
from sheetbuilder.sheets.pooled import cpc_to_bid, history_figures, posterior
from sheetbuilder.workbook.columns import ColumnDef, PlannedTable, blank_div, exports_only, plan_table
from sheetbuilder.reading.numbers import ROUNDING_NUDGE, round_half_away
from sheetbuilder.sheets.inputs import InputSheet
from sheetbuilder.reading.settings import Settings
from sheetbuilder.workbook.spec import DATA, INPUT, Cell, Highlight, Sheet, Table

SHEET = "Bids"
HEADER_ROW = 3
MOVING_RULES = (2, 6, 7, 9, 10, 12)  # rules 11 (low stock) and 13 (exploring) hold the bid
RAISING_RULES = (6, 9)
REASONS = {
    1: "no clicks", 2: "no orders after {n} clicks", 3: "not enough data", 4: "no order value yet",
    5: "no orders yet: not raised", 6: "raise to value bid", 7: "lower to value bid", 8: "at value bid",
    9: "raise, capped at maximum raise", 10: "lower, capped at maximum cut", 11: "low stock: not raised",
    12: "cut on evidence: likely waste", 13: "exploring: within allowance",
}


@dataclass
class BidsContext:
    """What the Bids columns' references read besides the frame."""

    settings: Settings
    blends: pd.DataFrame
    totals: dict[str, Any] = field(default_factory=dict)


def _in(column: str) -> str:
    return "=INDEX({rng:targets.%s},{c:trow})" % column


def _order_value(df: pd.DataFrame, ctx: BidsContext) -> pd.Series:
    """The history's ad sales per order, or the ad group's blend where the history has no orders."""
    blend = ctx.blends["p_aov"].to_numpy(dtype=float)[df["brow"].to_numpy(dtype=int) - 1]
    return blank_div(df["h_sales"], df["h_orders"]).where(df["h_orders"] > 0, pd.Series(blend, index=df.index))


def _prior(df: pd.DataFrame, ctx: BidsContext) -> tuple[pd.Series, pd.Series]:
    """The prior's shapes per row: the fitted ones, or the product's CVR worth prior_clicks clicks."""
    k = ctx.settings.prior_clicks
    fitted = df["fit_a"].notna()
    return (df["fit_a"].where(fitted, k * df["p_cvr"]).astype(float),
            df["fit_b"].where(fitted, k * (1 - df["p_cvr"])).astype(float))


def _post_cvr(df: pd.DataFrame, ctx: BidsContext) -> pd.Series:
    a, b = df["prior_a"], df["prior_b"]  # the working columns, computed before (the formula reads them)
    out = df["w"] * (a + df["h_orders"]) / (a + b + df["h_clicks"]).where(a + b + df["h_clicks"] != 0)
    return out.astype(float)


def _value_bid(df: pd.DataFrame, ctx: BidsContext) -> pd.Series:
    value = df["post_cvr"] * df["order_value"]
    return (value * df["target_acos"] / df["ratio"]).where(df["post_cvr"].notna() & (value != 0))


def _p_waste(df: pd.DataFrame, ctx: BidsContext) -> pd.Series:
    return waste_at(df, ctx, df["target_acos"])


def waste_at(df: pd.DataFrame, ctx: BidsContext, acos: pd.Series) -> pd.Series:
    """The posterior probability that a click is worth less than it costs at the ACoS given per row (Bids: the
    aim; study/gap.py measures it at break-even too)."""
    a, b = _prior(df, ctx)
    a, b = a + df["h_orders"], b + df["h_clicks"] - df["h_orders"]
    value = _order_value(df, ctx) * acos
    ok = df["value_bid"].notna() & (acos > 0) & (a > 0) & (b > 0)
    x = np.minimum(1.0, df["ratio"] * df["bid"] / value.where(ok, 1.0))
    cdf = betainc(a.where(ok, 1.0), b.where(ok, 1.0), np.clip(x, 0.0, 1.0))
    return (1 - df["w"] + df["w"] * cdf).where(ok).astype(float)


def _rule(df: pd.DataFrame, ctx: BidsContext) -> pd.Series:
    s = ctx.settings
    allowance = s.exploration_orders * df["target_acos"] * df["order_value"]
    out = []
    for clicks, orders, spend, allow, n, value, bid, low, waste in zip(
            df["h_clicks"], df["h_orders"], df["h_spend"], allowance, df["n_zero"], df["value_bid"], df["bid"],
            df["p_low"], df["p_waste"]):
        lower = 10 if not pd.isna(value) and value < bid * (1 - s.max_bid_cut) else 7
        evidence = not pd.isna(waste) and waste >= s.waste_confidence and value < bid
        if clicks == 0:
            rule = 1
        elif orders == 0:
            if evidence:  # the history has decided: cut, whatever the allowance or the clicks
                rule = 12
            elif spend < allow:
                rule = 13
            elif not pd.isna(n) and clicks >= n:
                rule = 2
            elif pd.isna(value):
                rule = 4
            else:
                rule = lower if value < bid else 5
        elif pd.isna(value):
            rule = 4
        elif value > bid and low == 1:
            rule = 11
        elif value > bid:
            rule = 9 if value > bid * (1 + s.max_bid_raise) else 6
        elif value < bid:
            rule = 12 if evidence else lower
        else:
            rule = 8
        out.append(rule)
    return pd.Series(out, index=df.index, dtype=float)


def _raw(df: pd.DataFrame, ctx: BidsContext) -> pd.Series:
    s = ctx.settings
    bid, value, rule = df["bid"], df["value_bid"], df["rule"]
    cut, raise_ = bid * (1 - s.max_bid_cut), bid * (1 + s.max_bid_raise)
    out = np.select([rule.isin([2, 10]), rule.isin([6, 7, 12]), rule == 9], [cut, value, raise_], bid)
    return pd.Series(out, index=df.index, dtype=float)


def _step(df: pd.DataFrame, ctx: BidsContext) -> pd.Series:
    """The new bid rounded to the cent where the rule moves it (before the floor and ceiling), else blank."""
    rounded = _raw(df, ctx).map(lambda v: round_half_away(v + ROUNDING_NUDGE, 2))
    return rounded.where(df["rule"].isin(MOVING_RULES)).astype(float)


def _proposed(df: pd.DataFrame, ctx: BidsContext) -> pd.Series:
    s = ctx.settings
    rounded = df["step"]  # the working column, computed before (the formula reads it)
    raising = df["rule"].isin(RAISING_RULES)
    low = np.where(raising, s.bid_floor, np.minimum(s.bid_floor, df["bid"]))
    high = np.where(raising, np.maximum(s.bid_ceiling, df["bid"]), s.bid_ceiling)
    clamped = np.minimum(high, np.maximum(low, rounded))
    return pd.Series(np.where(df["rule"].isin(MOVING_RULES), clamped, df["bid"]), index=df.index)


STOPPED_AT_CEILING, STOPPED_AT_FLOOR = " (stopped at the bid ceiling)", " (stopped at the bid floor)"


def _reason(df: pd.DataFrame, ctx: BidsContext) -> pd.Series:
    out = []
    for rule, rounded, proposed, n in zip(df["rule"], df["step"], df["proposed"], df["n_zero"]):
        reason = REASONS[int(rule)].format(n="" if pd.isna(n) else int(n))
        if rule in MOVING_RULES and proposed != rounded:  # the rule's move, stopped short by the floor or ceiling
            reason += STOPPED_AT_CEILING if rounded > proposed else STOPPED_AT_FLOOR
        out.append(reason)
    return pd.Series(out, index=df.index, dtype=object)


# The target's order value: its history's ad sales per order, or its ad group's blend when it has no orders. Exported
# figures only, so a plain value in its own working column (Order value), which the formulas below read.
_ORDER_VALUE = "=IF({c:h_orders}>0,{c:h_sales}/{c:h_orders},INDEX({rng:blends.p_aov},{c:brow}))"
# The prior's shapes in use (working columns): fitted (values), or the product's CVR worth prior_clicks clicks (live).
_PRIOR_A = '=IF({c:fit_a}="",prior_clicks*{c:p_cvr},{c:fit_a})'
_PRIOR_B = '=IF({c:fit_a}="",prior_clicks*(1-{c:p_cvr}),{c:fit_b})'
_POST_A = "{c:prior_a}+{c:h_orders}"
_POST_B = "{c:prior_b}+{c:h_clicks}-{c:h_orders}"
_POST_CVR = ('=IF({c:prior_a}+{c:prior_b}+{c:h_clicks}=0,"",{c:w}*(%s)/({c:prior_a}+{c:prior_b}+{c:h_clicks}))'
             % _POST_A)
_VALUE_BID = ('=IF({c:post_cvr}="","",IF({c:post_cvr}*{c:order_value}=0,"",'
              '{c:post_cvr}*{c:order_value}*{c:target_acos}/{c:ratio}))')
# BETADIST(x, a, b): the beta distribution's cumulative probability (BETA.DIST(x, a, b, TRUE) since Excel 2010; the
# older name every engine reads without a prefix, measured equal in LibreOffice 7.4, Gnumeric and `formulas`).
_P_WASTE = ('=IF(OR({c:value_bid}="",{c:target_acos}<=0),"",IF(OR(%s<=0,%s<=0),"",'
            '1-{c:w}+{c:w}*BETADIST(MIN(1,{c:ratio}*{c:bid}/({c:order_value}*{c:target_acos})),%s,%s)))'
            % (_POST_A, _POST_B, _POST_A, _POST_B))
_EVIDENCE = 'IF({c:p_waste}="",FALSE,AND({c:p_waste}>=waste_confidence,{c:value_bid}<{c:bid}))'
# The rules in their order (see _rule). The cut on evidence is tested once, right after "no clicks": with orders it
# applies only where the value bid is below the bid, which the evidence itself requires.
_RULE = ('=IF({c:h_clicks}=0,1,IF(%s,12,IF(IF({c:h_orders}=0,{c:h_spend}<exploration_orders*{c:target_acos}*'
         '{c:order_value},FALSE),13,IF(IF({c:h_orders}=0,IF({c:n_zero}="",FALSE,{c:h_clicks}>={c:n_zero}),FALSE),2,'
         'IF({c:value_bid}="",4,IF({c:value_bid}<{c:bid},IF({c:value_bid}<{c:bid}*(1-max_bid_cut),10,7),'
         'IF({c:h_orders}=0,5,IF({c:value_bid}>{c:bid},IF({c:p_low}=1,11,IF({c:value_bid}>{c:bid}*(1+max_bid_raise),'
         '9,6)),8))))))))' % _EVIDENCE)
# The proposal before rounding, floor and ceiling, by rule.
_RAW = ('CHOOSE({c:rule},{c:bid},{c:bid}*(1-max_bid_cut),{c:bid},{c:bid},{c:bid},{c:value_bid},'
        '{c:value_bid},{c:bid},{c:bid}*(1+max_bid_raise),{c:bid}*(1-max_bid_cut),{c:bid},{c:value_bid},{c:bid})')
_MOVING = "OR({c:rule}=2,{c:rule}=6,{c:rule}=7,{c:rule}=9,{c:rule}=10,{c:rule}=12)"
_RAISING = "OR({c:rule}=6,{c:rule}=9)"
# The step bid (working column): the proposal rounded to the cent where the rule moves the bid, before the floor and
# the ceiling; blank where the rule holds it.
_STEP = '=IF(%s,ROUND(%s+0.000000001,2),"")' % (_MOVING, _RAW)
_PROPOSED = ('=IF({c:step}="",{c:bid},MIN(IF(%s,MAX(bid_ceiling,{c:bid}),bid_ceiling),MAX(IF(%s,bid_floor,'
             'MIN(bid_floor,{c:bid})),{c:step})))' % (_RAISING, _RAISING))
_REASON_CHOICES = ",".join('"' + REASONS[i].replace("{n}", '"&{c:n_zero}&"') + '"' for i in range(1, len(REASONS) + 1))
_REASON = ('=CHOOSE({c:rule},%s)&IF(IF({c:step}="",FALSE,{c:proposed}<>{c:step}),IF({c:step}>{c:proposed},"%s",'
           '"%s"),"")' % (_REASON_CHOICES, STOPPED_AT_CEILING, STOPPED_AT_FLOOR))
# The zero-order clicks are the ad group's blend, read on Groups where the rule and its reason need them.
_RULE, _REASON = (text.replace("{c:n_zero}", blended("n_zero")) for text in (_RULE, _REASON))


def _value(key: str, header: str, style: str, help: str, width: float = 9) -> ColumnDef:
    """A hidden working column computed before planning from exported figures only (written as a value)."""
    return ColumnDef(key, header, style, help, lambda df, ctx: df[key], width=width, hidden=True, export=True)


DEFS: list[ColumnDef] = [
    ColumnDef("campaign", "Campaign", "text", "The campaign.", lambda df, ctx: df["campaign"], kind=DATA, width=22),
    ColumnDef("ad_group", "Ad group", "text", "The ad group.", lambda df, ctx: df["ad_group"], kind=DATA, width=18),
    ColumnDef("target", "Target", "text", "The keyword or product target.",
              lambda df, ctx: df["target"], kind=DATA, width=26),
    ColumnDef("match_type", "Match type", "text", "exact, phrase, broad, product or auto.",
              lambda df, ctx: df["match_type"], kind=DATA, width=9),
    ColumnDef("product_id", "Product ID", "text",
              "The product the ad group advertises; 'shared: ...' where it advertises several (their blend is used).",
              lambda df, ctx: df["product_label"], kind=DATA, width=24),
    ColumnDef("impressions", "Impressions", "int", "From in_targets.", lambda df, ctx: df["impressions"],
              _in("impressions"), width=10),
    ColumnDef("clicks", "Clicks", "int", "From in_targets.", lambda df, ctx: df["clicks"], _in("clicks"), width=8),
    ColumnDef("spend", "Spend", "money", "From in_targets.", lambda df, ctx: df["spend"], _in("spend"), width=10),
    ColumnDef("ad_sales", "Ad sales", "money", "From in_targets.", lambda df, ctx: df["ad_sales"],
              _in("ad_sales"), width=10),
    ColumnDef("orders", "Orders", "int", "From in_targets.", lambda df, ctx: df["orders"], _in("orders"), width=8),
    ColumnDef("cpc", "CPC", "money", "Cost per click: spend / clicks.",
              lambda df, ctx: blank_div(df["spend"], df["clicks"]), '=IF({c:clicks}=0,"",{c:spend}/{c:clicks})',
              width=8),
    ColumnDef("cvr", "CVR", "percent", "Conversion rate: orders / clicks.",
              lambda df, ctx: blank_div(df["orders"], df["clicks"]), '=IF({c:clicks}=0,"",{c:orders}/{c:clicks})',
              width=8),
    ColumnDef("acos", "ACoS", "percent", "Spend / ad sales.",
              lambda df, ctx: blank_div(df["spend"], df["ad_sales"]), '=IF({c:ad_sales}=0,"",{c:spend}/{c:ad_sales})',
              width=8),
    fetch("target_acos", "Aim ACoS", "percent",
          "The ACoS the bids aim at: the product's Aim ACoS (Profit: your target, or lower where seek_profit "
          "aims at profit), or the ad group's spend-weighted blend (from Groups' blends).",
          hidden=False),
    ColumnDef("bid", "Current bid", "money", "The bid now (in_targets).", lambda df, ctx: df["bid"], _in("bid"),
              width=9),
    ColumnDef("value_bid", "Value bid", "money",
              "Posterior CVR x order value x aim ACoS / CPC-to-bid ratio: the bid at which a click costs what "
              "it is worth at the aim.",
              _value_bid, _VALUE_BID, width=9),
    ColumnDef("p_waste", "Waste probability", "percent",
              "How likely, from the keyword's history, a click is worth less than it costs at the aim: (1 - w) + "
              "w x BETADIST(CPC / (order value x aim ACoS), a, b), the CPC being the ratio x the current bid. At "
              "or above waste_confidence the bid is cut to its value bid at once.",
              _p_waste, _P_WASTE, width=9),
    ColumnDef("proposed", "Proposed bid", "money",
              "A step from the current bid toward the value bid, within the caps, floor and ceiling; or the "
              "zero-order cut; or the current bid when held.",
              _proposed, _PROPOSED, width=9),
    ColumnDef("change", "Change", "percent", "Proposed bid / current bid - 1.",
              lambda df, ctx: blank_div(df["proposed"], df["bid"]) - 1,
              '=IF({c:bid}=0,"",{c:proposed}/{c:bid}-1)', width=8),
    ColumnDef("reason", "Reason", "label", "Which rule decided the row.", _reason, _REASON, width=40),
    ColumnDef("decision", "Decision", "text_input",
              "Input: leave blank to follow the proposal, type a bid to use it, or 'keep' to keep the current bid.",
              lambda df, ctx: df["decision"], kind=INPUT, width=10),
    ColumnDef("final", "Final bid", "money", "The bid to apply: the Decision if given, else the proposal.",
              lambda df, ctx: apply_decision(df, "proposed", "bid"), decision_formula("proposed", "bid"), width=9),
    fetch("target_check", "Target check", "label",
          "Where a product of the ad group has a target ACoS above its break-even ACoS (see Profit).", hidden=False,
          width=27),
    # Working columns, hidden: row positions as data, then the steps of the method.
    ColumnDef("pos", "Position", "int", "Helper: the row's position on this sheet.", lambda df, ctx: df["pos"],
              kind=DATA, width=6, hidden=True),
    *running_key("a", "Changes", "{c:final}<>{c:bid}", lambda df: df["final"] != df["bid"]),
    ColumnDef("trow", "Target row", "int",
              "The target's row number among in_targets' data rows: where its grey figures were copied from.",
              lambda df, ctx: df["trow"], kind=DATA, width=8),
    blends_row_column(),
    fetch("p_cvr", "Product CVR", "percent", "Working: the product's (or blend's) ad conversion rate."),
    _value("h_clicks", "History clicks", "int",
           "Working (value): clicks over every week of the keyword history, this week included (this week's alone "
           "without a history that holds this week).", width=8),
    _value("h_orders", "History orders", "int", "Working (value): orders over the same weeks.", width=8),
    _value("h_spend", "History spend", "money", "Working (value): spend over the same weeks.", width=10),
    _value("h_sales", "History ad sales", "money", "Working (value): ad sales over the same weeks.", width=10),
    _value("ratio", "CPC-to-bid ratio", "ratio",
           "Working (value): history spend / (clicks x bid in force), over the weeks whose bid is known; else this "
           "week's CPC / bid; else 1 (Ratio source says which)."),
    _value("ratio_source", "Ratio source", "text", "Working (value): history, this week, or none: 1 assumed.",
           width=14),
    _value("fit_a", "Prior a", "ratio",
           "Working (value): the product's fitted Beta prior of keyword CVR, first shape (Kleinman's method of "
           "moments, clicks as weights, after one reweighting round for never-converting keywords); blank where "
           "the fallback applies: the product's CVR worth prior_clicks clicks."),
    _value("fit_b", "Prior b", "ratio", "Working (value): the fitted prior's second shape (blank: the fallback)."),
    _value("fit_pi", "Never-converting share", "percent",
           "Working (value): the product's fitted share of keywords that never convert (0 in the fallback)."),
    _value("w", "Converts probability", "percent",
           "Working (value): the probability the keyword converts at all: 1 with an order, else (1 - share) x "
           "P(0 orders in its clicks) / (share + (1 - share) x that), P from the beta-binomial."),
    ColumnDef("post_cvr", "Posterior CVR", "percent",
              "Working: the keyword's posterior mean CVR, w x (a + orders) / (a + b + clicks) over its history.",
              _post_cvr, _POST_CVR, width=9, hidden=True),
    fetch("p_low", "Low stock", "int", "Working: 1 where a product of the ad group is low on stock (never raised)."),
    ColumnDef("rule", "Rule", "int", "Working: which rule decided the row (1 to 13, see the Guide).",
              _rule, _RULE, width=6, hidden=True),
    # The working values the long formulas share, each computed once per row.
    ColumnDef("order_value", "Order value", "money",
              "Working (value): the history's ad sales per order, or the ad group's blended order value (Groups) "
              "where the history has no orders.", _order_value, _ORDER_VALUE, width=9, hidden=True),
    ColumnDef("prior_a", "Prior a in use", "ratio",
              "Working: the prior's first shape: Prior a, or the product's CVR x prior_clicks where it is blank.",
              lambda df, ctx: _prior(df, ctx)[0], _PRIOR_A, width=9, hidden=True),
    ColumnDef("prior_b", "Prior b in use", "ratio",
              "Working: the prior's second shape: Prior b, or (1 - the product's CVR) x prior_clicks where Prior a "
              "is blank.", lambda df, ctx: _prior(df, ctx)[1], _PRIOR_B, width=9, hidden=True),
    ColumnDef("step", "Step bid", "money",
              "Working: where the rule moves the bid, its new bid rounded to the cent, before the bid floor and "
              "ceiling; blank where the rule holds the bid.", _step, _STEP, width=9, hidden=True),
]
# Copied one-to-one from the target's in_targets row, or computed only from such copies: plain values. So is the
# product's CVR (its ad group's blend on Groups, from the ad export's clicks, orders and spend alone).
EXPORTS = ("impressions", "clicks", "spend", "ad_sales", "orders", "cpc", "cvr", "acos", "bid", "p_cvr", "order_value")
DEFS = exports_only(DEFS, EXPORTS) + [notes_column()]  # the user's notes at the right end

# What a user types on Bids and the keys that find its row again (carry, changes and the tests read these).
EDITABLE_COLUMNS = editable(DEFS, "Bids", SHEET, "sb_bids", ("campaign", "ad_group", "target", "match_type"),
                            "decision", ("targets",), numeric="bid", words=("keep",), current="bid",
                            input_current="bid", notes=NOTES)


def target_frame(targets: InputSheet, campaigns: pd.DataFrame | None, groups: pd.DataFrame) -> pd.DataFrame:
    """The live targets, one row each, largest spend first, with their row positions."""
    frame = targets.frame.copy()
    frame["trow"] = np.arange(1, len(frame) + 1, dtype=float)
    live = frame["state"] == "enabled"
    if campaigns is not None and len(campaigns):
        state = campaigns.drop_duplicates("campaign").set_index("campaign")["state"]
        live &= frame["campaign"].map(state).fillna("enabled") == "enabled"
    frame = attach_groups(frame.loc[live].copy(), groups)
    # Largest spend first (to the cent), so Bids and the Actions list show the most money at stake first.
    frame = frame.assign(_money=-frame["spend"].round(2)).sort_values(
        ["_money", "sort_product", "shared", "campaign", "ad_group", "trow"], kind="stable").drop(columns="_money")
    frame["decision"] = None
    frame = frame.reset_index(drop=True)
    frame["pos"] = np.arange(1, len(frame) + 1, dtype=float)
    frame["n_plus"] = float(len(frame) + 1)
    return frame


def with_history(base: pd.DataFrame, history: Callable[[list], list] | None) -> pd.DataFrame:
    """base with each row's history figures, CPC-to-bid ratio, product prior and converting probability (values).

    history: each row's totals over the keyword history from its four key texts (None where it has none;
    PackedHistory.lookup), or None for this week's rows alone.
    """
    found = history(list(zip(base["campaign"], base["ad_group"], base["target"], base["match_type"]))) \
        if history is not None else None
    out = pd.concat([base, history_figures(base, found)], axis=1)
    out["ratio"], out["ratio_source"] = cpc_to_bid(out)
    fitted = posterior(out.rename(columns={"product_label": "product_id"})[["product_id", "h_clicks", "h_orders"]])
    return pd.concat([out, fitted], axis=1)


def plan_bids(targets: InputSheet, campaigns: pd.DataFrame | None, groups: PlannedTable, profit: PlannedTable,
              settings: Settings, ranges: dict[str, str], decide=None, blends: PlannedTable | None = None,
              history: Callable[[list], list] | None = None) -> tuple[Sheet, PlannedTable]:
    """The Bids sheet and its reference frame; decide(sheet, keys) gives carried Decisions; blends: Groups' blends;
    history: as :func:`with_history` reads it."""
    base = with_history(target_frame(targets, campaigns, groups.frame), history)
    if decide is not None:
        base["decision"] = decide("Bids", list(zip(base["campaign"], base["ad_group"], base["target"],
                                                   base["match_type"])))
    ctx = BidsContext(settings, blends.frame)
    base = with_blended(base, blends.frame, ("n_zero",))
    planned = plan_table(stock_as_values(DEFS, {"p_low"}, ranges), base, ctx, HEADER_ROW + 1, ranges, with_totals=False)
    keys = [d.key for d in DEFS]
    n = len(base)
    decision_col = keys.index("decision")
    first = HEADER_ROW + 1
    validations = []
    if n:
        validations.append(decision_validation(
            EDITABLE_COLUMNS, first, decision_col, n,
            "Leave blank to follow the proposal, type a bid such as 0.85, or type keep.",
            "Blank = follow the proposal; a bid; or keep."))
    highlights = [Highlight(keys.index("reason"), text, state) for text, state in (
        ("lower to value bid", "Lavender"), ("lower, capped at maximum cut", "Lavender"),
        ("raise to value bid", "Ocean"), ("raise, capped at maximum raise", "Ocean"),
        ("no clicks", "Stone"), ("low stock: not raised", "Stone"),
        ("exploring: within allowance", "Stone"), ("cut on evidence: likely waste", "Plum"))]
    highlights.append(Highlight(keys.index("reason"), "no orders after", "Plum", begins=True))
    above = [[Cell("Bid plan: a proposed bid for every live keyword and product target", style="title")],
             [Cell("Decision aid only: review before changing a live ad account. Type a bid or 'keep' in Decision "
                   "to override a proposal. Grey figures are copied from in_targets (Target row); black ones follow "
                   "your inputs. The working columns to the right are hidden.", style="note")]]
    sheet = Sheet(SHEET, above=above, table=Table(HEADER_ROW, planned.columns, highlights=highlights),
                  freeze=(HEADER_ROW + 1, 3), validations=validations, tab_color="#063F63", sortable=True)
    return sheet, planned
