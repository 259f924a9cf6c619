"""Where the method's gap to the ceiling lies: the method on the weekly loop with one piece at a time
replaced by what a policy that knows the market would use (diagnostics, not a policy a seller can follow).

    python -m study.gap [--seeds 10] [--weeks 12] [--only NAME,...] [--out study/gap.md]

Each variant is sheetbuilder's own plan_workbook on the user's weekly loop (study/weekly_loop.py) with some
of the Bids sheet's reference computations swapped for the duration of a plan (the Bids table's Final bids are
what the study reads, and they come from the references):

- ``waste at break-even``: the waste probability measured against the break-even ACoS (the product's
  pre-ad margin: a click that earns less than it costs) instead of the aim;
- ``true CVR``: the posterior mean CVR replaced by the keyword's true rate (0 for a never-converting one,
  whose value bid is then 0) and the waste probability by 1 or 0 (the truth); the rules as they are;
- ``oracle inputs``: also the true order value and CPC-to-bid ratio, and the rules without their data
  guards (no holds for lack of clicks or orders: every keyword steps toward its value bid);
- ``no data guards``: the rules without their holds for lack of clicks or orders (no clicks, exploring, not
  enough data, no orders yet: not raised) and without the zero-order cut: every keyword steps toward its
  posterior value bid, and the waste cut applies as it is;
- ``no step caps``: max_bid_raise 5 and max_bid_cut 0.95 (settings);
- ``steps up to x2 and /2``: max_bid_raise 1.0 and max_bid_cut 0.5 (settings);
- ``ceiling's aim``: click_elasticity 0.7, the market's own (settings);
- ``history: ...``: the rule's branch for a keyword with no orders yet read in another order (HISTORY_RULES: the
  cut on evidence before the minimum-clicks hold or before the exploration allowance, with or without the
  minimum-clicks hold and the zero-order cut). "evidence before allowance" is what Bids now does.
- ``true prior``: the product's prior and never-converting share replaced by the market's generating ones
  (Beta(c s, (1 - c) s) with c the product's CVR and s the concentration, and the dead share): the posterior
  (w, the posterior mean, the waste probability) is then the exact Bayes posterior of each keyword's history.
  With ``oracle inputs, no caps, e 0.7`` it is the myopic Bayes bid, e / (1 + e) x margin x posterior mean CVR
  x order value / discount: the best a policy that bids on a posterior mean can do in this market;
- ``optimistic quantile L`` (Bayes-UCB; Kaufmann, Cappe & Garivier 2012, after Auer, Cesa-Bianchi & Fischer
  2002): the value bid on w x the L-quantile of the keyword's converting Beta posterior instead of its mean (the
  bonus vanishes as the history pins the rate);
- ``Thompson sampling`` (Thompson 1933; Agrawal & Goyal 2012): the value bid on one draw from the posterior
  (converts with probability w, then a Beta(a, b) draw; else a rate of zero), seeded by market, keyword, week;
- ``caps lifted when sure (cv X)``: the step caps lifted (NO_CAPS) for a keyword whose posterior CVR has a
  coefficient of variation (sd / mean, the zero-inflated posterior) at or below X and whose history alone pins
  it as well (at least 1 / X^2 orders: a tight fitted prior alone does not count); the method's caps elsewhere;
- ``first week to value bid``: the first build (no previous workbook) moves every bid straight to its value
  bid, no caps, rows held as exploring or "no orders yet: not raised" included when their value bid is lower;
- ``myopic Bayes ... (numpy)``: :class:`BayesBid`, a policy outside the library (fast: no workbook is planned)
  that knows each product's true prior, every keyword's order value and discount and the market's elasticity,
  and bids the ceiling's bid at the keyword's exact posterior mean CVR (the bound of a myopic posterior-mean
  method), or at an optimistic quantile, or a posterior draw, or with the method's x2 and /2 steps.

``--without-baseline`` leaves the method out (its runs are deterministic: join the run to one that has it with
``--merge --side-by-side`` on the same seeds); the tables then pair every row with the first one.

Each row is measured against the manual rule and the ceiling on the same markets (paired by seed), as in
study/run_study.py.
"""
from __future__ import annotations

