"""Pooled conversion rates for Bids: each keyword's history, its product's prior, and its posterior.

Every figure here is computed only from exported figures (this week's targets export and the
keyword history), so Bids writes them as plain values in hidden working columns; what a target
ACoS, a setting or a Decision reaches stays a live formula on Bids.

1. History per keyword: clicks n, orders o, spend, ad sales, and clicks x bid in force summed over
   every recorded week, this week included. Without a keyword history that holds this week (no
   period known, or this week's export not recorded because it overlaps a recorded week) and for a
   keyword the history lacks, the history is this week's row: a week is never counted twice.
2. The prior per product (Bids' product label: a product, or the 'shared: ...' blend of an ad group):
   Beta(alpha, beta) of keyword conversion rates fitted by the method of moments with clicks as
   weights (Kleinman, "Proportions with extraneous variance: single and independent samples",
   JASA 68, 1973), with a share pi of never-converting keywords fitted by one reweighting round:
   pi from the excess of zero-order keywords over what the beta-binomial predicts, then the beta
   refitted with each keyword weighted by its posterior probability of converting. Fallback (the
   prior is then the product's CVR with the strength of the prior_clicks setting, live on Bids):
   fewer than MIN_KEYWORDS keywords with clicks, no orders, a weighted mean of 0 or 1, or a
   spread at or below the binomial's (no extra variance to pool).
3. The posterior per keyword: w = 1 if o > 0 else (1 - pi) P(0|n) / (pi + (1 - pi) P(0|n)), with
   P(0|n) = B(alpha, beta + n) / B(alpha, beta) the beta-binomial chance of no order in n clicks;
   shape a = alpha + o, b = beta + n - o; posterior mean CVR = w a / (a + b).
4. The CPC-to-bid ratio: history spend / (clicks x bid in force) over the weeks whose bid is known;
   else this week's CPC / bid; else 1 (no clicks at a known bid), with the source named per row.
"""
from __future__ import annotations

import numpy as np
import pandas as pd
from scipy.special import gammaln

MIN_KEYWORDS = 5  # keywords with clicks a product needs before its prior is fitted (else prior_clicks)
HISTORY = ("h_clicks", "h_orders", "h_spend", "h_sales", "h_bid_clicks", "h_bid_spend")
RATIO_SOURCES = ("history", "this week", "none: 1 assumed")


def history_figures(frame: pd.DataFrame, found: list | None) -> pd.DataFrame:
    """HISTORY per row: the keyword's totals from the history (found: per row, or None), else this week's row."""
    bid = frame["bid"].to_numpy(dtype=float)
    clicks = frame["clicks"].to_numpy(dtype=float)
    spend = frame["spend"].to_numpy(dtype=float)
    known = ~np.isnan(bid)
    own = np.column_stack([clicks, frame["orders"].to_numpy(dtype=float), spend,
                           frame["ad_sales"].to_numpy(dtype=float), np.where(known, clicks * np.nan_to_num(bid), 0.0),
                           np.where(known, spend, 0.0)])
    for i, totals in enumerate(found or []):
        if totals is not None:
            own[i] = totals
    return pd.DataFrame(own.reshape(len(frame), len(HISTORY)), columns=list(HISTORY), index=frame.index)


def cpc_to_bid(df: pd.DataFrame) -> tuple[pd.Series, pd.Series]:
    """(the CPC-to-bid ratio, its source) per row, by the rule of the module docstring."""
    hist = np.where(df["h_bid_clicks"] > 0, df["h_bid_spend"] / df["h_bid_clicks"].where(df["h_bid_clicks"] > 0), 0.0)
    week_den = df["clicks"] * df["bid"]
    week = np.where(week_den > 0, df["spend"] / week_den.where(week_den > 0), 0.0)
    ratio = np.where(hist > 0, hist, np.where(week > 0, week, 1.0))
    source = np.where(hist > 0, RATIO_SOURCES[0], np.where(week > 0, RATIO_SOURCES[1], RATIO_SOURCES[2]))
    return pd.Series(ratio, index=df.index, dtype=float), pd.Series(source, index=df.index, dtype=object)


