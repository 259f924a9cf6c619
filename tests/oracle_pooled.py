"""An independent reference for Bids' pooled conversion rates, written from the sources, not from the code.

- The prior: D. Kleinman, "Proportions with extraneous variance: single and independent samples",
  JASA 68 (1973): the weighted mean p = sum w_i p_i / sum w_i and the weighted sum of squares
  S = sum w_i (p_i - p)^2, whose expectation under the beta-binomial, with the intraclass
  correlation rho = 1 / (alpha + beta + 1) and Var(p_i) = p (1 - p) (1 + (n_i - 1) rho) / n_i, is
  sum w_i (1 - w_i / W) Var(p_i); the moment equation solved for rho (numpy).
- The never-converting share: a zero-inflated beta-binomial; P(0 | n) from scipy.stats.betabinom,
  pi = (zeros - expected zeros) / (keywords - expected zeros), one refit weighted by each keyword's
  posterior probability of converting (Bayes' rule).
- The waste probability: scipy.stats.beta.cdf of the posterior Beta(alpha + o, beta + n - o).
"""
from __future__ import annotations

import numpy as np
from scipy.stats import beta as beta_dist, betabinom

FEWEST_KEYWORDS = 5  # the planner's stated threshold (sheets/pooled.py): below it, the prior_clicks fallback


def kleinman(n, o, weights):
    """(alpha, beta) from Kleinman's moment equation with the given weights, or None (no extra variance)."""
    n, o, w = (np.asarray(x, dtype=float) for x in (n, o, weights))
    total = w.sum()
    if total <= 0:
        return None
    p_i = o / n
    p = np.sum(w * p_i) / total
    if p <= 0 or p >= 1:
        return None
    s = np.sum(w * (p_i - p) ** 2)
    # E[S] = p(1-p) * [sum w_i (1 - w_i/W) / n_i + rho * sum w_i (1 - w_i/W) (n_i - 1) / n_i]
    base = np.sum(w * (1 - w / total) / n)
    slope = np.sum(w * (1 - w / total) * (n - 1) / n)
    if slope <= 0:
        return None
    rho = (s / (p * (1 - p)) - base) / slope
    if rho <= 0 or rho >= 1:
        return None
    return p * (1 / rho - 1), (1 - p) * (1 / rho - 1)


def zero_inflated_prior(n, o):
    """(alpha, beta, pi) of one product's keywords with clicks, or None for the prior_clicks fallback."""
    n, o = np.asarray(n, dtype=float), np.asarray(o, dtype=float)
    keep = n > 0
    n, o = n[keep], o[keep]
    if len(n) < FEWEST_KEYWORDS or o.sum() == 0:
        return None
    first = kleinman(n, o, n)
    if first is None:
        return None
    a, b = first
    p0 = betabinom.pmf(0, n.astype(int), a, b)
    expected = p0.sum()
    zeros = float(np.sum(o == 0))
    pi = (zeros - expected) / (len(n) - expected) if len(n) > expected else 0.0
    pi = min(max(pi, 0.0), 1.0)
    if pi == 0.0 or pi == 1.0:
        return a, b, 0.0
    converting = np.where(o > 0, 1.0, (1 - pi) * p0 / (pi + (1 - pi) * p0))
    second = kleinman(n, o, converting * n)
    if second is None:
        return a, b, 0.0
    return second[0], second[1], pi


def converts(prior, n, o):
    """The posterior probability a keyword converts at all (1 with an order or without a fitted share)."""
    if prior is None or o > 0 or prior[2] == 0:
        return 1.0
    a, b, pi = prior
    p0 = float(betabinom.pmf(0, int(n), a, b))
    return (1 - pi) * p0 / (pi + (1 - pi) * p0)


def waste(w, a, b, threshold):
    """(1 - w) + w P(CVR < threshold) under the posterior Beta(a, b)."""
    return (1 - w) + w * float(beta_dist.cdf(min(1.0, threshold), a, b))