import argparse
import contextlib
import datetime as dt
import sys
from dataclasses import dataclass, field, replace
from pathlib import Path

import numpy as np
import pandas as pd
from scipy.special import betaincinv

from sheetbuilder.sheets import bids as bids_module
from sheetbuilder.sheets.pooled import zero_chance

from .market import EXTRA_SCENARIOS, SCENARIOS, Market
from .measures import MEASURES
from .policies import ceiling, ceiling_aim, manual_rule
from .run_study import CEILING, MANUAL, _interval, _share_text, ceiling_share, run_policies
from .weekly_loop import WeeklyMethod

NO_CAPS = {"max_bid_raise": 5.0, "max_bid_cut": 0.95}


def _keyword_index(df: pd.DataFrame, market: Market) -> np.ndarray:
    """Each Bids row's keyword number in the market."""
    where = {name: i for i, name in enumerate(market.names)}
    return np.array([where[key] for key in zip(df["campaign"], df["ad_group"], df["target"], df["match_type"])])


@dataclass
class Swaps:
    """Which Bids references a variant swaps (see the module docstring)."""

    waste_at: str = "aim"  # or "break-even"
    true_cvr: bool = False
    oracle: bool = False  # true order value and ratio, rules without data guards
    no_guards: bool = False  # the rules without their data guards (posterior values as they are)
    history: str = ""  # a history-aware rule order (see HISTORY_RULES), or "" for the library's
    true_prior: bool = False  # the market's generating prior and never-converting share (exact Bayes posterior)
    quantile: float = 0.0  # bid on this quantile of the converting posterior (x w) instead of the mean; 0: mean
    thompson: bool = False  # bid on one posterior draw
    sure_cv: float = 0.0  # lift the step caps where the posterior CVR's sd / mean is at or below this; 0: never
    first_uncapped: bool = False  # the first build moves straight to the value bid


