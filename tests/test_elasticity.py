"""The click elasticity estimated from the keyword history (sheetbuilder/sheets/elasticity.py).

Histories are generated here with a known e: keyword i's clicks in week t are numpy Poisson draws with mean
a_i x bid_it^e. The estimate must recover e within its interval (and its 95% intervals must cover e about
95% of the time over many histories), and it must equal, to 1e-6, a reference fit written here with
scipy.optimize on the full Poisson likelihood with one dummy per keyword (outside reference: for the Poisson
model the fixed-effects estimate of the slope equals the conditional one, Hausman, Hall & Griliches 1984,
Econometrica 52; the reference never conditions, so it shares no step with the code).
"""
from __future__ import annotations

import datetime as dt
import math

import numpy as np
import pytest
from scipy import optimize

from sheetbuilder.reading.periods import Period
from sheetbuilder.sheets.elasticity import MIN_CLICKS, MIN_KEYWORDS, estimate_elasticity
from sheetbuilder.sheets.keyword_weeks import KeywordHistory, packed

TRUE_E = 0.6
STEPS = np.array([0.8, 0.9, 1.0, 1.0, 1.1, 1.25])  # week-to-week bid moves, as a bid rule makes them


def _history(rng, keywords: int, weeks: int, e: float = TRUE_E, level=(2.0, 30.0)):
    """(packed rows of a generated KeywordHistory, clicks array, ln-bid array) with clicks ~ Poisson(a b^e)."""
    start = dt.date(2026, 1, 5)
    periods = [Period(start + dt.timedelta(days=7 * w), start + dt.timedelta(days=7 * w + 6)) for w in range(weeks)]
    base = rng.uniform(0.3, 2.0, keywords)
    bids = np.round(base[:, None] * np.cumprod(rng.choice(STEPS, (keywords, weeks)), axis=1), 2)
    bids = np.maximum(bids, 0.05)
    a = rng.uniform(*level, keywords) / base ** e  # clicks near `level` at the first bid
    clicks = rng.poisson(a[:, None] * bids ** e).astype(float)
    history = KeywordHistory({
        ("C", "G", f"kw {i}", "exact"): {p: (100.0, float(clicks[i, w]), 0.0, float(clicks[i, w] * bids[i, w]), 0.0,
                                            float(bids[i, w])) for w, p in enumerate(periods)}
        for i in range(keywords)})
    return packed(history).rows, clicks, np.log(bids)


def _reference_fit(clicks: np.ndarray, x: np.ndarray) -> tuple[float, float]:
    """(e, its standard error) from the full likelihood with one dummy per keyword, by scipy.optimize."""
    keywords = clicks.shape[0]

    def negative(theta):
        eta = theta[1:, None] + theta[0] * x
        mu = np.exp(eta)
        value = float(np.sum(mu - clicks * eta))
        r = mu - clicks
        grad = np.concatenate([[np.sum(r * x)], r.sum(axis=1)])
        hess = np.zeros((keywords + 1, keywords + 1))
        hess[0, 0] = np.sum(mu * x * x)
        hess[0, 1:] = hess[1:, 0] = (mu * x).sum(axis=1)
        hess[1:, 1:] = np.diag(mu.sum(axis=1))
        return value, grad, hess

    start = np.concatenate([[0.0], np.log(np.maximum(clicks.mean(axis=1), 0.5))])
    fit = optimize.minimize(lambda t: negative(t)[0], start, jac=lambda t: negative(t)[1],
                            hess=lambda t: negative(t)[2], method="trust-exact", options={"gtol": 1e-10})
    # It may stop on "no further improvement" once the float sums cannot fall: the gradient says it is there.
    assert np.max(np.abs(negative(fit.x)[1])) < 1e-7, fit.message
    covariance = np.linalg.inv(negative(fit.x)[2])
    return float(fit.x[0]), math.sqrt(covariance[0, 0])


def test_the_estimate_recovers_a_known_elasticity_within_its_interval():
    rows, _, _ = _history(np.random.default_rng(7), keywords=60, weeks=12)
    got = estimate_elasticity(rows)
    low, high = got.interval
    assert low < TRUE_E < high
    assert 60 == got.keywords
    assert 0 < got.standard_error < 0.2  # 60 keywords x 12 weeks pin e to well under +-0.4
    assert "type it in the Value of Click elasticity on Settings" in got.text()


