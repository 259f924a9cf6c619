"""The keyword history at scale: a synthetic account's past weeks as weekly exports, for ``build --history``.

`make_past_weeks(inputs, past, weeks)` turns an account of benchmarks/accounts.py into a weekly
one: its settings say 7 days ending on its period end, and `past` receives weeks - 1 earlier
7-day keyword exports (the account's targets with figures drawn afresh each week and a bid
that moves now and then), each named with its period, so that ``build --history past`` records
`weeks` weeks of every keyword and ``--previous`` then carries them.
"""
from __future__ import annotations

import datetime as dt
from pathlib import Path

import numpy as np
import pandas as pd

END = dt.date(2026, 11, 29)


def make_past_weeks(inputs: Path, past: Path, weeks: int, seed: int = 52) -> int:
    """Write weeks - 1 past weekly keyword exports into past; make inputs a 7-day week. Returns the rows written."""
    rng = np.random.default_rng(seed)
    (inputs / "settings.toml").write_text(f'currency_symbol = "$"\nperiod_days = 7\nperiod_end = {END.isoformat()}\n')
    targets = pd.read_csv(inputs / "targets.csv", dtype={"target": str, "campaign": str, "ad_group": str},
                          keep_default_na=False)
    past.mkdir(parents=True, exist_ok=True)
    n, written = len(targets), 0
    for back in range(1, weeks):
        end = END - dt.timedelta(days=7 * back)
        start = end - dt.timedelta(days=6)
        week = targets.copy()
        impressions = rng.integers(0, 5_000, n)
        clicks = rng.binomial(impressions, 0.01)
        orders = rng.binomial(clicks, 0.1)
        week["impressions"], week["clicks"], week["orders"] = impressions, clicks, orders
        week["spend"] = np.round(clicks * rng.uniform(0.2, 1.5, n), 2)
        week["ad_sales"] = np.round(orders * rng.uniform(8, 120, n), 2)
        moved = rng.random(n) < 0.1
        week["bid"] = np.where(moved, np.round(week["bid"] * rng.uniform(0.8, 1.2, n), 2), week["bid"]).clip(0.02)
        week.to_csv(past / f"targets {start.isoformat()} to {end.isoformat()}.csv", index=False)
        written += n
    return written
