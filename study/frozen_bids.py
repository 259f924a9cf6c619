"""Today's bid method, frozen: a numpy port of the Bids rules as they stood on main at commit 375a362.

The study compares the method sheetbuilder runs now (whatever ``plan_workbook`` does) with this
frozen copy, so "today's method" keeps meaning the method before issue 23 after the library's
method changes. It reads what the study's exports hold (the values as the CSV writes them: cents
for money, four decimals for the target) and follows, step by step, what Profit, Groups' blends
and Bids computed then (sheetbuilder/sheets/profit.py, blends.py, bids.py at that commit):

- per product (one ad group per product in the study): product CVR = ad orders / ad clicks, or
  the account's when the product has no clicks or no orders; order value = ad sales / ad orders,
  or the account's; the bid target = the target ACoS, capped at the break-even ACoS (the margin
  before ads) when above it (``cap_target_at_break_even = yes``); each taken through the ad
  group's spend-weighted blend (weight x value / weight, as the workbook computes it);
- zero-order clicks n = ceil(ln(1 - confidence) / ln(1 - product CVR));
- per keyword: smoothed CVR = (orders + k x product CVR) / (clicks + k); smoothed ACoS = CPC /
  (smoothed CVR x order value), the order value its own ad sales per order or the product's;
  value bid = bid x target / smoothed ACoS;
- the rule (1 to 11), the step toward the value bid within the maximum cut and raise, rounded to
  the cent half away from zero after a 1e-9 nudge, within the bid floor and ceiling (a bid
  already beyond one is not pushed the other way); no stock rule (the study has no inventory).

tests/test_study.py checks this port against the Final bids ``plan_workbook`` gave on main
(study/todays_bids_pinned.json, written by ``python -m study.frozen_bids``).
"""
from __future__ import annotations

import json
import math
import tempfile
from decimal import ROUND_HALF_UP, Decimal
from pathlib import Path

import numpy as np
import pandas as pd

from sheetbuilder.reading.settings import Settings

from .market import EXTRA_SCENARIOS, SCENARIOS, Market, draw_market
from .policies import Window, planned_final_bids, write_exports

PINNED = Path(__file__).with_name("todays_bids_pinned.json")
# The settings as they stood at commit 375a362 (the defaults the library has since changed are pinned here), so
# "today's method" keeps its meaning when the library's defaults move.
FROZEN = Settings(max_bid_cut=0.30, max_bid_raise=0.20)
NUDGE = 1e-9
MOVING = (2, 6, 7, 9, 10)
RAISING = (6, 9)


def _cents(value: float) -> float:
    """A figure as the CSV export writes and the reader reads it (two decimals)."""
    return float(f"{value:.2f}")


def _round_half_away(value: float) -> float:
    """Round to the cent as Excel does: half away from zero on the 15-digit decimal form."""
    return float(Decimal(format(float(value), ".15g")).quantize(Decimal("0.01"), rounding=ROUND_HALF_UP))


def _blend(weight: float, value: float) -> float:
    """A one-product ad group's blend of value: weight x value / weight (as Groups' blends compute it)."""
    return weight * value / weight


def product_values(market: Market, clicks: np.ndarray, orders: np.ndarray, spend: np.ndarray, sales: np.ndarray,
                   settings: Settings) -> dict[str, np.ndarray]:
    """Per product: the blended target (bid target), conversion rate, order value and zero-order clicks."""
    n_p = market.scenario.products
    ad_clicks = np.bincount(market.product, weights=clicks, minlength=n_p)
    ad_orders = np.bincount(market.product, weights=orders, minlength=n_p)
    ad_spend = np.array([_cents(v) for v in np.bincount(market.product, weights=spend, minlength=n_p)])
    ad_sales = np.array([_cents(v) for v in np.bincount(market.product, weights=sales, minlength=n_p)])
    total_clicks, total_orders = float(pd.Series(ad_clicks).sum()), float(pd.Series(ad_orders).sum())
    account_cvr = 0.0 if total_clicks == 0 else total_orders / total_clicks
    account_aov = 0.0 if total_orders == 0 else float(pd.Series(ad_sales).sum()) / total_orders
    out: dict[str, list] = {"target": [], "p_cvr": [], "p_aov": [], "n_zero": []}
    for p in range(n_p):
        price, cost, fees = _cents(market.price[p]), _cents(market.unit_cost[p]), _cents(market.fees[p])
        margin = (price - cost - fees) / price
        target = float(f"{market.target[p]:.4f}")
        if target > margin and settings.cap_target_at_break_even == "yes":
            target = max(margin, 0.0)
        cvr = ad_orders[p] / ad_clicks[p] if ad_clicks[p] != 0 and ad_orders[p] != 0 else account_cvr
        aov = ad_sales[p] / ad_orders[p] if ad_orders[p] != 0 else account_aov
        weight = ad_spend[p] if ad_spend[p] != 0 else 1.0
        p_cvr = _blend(weight, cvr)
        out["target"].append(_blend(weight, target))
        out["p_cvr"].append(p_cvr)
        out["p_aov"].append(_blend(weight, aov))
        conf = settings.zero_order_confidence
        out["n_zero"].append(math.ceil(math.log(1 - conf) / math.log(1 - p_cvr)) if 0 < p_cvr < 1 else math.nan)
    return {k: np.array(v, dtype=float) for k, v in out.items()}


