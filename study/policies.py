"""The policies compared on the simulated market, and the exports each week's decision reads.

- :class:`WorkbookMethod`: the workbook's bid method, run by sheetbuilder's own code on the
  exports a seller would download (written here as CSV shaped per the README's input
  contract), read by ``pipeline.load`` and planned by ``pipeline.plan_workbook``; the new bids
  are the Bids table's Final bid column. Nothing of the method is re-implemented here.
- :func:`manual_rule`: what a seller does by hand (common practice, no source): for a keyword
  with at least ``min_clicks`` clicks in the window, move the bid by the gap between its ACoS
  and the target, in points taken as a percentage of the bid and rounded by eye to the
  nearest 10 (46% against a 30% target: 16 points, cut 20%); a keyword with no sales is cut
  by the largest step. No smoothing; no cap but a 50% step; the bid floor and ceiling apply.
- :func:`ceiling`: a policy that knows every true rate (a ceiling no seller reaches): each week
  every keyword runs at its true profit-maximising bid, :func:`ceiling_bids`.
- :func:`hold`: bids never change (a control).

A policy returns next week's bids, or (bids, the ACoS each bid aims at) when it aims elsewhere
than the seller's target.
"""
from __future__ import annotations

import csv
import datetime as dt
import tempfile
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from sheetbuilder.pipeline import load, plan_workbook
from sheetbuilder.reading.settings import Settings

from .market import Market

START = dt.date(2026, 1, 4)
MANUAL_STEP_CAP = 0.50


@dataclass
class Window:
    """What the exports cover: the summed results of the last weeks, and the bids in force now."""

    week: int
    weeks: int
    clicks: np.ndarray
    orders: np.ndarray
    spend: np.ndarray
    sales: np.ndarray
    bids: np.ndarray


def _write(path: Path, header: list[str], rows: list[list]) -> None:
    """One CSV export, as a marketplace writes it (comma separated, UTF-8)."""
    with open(path, "w", newline="", encoding="utf-8") as handle:
        writer = csv.writer(handle)
        writer.writerow(header)
        writer.writerows(rows)


def period_end(week: int) -> dt.date:
    """The last day of simulated week number week (weeks start at 1)."""
    return START + dt.timedelta(days=7 * week - 1)


def write_exports(folder: Path, market: Market, window: Window, settings: dict | None = None) -> None:
    """Write the week's exports (catalog, store sales, ad products, targets) and settings.toml into folder."""
    folder = Path(folder)
    n_p = market.scenario.products
    ids = [f"SIM-{p + 1:03d}" for p in range(n_p)]
    _write(folder / "catalog.csv", ["product_id", "product_name", "price", "unit_cost", "fees_per_unit", "target_acos"],
           [[ids[p], f"Study product {p + 1}", f"{market.price[p]:.2f}", f"{market.unit_cost[p]:.2f}",
             f"{market.fees[p]:.2f}", f"{market.target[p]:.4f}"] for p in range(n_p)])
    by_product = {key: np.bincount(market.product, weights=getattr(window, key), minlength=n_p)
                  for key in ("clicks", "orders", "spend", "sales")}
    organic = market.scenario.organic_units * window.weeks
    _write(folder / "store_sales.csv", ["product_id", "units", "revenue"],
           [[ids[p], int(by_product["orders"][p]) + organic,
             f"{by_product['sales'][p] + organic * market.price[p]:.2f}"] for p in range(n_p)])
    _write(folder / "ad_products.csv", ["campaign", "ad_group", "product_id", "ad_type", "impressions", "clicks",
                                        "spend", "ad_sales", "orders"],
           [[market.names[p * market.scenario.keywords_per_product][0],
             market.names[p * market.scenario.keywords_per_product][1], ids[p], "product ads",
             int(by_product["clicks"][p]) * 25, int(by_product["clicks"][p]), f"{by_product['spend'][p]:.2f}",
             f"{by_product['sales'][p]:.2f}", int(by_product["orders"][p])] for p in range(n_p)])
    _write(folder / "targets.csv", ["campaign", "ad_group", "target", "match_type", "state", "bid", "impressions",
                                    "clicks", "spend", "ad_sales", "orders"],
           [[*market.names[i], "enabled", f"{window.bids[i]:.2f}", int(window.clicks[i]) * 25, int(window.clicks[i]),
             f"{window.spend[i]:.2f}", f"{window.sales[i]:.2f}", int(window.orders[i])] for i in range(market.size)])
    lines = [f"period_days = {7 * window.weeks}", f"period_end = {period_end(window.week).isoformat()}"]
    if market.scenario.lag_share > 0:  # a week's report credits orders of last week's clicks, as late credit does
        lines.append('orders_above_clicks = "accept"')
    lines += [f"{key} = {value!r}" for key, value in (settings or {}).items()]
    (folder / "settings.toml").write_text("\n".join(lines) + "\n", encoding="utf-8")


