"""The weekly loop that drives a policy through a market, and the measures of one run.

Each week the keywords run at their current bids (``Market.week``); the policy then sees the
exports of the last ``window_weeks`` weeks (a seller's rolling report, four weeks; one week for a
policy whose ``window_weeks`` says so, such as the method on the user's weekly loop) and sets next
week's bids. Measures, per run:

- ``in_band``, ``in_band_8``: the share of reachable keywords whose true ACoS at their bid after
  the last (the 8th) week's decision lies within ``band`` (5 points) of the seller's target;
  reachable = converts at all and its target bid lies between the bid floor and ceiling (the
  others cannot be brought into the band by any bid).
- ``in_aim``, ``in_aim_8``: the same, measured against the ACoS the policy aims at in that week
  (what the policy shows or states: for the method the Bids sheet's target, for the ceiling e x
  margin / (1 + e), for the others the seller's target), reachable counted against that aim.
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

MEASURES = ("in_band", "in_band_8", "in_aim", "in_aim_8", "weeks_to_half", "acos_gap", "profit", "dead_spend",
            "bid_change")
BAND = 0.05
EARLY_WEEK = 8


@dataclass
class Run:
    """One policy on one market: the bids in force each week (weeks + 1 rows, the last after the
    last decision) and each week's results (weeks rows)."""

    bids: np.ndarray
    clicks: np.ndarray
    orders: np.ndarray
    spend: np.ndarray
    sales: np.ndarray
    aims: np.ndarray | None = None  # the ACoS each bid aims at (as bids; None: the seller's target)


def simulate(market: Market, policy, weeks: int = 12, window_weeks: int = 4) -> Run:
    """Run policy(market, window) -> next bids (or (bids, aims)) for weeks weeks, from the market's bids.

    A policy with a ``window_weeks`` attribute reads that many weeks; one with a ``start`` method is started
    on the market first (a policy that carries a keyword history starts a new one).
    """
    window_weeks = getattr(policy, "window_weeks", window_weeks)
    if hasattr(policy, "start"):
        policy.start(market)
    bids = market.start_bid.copy()
    path, aims = [bids], [market.keyword_target()]
    results: list[dict] = []
    reports: list[dict] = []  # as the exports credit them (later than results with attribution delay)
    for week in range(1, weeks + 1):
        results.append(market.week(week, bids))
        reports.append(market.credited(results[-1], results[-2]["late"] if week > 1 else 0))
        recent = reports[-window_weeks:]
        window = Window(week, len(recent), *(np.sum([r[k] for r in recent], axis=0)
                                             for k in ("clicks", "orders", "spend", "sales")), bids)
        decided = policy(market, window)
        bids, aim = decided if isinstance(decided, tuple) else (decided, market.keyword_target())
        bids = np.asarray(bids, dtype=float)
        path.append(bids)
        aims.append(np.asarray(aim, dtype=float))
    stack = {k: np.array([r[k] for r in results]) for k in ("clicks", "orders", "spend", "sales")}
    return Run(np.array(path), **stack, aims=np.array(aims))


def reachable(market: Market, settings: Settings = Settings(), target: np.ndarray | None = None) -> np.ndarray:
    """Keywords some bid within the floor and ceiling brings to the target ACoS (the seller's, or target)."""
    if target is None:
        bid = market.target_bid()
    else:
        value = market.cvr * market.order_value
        bid = np.where(value > 0, target * value / market.discount, np.nan)
    return np.isfinite(bid) & (bid >= settings.bid_floor) & (bid <= settings.bid_ceiling)


def in_band(market: Market, bids: np.ndarray, settings: Settings = Settings(), target: np.ndarray | None = None
            ) -> float:
    """The share of reachable keywords whose true ACoS at bids is within the band around the target
    (the seller's target, or the given per-keyword target)."""
    target = market.keyword_target() if target is None else np.asarray(target, dtype=float)
    ok = reachable(market, settings, target)
    near = np.abs(market.true_acos(bids) - target) <= BAND + 1e-9
    return float(np.mean(near[ok])) if ok.any() else float("nan")


def acos_gap(market: Market, bids: np.ndarray, settings: Settings = Settings()) -> float:
    """The median distance (points) of reachable keywords' true ACoS at bids from their target."""
    ok = reachable(market, settings)
    gap = np.abs(market.true_acos(bids) - market.keyword_target()) * 100
    return float(np.median(gap[ok])) if ok.any() else float("nan")


def measure(market: Market, run: Run, settings: Settings = Settings()) -> dict[str, float]:
    """The measures of one run (see the module docstring)."""
    weeks = len(run.spend)
    early = min(EARLY_WEEK, weeks)
    aims = run.aims if run.aims is not None else [market.keyword_target()] * len(run.bids)
    shares = [in_band(market, bids, settings) for bids in run.bids]
    half = next((w for w, share in enumerate(shares) if share >= 0.5), weeks + 1)
    margin = market.margin[market.product]
    old, new = run.bids[:-1], run.bids[1:]
    return {
        "in_band": shares[-1],
        "in_band_8": shares[early],
        "in_aim": in_band(market, run.bids[-1], settings, aims[-1]),
        "in_aim_8": in_band(market, run.bids[early], settings, aims[early]),
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


def ratio_bootstrap(gain: np.ndarray, ceiling_gain: np.ndarray, draws: int = 4000, seed: int = 0
                    ) -> tuple[float, float, float]:
    """A policy's gain over a baseline as a share of the ceiling's gain over it (sum over seeds of the gains,
    each paired by seed), and its 95% percentile bootstrap interval (resampling seeds)."""
    gain, ceiling_gain = np.asarray(gain, dtype=float), np.asarray(ceiling_gain, dtype=float)
    rng = np.random.Generator(np.random.PCG64(np.random.SeedSequence([seed, 3])))
    pick = rng.integers(0, len(gain), size=(draws, len(gain)))
    with np.errstate(divide="ignore", invalid="ignore"):
        shares = gain[pick].sum(axis=1) / ceiling_gain[pick].sum(axis=1)
        share = gain.sum() / ceiling_gain.sum() if ceiling_gain.sum() != 0 else np.nan
    shares = shares[np.isfinite(shares)]
    if not len(shares):  # the ceiling gained nothing over the baseline (a run too short to tell them apart)
        return float(share), float("nan"), float("nan")
    low, high = np.percentile(shares, [2.5, 97.5])
    return float(share), float(low), float(high)