@dataclass
class GapMethod(WeeklyMethod):
    """The method on the weekly loop with some Bids references swapped while it plans."""

    swaps: Swaps = field(default_factory=Swaps)
    market: Market | None = field(default=None, repr=False)
    week: int = 0
    first: bool = False

    def __call__(self, market, window):
        self.market, self.week, self.first = market, window.week, self.stored is None
        with self._swapped():
            return super().__call__(market, window)

    def _true_prior(self, df: pd.DataFrame) -> tuple[np.ndarray, np.ndarray, float]:
        """The market's generating prior per row: (alpha, beta, never-converting share)."""
        m = self.market
        c = m.product_cvr[m.product[_keyword_index(df, m)]]
        s = m.scenario.cvr_concentration
        return c * s, (1 - c) * s, m.scenario.dead_share

    def _fit(self, key: str):
        """The reference of fit_a, fit_b, fit_pi or w: the library's value, or the truth's with true_prior."""
        def reference(df, ctx):
            if not self.swaps.true_prior:
                return df[key]
            alpha, beta, pi = self._true_prior(df)
            if key == "w":
                p0 = zero_chance(alpha, beta, df["h_clicks"].to_numpy(dtype=float))
                w = np.where(df["h_orders"] > 0, 1.0, (1 - pi) * p0 / (pi + (1 - pi) * p0))
                return pd.Series(w, index=df.index)
            return pd.Series({"fit_a": alpha, "fit_b": beta, "fit_pi": np.full(len(df), pi)}[key], index=df.index)
        return reference

    def _shapes(self, df, ctx) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """The converting posterior's shapes (a, b) and w per row."""
        a, b = bids_module._prior(df, ctx)
        return ((a + df["h_orders"]).to_numpy(dtype=float), (b + df["h_clicks"] - df["h_orders"]).to_numpy(dtype=float),
                df["w"].to_numpy(dtype=float))

    # The swapped references (signature of ColumnDef.reference: frame so far, BidsContext).
    def _truth(self, df: pd.DataFrame) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
        m = self.market
        i = _keyword_index(df, m)
        return m.cvr[i], m.order_value[i], m.discount[i], m.margin[m.product[i]]

    def _post_cvr(self, df, ctx):
        if self.swaps.true_cvr:
            return pd.Series(self._truth(df)[0], index=df.index)
        if not (self.swaps.quantile or self.swaps.thompson):
            return bids_module._post_cvr(df, ctx)
        a, b, w = self._shapes(df, ctx)
        ok = (a > 0) & (b > 0)
        a, b = np.where(ok, a, 1.0), np.where(ok, b, 1.0)
        if self.swaps.quantile:
            out = w * betaincinv(a, b, self.swaps.quantile)
        else:
            out = np.array([_draw(self.market.seed, i, self.week, wi, ai, bi)
                            for i, ai, bi, wi in zip(_keyword_index(df, self.market), a, b, w)])
        return pd.Series(np.where(ok, out, np.nan), index=df.index)

    def _order_value(self, df, ctx):
        return pd.Series(self._truth(df)[1], index=df.index) if self.swaps.oracle else bids_module._order_value(df, ctx)

    def _ratio(self, df):
        return pd.Series(self._truth(df)[2], index=df.index) if self.swaps.oracle else df["ratio"]

    def _value_bid(self, df, ctx):
        if not (self.swaps.true_cvr or self.swaps.oracle):
            return bids_module._value_bid(df, ctx)
        return df["post_cvr"] * self._order_value(df, ctx) * df["target_acos"] / self._ratio(df)

    def _yardstick(self, df) -> pd.Series:
        return pd.Series(self._truth(df)[3], index=df.index) if self.swaps.waste_at == "break-even" \
            else df["target_acos"]

    def _p_waste(self, df, ctx):
        if self.swaps.true_cvr:
            worth = df["post_cvr"] * self._order_value(df, ctx) * self._yardstick(df)
            return (worth < self._ratio(df) * df["bid"]).astype(float)
        return bids_module.waste_at(df, ctx, self._yardstick(df))

    def _loose(self, df, ctx) -> np.ndarray:
        """The rows whose step caps are lifted (sure_cv, first_uncapped)."""
        if self.swaps.first_uncapped and self.first:
            return np.ones(len(df), dtype=bool)
        if not self.swaps.sure_cv:
            return np.zeros(len(df), dtype=bool)
        a, b, w = self._shapes(df, ctx)
        with np.errstate(divide="ignore", invalid="ignore"):
            mean = a / (a + b)
            var = w * (mean ** 2 + mean * (1 - mean) / (a + b + 1)) - (w * mean) ** 2
            cv = np.sqrt(np.maximum(var, 0.0)) / (w * mean)
        pinned = df["h_orders"].to_numpy(dtype=float) >= 1 / self.swaps.sure_cv ** 2  # the history alone pins it
        return (np.nan_to_num(cv, nan=np.inf) <= self.swaps.sure_cv) & pinned

    def _per_row_caps(self, fn):
        """fn(df, ctx) with the step caps lifted on the rows _loose picks."""
        def reference(df, ctx):
            loose = self._loose(df, ctx)
            out = fn(df, ctx)
            if loose.any():
                wide = replace(ctx, settings=replace(ctx.settings, **NO_CAPS))
                out = pd.Series(np.where(loose, fn(df, wide), out), index=df.index)
            return out
        return reference

    def _rule(self, df, ctx):
        rule = self._rule_as_swapped(df, ctx)
        if self.swaps.first_uncapped and self.first:  # the first build: held rows above their value bid go to it
            rule = rule.where(~(rule.isin([5, 13]) & (df["value_bid"] < df["bid"])), 7.0)
        return rule

    def _rule_as_swapped(self, df, ctx):
        if self.swaps.history:
            return history_rule(df, ctx, self.swaps.history)
        if not (self.swaps.oracle or self.swaps.no_guards):
            return bids_module._rule(df, ctx)
        s, value, bid = ctx.settings, df["value_bid"], df["bid"]
        evidence = (df["p_waste"] >= s.waste_confidence) & (value < bid)
        out = np.select([value.isna(), evidence, value < bid * (1 - s.max_bid_cut), value < bid,
                         value > bid * (1 + s.max_bid_raise), value > bid], [4, 12, 10, 7, 9, 6], 8)
        return pd.Series(out, index=df.index, dtype=float)

    @contextlib.contextmanager
    def _swapped(self):
        swaps = {"post_cvr": self._post_cvr, "value_bid": self._value_bid, "p_waste": self._p_waste,
                 "rule": self._per_row_caps(self._rule), "proposed": self._per_row_caps(bids_module._proposed),
                 **{key: self._fit(key) for key in ("fit_a", "fit_b", "fit_pi", "w")}}
        saved = list(bids_module.DEFS)
        bids_module.DEFS[:] = [replace(d, reference=swaps[d.key]) if d.key in swaps else d for d in saved]
        try:
            yield
        finally:
            bids_module.DEFS[:] = saved


