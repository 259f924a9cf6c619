"""Bids' pooled conversion rates and the cut on evidence, checked against outside references.

Outside references named beside each check:
- the prior's fit: D. Kleinman, "Proportions with extraneous variance: single and independent
  samples", JASA 68 (1973), the moment equations written afresh in tests/oracle_pooled.py (numpy);
  the method of moments is consistent, so on many simulated keywords it recovers the Beta that
  drew them (numpy's random generator);
- P(0 orders | n clicks) of the beta-binomial: scipy.stats.betabinom; the waste probability:
  scipy.stats.beta.cdf of the posterior;
- the engines: BETADIST computed by LibreOffice 7.4, Gnumeric and `formulas` equal to scipy.
"""
from __future__ import annotations

import csv
import datetime as dt
import io
import shutil
from pathlib import Path

import numpy as np
import pytest
from scipy import stats

from bids_io import CHECKED, bids_table
from conftest import BUILT_ON, DEMO, require_libreoffice
from minimal import write_account
from oracle import bids_oracle, profit_oracle
from oracle_pooled import kleinman, zero_inflated_prior
from workbook_io import mismatches
from sheetbuilder.pipeline import build, load
from sheetbuilder.sheets.pooled import fit_prior, moments_fit
from sheetbuilder.weekly.record import read_saved_workbook
from tools.recalc import libreoffice_convert


def _simulated(rng, keywords: int, a: float, b: float, never: float) -> tuple[np.ndarray, np.ndarray]:
    """(clicks, orders) of keywords whose rates follow Beta(a, b), a share `never` of them never converting."""
    clicks = rng.integers(5, 200, size=keywords)
    rate = np.where(rng.random(keywords) < never, 0.0, rng.beta(a, b, size=keywords))
    return clicks.astype(float), rng.binomial(clicks, rate).astype(float)


def test_the_moment_fit_recovers_the_beta_that_drew_the_keywords():
    # Consistency of the method of moments (Kleinman 1973): 20,000 keywords drawn from Beta(2, 38), mean 5%.
    n, o = _simulated(np.random.default_rng(7), 20_000, 2.0, 38.0, 0.0)
    alpha, beta = moments_fit(n, o, n)
    assert 0.05 == pytest.approx(alpha / (alpha + beta), rel=0.03)
    assert 40.0 == pytest.approx(alpha + beta, rel=0.15)


def test_the_zero_inflated_fit_finds_no_share_where_every_keyword_converts():
    n, o = _simulated(np.random.default_rng(3), 20_000, 3.0, 27.0, 0.0)
    alpha, beta, pi = fit_prior(n, o)
    assert 0.0 == pytest.approx(pi, abs=0.01)
    assert 0.10 == pytest.approx(alpha / (alpha + beta), rel=0.03)


def test_one_reweighting_round_finds_never_converting_keywords_and_moves_the_prior_toward_the_converting_ones():
    # A third of 20,000 keywords never convert, the others follow Beta(3, 27) (mean 10%). The plain fit's mean is
    # about 2/3 x 10%; one round (the design) finds a share between 0 and the truth (the first fit's spread, swollen
    # by the zeros, predicts many of them) and a mean between the plain fit's and the converting keywords' 10%.
    n, o = _simulated(np.random.default_rng(11), 20_000, 3.0, 27.0, 1 / 3)
    plain = o.sum() / n.sum()
    alpha, beta, pi = fit_prior(n, o)
    assert 0.15 < pi < 1 / 3
    assert plain < alpha / (alpha + beta) < 0.10 * 1.01


@pytest.mark.parametrize("seed", range(6))
def test_the_planners_fit_equals_the_reference_written_from_the_paper(seed):
    rng = np.random.default_rng(seed)
    n, o = _simulated(rng, int(rng.integers(3, 60)), float(rng.uniform(0.5, 5)), float(rng.uniform(10, 80)),
                      float(rng.uniform(0, 0.6)))
    n[rng.random(len(n)) < 0.1] = 0.0  # keywords without clicks are left out of the fit
    o[n == 0] = 0.0
    expected, got = zero_inflated_prior(n, o), fit_prior(n, o)
    assert (expected is None) == (got is None)
    if expected is not None:
        assert expected == pytest.approx(got, rel=1e-9)
    first = kleinman(n[n > 0], o[n > 0], n[n > 0])
    assert (first is None) == (moments_fit(n[n > 0], o[n > 0], n[n > 0]) is None)


