"""The study: every policy on the same simulated accounts, paired by seed; writes a Markdown table
(study/results.md by default) with a table of which of issue 23's aims are met.

    python -m study.run_study [--seeds 20] [--weeks 12] [--variant-seeds 10] [--sweep-seeds 0] [--out study/results.md]

Policies: the method (sheetbuilder's own planning code on the user's weekly loop: one 7-day export
a week and the keyword history carried as ``--previous`` carries it), today's method (the bid
rule as it stood before issue 23, frozen in study/frozen_bids.py, on a rolling four-week report),
the manual rule (common practice, no source), the ceiling (knows every true rate) and hold.
Differences carry 95% paired bootstrap intervals (seeds resampled).
"""
from __future__ import annotations

import argparse
import datetime as dt
import sys
from pathlib import Path

import numpy as np

from sheetbuilder.reading.settings import Settings

from .frozen_bids import TodaysMethod
from .market import EXTRA_SCENARIOS, SCENARIOS, VARIANTS, draw_market
from .measures import MEASURES, measure, paired_bootstrap, ratio_bootstrap, simulate
from .policies import ceiling, hold, manual_rule
from .weekly_loop import WeeklyMethod

METHOD, TODAY, MANUAL, CEILING = "method", "today's method", "manual rule", "ceiling"
POLICIES = {
    METHOD: WeeklyMethod(),
    TODAY: TodaysMethod(),
    MANUAL: manual_rule,
    CEILING: ceiling,
    "hold": hold,
}
DIFFS = ((METHOD, MANUAL), (METHOD, TODAY), (TODAY, MANUAL))
LABELS = {"in_band": "in band (seller's target), last week", "in_band_8": "in band (seller's target), week 8",
          "in_aim": "in band (policy's aim), last week", "in_aim_8": "in band (policy's aim), week 8",
          "weeks_to_half": "weeks to half in band (seller's target)",
          "acos_gap": "median ACoS gap from seller's target, points", "profit": "net profit after ads",
          "dead_spend": "spend on never-converting", "bid_change": "mean abs bid change %/week"}
SWEEP = {
    "prior_clicks": (0, 5, 10, 20, 40),
    "max_bid_cut": (0.2, 0.3, 0.5),
    "max_bid_raise": (0.1, 0.2, 0.4),
    "zero_order_confidence": (0.8, 0.9, 0.95),
}


def run_policies(policies: dict, seeds: range, weeks: int, scenarios: dict = SCENARIOS,
                 log=None) -> dict[str, dict[str, np.ndarray]]:
    """Measures of every policy on every scenario and seed: {scenario: {policy: array (seeds x measures)}}."""
    out: dict[str, dict[str, np.ndarray]] = {}
    for name, scenario in scenarios.items():
        rows: dict[str, list] = {p: [] for p in policies}
        for seed in seeds:
            market = draw_market(scenario, seed)
            for label, policy in policies.items():
                found = measure(market, simulate(market, policy, weeks))
                rows[label].append([found[m] for m in MEASURES])
            if log:
                log(f"{name}: seed {seed} done")
        out[name] = {p: np.array(v) for p, v in rows.items()}
    return out


def _fmt(value: float, measure_key: str) -> str:
    """A measure's value as the table shows it."""
    if measure_key.startswith("in_"):
        return f"{value * 100:.1f}%"
    if measure_key in ("profit", "dead_spend"):
        return f"{value:,.0f}"
    return f"{value:.1f}"


def _interval(diffs: np.ndarray, measure_key: str) -> str:
    """Mean difference and its 95% paired bootstrap interval, marked when the interval excludes zero."""
    mean, low, high = paired_bootstrap(diffs)
    scale = 100 if measure_key.startswith("in_") else 1
    unit = " pts" if measure_key.startswith("in_") else ""
    mark = " *" if len(diffs) > 1 and (low > 0 or high < 0) else ""
    return f"{mean * scale:+,.1f} [{low * scale:+,.1f}, {high * scale:+,.1f}]{unit}{mark}"


def ceiling_share(by_policy: dict[str, np.ndarray], policy: str) -> tuple[float, float, float]:
    """policy's net profit gain over the manual rule as a share of the ceiling's, with its 95% bootstrap interval."""
    j = MEASURES.index("profit")
    base = by_policy[MANUAL][:, j]
    return ratio_bootstrap(by_policy[policy][:, j] - base, by_policy[CEILING][:, j] - base)


