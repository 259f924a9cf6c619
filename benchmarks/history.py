"""The keyword history at scale: a synthetic account's past weeks as weekly exports, for ``build --history``.

`make_next_week(inputs, nxt)` writes an account's next week's exports (figures drawn afresh, a few bids moved, a
week later), for `build --previous` with a Follow-up. `make_past_weeks(inputs, past, weeks)` turns an account of
benchmarks/accounts.py into a weekly one: its settings say 7 days ending on its period end, and `past` receives weeks - 1 earlier
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


def _metrics(rng, frame: pd.DataFrame, impressions_high: int) -> None:
    """Draw an export's figures afresh in place (impressions, clicks, orders, spend, ad sales), as accounts.py does."""
    n = len(frame)
    impressions = rng.integers(0, impressions_high, n)
    clicks = rng.binomial(impressions, 0.01)
    orders = rng.binomial(clicks, 0.1)
    frame["impressions"], frame["clicks"], frame["orders"] = impressions, clicks, orders
    frame["spend"] = np.round(clicks * rng.uniform(0.2, 1.5, n), 2)
    frame["ad_sales"] = np.round(orders * rng.uniform(8, 120, n), 2)


def make_next_week(inputs: Path, nxt: Path, seed: int = 7, days: int = 7) -> None:
    """Write the next week's exports of an account of benchmarks/accounts.py into nxt: the same products, targets
    and search terms, their figures drawn afresh, one bid in ten moved (as if last week's changes were applied),
    the period ending days later. A build with --previous of the first week's workbook then makes its Follow-up."""
    rng = np.random.default_rng(seed)
    nxt.mkdir(parents=True, exist_ok=True)
    text = {c: str for c in ("campaign", "ad_group", "target", "match_type", "state", "product_id", "search_term",
                             "ad_type", "term")}
    for name in ("catalog.csv", "negatives.csv"):  # the products and the negatives stay
        (nxt / name).write_bytes((inputs / name).read_bytes())
    catalog = pd.read_csv(inputs / "catalog.csv", dtype={"product_id": str})
    sales = pd.read_csv(inputs / "store_sales.csv", dtype={"product_id": str}, keep_default_na=False)
    sales["units"] = rng.integers(0, 400, len(sales))
    price = sales["product_id"].map(dict(zip(catalog["product_id"], catalog["price"])))
    sales["revenue"] = np.round(sales["units"] * price, 2)
    sales.to_csv(nxt / "store_sales.csv", index=False, float_format="%.2f")
    ads = pd.read_csv(inputs / "ad_products.csv", dtype=text, keep_default_na=False)
    _metrics(rng, ads, 20_000)
    ads.to_csv(nxt / "ad_products.csv", index=False)
    targets = pd.read_csv(inputs / "targets.csv", dtype=text, keep_default_na=False)
    _metrics(rng, targets, 20_000)
    moved = rng.random(len(targets)) < 0.1
    bids = pd.to_numeric(targets["bid"])
    targets["bid"] = np.where(moved, np.round(bids * rng.uniform(0.8, 1.2, len(targets)), 2), bids).clip(0.02)
    targets.to_csv(nxt / "targets.csv", index=False)
    terms = pd.read_csv(inputs / "search_terms.csv", dtype=text, keep_default_na=False)
    n = len(terms)
    clicks = rng.poisson(pd.to_numeric(terms["clicks"]).to_numpy() * 0.9 + 0.3)
    orders = np.minimum(clicks, rng.poisson(pd.to_numeric(terms["orders"]).to_numpy() * 0.9 + 0.02))
    terms["clicks"], terms["orders"] = clicks, orders
    terms["impressions"] = clicks * rng.integers(20, 400, n) + rng.integers(0, 50, n)
    terms["spend"] = np.round(clicks * rng.uniform(0.2, 1.5, n), 2)
    terms["ad_sales"] = np.round(orders * rng.uniform(8, 120, n), 2)
    terms.drop_duplicates(keep="first").to_csv(nxt / "search_terms.csv", index=False)  # a copied row is refused
    settings = (inputs / "settings.toml").read_text()
    end = dt.date.fromisoformat(settings.split("period_end = ")[1].split()[0])
    (nxt / "settings.toml").write_text(settings.replace(f"period_end = {end.isoformat()}",
                                                        f"period_end = {(end + dt.timedelta(days=days)).isoformat()}"))