# History-aware rule orders tried for the zero-order keywords (keywords with orders keep the library's rules):
# "evidence first": the waste cut applies before the minimum-clicks hold (only the exploration allowance and
#   no clicks at all still hold before it);
# "no minimum clicks": also no hold for fewer than min_clicks history clicks: past the allowance, a zero-order
#   keyword steps toward its value bid (down) or is held where that is above its bid (no orders yet: not raised);
# "no zero-order cut": also no binomial zero-order cut: the posterior (the waste cut, the value bid) decides;
# "evidence before allowance": "no minimum clicks" with the waste cut also before the exploration allowance;
# "allowance steps down": "no minimum clicks", and within the allowance a keyword whose value bid (from its
#   posterior, mostly the prior) lies below its bid steps toward it like any other; the allowance holds it only
#   from the waste cut and the zero-order cut, and from a raise.
HISTORY_RULES = {"evidence first": (True, False, False, False, False),
                 "no minimum clicks": (True, True, False, False, False),
                 "no zero-order cut": (True, True, True, False, False),
                 "evidence before allowance": (True, True, False, True, False),
                 "allowance steps down": (True, True, False, False, True)}


def history_rule(df: pd.DataFrame, ctx, name: str) -> pd.Series:
    """The Bids rule with the zero-order branch reordered as HISTORY_RULES[name] says."""
    evidence_first, no_min, no_zero_cut, before_allowance, steps_down = HISTORY_RULES[name]
    s = ctx.settings
    base = bids_module._rule(df, ctx)
    allowance = s.exploration_orders * df["target_acos"] * bids_module._order_value(df, ctx)
    out = []
    for rule, clicks, orders, spend, allow, n, value, bid, waste in zip(
            base, df["h_clicks"], df["h_orders"], df["h_spend"], allowance, df["n_zero"], df["value_bid"],
            df["bid"], df["p_waste"]):
        if clicks == 0 or orders > 0:
            out.append(rule)
            continue
        evidence = not pd.isna(waste) and waste >= s.waste_confidence and value < bid
        lower = 10 if not pd.isna(value) and value < bid * (1 - s.max_bid_cut) else 7
        if before_allowance and evidence:
            rule = 12
        elif spend < allow:
            rule = lower if steps_down and not pd.isna(value) and value < bid else 13
        elif evidence_first and evidence:
            rule = 12
        elif clicks < s.min_clicks and not no_min:
            rule = 3
        elif evidence:
            rule = 12
        elif not no_zero_cut and not pd.isna(n) and clicks >= n:
            rule = 2
        elif pd.isna(value):
            rule = 4
        else:
            rule = lower if value < bid else 5
        out.append(rule)
    return pd.Series(out, index=df.index, dtype=float)