def _share_text(share: tuple[float, float, float]) -> str:
    mean, low, high = share
    return f"{mean * 100:.0f}% [{low * 100:.0f}%, {high * 100:.0f}%]"


def comparison_table(results: dict[str, dict[str, np.ndarray]]) -> list[str]:
    """Markdown: per scenario and measure, each policy's mean and the paired differences of DIFFS."""
    lines = []
    for scenario, by_policy in results.items():
        n = len(by_policy[MANUAL])
        lines += [f"**{scenario}** ({n} seeds)", "",
                  "| measure | " + " | ".join(by_policy) + " | "
                  + " | ".join(f"{a} - {b} [95% CI]" for a, b in DIFFS) + " |",
                  "| --- |" + " ---: |" * (len(by_policy) + len(DIFFS))]
        for j, key in enumerate(MEASURES):
            means = [_fmt(float(np.mean(v[:, j])), key) for v in by_policy.values()]
            diffs = [_interval(by_policy[a][:, j] - by_policy[b][:, j], key) for a, b in DIFFS]
            lines.append(f"| {LABELS[key]} | " + " | ".join(means + diffs) + " |")
        shares = [_share_text(ceiling_share(by_policy, p)) if p not in (MANUAL, CEILING) else
                  ("0%" if p == MANUAL else "100%") for p in by_policy]
        lines.append("| share of the ceiling's profit gain over the manual rule [95% CI] | " + " | ".join(shares)
                     + " |" + " |" * len(DIFFS))
        lines.append("")
    return lines


def summary_table(results: dict[str, dict[str, np.ndarray]]) -> list[str]:
    """Markdown: per scenario, each policy's means of the headline measures (one row per scenario and policy)."""
    keys = ("in_band_8", "in_band", "in_aim_8", "in_aim", "profit", "dead_spend")
    lines = ["| scenario | policy | in band, target, wk 8 | in band, target, last wk | in band, aim, wk 8 | "
             "in band, aim, last wk | net profit | never-converting spend | share of ceiling's gain |",
             "| --- | --- |" + " ---: |" * (len(keys) + 1)]
    for scenario, by_policy in results.items():
        for policy, values in by_policy.items():
            cells = [_fmt(float(np.mean(values[:, MEASURES.index(k)])), k) for k in keys]
            share = "0%" if policy == MANUAL else "100%" if policy == CEILING else \
                _share_text(ceiling_share(by_policy, policy))
            lines.append(f"| {scenario} | {policy} | " + " | ".join(cells + [share]) + " |")
    return lines


GOAL_SHARE, GOAL_IN_AIM = 0.80, 0.60


def _aim_checks(by_policy: dict[str, np.ndarray]) -> list[tuple[bool, str]]:
    """Each of issue 23's aims on one scenario: (met, the evidence as text)."""
    out = []
    for key, better in (("profit", lambda lo, hi: lo > 0), ("dead_spend", lambda lo, hi: hi < 0)):
        j = MEASURES.index(key)
        for other in (MANUAL, TODAY):
            diffs = by_policy[METHOD][:, j] - by_policy[other][:, j]
            _, lo, hi = paired_bootstrap(diffs)
            out.append((len(diffs) > 1 and better(lo, hi), _interval(diffs, key).replace(" *", "")))
    share = ceiling_share(by_policy, METHOD)
    out.append((share[0] >= GOAL_SHARE, _share_text(share)))
    in_aim = float(np.mean(by_policy[METHOD][:, MEASURES.index("in_aim_8")]))
    out.append((in_aim >= GOAL_IN_AIM, f"{in_aim * 100:.1f}%"))
    return out


AIM_TEXTS = ("net profit above the manual rule (95% interval above zero)",
             "net profit above today's method (95% interval above zero)",
             "less spend on never-converting keywords than the manual rule (interval below zero)",
             "less spend on never-converting keywords than today's method (interval below zero)",
             f"at least {GOAL_SHARE:.0%} of the ceiling's profit gain over the manual rule (point estimate)",
             f"at least {GOAL_IN_AIM:.0%} of keywords within 5 points of the method's aim at week 8 (mean)")