def built_on(week: int) -> dt.date:
    """The day the study builds week's workbook (some days after the week's end, as a seller would)."""
    return period_end(week) + dt.timedelta(days=10)


def bids_column(plan, market: Market, column: str) -> np.ndarray:
    """One column of the plan's Bids table per keyword, in market order (Final bid: "final")."""
    frame = plan.tables["Bids"].frame
    found = {key: float(v) for key, v in zip(zip(frame["campaign"], frame["ad_group"], frame["target"],
                                                 frame["match_type"]), frame[column])}
    missing = [name for name in market.names if name not in found]
    if missing:
        raise RuntimeError(f"the Bids sheet lacks {len(missing)} keywords, first {missing[0]}")
    return np.array([found[name] for name in market.names])


def planned_final_bids(folder: Path, market: Market, week: int) -> np.ndarray:
    """Read and plan the exports in folder with sheetbuilder; the Final bid of each keyword, in market order."""
    inputs, settings, _ = load(Path(folder))
    return bids_column(plan_workbook(inputs, settings, built_on(week)), market, "final")


@dataclass
class WorkbookMethod:
    """The workbook's method with some settings changed (none: the defaults)."""

    settings: dict = field(default_factory=dict)

    def __call__(self, market: Market, window: Window) -> np.ndarray:
        """The new bids: exports written to a temporary folder, read and planned by sheetbuilder."""
        with tempfile.TemporaryDirectory(prefix="study-") as tmp:
            write_exports(Path(tmp), market, window, self.settings)
            return planned_final_bids(Path(tmp), market, window.week)


def manual_rule(market: Market, window: Window, settings: Settings = Settings()) -> np.ndarray:
    """The seller's rule by hand (common practice, no source): step by the ACoS gap, rounded to 10 points."""
    bids = window.bids
    target = market.keyword_target()
    with np.errstate(divide="ignore", invalid="ignore"):
        acos = np.where(window.sales > 0, window.spend / np.where(window.sales > 0, window.sales, 1.0), np.inf)
    gap = np.where(np.isfinite(acos), acos - target, MANUAL_STEP_CAP)
    step = np.clip(np.round(gap * 10) / 10, -MANUAL_STEP_CAP, MANUAL_STEP_CAP)
    moved = np.round(bids * (1 - step), 2)
    bounded = np.where(moved < bids, np.maximum(moved, np.minimum(settings.bid_floor, bids)),
                       np.minimum(moved, np.maximum(settings.bid_ceiling, bids)))
    return np.where(window.clicks >= settings.min_clicks, bounded, bids)


def ceiling_bids(market: Market, settings: Settings = Settings()) -> np.ndarray:
    """Each keyword's true profit-maximising bid, rounded to the cent, within the bid floor and ceiling.

    Weekly profit at bid b is clicks(b) x (margin x CVR x order value - CPC(b)) with clicks(b) = L x (b / b_ref) ^ e
    and CPC(b) = d x b (study/market.py; the cent rounding of the CPC left out). Setting the derivative of
    b ^ e x (m - d x b) to zero gives b* = e x m / ((1 + e) x d), where the ACoS is e x margin / (1 + e); the
    profit rises below b* and falls above it, so the best bid within the floor and ceiling is b* clipped to
    them (the bid floor for a keyword that never converts). tests/test_study.py checks it against
    scipy.optimize.minimize_scalar.
    """
    e = market.scenario.elasticity
    value = market.margin[market.product] * market.cvr * market.order_value
    return np.clip(np.round(e * value / ((1 + e) * market.discount), 2), settings.bid_floor, settings.bid_ceiling)


def ceiling_aim(market: Market) -> np.ndarray:
    """The ACoS the ceiling aims at per keyword: its product's e x margin / (1 + e)."""
    e = market.scenario.elasticity
    return (e * market.margin / (1 + e))[market.product]


def ceiling(market: Market, window: Window) -> tuple[np.ndarray, np.ndarray]:
    """The policy that knows every true rate: every keyword at its profit-maximising bid (see ceiling_bids)."""
    return ceiling_bids(market), ceiling_aim(market)


def hold(market: Market, window: Window) -> np.ndarray:
    """Bids never change (a control)."""
    return window.bids.copy()
