"""The simulated market: products, keywords, and how clicks, costs and orders answer a bid.

Model (every assumption is a parameter of :class:`Scenario`):

- Products: a price (lognormal around ``price_median``) and a pre-ad margin (uniform between
  ``margin_low`` and ``margin_high``); a product conversion rate drawn around the scenario's
  ``cvr`` (lognormal, sd 0.3 in logs).
- Keywords per product: a true conversion rate q ~ Beta(c x s, (1 - c) x s) with mean the
  product's rate c and concentration s = ``cvr_concentration`` (smaller s: wider spread); a share
  ``dead_share`` of keywords never converts (q = 0). An average order value around the price
  (price x lognormal, sd ``order_value_sd`` in logs).
- Clicks answer the bid with diminishing returns: clicks in a week ~ Poisson(L x (bid / b_ref) ^ e),
  where e = ``elasticity`` (0 < e < 1), b_ref is the keyword's reference bid and L its clicks
  at that bid (lognormal around ``clicks_per_week``).
- Cost per click below the bid, as in a second-price auction: CPC = bid x d, rounded to the
  cent, with the discount d ~ Beta(``discount_a``, ``discount_b``) drawn once per keyword.
- Orders ~ Binomial(clicks, q); ad sales = orders x the keyword's order value.
- Attribution delay (off by default): each order is credited in the report of the following week
  with probability ``lag_share`` (the rest in its own week); profit counts every order in the
  week it happened.
- Target ACoS: ``target_acos`` for every product, or with ``target_at_optimum`` each product's
  profit-maximising ACoS under this click response, e x margin / (1 + e) (maximising
  clicks x (q x order value x margin - CPC) over the bid when clicks grow as bid ^ e).
- Not modelled: competitors reacting, seasonality, budget caps, impressions
  (written as a fixed multiple of clicks), organic sales changing with ads.

Every draw comes from numpy's Generator (PCG64) seeded from a SeedSequence. A market is drawn
from (scenario, seed); a keyword's week is drawn from its own stream (seed, keyword, week), so
two policies that give a keyword the same bid in a week see exactly the same clicks and orders.
"""
from __future__ import annotations

from dataclasses import dataclass, field, replace

import numpy as np

MATCH_TYPES = ("exact", "phrase", "broad")


@dataclass(frozen=True)
class Scenario:
    """The parameters of one kind of account."""

    name: str
    products: int = 6
    keywords_per_product: int = 10
    clicks_per_week: float = 12.0
    clicks_sd: float = 0.8
    cvr: float = 0.08
    cvr_concentration: float = 30.0
    dead_share: float = 0.15
    price_median: float = 30.0
    margin_low: float = 0.35
    margin_high: float = 0.55
    order_value_sd: float = 0.1
    elasticity: float = 0.7
    discount_a: float = 8.0
    discount_b: float = 3.0
    start_spread: float = 0.5
    target_acos: float = 0.30
    target_at_optimum: bool = False
    organic_units: int = 40
    lag_share: float = 0.0

    def but(self, **changes) -> "Scenario":
        """A copy with some parameters changed."""
        return replace(self, **changes)


SCENARIOS = {
    "small account": Scenario("small account", products=3, keywords_per_product=8, clicks_per_week=5.0),
    "large account": Scenario("large account", products=10, keywords_per_product=15, clicks_per_week=25.0),
    "low CVR": Scenario("low CVR", cvr=0.04),
    "high CVR": Scenario("high CVR", cvr=0.15),
}
EXTRA_SCENARIOS = {
    "profit-optimal target": Scenario("profit-optimal target", target_at_optimum=True),
}
# Market variants around the middle default (6 products x 10 keywords, 12 clicks a week, 8% CVR).
VARIANTS = {
    "CVR 2%": Scenario("CVR 2%", cvr=0.02),
    "CVR 20%": Scenario("CVR 20%", cvr=0.20),
    "elasticity 0.3": Scenario("elasticity 0.3", elasticity=0.3),
    "elasticity 1.0": Scenario("elasticity 1.0", elasticity=1.0),
    "lagged conversions": Scenario("lagged conversions", lag_share=0.3),
}