def aims(results: dict[str, dict[str, np.ndarray]], required: tuple[str, ...] = tuple(SCENARIOS),
         every: str = "every default scenario") -> list[str]:
    """Issue 23's aims per scenario: met or not met, with the evidence; the last column (headed every): met on
    every scenario of required (the default scenarios) present in results."""
    checks = {name: _aim_checks(by_policy) for name, by_policy in results.items()}
    counted = [name for name in results if name in required]
    lines = ["| aim (the method) | " + " | ".join(results) + f" | {every} |",
             "| --- |" + " :---: |" * (len(results) + 1)]
    for i, text in enumerate(AIM_TEXTS):
        cells = [("met" if checks[name][i][0] else "not met") + f" ({checks[name][i][1]})" for name in results]
        every = "met" if counted and all(checks[name][i][0] for name in counted) else "not met"
        lines.append(f"| {text} | " + " | ".join(cells) + f" | {every} |")
    return lines


def sweep(seeds: range, weeks: int, base: dict, log=None) -> list[str]:
    """One setting at a time around the defaults: profit, waste and volatility against the default, paired."""
    default = Settings()
    lines = ["| setting = value | " + " | ".join(f"{s}: profit diff [95% CI]" for s in SCENARIOS)
             + " | waste diff (mean over scenarios) | bid change diff (mean) |",
             "| --- |" + " ---: |" * (len(SCENARIOS) + 2)]
    verdicts = []
    reference = {s: base[s][METHOD][: len(seeds)] for s in SCENARIOS}
    j_profit, j_dead, j_change = (MEASURES.index(k) for k in ("profit", "dead_spend", "bid_change"))
    for key, values in SWEEP.items():
        better, worse = [], []
        for value in values:
            if value == getattr(default, key):
                continue
            policy = {"variant": WeeklyMethod({key: value})}
            found = run_policies(policy, seeds, weeks, log=log)
            cells, waste, change, up, down = [], [], [], 0, 0
            for s in SCENARIOS:
                diff = found[s]["variant"] - reference[s]
                cells.append(_interval(diff[:, j_profit], "profit"))
                _, lo, hi = paired_bootstrap(diff[:, j_profit])
                up += lo > 0
                down += hi < 0
                waste.append(diff[:, j_dead].mean())
                change.append(diff[:, j_change].mean())
            lines.append(f"| {key} = {value:g} | " + " | ".join(cells)
                         + f" | {np.mean(waste):+,.0f} | {np.mean(change):+.1f} |")
            if up >= 3 and down == 0:
                better.append(value)
            if down:
                worse.append(value)
        current = getattr(default, key)
        if better:
            verdicts.append(f"- `{key}`: {', '.join(f'{v:g}' for v in better)} earned more than the default "
                            f"{current:g} with intervals above zero in at least three scenarios and below in none.")
        else:
            verdicts.append(f"- `{key}`: no value earned clearly more than the default {current:g}"
                            + (f" ({', '.join(f'{v:g}' for v in worse)} earned clearly less in some scenario)."
                               if worse else "."))
    return lines + [""] + verdicts


def confirm(key: str, value: float, seeds: range, weeks: int, log=None) -> list[str]:
    """The method with one setting changed against the defaults on every scenario, every measure, paired."""
    scenarios = {**SCENARIOS, **EXTRA_SCENARIOS}
    found = run_policies({"default": WeeklyMethod(), "variant": WeeklyMethod({key: value})}, seeds, weeks,
                         scenarios, log)
    lines = [f"The method with `{key} = {value:g}` against the defaults, {len(seeds)} seeds per scenario "
             "(variant - default, mean [95% paired bootstrap interval]).", "",
             "| scenario | " + " | ".join(LABELS[m] for m in MEASURES) + " |",
             "| --- |" + " ---: |" * len(MEASURES)]
    for name, by_policy in found.items():
        diff = by_policy["variant"] - by_policy["default"]
        lines.append(f"| {name} | " + " | ".join(_interval(diff[:, j], m) for j, m in enumerate(MEASURES)) + " |")
    return lines


