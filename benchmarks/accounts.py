"""Synthetic accounts for the benchmark: N ad rows, ~N targets, a ratio of search-term rows, a few negatives.

`make_account(folder, n)` writes the CSV exports and settings of one account; the tests of the
hardened readers use it too. Vectorised, so a million search-term rows take seconds.
"""
from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd

TERMS_RATIO = 2.0  # search-term rows per ad row: 200k at 100k ad rows
_MOD_BEFORE = np.array(["", "", "", "", "black", "large", "small", "wooden", "metal", "green", "heavy duty", "xl"],
                       dtype=object)
_MOD_AFTER = np.array(["", "", "", "", "for garden", "set of 2", "outdoor", "cheap", "free shipping", "with lid",
                       "kit", "replacement", "near me", "2 pack"], dtype=object)


def make_terms(rng, targets: pd.DataFrame, ids: np.ndarray, n_rows: int, metrics
               ) -> tuple[pd.DataFrame, pd.DataFrame, pd.DataFrame]:
    """Search-term rows, negatives and a few extra exact targets, all vectorised.

    About 60% of the rows are distinct (campaign, ad group, term); the rest repeat a term
    of the same ad group, through the same target or another target of that ad group, so
    rows aggregate. Each term comes through a target of targets (so its ad group advertises
    products). Keyword terms are the target's text with modifiers (exact targets' terms are
    often the keyword itself); product-target terms are product IDs. About 7% of rows have
    orders (~10% of terms), about 4% have no orders and a high spend. The negatives hit
    some terms (exact, ad group and campaign level; phrase on modifier words), and a few
    extra exact targets repeat a term's text in its own ad group (Already targeted).
    """
    n_rows = max(n_rows, 10)
    m = len(targets)
    t_campaign, t_group = targets["campaign"].to_numpy(), targets["ad_group"].to_numpy()
    t_text, t_match = targets["target"].to_numpy(dtype=object), targets["match_type"].to_numpy(dtype=object)
    n_slots = max(1, int(round(0.6 * n_rows)))  # the distinct terms
    slot_t = rng.integers(0, m, n_slots)
    match = t_match[slot_t]
    before = _MOD_BEFORE[rng.integers(0, len(_MOD_BEFORE), n_slots)]
    after = _MOD_AFTER[rng.integers(0, len(_MOD_AFTER), n_slots)]
    keyword_itself = (match == "exact") & (rng.random(n_slots) < 0.5)
    before, after = np.where(keyword_itself, "", before), np.where(keyword_itself, "", after)
    text = pd.Series(before) + " " + pd.Series(t_text[slot_t]) + " " + pd.Series(after)
    text = text.str.strip().str.replace("  ", " ", regex=False).to_numpy(dtype=object)
    product_term = np.char.lower(ids[rng.integers(0, len(ids), n_slots)].astype(str)).astype(object)
    slot_text = np.where(match == "product", product_term, text)
    # rows: every slot once, then repeats of random slots
    slot = np.concatenate([np.arange(n_slots), rng.integers(0, n_slots, n_rows - n_slots)])
    row_t = slot_t[slot]
    repeat = np.arange(n_rows) >= n_slots
    codes, _ = pd.factorize(pd.Series(t_campaign) + "\x1f" + pd.Series(t_group))
    order = np.argsort(codes, kind="stable")
    counts = np.bincount(codes)
    starts = np.concatenate([[0], np.cumsum(counts)[:-1]])
    g = codes[row_t]
    other = order[starts[g] + (rng.random(n_rows) * counts[g]).astype(int)]  # a target of the same ad group
    row_t = np.where(repeat & (rng.random(n_rows) < 0.5), other, row_t)
    u = rng.random(n_rows)
    sells, costly = u < 0.07, (u >= 0.07) & (u < 0.11)
    clicks = rng.geometric(0.25, n_rows) - 1
    orders = np.where(sells, 1 + rng.poisson(0.6, n_rows), 0)
    clicks = np.where(costly, rng.integers(30, 150, n_rows), np.maximum(clicks, orders))
    spend = np.round(clicks * np.where(costly, rng.uniform(0.8, 1.6, n_rows), rng.uniform(0.2, 1.5, n_rows)), 2)
    terms = pd.DataFrame({
        "campaign": t_campaign[row_t], "ad_group": t_group[row_t], "target": t_text[row_t],
        "match_type": t_match[row_t], "search_term": slot_text[slot],
        "impressions": clicks * rng.integers(20, 400, n_rows) + rng.integers(0, 50, n_rows), "clicks": clicks,
        "spend": spend, "ad_sales": np.round(orders * rng.uniform(8, 120, n_rows), 2), "orders": orders})
    terms = terms.iloc[rng.permutation(n_rows)].reset_index(drop=True)  # exports are not sorted by term
    s_campaign, s_group = t_campaign[slot_t], t_group[slot_t]
    k = max(3, n_slots // 300)
    exact = rng.choice(n_slots, k, replace=False)
    camp_exact = rng.choice(n_slots, max(2, k // 3), replace=False)
    campaigns = pd.unique(t_campaign)
    phrase_camps = rng.choice(campaigns, max(2, len(campaigns) // 5), replace=False)
    phrase_words = np.array(["cheap", "free shipping", "near me", "replacement"], dtype=object)
    phrase_slots = rng.choice(n_slots, max(2, k // 2), replace=False)  # ad-group level phrases
    negatives = pd.concat([
        pd.DataFrame({"campaign": s_campaign[exact], "ad_group": s_group[exact], "term": slot_text[exact],
                      "match_type": "negative exact"}),
        pd.DataFrame({"campaign": s_campaign[camp_exact], "ad_group": "", "term": slot_text[camp_exact],
                      "match_type": "negative exact"}),
        pd.DataFrame({"campaign": phrase_camps, "ad_group": "",
                      "term": phrase_words[rng.integers(0, len(phrase_words), len(phrase_camps))],
                      "match_type": "negative phrase"}),
        pd.DataFrame({"campaign": s_campaign[phrase_slots], "ad_group": s_group[phrase_slots],
                      "term": _MOD_AFTER[4:][rng.integers(0, len(_MOD_AFTER) - 4, len(phrase_slots))],
                      "match_type": "negative phrase"}),
    ], ignore_index=True)
    keyword_slots = np.flatnonzero((match != "product") & ~keyword_itself)
    few = rng.choice(keyword_slots, min(len(keyword_slots), max(2, m // 100)), replace=False)
    extra = pd.DataFrame({"campaign": s_campaign[few], "ad_group": s_group[few], "target": slot_text[few],
                          "match_type": "exact", "state": "enabled",
                          "bid": np.round(rng.uniform(0.2, 2, len(few)), 2), **metrics(len(few))})
    return terms, negatives, extra


def make_account(folder: Path, n: int, seed: int = 20261202, terms_ratio: float = TERMS_RATIO) -> None:
    """Write a synthetic account of n ad rows (~n/20 products, ~n targets, terms_ratio x n search-term rows)."""
    rng = np.random.default_rng(seed)
    folder.mkdir(parents=True, exist_ok=True)
    n_products = max(20, n // 20)
    ids = np.array([f"SKU-{i:06d}" for i in range(n_products)], dtype=object)
    price = np.round(rng.uniform(8, 120, n_products), 2)
    cost = np.round(price * rng.uniform(0.2, 0.55, n_products), 2)
    fees = np.round(price * rng.uniform(0.08, 0.2, n_products), 2)
    target = np.where(rng.random(n_products) < 0.3, np.round(rng.uniform(0.15, 0.4, n_products), 2), np.nan)
    margin = np.where(rng.random(n_products) < 0.1, np.round(rng.uniform(0.1, 0.5, n_products), 2), np.nan)
    catalog = pd.DataFrame({"product_id": ids, "product_name": [f"Product {i} garden item" for i in range(n_products)],
                            "price": price, "unit_cost": cost, "fees_per_unit": fees,
                            "target_acos": target, "margin": margin})
    catalog.to_csv(folder / "catalog.csv", index=False, float_format="%.2f")
    units = rng.integers(0, 400, n_products)
    pd.DataFrame({"product_id": ids, "units": units, "revenue": np.round(units * price, 2)}).to_csv(
        folder / "store_sales.csv", index=False, float_format="%.2f")

    def metrics(m: int) -> dict:
        impressions = rng.integers(0, 20_000, m)
        clicks = rng.binomial(impressions, 0.01)
        orders = rng.binomial(clicks, 0.1)
        spend = np.round(clicks * rng.uniform(0.2, 1.5, m), 2)
        return {"impressions": impressions, "clicks": clicks, "spend": spend,
                "ad_sales": np.round(orders * rng.uniform(8, 120, m), 2), "orders": orders}

    n_campaigns = max(5, n // 200)
    camp = rng.integers(0, n_campaigns, n)
    campaign = pd.Series(camp).map(lambda c: f"Campaign {c:04d} - Manual").to_numpy()
    ad_group = pd.Series(rng.integers(0, 8, n)).map(lambda g: f"Group {g}").to_numpy()
    pd.DataFrame({"campaign": campaign, "ad_group": ad_group, "product_id": ids[rng.integers(0, n_products, n)],
                  "ad_type": "product ads", **metrics(n)}).to_csv(folder / "ad_products.csv", index=False)
    m = n  # as many keyword and product targets as ad rows: 100k targets at the largest size
    words = np.array(["cedar bed", "raised planter", "hose reel", "garden gloves", "pruning shears", "seed tray"])
    pick = rng.integers(0, n, m)  # each target sits in an ad group that advertises products
    targets = pd.DataFrame({"campaign": campaign[pick], "ad_group": ad_group[pick],
                            "target": [f"{words[i % len(words)]} {i}" for i in range(m)],
                            "match_type": np.array(["exact", "phrase", "broad", "product"])[rng.integers(0, 4, m)],
                            "state": np.where(rng.random(m) < 0.9, "enabled", "paused"),
                            "bid": np.round(rng.uniform(0.2, 2, m), 2), **metrics(m)})
    terms, negatives, extra = make_terms(rng, targets, ids, int(round(terms_ratio * n)), metrics)
    # one row per keyword or target, as the readers require: an extra exact target whose text is
    # already an exact target of its ad group is dropped
    everything = pd.concat([targets, extra], ignore_index=True)
    everything = everything.drop_duplicates(["campaign", "ad_group", "target", "match_type"], keep="first")
    everything.to_csv(folder / "targets.csv", index=False)
    # a search term row equal to another in every column is a copy, which the readers refuse
    terms.drop_duplicates(keep="first").to_csv(folder / "search_terms.csv", index=False)
    negatives.to_csv(folder / "negatives.csv", index=False)
    (folder / "settings.toml").write_text('currency_symbol = "$"\nperiod_days = 30\nperiod_end = 2026-11-29\n')