@dataclass
class BayesBid:
    """A numpy policy outside the library that knows each product's true prior and every keyword's true order
    value and discount, but not the keywords' rates: each week every keyword at e / (1 + e) x margin x CVR x order
    value / discount (the ceiling's bid, study/policies.py) with CVR its exact posterior mean from its whole history
    (the myopic Bayes bid), or an optimistic quantile of it, or a posterior draw. A fast check of the library-based
    "true prior, oracle inputs, no caps, e 0.7" and a cheap screen of exploration against the myopic bid."""

    quantile: float = 0.0  # w x this quantile of the converting Beta posterior; 0: the posterior mean
    thompson: bool = False
    capped: bool = False  # steps of at most x2 and /2 (the method's max_bid_raise 1.00 and max_bid_cut 0.50)
    sure_cv: float = 0.0  # with capped: no caps where the posterior's sd / mean <= sure_cv and orders >= 1 / sure_cv^2
    window_weeks = 1
    clicks: np.ndarray | None = field(default=None, repr=False)
    orders: np.ndarray | None = field(default=None, repr=False)

    def start(self, market: Market) -> None:
        self.clicks, self.orders = np.zeros(market.size), np.zeros(market.size)

    def __call__(self, market: Market, window) -> tuple[np.ndarray, np.ndarray]:
        self.clicks, self.orders = self.clicks + window.clicks, self.orders + window.orders
        s, c = market.scenario, market.product_cvr[market.product]
        alpha, beta, pi = c * s.cvr_concentration, (1 - c) * s.cvr_concentration, s.dead_share
        p0 = zero_chance(alpha, beta, self.clicks)
        w = np.where(self.orders > 0, 1.0, (1 - pi) * p0 / (pi + (1 - pi) * p0))
        a, b = alpha + self.orders, beta + self.clicks - self.orders
        if self.thompson:
            cvr = np.array([_draw(market.seed, i, window.week, w[i], a[i], b[i]) for i in range(market.size)])
        elif self.quantile:
            cvr = w * betaincinv(a, b, self.quantile)
        else:
            cvr = w * a / (a + b)
        e, value = s.elasticity, market.margin[market.product] * market.order_value
        bids = e * value * cvr / ((1 + e) * market.discount)
        if self.capped:
            stepped = np.clip(bids, window.bids / 2, window.bids * 2)
            if self.sure_cv:
                mean = a / (a + b)
                sd = np.sqrt(w * (mean ** 2 + mean * (1 - mean) / (a + b + 1)) - (w * mean) ** 2)
                sure = (sd <= self.sure_cv * w * mean) & (self.orders >= 1 / self.sure_cv ** 2)
                stepped = np.where(sure, bids, stepped)
            bids = stepped
        return np.clip(np.round(bids, 2), 0.10, 5.00), ceiling_aim(market)  # the default floor and ceiling


def _draw(seed: int, keyword: int, week: int, w: float, a: float, b: float) -> float:
    """One draw from a keyword's zero-inflated posterior (converts with probability w, then Beta(a, b)); a dead draw
    is a rate just above 0 (a value bid near 0, not a blank), seeded by market, keyword and week."""
    rng = np.random.Generator(np.random.PCG64(np.random.SeedSequence([seed, 7, int(keyword), week])))
    return max(1e-9, rng.beta(a, b)) if rng.uniform() < w else 1e-9


def variants() -> dict[str, GapMethod | BayesBid]:
    """The diagnostic variants, in the order the table shows them."""
    return {
        "method (defaults)": GapMethod(),
        "waste at break-even": GapMethod(swaps=Swaps(waste_at="break-even")),
        "no step caps": GapMethod(dict(NO_CAPS)),
        "steps up to x2 and /2": GapMethod({"max_bid_raise": 1.0, "max_bid_cut": 0.5}),
        "no data guards": GapMethod(swaps=Swaps(no_guards=True)),
        **{f"history: {name}": GapMethod(swaps=Swaps(history=name)) for name in HISTORY_RULES},
        "waste at break-even, no data guards": GapMethod(swaps=Swaps(waste_at="break-even", no_guards=True)),
        "ceiling's aim (e 0.7)": GapMethod({"click_elasticity": 0.7}),
        "true CVR": GapMethod(swaps=Swaps(true_cvr=True)),
        "oracle inputs": GapMethod(swaps=Swaps(waste_at="break-even", true_cvr=True, oracle=True)),
        "oracle inputs, no caps": GapMethod(dict(NO_CAPS), swaps=Swaps(waste_at="break-even", true_cvr=True,
                                                                        oracle=True)),
        "oracle inputs, no caps, e 0.7": GapMethod({**NO_CAPS, "click_elasticity": 0.7},
                                                   swaps=Swaps(waste_at="break-even", true_cvr=True, oracle=True)),
        "true prior, no caps": GapMethod(dict(NO_CAPS), swaps=Swaps(true_prior=True)),
        "true prior, oracle inputs, no caps, e 0.7": GapMethod(
            {**NO_CAPS, "click_elasticity": 0.7}, swaps=Swaps(waste_at="break-even", true_prior=True, oracle=True)),
        **{f"optimistic quantile {q}": GapMethod(swaps=Swaps(quantile=q)) for q in (0.7, 0.9)},
        "Thompson sampling": GapMethod(swaps=Swaps(thompson=True)),
        **{f"caps lifted when sure (cv {cv})": GapMethod(swaps=Swaps(sure_cv=cv)) for cv in (0.25, 0.35, 0.5)},
        "first week to value bid": GapMethod(swaps=Swaps(first_uncapped=True)),
        "myopic Bayes bid (numpy)": BayesBid(),
        **{f"myopic Bayes, quantile {q} (numpy)": BayesBid(quantile=q) for q in (0.6, 0.7, 0.8, 0.9)},
        "myopic Bayes, Thompson (numpy)": BayesBid(thompson=True),
        "myopic Bayes, steps x2 and /2 (numpy)": BayesBid(capped=True),
        "myopic Bayes, steps x2 and /2 lifted when sure (cv 0.35) (numpy)": BayesBid(capped=True, sure_cv=0.35),
    }