@dataclass
class Market:
    """One drawn account: per-product and per-keyword arrays (keyword i belongs to product[i])."""

    scenario: Scenario
    seed: int
    price: np.ndarray
    unit_cost: np.ndarray
    fees: np.ndarray
    margin: np.ndarray
    target: np.ndarray
    product_cvr: np.ndarray
    product: np.ndarray
    cvr: np.ndarray
    order_value: np.ndarray
    base_clicks: np.ndarray
    ref_bid: np.ndarray
    discount: np.ndarray
    start_bid: np.ndarray
    names: list[tuple[str, str, str, str]] = field(default_factory=list)

    @property
    def size(self) -> int:
        """The number of keywords."""
        return len(self.cvr)

    def mean_clicks(self, bid: np.ndarray) -> np.ndarray:
        """Expected clicks per week at each keyword's bid."""
        return self.base_clicks * (np.asarray(bid, dtype=float) / self.ref_bid) ** self.scenario.elasticity

    def cpc(self, bid: np.ndarray) -> np.ndarray:
        """The cost per click at each keyword's bid (below the bid), rounded to the cent."""
        return np.maximum(0.01, np.round(np.asarray(bid, dtype=float) * self.discount, 2))

    def true_acos(self, bid: np.ndarray) -> np.ndarray:
        """Expected ad spend / ad sales at each bid (inf for a keyword that never converts)."""
        value = self.cvr * self.order_value
        with np.errstate(divide="ignore"):
            return np.where(value > 0, self.cpc(bid) / np.where(value > 0, value, 1.0), np.inf)

    def keyword_target(self) -> np.ndarray:
        """Each keyword's target ACoS (its product's)."""
        return self.target[self.product]

    def target_bid(self) -> np.ndarray:
        """The bid at which each keyword's true ACoS meets the target (nan if it never converts)."""
        value = self.cvr * self.order_value
        return np.where(value > 0, self.keyword_target() * value / self.discount, np.nan)

    def week(self, week: int, bid: np.ndarray) -> dict[str, np.ndarray]:
        """One week's results at the given bids: clicks, spend, orders, ad sales per keyword, and the orders
        whose credit comes a week late ("late"; none without attribution delay)."""
        bid = np.asarray(bid, dtype=float)
        lam = self.mean_clicks(bid)
        clicks = np.empty(self.size, dtype=np.int64)
        orders = np.empty(self.size, dtype=np.int64)
        late = np.zeros(self.size, dtype=np.int64)
        lag = self.scenario.lag_share
        for i in range(self.size):
            rng = np.random.Generator(np.random.PCG64(np.random.SeedSequence([self.seed, 1, i, week])))
            clicks[i] = rng.poisson(lam[i])
            orders[i] = rng.binomial(clicks[i], self.cvr[i])
            if lag > 0:
                late[i] = rng.binomial(orders[i], lag)
        spend = np.round(clicks * self.cpc(bid), 2)
        sales = np.round(orders * self.order_value, 2)
        return {"clicks": clicks, "orders": orders, "spend": spend, "sales": sales, "late": late}

    def credited(self, result: dict[str, np.ndarray], earlier_late: np.ndarray) -> dict[str, np.ndarray]:
        """A week's results as its report credits them: its orders less its late ones, plus last week's late ones."""
        orders = result["orders"] - result["late"] + earlier_late
        return {**result, "orders": orders, "sales": np.round(orders * self.order_value, 2)}


def draw_market(scenario: Scenario, seed: int) -> Market:
    """Draw one account from a scenario; the same (scenario, seed) always gives the same market."""
    rng = np.random.Generator(np.random.PCG64(np.random.SeedSequence([seed, 0])))
    s = scenario
    n_p, n_k = s.products, s.keywords_per_product
    price = np.round(s.price_median * rng.lognormal(0.0, 0.4, n_p), 2)
    margin = rng.uniform(s.margin_low, s.margin_high, n_p)
    unit_cost = np.round(price * (1 - margin) * 0.6, 2)
    fees = np.round(price * (1 - margin) * 0.4, 2)
    margin = (price - unit_cost - fees) / price
    optimum = np.round(s.elasticity * margin / (1 + s.elasticity), 4)
    target = optimum if s.target_at_optimum else np.full(n_p, s.target_acos)
    product_cvr = np.clip(s.cvr * rng.lognormal(0.0, 0.3, n_p), 0.002, 0.9)
    product = np.repeat(np.arange(n_p), n_k)
    c = product_cvr[product]
    cvr = rng.beta(c * s.cvr_concentration, (1 - c) * s.cvr_concentration)
    cvr = np.where(rng.uniform(size=len(cvr)) < s.dead_share, 0.0, cvr)
    order_value = price[product] * rng.lognormal(0.0, s.order_value_sd, len(cvr))
    base_clicks = s.clicks_per_week * rng.lognormal(-s.clicks_sd ** 2 / 2, s.clicks_sd, len(cvr))
    discount = rng.beta(s.discount_a, s.discount_b, len(cvr))
    mean_discount = s.discount_a / (s.discount_a + s.discount_b)
    product_bid = target * product_cvr * price / mean_discount
    start_bid = np.clip(np.round(product_bid[product] * rng.lognormal(0.0, s.start_spread, len(cvr)), 2), 0.10, 5.0)
    names = [(f"Study P{p + 1:02d} - Manual", f"Group P{p + 1:02d}", f"term {p + 1} {k + 1}", MATCH_TYPES[k % 3])
             for p in range(n_p) for k in range(n_k)]
    return Market(s, seed, price, unit_cost, fees, margin, target, product_cvr, product, cvr, order_value, base_clicks,
                  start_bid.copy(), discount, start_bid, names)