def test_the_estimate_equals_a_scipy_fit_of_the_full_likelihood_with_a_dummy_per_keyword():
    rows, clicks, x = _history(np.random.default_rng(11), keywords=30, weeks=10)
    reference_e, reference_se = _reference_fit(clicks, x)
    got = estimate_elasticity(rows)
    assert reference_e == pytest.approx(got.estimate, abs=1e-6)
    assert reference_se == pytest.approx(got.standard_error, rel=1e-6)


def test_the_95_percent_intervals_cover_the_true_elasticity_about_95_percent_of_the_time():
    rng = np.random.default_rng(2026)
    covered = 0
    runs = 200
    for _ in range(runs):
        rows, _, _ = _history(rng, keywords=25, weeks=6, e=1.0)
        low, high = estimate_elasticity(rows).interval
        covered += low < 1.0 < high
    # 200 runs at a true 95%: the share lies within 0.90 to 0.99 with probability above 99.5% (binomial).
    assert 0.90 <= covered / runs <= 0.99


def test_too_few_keywords_with_bid_changes_give_no_estimate_and_say_why():
    rows, _, _ = _history(np.random.default_rng(3), keywords=MIN_KEYWORDS - 1, weeks=8)
    got = estimate_elasticity(rows)
    assert (None, None) == (got.estimate, got.interval)
    assert f"at least {MIN_KEYWORDS} keywords" in got.text() and f"{MIN_KEYWORDS - 1} such keywords" in got.text()


def test_too_few_clicks_give_no_estimate():
    rows, clicks, _ = _history(np.random.default_rng(4), keywords=40, weeks=4, level=(0.5, 1.0))
    assert clicks.sum() < MIN_CLICKS
    assert None is estimate_elasticity(rows).estimate


def test_keywords_whose_bid_never_changed_carry_no_information_and_are_not_counted():
    rows, _, _ = _history(np.random.default_rng(5), keywords=30, weeks=6)
    steady = [dict(r, bid_packed="; ".join(["0.5"] * 6)) for r in rows[:10]]
    got = estimate_elasticity(steady + rows[10:])
    assert 20 == got.keywords


def test_clicks_only_at_each_keywords_highest_bid_give_no_finite_estimate():
    rows = [{"clicks_packed": "0; 0; 15", "bid_packed": "0.5; 0.6; 0.7"} for _ in range(30)]
    got = estimate_elasticity(rows)
    assert None is got.estimate
    assert "no finite estimate" in got.text()


def test_weeks_without_a_bid_are_left_out():
    rows, _, _ = _history(np.random.default_rng(6), keywords=30, weeks=6)
    with_gap = [dict(r, bid_packed="; " + r["bid_packed"].split("; ", 1)[1]) for r in rows]
    got = estimate_elasticity(with_gap)
    assert 30 * 5 == got.weeks


def test_the_estimate_stands_beside_the_setting_on_settings_and_in_the_guides_build_record(tmp_path):
    from minimal import write_account
    from sheetbuilder.pipeline import load, plan_workbook
    from sheetbuilder.sheets.keyword_weeks import PackedHistory

    rows, _, _ = _history(np.random.default_rng(8), keywords=40, weeks=8)
    got = estimate_elasticity(rows)
    inputs, settings, _ = load(write_account(tmp_path / "account"))
    plan = plan_workbook(inputs, settings, dt.date(2026, 3, 10), keyword_history=PackedHistory(rows, []))
    low, high = got.interval
    words = f"estimates e = {got.estimate:.2f} (95% interval {low:.2f} to {high:.2f}), from 40 keywords"
    settings_rows = [[c.value if c is not None else None for c in row] for row in plan.spec.sheet("Settings").above]
    beside = next(row for row in settings_rows if row and row[0] == "Click elasticity (e)")
    assert words in beside[4]
    assert 0.6 == beside[1]  # the setting itself is not changed by the estimate
    guide = [[c.value for c in row if c is not None] for row in plan.spec.sheet("Guide").above]
    assert any(row[:1] == ["Click elasticity in the keyword history"] and words in row[1] for row in guide)