def zero_chance(alpha: float, beta: float, n: np.ndarray) -> np.ndarray:
    """P(0|n) = B(alpha, beta + n) / B(alpha, beta): the beta-binomial chance of no order in n clicks."""
    return np.exp(gammaln(beta + n) + gammaln(alpha + beta) - gammaln(beta) - gammaln(alpha + beta + n))


def moments_fit(n: np.ndarray, o: np.ndarray, c: np.ndarray) -> tuple[float, float] | None:
    """(alpha, beta) by Kleinman's method of moments with weights c, or None where no extra variance is found.

    With p_i = o_i / n_i, p = sum c_i p_i / C and S = sum c_i (p_i - p)^2, the beta-binomial gives
    E[S] = p (1 - p) sum c_i (1 - c_i / C) (1 + (n_i - 1) rho) / n_i, rho = 1 / (alpha + beta + 1);
    solved for rho, then alpha + beta = 1 / rho - 1.
    """
    big = c.sum()
    if big <= 0:
        return None
    rate = o / n
    p = float((c * rate).sum() / big)
    if not 0 < p < 1:
        return None
    s = float((c * (rate - p) ** 2).sum())
    share = c * (1 - c / big)
    den = float((share * (n - 1) / n).sum())
    if den <= 0:
        return None
    rho = (s / (p * (1 - p)) - float((share / n).sum())) / den
    if not 0 < rho < 1:
        return None
    strength = 1 / rho - 1
    return p * strength, (1 - p) * strength


def fit_prior(n: np.ndarray, o: np.ndarray) -> tuple[float, float, float] | None:
    """(alpha, beta, pi) of one product's keywords (history clicks n, orders o), or None for the fallback."""
    with_clicks = n > 0
    n, o = n[with_clicks], o[with_clicks]
    if len(n) < MIN_KEYWORDS or o.sum() <= 0:
        return None
    first = moments_fit(n, o, n)
    if first is None:
        return None
    alpha, beta = first
    p0 = zero_chance(alpha, beta, n)
    expected, zeros, k = float(p0.sum()), float((o == 0).sum()), float(len(n))
    pi = min(max((zeros - expected) / (k - expected), 0.0), 1.0) if k > expected else 0.0
    if pi <= 0 or pi >= 1:
        return alpha, beta, 0.0
    converts = np.where(o > 0, 1.0, (1 - pi) * p0 / (pi + (1 - pi) * p0))
    second = moments_fit(n, o, converts * n)
    if second is None:  # the converting keywords show no extra variance: the first fit, not zero-inflated
        return alpha, beta, 0.0
    return second[0], second[1], pi


def posterior(df: pd.DataFrame) -> pd.DataFrame:
    """Per row: the prior (fit_a, fit_b blank in the fallback), pi, and the probability w it converts.

    df holds product_id (Bids' product label), h_clicks and h_orders.
    """
    size = len(df)
    fit_a, fit_b, fit_pi, w = np.full(size, np.nan), np.full(size, np.nan), np.zeros(size), np.ones(size)
    clicks, orders = df["h_clicks"].to_numpy(dtype=float), df["h_orders"].to_numpy(dtype=float)
    codes, _ = pd.factorize(df["product_id"])
    order = np.argsort(codes, kind="stable")
    for rows in np.split(order, np.flatnonzero(np.diff(codes[order])) + 1) if size else []:
        n, o = clicks[rows], orders[rows]
        fit = fit_prior(n, o)
        if fit is None:
            continue
        alpha, beta, pi = fit
        fit_a[rows], fit_b[rows], fit_pi[rows] = alpha, beta, pi
        if pi > 0:
            p0 = zero_chance(alpha, beta, n)
            w[rows] = np.where(o > 0, 1.0, (1 - pi) * p0 / (pi + (1 - pi) * p0))
    return pd.DataFrame({"fit_a": fit_a, "fit_b": fit_b, "fit_pi": fit_pi, "w": w}, index=df.index)