def _per_variant(results: dict, names: list[str], cells) -> list[str]:
    """One Markdown row per scenario and variant; cells(by_policy, name, base) gives the cells after the names (base:
    the method with its defaults, None on its own row)."""
    return [f"| {scenario} | {name} | " + " | ".join(cells(by_policy, name, None if name == names[0] else names[0]))
            + " |" for scenario, by_policy in results.items() for name in names]


def _base(names: list[str]) -> str:
    """The row the others are paired against (the first)."""
    return "method defaults" if names[0] == "method (defaults)" else names[0]


def _paired(by_policy: dict, name: str, base: str | None, key: str) -> str:
    """name's mean paired difference from base in one measure and its 95% interval ("" without a base)."""
    j = MEASURES.index(key)
    return "" if base is None else _interval(by_policy[name][:, j] - by_policy[base][:, j], key)


def table(results: dict, names: list[str]) -> list[str]:
    """Per scenario and variant: share of the ceiling's gain, in band of the aim at week 8, never-converting spend,
    and the profit difference against the method with its defaults (paired, 95% interval)."""
    j_aim, j_dead = (MEASURES.index(k) for k in ("in_aim_8", "dead_spend"))

    def cells(by_policy, name, base):
        values = by_policy[name]
        return [_share_text(ceiling_share(by_policy, name)), f"{values[:, j_aim].mean() * 100:.1f}%",
                f"{values[:, j_dead].mean():,.0f} ({by_policy[MANUAL][:, j_dead].mean():,.0f})",
                _paired(by_policy, name, base, "profit")]
    return ["| scenario | variant | share of ceiling's gain [95% CI] | in band of aim, wk 8 | never-converting spend "
            f"(manual rule) | profit - {_base(names)} [95% CI] |", "| --- | --- | ---: | ---: | ---: | ---: |"] + \
        _per_variant(results, names, cells)


def changes_table(results: dict, names: list[str]) -> list[str]:
    """Per scenario and variant, paired against the method with its defaults (95% intervals): the never-converting
    spend, the same against the manual rule, and the keywords in band of the aim at week 8 (points)."""
    def cells(by_policy, name, base):
        return [_paired(by_policy, name, base, "dead_spend"), _paired(by_policy, name, MANUAL, "dead_spend"),
                _paired(by_policy, name, base, "in_aim_8")]
    return ["| scenario | variant | never-converting spend - %s [95%% CI] | never-converting spend - "
            "manual rule [95%% CI] | in band of aim, wk 8 - %s [95%% CI] |" % (_base(names), _base(names)),
            "| --- | --- | ---: | ---: | ---: |"] + _per_variant(results, names, cells)


