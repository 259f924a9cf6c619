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

from sheetbuilder.sheets import bids as bids_module

from .market import EXTRA_SCENARIOS, SCENARIOS, Market
from .measures import MEASURES
from .policies import ceiling, manual_rule
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


@dataclass
class GapMethod(WeeklyMethod):
    """The method on the weekly loop with some Bids references swapped while it plans."""

    swaps: Swaps = field(default_factory=Swaps)
    market: Market | None = field(default=None, repr=False)

    def __call__(self, market, window):
        self.market = market
        with self._swapped():
            return super().__call__(market, window)

    # The swapped references (signature of ColumnDef.reference: frame so far, BidsContext).
    def _truth(self, df: pd.DataFrame) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
        m = self.market
        i = _keyword_index(df, m)
        return m.cvr[i], m.order_value[i], m.discount[i], m.margin[m.product[i]]

    def _post_cvr(self, df, ctx):
        return pd.Series(self._truth(df)[0], index=df.index) if self.swaps.true_cvr else \
            bids_module._post_cvr(df, ctx)

    def _order_value(self, df, ctx):
        return pd.Series(self._truth(df)[1], index=df.index) if self.swaps.oracle else bids_module._order_value(df, ctx)

    def _ratio(self, df):
        return pd.Series(self._truth(df)[2], index=df.index) if self.swaps.oracle else df["ratio"]

    def _value_bid(self, df, ctx):
        if not self.swaps.true_cvr:
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

    def _rule(self, df, ctx):
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
                 "rule": self._rule}
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


def variants() -> dict[str, GapMethod]:
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
    }


def _per_variant(results: dict, names: list[str], cells) -> list[str]:
    """One Markdown row per scenario and variant; cells(by_policy, name, base) gives the cells after the names (base:
    the method with its defaults, None on its own row)."""
    return [f"| {scenario} | {name} | " + " | ".join(cells(by_policy, name, None if name == names[0] else names[0]))
            + " |" for scenario, by_policy in results.items() for name in names]


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
            "(manual rule) | profit - method defaults [95% CI] |", "| --- | --- | ---: | ---: | ---: | ---: |"] + \
        _per_variant(results, names, cells)


def changes_table(results: dict, names: list[str]) -> list[str]:
    """Per scenario and variant, paired against the method with its defaults (95% intervals): the never-converting
    spend, the same against the manual rule, and the keywords in band of the aim at week 8 (points)."""
    def cells(by_policy, name, base):
        return [_paired(by_policy, name, base, "dead_spend"), _paired(by_policy, name, MANUAL, "dead_spend"),
                _paired(by_policy, name, base, "in_aim_8")]
    return ["| scenario | variant | never-converting spend - method defaults [95% CI] | never-converting spend - "
            "manual rule [95% CI] | in band of aim, wk 8 - method defaults [95% CI] |",
            "| --- | --- | ---: | ---: | ---: |"] + _per_variant(results, names, cells)


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
                        help="with --merge: the runs hold the same seeds and different variants; join the variants "
                             "(the policies they share must agree, seed by seed)")
    parser.add_argument("--out", type=Path, default=Path(__file__).with_name("gap_results.md"))
    args = parser.parse_args(argv)
    if args.merge:
        parts = [np.load(path, allow_pickle=True).item() for path in args.merge]
        if args.side_by_side:
            results = {s: {} for s in parts[0]}
            for part in parts:
                for s, by_policy in part.items():
                    for p, v in by_policy.items():
                        if p in results[s] and not np.allclose(results[s][p], v):
                            raise SystemExit(f"{s}: {p} differs between the runs")
                        results[s].setdefault(p, v)
        else:
            results = {s: {p: np.concatenate([part[s][p] for part in parts]) for p in parts[0][s]
                           if all(p in part[s] for part in parts)} for s in parts[0]}  # the policies every part ran
        names = [n for n in next(iter(results.values())) if n not in (MANUAL, CEILING)]
        seeds = len(next(iter(next(iter(results.values())).values())))
        lines = [f"{seeds} seeds per scenario, joined from {', '.join(str(p) for p in args.merge)}", ""]
        lines += table(results, names) + [""] + changes_table(results, names)
        args.out.write_text("\n".join(lines) + "\n", encoding="utf-8")
        print("\n".join(lines))
        return 0
    every = variants()
    names = [n for n in every if not args.only or n in args.only.split(";") or n == "method (defaults)"]
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
