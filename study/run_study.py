"""The study: every policy on the same simulated accounts, paired by seed, and a sweep of the
bid method's defaults; writes a Markdown table (study/results.md by default).

    python -m study.run_study [--seeds 16] [--sweep-seeds 5] [--weeks 12] [--out study/results.md]

Policies: the workbook's method (sheetbuilder's own planning code on weekly exports), the
manual rule (common practice, no source), no smoothing (the method with prior_clicks = 0) and
hold. Differences from the manual rule carry 95% paired bootstrap intervals (seeds resampled).
"""
from __future__ import annotations

import argparse
import datetime as dt
import sys
from pathlib import Path

import numpy as np

from sheetbuilder.reading.settings import Settings

from .market import EXTRA_SCENARIOS, SCENARIOS, draw_market
from .measures import MEASURES, measure, paired_bootstrap, simulate
from .policies import WorkbookMethod, hold, manual_rule

POLICIES = {
    "method": WorkbookMethod(),
    "manual rule": manual_rule,
    "no smoothing": WorkbookMethod({"prior_clicks": 0}),
    "hold": hold,
}
LABELS = {"in_band": "in band at the last week", "weeks_to_half": "weeks to half in band",
          "acos_gap": "median ACoS gap, points", "profit": "net profit after ads",
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
    if measure_key == "in_band":
        return f"{value * 100:.1f}%"
    if measure_key in ("profit", "dead_spend"):
        return f"{value:,.0f}"
    return f"{value:.1f}"


def _interval(diffs: np.ndarray, measure_key: str) -> str:
    """Mean difference and its 95% paired bootstrap interval, marked when the interval excludes zero."""
    mean, low, high = paired_bootstrap(diffs)
    scale = 100 if measure_key == "in_band" else 1
    unit = " pts" if measure_key == "in_band" else ""
    mark = " *" if len(diffs) > 1 and (low > 0 or high < 0) else ""
    return f"{mean * scale:+,.1f} [{low * scale:+,.1f}, {high * scale:+,.1f}]{unit}{mark}"


def comparison_table(results: dict[str, dict[str, np.ndarray]]) -> list[str]:
    """Markdown: per scenario and measure, each policy's mean and its difference from the manual rule."""
    lines = []
    for scenario, by_policy in results.items():
        n = len(by_policy["manual rule"])
        lines += [f"**{scenario}** ({n} seeds)", "",
                  "| measure | " + " | ".join(by_policy) + " | method - manual [95% CI] | no smoothing - manual "
                  "[95% CI] | method - no smoothing [95% CI] |",
                  "| --- |" + " ---: |" * (len(by_policy) + 3)]
        for j, key in enumerate(MEASURES):
            means = [_fmt(float(np.mean(v[:, j])), key) for v in by_policy.values()]
            diffs = [_interval(by_policy[a][:, j] - by_policy[b][:, j], key)
                     for a, b in (("method", "manual rule"), ("no smoothing", "manual rule"),
                                  ("method", "no smoothing"))]
            lines.append(f"| {LABELS[key]} | " + " | ".join(means + diffs) + " |")
        lines.append("")
    return lines


def aims(results: dict[str, dict[str, np.ndarray]]) -> list[str]:
    """Each aim of the study per scenario: met (interval excludes zero the right way) or not."""
    checks = (("in_band", "more keywords in the band by the last week", lambda lo, hi: lo > 0),
              ("weeks_to_half", "half of them there sooner", lambda lo, hi: hi < 0),
              ("dead_spend", "less spend on never-converting keywords", lambda lo, hi: hi < 0),
              ("profit", "at least as much net profit (interval not below zero)", lambda lo, hi: hi >= 0))
    lines = ["| aim (method against manual rule) | " + " | ".join(results) + " |",
             "| --- |" + " :---: |" * len(results)]
    for key, text, ok in checks:
        j = MEASURES.index(key)
        cells = []
        for by_policy in results.values():
            _, lo, hi = paired_bootstrap(by_policy["method"][:, j] - by_policy["manual rule"][:, j])
            cells.append("met" if ok(lo, hi) else "not met")
        lines.append(f"| {text} | " + " | ".join(cells) + " |")
    return lines


def sweep(seeds: range, weeks: int, base: dict, log=None) -> list[str]:
    """One setting at a time around the defaults: profit, waste and volatility against the default, paired."""
    default = Settings()
    lines = ["| setting = value | " + " | ".join(f"{s}: profit diff [95% CI]" for s in SCENARIOS)
             + " | waste diff (mean over scenarios) | bid change diff (mean) |",
             "| --- |" + " ---: |" * (len(SCENARIOS) + 2)]
    verdicts = []
    reference = {s: base[s]["method"][: len(seeds)] for s in SCENARIOS}
    j_profit, j_dead, j_change = (MEASURES.index(k) for k in ("profit", "dead_spend", "bid_change"))
    for key, values in SWEEP.items():
        better, worse = [], []
        for value in values:
            if value == getattr(default, key):
                continue
            policy = {"variant": WorkbookMethod({key: value})}
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
    found = run_policies({"default": WorkbookMethod(), "variant": WorkbookMethod({key: value})}, seeds, weeks,
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
    """Run the study and write its Markdown table."""
    parser = argparse.ArgumentParser(prog="python -m study.run_study", description=__doc__.splitlines()[0])
    parser.add_argument("--seeds", type=int, default=16, help="seeds per scenario for the policy comparison")
    parser.add_argument("--sweep-seeds", type=int, default=5, help="seeds per scenario for the defaults sweep "
                        "(0: no sweep)")
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
    lines = ["# Simulated accounts: the bid method against the manual rule", "",
             f"Written by `python -m study.run_study --seeds {args.seeds} --sweep-seeds {args.sweep_seeds} "
             f"--weeks {args.weeks}`. Means per policy over seeds; differences are paired by seed with 95% "
             "percentile bootstrap intervals (4,000 resamples of the seeds); `*` marks an interval that excludes "
             f"zero. Weeks to half in band is {args.weeks + 1} when never reached (censored).", ""]
    lines += comparison_table(results)
    lines += ["## Aims", ""] + aims(results) + [""]
    args.out.write_text("\n".join(lines) + "\n", encoding="utf-8")  # the comparison, before the long sweep
    if args.sweep_seeds:
        lines += ["## Defaults sweep", "",
                  f"The method with one setting changed, against the method with the defaults, on the first "
                  f"{args.sweep_seeds} seeds of each scenario (profit in currency units; waste and bid change as "
                  "mean differences).", ""]
        lines += sweep(range(1, args.sweep_seeds + 1), args.weeks, results, log=log)
    args.out.write_text("\n".join(lines) + "\n", encoding="utf-8")
    print("\n".join(lines))
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
