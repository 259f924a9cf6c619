"""The profit-seeking aim: Profit's Aim ACoS and Why this aim, the two settings behind it, and its flow to Bids.

The rule (the inverse-elasticity rule for clicks proportional to bid^e). Take a keyword whose clicks at bid b
are k b^e, each click worth v in sales and costing about the bid (a cost per click proportional to the bid
changes only the constant), and a product whose margin before ads is m. Profit after ads is

    pi(b) = m v k b^e - k b^(e+1),
    pi'(b) = k b^(e-1) (m v e - (e+1) b),

zero at b* = m v e / (1 + e), where pi'' < 0 (a maximum for every e > 0). The ACoS there is spend / sales =
k b*^(e+1) / (v k b*^e) = b* / v = m e / (1 + e): the profit-maximising ACoS is the break-even ACoS (m) times
e / (1 + e), independent of v and k. The tests below check it numerically with scipy.optimize.minimize_scalar
on the profit curve (the outside reference) and compare the planner's Aim ACoS with that optimum.
"""
from __future__ import annotations

import datetime as dt
import shutil

import pytest
from scipy import optimize

from bids_io import CHECKED as BIDS_CHECKED, bids_oracle_for, bids_table
from conftest import BUILT_ON, DEMO
from minimal import write_account
from profit_io import profit_table
from sheetbuilder.pipeline import build, load, plan_workbook
from sheetbuilder.reading.settings import load_settings
from workbook_io import mismatches

GRID = [(m, e) for m in (0.12, 0.35, 0.6) for e in (0.05, 0.3, 0.6, 1.0, 2.5)]


def _optimum_acos(m: float, e: float, v: float = 3.7, k: float = 11.0) -> float:
    """The ACoS at the bid maximising m v k b^e - k b^(e+1), found by scipy (bounded Brent search)."""
    fit = optimize.minimize_scalar(lambda b: -(m * v * k * b ** e - k * b ** (e + 1)), bounds=(1e-9, 10 * v),
                                   method="bounded", options={"xatol": 1e-12})
    assert fit.success
    return fit.x / v


@pytest.mark.parametrize("m,e", GRID)
def test_the_profit_curve_peaks_at_break_even_times_e_over_one_plus_e(m, e):
    assert m * e / (1 + e) == pytest.approx(_optimum_acos(m, e), abs=1e-6)


CATALOG = """product_id,product_name,price,unit_cost,fees_per_unit,target_acos
P1,Widget,20.00,8.00,2.00,90%
P2,Gadget,10.00,4.00,1.00,10%
P3,Loser,10.00,9.00,2.00,30%
"""
STORE_SALES = """product_id,units,revenue
P1,10,200.00
P2,5,50.00
P3,5,50.00
P4,2,40.00
"""
AD_PRODUCTS = """campaign,ad_group,product_id,ad_type,impressions,clicks,spend,ad_sales,orders
C1,G1,P1,product ads,1000,50,25.00,100.00,5
C1,G2,P2,product ads,500,20,10.00,30.00,2
C1,G3,P3,product ads,500,20,10.00,30.00,2
C1,G4,P4,product ads,500,20,10.00,30.00,2
"""
# By hand: P1 margin (20 - 8 - 2) / 20 = 50%, target 90% (above break-even); P2 margin (10 - 4 - 1) / 10 = 50%,
# target 10%; P3 margin (10 - 9 - 2) / 10 = -10%; P4 is in no catalog row (no margin), default target 30%.


@pytest.fixture(scope="module")
def small(tmp_path_factory):
    folder = write_account(tmp_path_factory.mktemp("aim"), {"catalog.csv": CATALOG, "store_sales.csv": STORE_SALES,
                                                            "ad_products.csv": AD_PRODUCTS})
    inputs, settings, _ = load(folder)
    return inputs, settings


def _profit(small, **changes):
    inputs, settings = small
    plan = plan_workbook(inputs, settings.replace(**changes), dt.date(2026, 12, 2))
    return plan.tables["Profit"].frame.set_index("product_id")


@pytest.mark.parametrize("e", [0.05, 0.3, 0.6, 1.0, 2.5])
def test_with_a_target_above_it_the_aim_is_the_profit_maximising_acos(small, e):
    profit = _profit(small, click_elasticity=e)
    assert _optimum_acos(0.5, e) == pytest.approx(profit.loc["P1", "aim_acos"], abs=1e-6)
    assert "profit-seeking (click elasticity on Settings)" == profit.loc["P1", "aim_why"]


def test_a_target_below_the_profit_aim_is_kept(small):
    profit = _profit(small)
    assert (0.10, "your target") == (pytest.approx(profit.loc["P2", "aim_acos"]), profit.loc["P2", "aim_why"])


def test_a_product_with_no_positive_margin_aims_at_zero_and_says_so(small):
    for seek, cap in (("yes", "yes"), ("yes", "no"), ("no", "yes")):
        profit = _profit(small, seek_profit=seek, cap_target_at_break_even=cap)
        assert (0.0, "no positive margin: aim 0, bids cut") == (profit.loc["P3", "aim_acos"], profit.loc["P3", "aim_why"])
    # Neither the profit rule nor the cap: the target as given, which Target check flags.
    profit = _profit(small, seek_profit="no", cap_target_at_break_even="no")
    assert (0.30, "your target") == (pytest.approx(profit.loc["P3", "aim_acos"]), profit.loc["P3", "aim_why"])
    assert "above break-even: each ad sale loses money" == profit.loc["P3", "target_check"]


