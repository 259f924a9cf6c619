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
- ``ceiling's aim``: click_elasticity 0.7, the market's own (settings).

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


def variants() -> dict[str, GapMethod]:
    """The diagnostic variants, in the order the table shows them."""
    return {
        "method (defaults)": GapMethod(),
        "waste at break-even": GapMethod(swaps=Swaps(waste_at="break-even")),
        "no step caps": GapMethod(dict(NO_CAPS)),
        "steps up to x2 and /2": GapMethod({"max_bid_raise": 1.0, "max_bid_cut": 0.5}),
        "no data guards": GapMethod(swaps=Swaps(no_guards=True)),
        "waste at break-even, no data guards": GapMethod(swaps=Swaps(waste_at="break-even", no_guards=True)),
        "ceiling's aim (e 0.7)": GapMethod({"click_elasticity": 0.7}),
        "true CVR": GapMethod(swaps=Swaps(true_cvr=True)),
        "oracle inputs": GapMethod(swaps=Swaps(waste_at="break-even", true_cvr=True, oracle=True)),
        "oracle inputs, no caps": GapMethod(dict(NO_CAPS), swaps=Swaps(waste_at="break-even", true_cvr=True,
                                                                        oracle=True)),
        "oracle inputs, no caps, e 0.7": GapMethod({**NO_CAPS, "click_elasticity": 0.7},
                                                   swaps=Swaps(waste_at="break-even", true_cvr=True, oracle=True)),
    }


def table(results: dict, names: list[str]) -> list[str]:
    """Per scenario and variant: share of the ceiling's gain, in band of the aim at week 8, never-converting spend,
    and the profit difference against the method with its defaults (paired, 95% interval)."""
    j_profit, j_aim, j_dead = (MEASURES.index(k) for k in ("profit", "in_aim_8", "dead_spend"))
    lines = ["| scenario | variant | share of ceiling's gain [95% CI] | in band of aim, wk 8 | never-converting spend "
             "(manual rule) | profit - method defaults [95% CI] |", "| --- | --- | ---: | ---: | ---: | ---: |"]
    for scenario, by_policy in results.items():
        base = by_policy[names[0]]
        for name in names:
            values = by_policy[name]
            dead = f"{values[:, j_dead].mean():,.0f} ({by_policy[MANUAL][:, j_dead].mean():,.0f})"
            diff = "" if name == names[0] else _interval(values[:, j_profit] - base[:, j_profit], "profit")
            lines.append(f"| {scenario} | {name} | {_share_text(ceiling_share(by_policy, name))} | "
                         f"{values[:, j_aim].mean() * 100:.1f}% | {dead} | {diff} |")
    return lines


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
    parser.add_argument("--out", type=Path, default=Path(__file__).with_name("gap_results.md"))
    args = parser.parse_args(argv)
    if args.merge:
        parts = [np.load(path, allow_pickle=True).item() for path in args.merge]
        results = {s: {p: np.concatenate([part[s][p] for part in parts]) for p in parts[0][s]
                       if all(p in part[s] for part in parts)} for s in parts[0]}  # the policies every part ran
        names = [n for n in next(iter(results.values())) if n not in (MANUAL, CEILING)]
        seeds = len(next(iter(next(iter(results.values())).values())))
        lines = [f"{seeds} seeds per scenario, joined from {', '.join(str(p) for p in args.merge)}", ""]
        lines += table(results, names)
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
    lines += table(results, names)
    args.out.write_text("\n".join(lines) + "\n", encoding="utf-8")
    np.save(args.out.with_suffix(".npy"), {s: {p: v for p, v in r.items()} for s, r in results.items()},
            allow_pickle=True)
    print("\n".join(lines))
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