@pytest.fixture(scope="module")
def demo_rows(demo_build):
    """The demo's Bids rows as stored, read once for the checks below."""
    return bids_table(demo_build.output)[0]


def test_a_keyword_without_orders_converts_with_the_beta_binomial_odds(demo_rows):
    # Bayes' rule with scipy.stats.betabinom: w = (1 - pi) P(0|n) / (pi + (1 - pi) P(0|n)).
    rows = demo_rows
    checked = 0
    for r in rows.values():
        if r["Prior a"] is not None and r["History orders"] == 0 and r["Never-converting share"] > 0:
            pi = r["Never-converting share"]
            p0 = stats.betabinom.pmf(0, int(r["History clicks"]), r["Prior a"], r["Prior b"])
            assert (1 - pi) * p0 / (pi + (1 - pi) * p0) == pytest.approx(r["Converts probability"], rel=1e-12)
            checked += 1
    assert checked >= 3


def test_the_waste_probability_is_the_posterior_chance_a_click_costs_more_than_it_earns(demo_rows):
    # scipy.stats.beta.cdf of Beta(a + orders, b + clicks - orders) at CPC / (order value x target ACoS).
    rows = demo_rows
    _, s, _ = load(DEMO)
    checked = 0
    for r in rows.values():
        if r["Waste probability"] is None or r["Prior a"] is None or r["History orders"] == 0:
            continue
        a = r["Prior a"] + r["History orders"]
        b = r["Prior b"] + r["History clicks"] - r["History orders"]
        order_value = r["History ad sales"] / r["History orders"]
        x = min(1.0, r["CPC-to-bid ratio"] * r["Current bid"] / (order_value * r["Aim ACoS"]))
        assert stats.beta.cdf(x, a, b) == pytest.approx(r["Waste probability"], rel=1e-9, abs=1e-12)
        if r["Waste probability"] >= s.waste_confidence and r["Value bid"] < r["Current bid"]:
            assert r["Reason"] in ("cut on evidence: likely waste", "cut on evidence: likely waste (stopped at the bid floor)")
        checked += 1
    assert checked >= 10


# --- weeks built in a row: a low-traffic keyword that never converts ---------------------------------------------

HEADER = ["campaign", "ad_group", "target", "match_type", "state", "bid", "impressions", "clicks", "spend",
          "ad_sales", "orders"]
# Five converting keywords (clicks, orders a week) and one that never converts, 6 clicks a week at 1.00.
SELLERS = [("garden hose", 40, 4), ("hose reel", 35, 3), ("hose nozzle", 30, 5), ("soaker hose", 25, 2),
           ("hose pipe", 45, 4)]
SLOW = "slow keyword"


def _week(base: Path, n: int) -> Path:
    """Week n's exports: each seller's figures (spend = clicks x 0.80, ad sales = orders x 25.00), the slow keyword."""
    rows = [["C1", "G1", t, "exact", "enabled", "1.00", str(clicks * 20), str(clicks), f"{clicks * 0.8:.2f}",
             f"{orders * 25:.2f}", str(orders)] for t, clicks, orders in SELLERS]
    rows.append(["C1", "G1", SLOW, "exact", "enabled", "1.00", "120", "6", "6.00", "0.00", "0"])
    out = io.StringIO()
    csv.writer(out, lineterminator="\n").writerows([HEADER, *rows])
    clicks = sum(c for _, c, _ in SELLERS) + 6
    orders = sum(o for _, _, o in SELLERS)
    spend = sum(c * 0.8 for _, c, _ in SELLERS) + 6
    end = dt.date(2026, 11, 1) + dt.timedelta(days=7 * n)
    return write_account(base / f"w{n}", {
        "catalog.csv": "product_id,product_name,price,unit_cost,fees_per_unit,target_acos\nP1,Hose,25.00,8.00,2.00,30%\n",
        "store_sales.csv": f"product_id,units,revenue\nP1,{orders + 10},{(orders + 10) * 25:.2f}\n",
        "ad_products.csv": "campaign,ad_group,product_id,ad_type,impressions,clicks,spend,ad_sales,orders\n"
                           f"C1,G1,P1,product ads,{clicks * 20},{clicks},{spend:.2f},{orders * 25:.2f},{orders}\n",
        "targets.csv": out.getvalue(),
        # seek_profit off: the bids aim at the seller's 30%, the figure the allowance below is computed from
        "settings.toml": f"period_days = 7\nperiod_end = {end.isoformat()}\nseek_profit = \"no\"\n"})