def merged(parts: list[dict], side_by_side: bool) -> dict:
    """Runs saved by earlier runs joined, scenario by scenario (a scenario from the parts that ran it, in their order).

    side_by_side: the parts hold different variants of the same markets: the variants are joined, over the seeds all
    the parts have (each part's first seeds: runs that start at the same seed), and the policies they share must agree
    seed by seed. Otherwise the parts hold further seeds of the same variants: the seeds are joined, for the policies
    every part ran.
    """
    results = {}
    for s in dict.fromkeys(s for part in parts for s in part):
        having = [part[s] for part in parts if s in part]
        if side_by_side:
            n = min(len(v) for by_policy in having for v in by_policy.values())
            results[s] = {}
            for by_policy in having:
                for p, v in by_policy.items():
                    if p in results[s] and not np.allclose(results[s][p], v[:n]):
                        raise SystemExit(f"{s}: {p} differs between the runs")
                    results[s].setdefault(p, v[:n])
        else:
            results[s] = {p: np.concatenate([by_policy[p] for by_policy in having]) for p in having[0]
                          if all(p in by_policy for by_policy in having)}
    return results


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(prog="python -m study.gap", description=__doc__.splitlines()[0])
    parser.add_argument("--seeds", type=int, default=10)
    parser.add_argument("--weeks", type=int, default=12)
    parser.add_argument("--only", default="", help="variant names separated by ; (default: all)")
    parser.add_argument("--scenarios", default="", help="comma-separated scenario names (default: all five)")
    parser.add_argument("--first-seed", type=int, default=1, help="the first seed (seeds run from it on)")
    parser.add_argument("--merge", type=Path, nargs="*", default=[], metavar="NPY",
                        help="instead of running, join the per-seed results saved by earlier runs (.npy) and "
                             "write their table")
    parser.add_argument("--side-by-side", action="store_true",
                        help="with --merge: the runs hold the same markets (first seed) and different variants; join "
                             "the variants over the seeds every run has (the policies they share must agree, seed by "
                             "seed); runs of different scenarios are joined either way")
    parser.add_argument("--without-baseline", action="store_true",
                        help="leave out the method with its defaults (to be joined with --merge --side-by-side to a "
                             "run that has it)")
    parser.add_argument("--out", type=Path, default=Path(__file__).with_name("gap_results.md"))
    args = parser.parse_args(argv)
    if args.merge:
        results = merged([np.load(path, allow_pickle=True).item() for path in args.merge], args.side_by_side)
        names = [n for n in next(iter(results.values())) if n not in (MANUAL, CEILING)]
        seeds = len(next(iter(next(iter(results.values())).values())))
        runs = ", ".join(str(p) for p in args.merge)
        lines = [f"{seeds} seeds per scenario (the first seeds of each run), joined from {runs}", ""]
        lines += table(results, names) + [""] + changes_table(results, names)
        args.out.write_text("\n".join(lines) + "\n", encoding="utf-8")
        np.save(args.out.with_suffix(".npy"), results, allow_pickle=True)
        print("\n".join(lines))
        return 0
    every = variants()
    names = [n for n in every if not args.only or n in args.only.split(";")
             or (n == "method (defaults)" and not args.without_baseline)]
    scenarios = {**SCENARIOS, **EXTRA_SCENARIOS}
    if args.scenarios:
        scenarios = {k: v for k, v in scenarios.items() if k in args.scenarios.split(",")}
    policies = {**{n: every[n] for n in names}, MANUAL: manual_rule, CEILING: ceiling}

    def log(text: str) -> None:
        print(f"{dt.datetime.now():%H:%M:%S} {text}", file=sys.stderr, flush=True)

    seeds = range(args.first_seed, args.first_seed + args.seeds)
    results = run_policies(policies, seeds, args.weeks, scenarios, log)
    lines = [f"`python -m study.gap --seeds {args.seeds} --first-seed {args.first_seed} --weeks {args.weeks}`", ""]
    lines += table(results, names) + [""] + changes_table(results, names)
    args.out.write_text("\n".join(lines) + "\n", encoding="utf-8")
    np.save(args.out.with_suffix(".npy"), {s: {p: v for p, v in r.items()} for s, r in results.items()},
            allow_pickle=True)
    print("\n".join(lines))
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
