"""How clicks answer the bid, estimated from the keyword history: the click elasticity e.

Model: keyword i's clicks in week t are Poisson with mean a_i x b_it^e, where b_it is the bid in
force that week and a_i the keyword's own level (its demand, relevance and placement), a fixed
effect. Conditioning on each keyword's clicks over its weeks removes a_i (J. A. Hausman, B. H. Hall
and Z. Griliches, "Econometric models for count data with an application to the patents-R&D
relationship", Econometrica 52, 1984): the clicks are multinomial over the weeks with shares
b_it^e / sum_s b_is^e, and for the Poisson model the estimate of e maximising this conditional
likelihood equals the one of the full likelihood with one dummy per keyword. Only keywords with
clicks in weeks at two different bids carry information about e.

The conditional log-likelihood, with x = ln(bid) and n_i the keyword's clicks,
    L(e) = sum_i sum_t y_it (e x_it - ln sum_s exp(e x_is)),
is concave in e; its derivative is sum_i sum_t y_it (x_it - m_i(e)) and minus its second derivative,
the observed information, is I(e) = sum_i n_i v_i(e), where m_i and v_i are the mean and variance of
x over keyword i's weeks weighted by exp(e x). Newton's method finds the maximum; the standard error is
1 / sqrt(I) at the estimate, and the interval is the estimate +- 1.96 standard errors (normal approximation).
The Poisson model takes the clicks' week-to-week spread to be Poisson's; clicks that vary more than that
(seasons, placements) make the true interval wider than this one.

Enough history (our rule): at least MIN_KEYWORDS keywords that each had clicks and at least two weeks at
different bids, and MIN_CLICKS clicks in all over those keywords' weeks. Below it no estimate is shown.

A plain value: it depends only on the exported history, so it is computed when building and written as
text beside the click elasticity setting (Settings) and on the Guide. The build does not use it by itself:
the setting's value stays what the user typed (or the default) until the user types the estimate in.
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

MIN_KEYWORDS = 20
MIN_CLICKS = 200
Z95 = 1.959963984540054  # the normal distribution's 97.5% point
BOUND = 20.0  # an estimate beyond +-BOUND is no finite estimate (every click at one end of the bids)


@dataclass(frozen=True)
class ElasticityEstimate:
    """The estimate of e from the keyword history, or why there is none (estimate None)."""

    estimate: float | None
    standard_error: float | None
    keywords: int  # keywords with clicks at two different bids
    clicks: float  # their clicks over the weeks used
    weeks: int  # keyword-weeks used
    why_none: str = ""

    @property
    def interval(self) -> tuple[float, float] | None:
        """The 95% interval (normal approximation), or None without an estimate."""
        if self.estimate is None or self.standard_error is None:
            return None
        return (self.estimate - Z95 * self.standard_error, self.estimate + Z95 * self.standard_error)

    def text(self) -> str:
        """The estimate in words, as Settings and the Guide show it."""
        if self.estimate is None:
            return f"Your keyword history gives no estimate of e yet: {self.why_none}."
        low, high = self.interval
        return (f"Your keyword history estimates e = {self.estimate:.2f} (95% interval {low:.2f} to {high:.2f}), "
                f"from {self.keywords:,} keywords with bid changes and {self.clicks:,.0f} clicks; type it in the "
                "Value of Click elasticity on Settings to use it.")


def keyword_weeks(rows: list[dict]) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """(keyword index, clicks, ln bid) of every keyword-week of packed history rows with clicks and a positive bid."""
    index: list[int] = []
    clicks: list[float] = []
    bids: list[float] = []
    for i, row in enumerate(rows):
        for c, b in zip(_items(row.get("clicks_packed", "")), _items(row.get("bid_packed", ""))):
            if c == c and b == b and b > 0 and c >= 0:
                index.append(i)
                clicks.append(c)
                bids.append(b)
    return np.asarray(index, dtype=np.int64), np.asarray(clicks, dtype=float), np.log(np.asarray(bids, dtype=float))


def _items(text: str) -> list[float]:
    """The numbers of a packed cell (NaN for an empty item)."""
    if not isinstance(text, str) or not text:
        return []
    out = []
    for item in text.split(";"):
        item = item.strip()
        try:
            out.append(float(item) if item else math.nan)
        except ValueError:
            out.append(math.nan)
    return out


def _informative(index: np.ndarray, clicks: np.ndarray, x: np.ndarray) -> np.ndarray:
    """Which keyword-weeks belong to a keyword with clicks and two different bids."""
    if not len(index):
        return np.zeros(0, dtype=bool)
    k = int(index.max()) + 1
    total = np.bincount(index, clicks, k)
    low = np.full(k, np.inf)
    high = np.full(k, -np.inf)
    np.minimum.at(low, index, x)
    np.maximum.at(high, index, x)
    varied = (high - low) > 1e-12
    return (total[index] > 0) & varied[index]


def _moments(e: float, index: np.ndarray, clicks: np.ndarray, x: np.ndarray, k: int) -> tuple[float, float, float]:
    """(L(e), its derivative, the observed information) of the conditional likelihood."""
    top = np.full(k, -np.inf)
    np.maximum.at(top, index, e * x)
    w = np.exp(e * x - top[index])  # scaled per keyword for safety
    s0 = np.bincount(index, w, k)
    s1 = np.bincount(index, w * x, k)
    s2 = np.bincount(index, w * x * x, k)
    n = np.bincount(index, clicks, k)
    used = n > 0
    mean = np.where(used, s1 / np.where(used, s0, 1.0), 0.0)
    var = np.where(used, s2 / np.where(used, s0, 1.0) - mean ** 2, 0.0)
    log_sum = np.log(np.where(used, s0, 1.0)) + np.where(used, top, 0.0)
    value = float(np.sum(clicks * e * x) - np.sum(n[used] * log_sum[used]))
    score = float(np.sum(clicks * x) - np.sum(n * mean))
    info = float(np.sum(n * np.maximum(var, 0.0)))
    return value, score, info


def estimate_elasticity(rows: list[dict]) -> ElasticityEstimate:
    """The click elasticity e estimated from packed keyword history rows (see the module docstring)."""
    index, clicks, x = keyword_weeks(rows)
    keep = _informative(index, clicks, x)
    index, clicks, x = index[keep], clicks[keep], x[keep]
    _, index = np.unique(index, return_inverse=True)
    k = int(index.max()) + 1 if len(index) else 0
    total = float(clicks.sum())
    base = dict(keywords=k, clicks=total, weeks=int(len(index)))
    if k < MIN_KEYWORDS or total < MIN_CLICKS:
        return ElasticityEstimate(None, None, **base, why_none=(
            f"it needs at least {MIN_KEYWORDS} keywords each with clicks in weeks at two different bids and "
            f"{MIN_CLICKS} clicks in all; it holds {k} such keywords and {total:,.0f} clicks"))
    e = solve(index, clicks, x, k)
    if e is None:
        return ElasticityEstimate(None, None, **base, why_none=(
            "the clicks give no finite estimate (they fall only on the highest or only on the lowest bids)"))
    _, _, info = _moments(e, index, clicks, x, k)
    return ElasticityEstimate(e, 1.0 / math.sqrt(info), **base)


def solve(index: np.ndarray, clicks: np.ndarray, x: np.ndarray, k: int) -> float | None:
    """The e maximising the conditional likelihood by safeguarded Newton steps (None when it runs off to +-BOUND)."""
    low, high = -BOUND, BOUND
    e = 0.0
    for _ in range(200):
        _, score, info = _moments(e, index, clicks, x, k)
        if score > 0:
            low = e
        else:
            high = e
        if info <= 0:
            return None
        step = e + score / info
        e_next = step if low < step < high else (low + high) / 2  # bisect when Newton leaves the bracket
        if abs(e_next - e) < 1e-12 * max(1.0, abs(e)):
            e = e_next
            break
        e = e_next
    if abs(e) >= BOUND - 1e-6:
        return None
    return e