def test_a_product_without_a_margin_aims_at_its_target_and_says_why(small):
    profit = _profit(small)
    assert (0.30, "your target (no margin known)") == (pytest.approx(profit.loc["P4", "aim_acos"]),
                                                       profit.loc["P4", "aim_why"])


def test_with_seek_profit_off_the_aim_is_the_target_capped_at_break_even(small):
    profit = _profit(small, seek_profit="no")
    assert (0.50, "break-even") == (pytest.approx(profit.loc["P1", "aim_acos"]), profit.loc["P1", "aim_why"])
    assert "above break-even: bids use break-even" == profit.loc["P1", "target_check"]
    uncapped = _profit(small, seek_profit="no", cap_target_at_break_even="no")
    assert 0.90 == pytest.approx(uncapped.loc["P1", "aim_acos"])


@pytest.mark.parametrize("text,expected", [("click_elasticity = 0.05", 0.05), ("click_elasticity = 3", 3.0),
                                           ("click_elasticity = 1.2", 1.2)])
def test_click_elasticity_within_005_to_3_is_read(tmp_path, text, expected):
    (tmp_path / "settings.toml").write_text(text + "\n", encoding="utf-8")
    settings, problems = load_settings(tmp_path)
    assert ([], expected) == (problems, settings.click_elasticity)


@pytest.mark.parametrize("text", ["click_elasticity = 0.04", "click_elasticity = 3.5", "click_elasticity = -1",
                                  'click_elasticity = "high"'])
def test_click_elasticity_outside_005_to_3_is_refused_with_the_file_and_setting_named(tmp_path, text):
    (tmp_path / "settings.toml").write_text(text + "\n", encoding="utf-8")
    settings, problems = load_settings(tmp_path)
    assert [("settings.toml", "click_elasticity")] == [(p.file, p.column) for p in problems]
    assert 0.6 == settings.click_elasticity


@pytest.mark.parametrize("text,expected", [('seek_profit = "no"', "no"), ("seek_profit = false", "no"),
                                           ('seek_profit = "Yes"', "yes")])
def test_seek_profit_reads_yes_or_no(tmp_path, text, expected):
    (tmp_path / "settings.toml").write_text(text + "\n", encoding="utf-8")
    settings, problems = load_settings(tmp_path)
    assert ([], expected) == (problems, settings.seek_profit)


def test_seek_profit_other_than_yes_or_no_is_refused(tmp_path):
    (tmp_path / "settings.toml").write_text('seek_profit = "sometimes"\n', encoding="utf-8")
    _, problems = load_settings(tmp_path)
    assert [("settings.toml", "seek_profit", "expected yes or no, got 'sometimes'")] == \
        [(p.file, p.column, p.message) for p in problems]


@pytest.fixture(scope="module")
def demo_seller_target(tmp_path_factory):
    """The demo built with seek_profit = "no": the bids aim at the seller's own targets, as before the aim."""
    folder = tmp_path_factory.mktemp("demo_off") / "demo"
    shutil.copytree(DEMO, folder)
    with (folder / "settings.toml").open("a", encoding="utf-8") as f:
        f.write('seek_profit = "no"\n')
    return build(folder, folder.parent / "off.xlsx", built_on=BUILT_ON)


@pytest.mark.slow  # several seconds: the fast lane stays under two minutes
def test_the_demo_with_seek_profit_off_bids_at_the_sellers_target_capped_at_break_even(demo_seller_target):
    rows, _ = bids_table(demo_seller_target.output)
    expected = bids_oracle_for(DEMO, settings_changes={"seek_profit": "no"})
    assert [] == mismatches(expected, rows, BIDS_CHECKED, "seek_profit off")
    profit, _, _ = profit_table(demo_seller_target.output)
    # Today's rule, from the built Profit sheet: the target, or break-even where the target is above it.
    assert all(r["Aim ACoS"] == pytest.approx(min(r["Target ACoS"], r["Break-even ACoS"]))
               for r in profit.values() if r["Break-even ACoS"] not in (None, ""))


@pytest.mark.slow  # several seconds: the fast lane stays under two minutes
def test_the_demo_with_seek_profit_on_bids_at_the_aim_and_value_bids_scale_with_it(demo_build, demo_seller_target):
    on, _ = bids_table(demo_build.output)
    off, _ = bids_table(demo_seller_target.output)
    assert [] == mismatches(bids_oracle_for(DEMO), on, BIDS_CHECKED, "seek_profit on")
    assert all(on[k]["Aim ACoS"] <= off[k]["Aim ACoS"] + 1e-12 for k in on)
    lower = [k for k in on if on[k]["Aim ACoS"] < off[k]["Aim ACoS"] - 1e-9]
    assert len(lower) > len(on) / 2  # the demo's targets sit above most products' profit aims
    # The value bid is proportional to the aim (Varian's rule), whatever else enters it.
    scaled = [k for k in on if on[k]["Value bid"] not in (None, "") and off[k]["Aim ACoS"] > 0]
    assert scaled
    assert all(on[k]["Value bid"] == pytest.approx(off[k]["Value bid"] * on[k]["Aim ACoS"] / off[k]["Aim ACoS"],
                                                   rel=1e-9) for k in scaled)