def _history(weeks: int) -> dict[tuple, list[tuple]]:
    """The oracle's history: every week's (clicks, orders, spend, ad sales, bid) per keyword, from the rows above."""
    week = {("C1", "G1", t, "exact"): (c, o, round(c * 0.8, 2), o * 25.0, 1.0) for t, c, o in SELLERS}
    week[("C1", "G1", SLOW, "exact")] = (6, 0, 6.0, 0.0, 1.0)
    return {k: [v] * weeks for k, v in week.items()}


def _slow_row(path: Path) -> dict:
    rows, _ = bids_table(path)
    (row,) = [r for r in rows.values() if r["Target"] == SLOW]
    return row


def _check_against_oracle(path: Path, folder: Path, weeks: int, label: str) -> None:
    inputs, settings, _ = load(folder)
    profit, _ = profit_oracle(inputs.tables, settings)
    expected = bids_oracle(inputs.tables, settings, profit, history=_history(weeks))
    rows, _ = bids_table(path)
    assert [] == mismatches(expected, rows, CHECKED, label)


def _weeks_in_a_row(tmp_path: Path, weeks: int, save) -> list[Path]:
    outputs, previous = [], None
    for n in range(1, weeks + 1):
        out = tmp_path / f"w{n}.xlsx"
        build(_week(tmp_path, n), out, built_on=BUILT_ON, previous=previous)
        outputs.append(out)
        previous = save(out, n)
    return outputs


@pytest.mark.slow  # several seconds: the fast lane stays under two minutes
def test_a_low_traffic_keyword_that_never_converts_is_cut_once_its_history_has_the_clicks(tmp_path):
    # 6 clicks and 6.00 a week: one week is within the exploration allowance (1 order x 30% x 25.00 = 7.50) and
    # below min_clicks (10); two weeks hold 12 clicks and 12.00 without an order.
    first, second = _weeks_in_a_row(tmp_path, 2, lambda out, n: out)
    assert "exploring: within allowance" == _slow_row(first)["Reason"]
    alone = tmp_path / "w2 alone.xlsx"
    build(tmp_path / "w2", alone, built_on=BUILT_ON)  # the same week without the history: held again
    assert "exploring: within allowance" == _slow_row(alone)["Reason"]
    row = _slow_row(second)
    assert (12, 0) == (row["History clicks"], row["History orders"])
    assert row["Reason"] in ("cut on evidence: likely waste", "cut on evidence: likely waste (stopped at the bid floor)")
    assert row["Proposed bid"] < 1.0 * 0.5  # past the maximum cut (50%)
    _check_against_oracle(first, tmp_path / "w1", 1, "week 1")
    _check_against_oracle(second, tmp_path / "w2", 2, "week 2")
    _check_against_oracle(alone, tmp_path / "w2", 1, "week 2 alone")


@pytest.mark.slow
def test_three_weeks_each_saved_by_libreoffice_cut_the_keyword_and_keep_the_reference(tmp_path):
    require_libreoffice()

    def saved(out: Path, n: int) -> Path:
        folder = tmp_path / f"saved{n}"
        folder.mkdir()
        shutil.copy(out, folder / "in.xlsx")
        return libreoffice_convert([folder / "in.xlsx"], folder / "out")[0]  # as a user's save

    outputs = _weeks_in_a_row(tmp_path, 3, saved)
    for n, out in enumerate(outputs, start=1):
        _check_against_oracle(out, tmp_path / f"w{n}", n, f"week {n}")
    assert (18, 0) == (_slow_row(outputs[2])["History clicks"], _slow_row(outputs[2])["History orders"])
    assert _slow_row(outputs[1])["Reason"] in ("cut on evidence: likely waste", "cut on evidence: likely waste (stopped at the bid floor)")


def test_a_saved_workbook_is_planned_again_with_the_history_its_bids_read(tmp_path):
    # `changes` and the next week's follow-up plan a saved workbook again: its Bids must read the same history.
    _, second = _weeks_in_a_row(tmp_path, 2, lambda out, n: out)
    saved = read_saved_workbook(second, for_changes=True)
    replanned = saved.planned.tables["Bids"].frame.set_index("target")
    rows, _ = bids_table(second)
    assert {r["Target"]: (r["History clicks"], r["Proposed bid"]) for r in rows.values()} == {
        t: (replanned.at[t, "h_clicks"], replanned.at[t, "proposed"]) for t in replanned.index}
    assert 12 == replanned.at[SLOW, "h_clicks"]
