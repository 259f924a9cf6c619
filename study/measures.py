"""The weekly loop that drives a policy through a market, and the measures of one run.

Each week the keywords run at their current bids (``Market.week``); the policy then sees the
exports of the last ``window_weeks`` weeks (a seller's rolling report) and sets next week's
bids. Measures, per run:

- ``in_band``: the share of reachable keywords whose true ACoS at their final bid lies within
  ``band`` (5 points) of the target; reachable = converts at all and its target bid lies
  between the bid floor and ceiling (the others cannot be brought into the band by any bid).
- ``weeks_to_half``: the first week after whose decision at least half of the reachable
  keywords are in the band (0: already at the start; ``weeks + 1`` when never, a censored value).
- ``acos_gap``: the median distance of a reachable keyword's true ACoS at its final bid from its
  target, in points (shows progress that the narrow band hides).
- ``profit``: net profit after ads over the weeks, ad sales x pre-ad margin - ad spend
  (organic sales are the same under every policy and left out).
- ``dead_spend``: spend on keywords whose true conversion rate is zero.
- ``bid_change``: mean absolute bid change per keyword and week, in percent of the bid.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from sheetbuilder.reading.settings import Settings

from .market import Market
from .policies import Window

MEASURES = ("in_band", "weeks_to_half", "acos_gap", "profit", "dead_spend", "bid_change")
BAND = 0.05


@dataclass
class Run:
    """One policy on one market: the bids in force each week (weeks + 1 rows, the last after the
    last decision) and each week's results (weeks rows)."""

    bids: np.ndarray
    clicks: np.ndarray
    orders: np.ndarray
    spend: np.ndarray
    sales: np.ndarray


def simulate(market: Market, policy, weeks: int = 12, window_weeks: int = 4) -> Run:
    """Run policy(market, window) -> next bids for weeks weeks, starting from the market's bids."""
    bids = market.start_bid.copy()
    path = [bids]
    results: list[dict] = []
    for week in range(1, weeks + 1):
        results.append(market.week(week, bids))
        recent = results[-window_weeks:]
        window = Window(week, len(recent), *(np.sum([r[k] for r in recent], axis=0)
                                             for k in ("clicks", "orders", "spend", "sales")), bids)
        bids = np.asarray(policy(market, window), dtype=float)
        path.append(bids)
    stack = {k: np.array([r[k] for r in results]) for k in ("clicks", "orders", "spend", "sales")}
    return Run(np.array(path), **stack)


def reachable(market: Market, settings: Settings = Settings()) -> np.ndarray:
    """Keywords some bid within the floor and ceiling brings to the target ACoS."""
    target = market.target_bid()
    return np.isfinite(target) & (target >= settings.bid_floor) & (target <= settings.bid_ceiling)


def in_band(market: Market, bids: np.ndarray, settings: Settings = Settings()) -> float:
    """The share of reachable keywords whose true ACoS at bids is within the band around the target."""
    ok = reachable(market, settings)
    near = np.abs(market.true_acos(bids) - market.keyword_target()) <= BAND + 1e-9
    return float(np.mean(near[ok])) if ok.any() else float("nan")


def acos_gap(market: Market, bids: np.ndarray, settings: Settings = Settings()) -> float:
    """The median distance (points) of reachable keywords' true ACoS at bids from their target."""
    ok = reachable(market, settings)
    gap = np.abs(market.true_acos(bids) - market.keyword_target()) * 100
    return float(np.median(gap[ok])) if ok.any() else float("nan")


def measure(market: Market, run: Run, settings: Settings = Settings()) -> dict[str, float]:
    """The measures of one run (see the module docstring)."""
    weeks = len(run.spend)
    shares = [in_band(market, bids, settings) for bids in run.bids]
    half = next((w for w, share in enumerate(shares) if share >= 0.5), weeks + 1)
    margin = market.margin[market.product]
    old, new = run.bids[:-1], run.bids[1:]
    return {
        "in_band": shares[-1],
        "weeks_to_half": float(half),
        "acos_gap": acos_gap(market, run.bids[-1], settings),
        "profit": float(np.sum(run.sales * margin - run.spend)),
        "dead_spend": float(np.sum(run.spend[:, market.cvr == 0])),
        "bid_change": float(np.mean(np.abs(new - old) / old) * 100),
    }


def paired_bootstrap(diffs: np.ndarray, draws: int = 4000, seed: int = 0) -> tuple[float, float, float]:
    """Mean of paired differences (one per seed) and its 95% percentile bootstrap interval (resampling seeds)."""
    diffs = np.asarray(diffs, dtype=float)
    rng = np.random.Generator(np.random.PCG64(np.random.SeedSequence([seed, 2])))
    means = diffs[rng.integers(0, len(diffs), size=(draws, len(diffs)))].mean(axis=1)
    low, high = np.percentile(means, [2.5, 97.5])
    return float(diffs.mean()), float(low), float(high)