def main(argv: list[str] | None = None) -> int:
    """Run the study and write its Markdown tables."""
    parser = argparse.ArgumentParser(prog="python -m study.run_study", description=__doc__.splitlines()[0])
    parser.add_argument("--seeds", type=int, default=20, help="seeds per scenario for the policy comparison")
    parser.add_argument("--variant-seeds", type=int, default=10, help="seeds per market variant (CVR 2%% and 20%%, "
                        "elasticity 0.3 and 1.0, lagged conversions; 0: no variants)")
    parser.add_argument("--sweep-seeds", type=int, default=0, help="seeds per scenario for a sweep of the method's "
                        "settings one at a time (0: no sweep)")
    parser.add_argument("--weeks", type=int, default=12)
    parser.add_argument("--out", type=Path, default=Path(__file__).with_name("results.md"))
    parser.add_argument("--confirm", metavar="KEY=VALUE", help="instead of the study, compare the method with one "
                        "setting changed against the defaults on every scenario (--seeds seeds)")
    args = parser.parse_args(argv)

    def log(text: str) -> None:
        print(f"{dt.datetime.now():%H:%M:%S} {text}", file=sys.stderr, flush=True)

    if args.confirm:
        key, value = args.confirm.split("=")
        lines = confirm(key.strip(), float(value), range(1, args.seeds + 1), args.weeks, log)
        args.out.write_text("\n".join(lines) + "\n", encoding="utf-8")
        print("\n".join(lines))
        return 0
    results = run_policies(POLICIES, range(1, args.seeds + 1), args.weeks, {**SCENARIOS, **EXTRA_SCENARIOS}, log)
    lines = ["# Simulated accounts: the bid method against the manual rule, today's method and a ceiling", "",
             f"Written by `python -m study.run_study --seeds {args.seeds} --weeks {args.weeks} --variant-seeds "
             f"{args.variant_seeds} --sweep-seeds {args.sweep_seeds}`. The method runs on the user's weekly loop "
             "(one 7-day export a week, the keyword history carried as `build --previous` carries it); today's "
             "method (frozen, study/frozen_bids.py) and the manual rule read a rolling four-week report; the "
             "ceiling bids every keyword at its true profit-maximising bid. Means per policy over seeds; "
             "differences are paired by seed with 95% percentile bootstrap intervals (4,000 resamples of the "
             "seeds); `*` marks an interval that excludes zero. The share of the ceiling's gain is the sum over "
             "seeds of (policy - manual rule) profit over the sum of (ceiling - manual rule), with its bootstrap "
             "interval. In band (seller's target): true ACoS within 5 points of the seller's target ACoS; in band "
             "(policy's aim): within 5 points of the ACoS the policy aims at that week (the method: the target "
             "its Bids sheet shows; the ceiling: e x margin / (1 + e); manual rule, today's method and hold: the "
             f"seller's target). Weeks to half in band is {args.weeks + 1} when never reached (censored).", "",
             "## Which of issue 23's aims are met", ""]
    lines += aims(results) + ["", "## Means per policy", ""] + summary_table(results) + ["", "## Every measure", ""]
    lines += comparison_table(results)
    args.out.write_text("\n".join(lines) + "\n", encoding="utf-8")  # the comparison, before the optional parts
    if args.variant_seeds:
        found = run_policies(POLICIES, range(1, args.variant_seeds + 1), args.weeks, VARIANTS, log)
        lines += ["## Market variants", "",
                  f"Around the middle default (6 products x 10 keywords, 12 clicks a week, 8% CVR, elasticity 0.7), "
                  f"{args.variant_seeds} seeds each; lagged conversions: 30% of orders credited a week late.", ""]
        lines += aims(found, tuple(VARIANTS), "every variant") + [""] + summary_table(found) + [""]
        args.out.write_text("\n".join(lines) + "\n", encoding="utf-8")
    if args.sweep_seeds:
        lines += ["## Settings sweep", "",
                  f"The method with one setting changed, against the method with the defaults, on the first "
                  f"{args.sweep_seeds} seeds of each scenario (profit in currency units; waste and bid change as "
                  "mean differences).", ""]
        lines += sweep(range(1, args.sweep_seeds + 1), args.weeks, results, log=log)
    args.out.write_text("\n".join(lines) + "\n", encoding="utf-8")
    print("\n".join(lines))
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