def _rule(clicks: float, orders: float, n: float, value: float, bid: float, s: Settings) -> int:
    """Which of today's rules decides a keyword (1 to 10; the study has no stock, so never 11)."""
    lower = 10 if not math.isnan(value) and value < bid * (1 - s.max_bid_cut) else 7
    if clicks == 0:
        return 1
    if orders == 0:
        if clicks < s.min_clicks:
            return 3
        if not math.isnan(n) and clicks >= n:
            return 2
        if math.isnan(value):
            return 4
        return lower if value < bid else 5
    if math.isnan(value):
        return 4
    if value > bid:
        return 9 if value > bid * (1 + s.max_bid_raise) else 6
    if value < bid:
        return lower
    return 8


def todays_bids(market: Market, clicks: np.ndarray, orders: np.ndarray, spend: np.ndarray, sales: np.ndarray,
                bids: np.ndarray, settings: Settings = FROZEN) -> np.ndarray:
    """Today's Final bids (no Decision typed) for a report of the summed clicks, orders, spend and sales."""
    s = settings
    per_product = product_values(market, clicks, orders, spend, sales, s)
    k = s.prior_clicks
    out = np.empty(market.size)
    for i in range(market.size):
        p = market.product[i]
        c, o = float(clicks[i]), float(orders[i])
        sp, sa, bid = _cents(spend[i]), _cents(sales[i]), _cents(bids[i])
        p_cvr, target, n = per_product["p_cvr"][p], per_product["target"][p], per_product["n_zero"][p]
        cpc = sp / c if c != 0 else math.nan
        s_cvr = (o + k * p_cvr) / (c + k) if c + k != 0 else math.nan
        order_value = sa / o if o > 0 else per_product["p_aov"][p]
        s_acos = math.nan
        if not (math.isnan(cpc) or math.isnan(s_cvr)) and s_cvr * order_value != 0:
            s_acos = cpc / (s_cvr * order_value)
        value = bid * target / s_acos if not math.isnan(s_acos) and s_acos != 0 else math.nan
        rule = _rule(c, o, n, value, bid, s)
        if rule not in MOVING:
            out[i] = bid
            continue
        raw = {2: bid * (1 - s.max_bid_cut), 10: bid * (1 - s.max_bid_cut), 9: bid * (1 + s.max_bid_raise)}.get(rule,
                                                                                                               value)
        rounded = _round_half_away(raw + NUDGE)
        low = s.bid_floor if rule in RAISING else min(s.bid_floor, bid)
        high = max(s.bid_ceiling, bid) if rule in RAISING else s.bid_ceiling
        out[i] = min(high, max(low, rounded))
    return out


class TodaysMethod:
    """Today's method as a study policy: the frozen port on the rolling report (the study's Window)."""

    def __call__(self, market: Market, window) -> np.ndarray:
        return todays_bids(market, window.clicks, window.orders, window.spend, window.sales, window.bids)


def pin(cases: list[tuple[str, int, int]], out: Path = PINNED) -> dict:
    """Run the frozen port on the rolling loop of each (scenario, seed, weeks) and record, week by week, the report
    and the Final bids plan_workbook gives on it; refuse when the port and plan_workbook disagree."""
    scenarios = {**SCENARIOS, **EXTRA_SCENARIOS}
    records = []
    for name, seed, weeks in cases:
        market = draw_market(scenarios[name], seed)
        bids, results = market.start_bid.copy(), []
        for week in range(1, weeks + 1):
            results.append(market.week(week, bids))
            recent = results[-4:]
            sums = {key: np.sum([r[key] for r in recent], axis=0) for key in ("clicks", "orders", "spend", "sales")}
            window = Window(week, len(recent), sums["clicks"], sums["orders"], sums["spend"], sums["sales"], bids)
            with tempfile.TemporaryDirectory(prefix="study-pin-") as tmp:
                write_exports(Path(tmp), market, window)
                planned = planned_final_bids(Path(tmp), market, week)
            ported = todays_bids(market, window.clicks, window.orders, window.spend, window.sales, window.bids)
            if not np.array_equal(planned, ported):
                bad = int(np.flatnonzero(planned != ported)[0])
                raise AssertionError(f"{name} seed {seed} week {week}: keyword {bad} planned {planned[bad]}, "
                                     f"ported {ported[bad]}")
            records.append({"scenario": name, "seed": seed, "week": week, "weeks": len(recent),
                            **{key: [float(v) for v in sums[key]] for key in sums},
                            "bids": [float(v) for v in bids], "final": [float(v) for v in planned]})
            bids = ported
    pinned = {"source": "plan_workbook on main at commit 375a362 (Bids' Final bid, no Decision typed)",
              "records": records}
    out.write_text(pinned_text(pinned), encoding="utf-8")
    return pinned


def pinned_text(pinned: dict) -> str:
    """The pinned file's text: one record a line."""
    records = ",\n".join(json.dumps(r) for r in pinned["records"])
    return f'{{"source": {json.dumps(pinned["source"])},\n"records": [\n{records}\n]}}\n'


PIN_CASES = [("small account", 1, 6), ("large account", 2, 6), ("low CVR", 3, 8), ("high CVR", 4, 6),
             ("profit-optimal target", 5, 6)]

if __name__ == "__main__":
    found = pin(PIN_CASES)
    print(f"{len(found['records'])} weeks pinned to {PINNED}")
