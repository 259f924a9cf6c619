"""The Follow-up sheet over a generated two-week scenario (issue 12).

Week 1 is the demo. Week 2's exports are made from week 1's by tools/make_week2.py with a
chosen part of week 1's change list applied (every second bid to its planned value, one bid
to another value, two keywords and two negatives added, one budget changed) and the metrics
moved (clicks up on every target, the negated terms' spend gone). Week 2 is built with
--previous week 1. Every Applied must equal the scenario's truth, and every figure must equal
the independent reference (tests/oracle_followup.py) as cached and after LibreOffice
recalculates the file.
"""
from __future__ import annotations

import csv
import datetime as dt
import shutil
import sys

import openpyxl
import pytest

from conftest import BUILT_ON, DEMO, ROOT, require_libreoffice
from oracle_mix import to_cents
from oracle_followup import expected_row
from workbook_io import same
from sheetbuilder.weekly.changes import COLUMNS, export_changes
from sheetbuilder.reading.periods import Period
from sheetbuilder.pipeline import build
from sheetbuilder.sheets.followup import FIRST_TABLE_ROW, SHEET, period_lines
from tools.recalc import libreoffice_convert

sys.path.insert(0, str(ROOT / "tools"))
from make_week2 import choose, make_week2  # noqa: E402

# Every test here builds the demo several times: the whole module runs in the slow lane, so the fast
# lane stays under two minutes; CI runs both.
pytestmark = pytest.mark.slow

KEY = ("Kind", "Campaign", "Ad group", "Target or term", "Match type")
FIGURES = ("Applied", "Clicks before", "Clicks now", "CPC before", "CPC now", "Spend before", "Spend now",
           "Orders before", "Orders now", "ACoS before", "ACoS now", "Outcome")
MIN_CLICKS = 10  # the demo's settings.toml leaves min_clicks at its default


def _key(change: dict) -> tuple:
    return (change["kind"], change["campaign"], change["ad_group"] or "", change["target_or_term"] or "",
            change["match_type"] or "")


def followup_rows(path) -> list[dict]:
    """The Last week's changes rows of a workbook's Follow-up sheet, by header (values as saved)."""
    ws = openpyxl.load_workbook(path, data_only=True)[SHEET]
    header_row = FIRST_TABLE_ROW + 1
    headers = [c.value for c in ws[header_row]]
    out = []
    for row in ws.iter_rows(min_row=header_row + 1, values_only=True):
        if row[0] in (None, ""):
            break
        out.append({h: ("" if v is None else v) for h, v in zip(headers, row) if h})
    return out


def _summary(path) -> dict:
    ws = openpyxl.load_workbook(path, data_only=True)[SHEET]
    return {ws.cell(r, 1).value: ws.cell(r, 2).value for r in range(7, 15)}


@pytest.fixture(scope="module")
def scenario(tmp_path_factory):
    work = tmp_path_factory.mktemp("followup")
    # The demo without its inventory export: with it, every budget change left unapplied is proposed again in
    # week 2, and the unapplied rows `changes --include-unapplied` adds would not be exercised.
    demo = shutil.copytree(DEMO, work / "demo")
    (demo / "inventory.csv").unlink()
    week1 = build(demo, work / "week1.xlsx", built_on=BUILT_ON)
    export_changes(week1.output, work / "changes1.csv")
    with (work / "changes1.csv").open(newline="", encoding="utf-8-sig") as f:
        changes = list(csv.DictReader(f))
    applied, elsewhere = choose(changes)
    exports2 = make_week2(demo, work / "exports2", applied, elsewhere)
    week2 = build(exports2, work / "week2.xlsx", built_on=BUILT_ON + dt.timedelta(days=7), previous=week1.output)
    blind = work / "exports2_blind"  # no negatives or campaigns export this week
    shutil.copytree(exports2, blind)
    (blind / "negatives.csv").unlink()
    (blind / "campaigns.csv").unlink()
    week2_blind = build(blind, work / "week2_blind.xlsx", built_on=BUILT_ON + dt.timedelta(days=7),
                        previous=week1.output)
    profit = week1.plan.tables["Profit"].frame
    return {"work": work, "week1": week1, "week2": week2, "blind": week2_blind, "changes": changes,
            "applied": {_key(c) for c in applied}, "exports2": exports2,
            "targets": dict(zip(profit["product_id"], profit["aim_acos"]))}


def _change(row: dict, changes_by_key: dict) -> dict:
    ch = changes_by_key[tuple(row[k] for k in KEY)]
    return {"kind": ch["kind"], "campaign": ch["campaign"], "ad_group": ch["ad_group"],
            "target": ch["target_or_term"], "match_type": ch["match_type"],
            "planned": float(ch["new"]) if ch["new"] else None, "was": float(ch["current"]) if ch["current"] else None}


def test_the_follow_up_lists_exactly_last_weeks_exported_change_list_in_order(scenario):
    rows = followup_rows(scenario["week2"].output)
    assert [_key(c) for c in scenario["changes"]] == [tuple(r[k] for k in KEY) for r in rows]
    assert len(rows) > 20  # the demo's list is long enough for every kind to appear
    assert {"bid", "add keyword", "add negative", "budget"} <= {r["Kind"] for r in rows}


def test_every_applied_equals_the_scenarios_truth(scenario):
    rows = followup_rows(scenario["week2"].output)
    truth = ["yes" if tuple(r[k] for k in KEY) in scenario["applied"] else "no" for r in rows]
    assert truth == [r["Applied"] for r in rows]
    assert 7 <= truth.count("yes")


def test_negatives_and_budgets_cannot_be_told_without_their_exports(scenario):
    rows = followup_rows(scenario["blind"].output)
    for r in rows:
        if r["Kind"] in ("add negative", "budget"):
            assert "cannot tell" == r["Applied"], r


def _check_against_oracle(path, scenario) -> list[str]:
    by_key = {_key(c): c for c in scenario["changes"]}
    out = []
    for row in followup_rows(path):
        change = _change(row, by_key)
        target = scenario["targets"].get(row["Product ID"], "")
        want = expected_row(DEMO, scenario["exports2"], change, MIN_CLICKS, target)
        for h in FIGURES:
            if not same(want[h], row[h]):
                out.append(f"{tuple(row[k] for k in KEY)} / {h}: expected {want[h]!r}, got {row[h]!r}")
    return out


def test_every_figure_as_cached_equals_the_independent_reference(scenario):
    assert [] == _check_against_oracle(scenario["week2"].output, scenario)


@pytest.mark.libreoffice
def test_every_figure_recalculated_by_libreoffice_equals_the_independent_reference(scenario):
    require_libreoffice()
    (lo,) = libreoffice_convert([scenario["week2"].output], scenario["work"] / "lo")
    assert [] == _check_against_oracle(lo, scenario)
    cached, recalculated = _summary(scenario["week2"].output), _summary(lo)
    assert [] == [k for k in cached if not same(cached[k], recalculated[k])]


def test_the_summary_counts_and_sums_the_rows_below(scenario):
    rows = followup_rows(scenario["week2"].output)
    summary = _summary(scenario["week2"].output)
    assert len(rows) == summary["Changes planned last week"]
    assert sum(r["Applied"] == "yes" for r in rows) == summary["Applied"]
    assert sum(r["Applied"] == "no" for r in rows) == summary["Not applied"]
    assert 0 == summary["Cannot tell"]
    negated = [r for r in rows if r["Kind"] == "add negative"]
    assert same(sum(r["Spend before"] for r in negated), summary["Spend on negated terms, last period"])
    assert same(sum(r["Spend now"] for r in negated), summary["Spend on negated terms, this period"])
    week1_profit = scenario["week1"].plan.tables["Profit"].totals_values["net_profit"]
    assert same(week1_profit, summary["Net profit after ads, last period"])


def test_products_then_are_last_weeks_profit_figures_and_now_this_weeks(scenario):
    wb = openpyxl.load_workbook(scenario["week2"].output, data_only=True)
    ws = wb[SHEET]
    start = next(r for r in range(1, ws.max_row + 1) if ws.cell(r, 1).value == "Products then and now") + 1
    headers = [c.value for c in ws[start]]
    then = scenario["week1"].plan.tables["Profit"].frame.set_index("product_id")
    now = scenario["week2"].plan.tables["Profit"].frame.set_index("product_id")
    checked = unchanged = 0
    for row in ws.iter_rows(min_row=start + 1, values_only=True):
        if row[0] in (None, ""):
            break
        got = dict(zip(headers, row))
        pid = got["Product ID"]
        assert same(float(then.loc[pid, "net_profit"]), got["Net profit after ads then"]), pid
        assert same(float(now.loc[pid, "net_profit"]), got["Net profit after ads now"]), pid
        assert same(to_cents(float(now.loc[pid, "net_profit"]) - float(then.loc[pid, "net_profit"])),
                    got["Net profit after ads change"]), pid
        assert to_cents(float(now.loc[pid, "ad_spend"]) - float(then.loc[pid, "ad_spend"])) == got["Ad spend change"]
        unchanged += round(float(now.loc[pid, "ad_spend"]), 2) == round(float(then.loc[pid, "ad_spend"]), 2)
        assert now.loc[pid, "status"] == got["Status now"]
        checked += 1
    assert len(now) == checked
    assert unchanged > 0  # the products whose spend did not move read exactly 0, never -5.7e-14


def test_the_guide_dashboard_shows_the_follow_up_summary(scenario):
    ws = openpyxl.load_workbook(scenario["week2"].output, data_only=True)["Guide"]
    labels = {ws.cell(r, 1).value: ws.cell(r, 2).value for r in range(1, 40)}
    assert _summary(scenario["week2"].output)["Applied"] == labels["Follow-up: applied"]


def test_a_rebuild_from_the_same_exports_says_so_and_writes_no_follow_up(scenario):
    again = build(scenario["exports2"], scenario["work"] / "again.xlsx", built_on=BUILT_ON + dt.timedelta(days=8),
                  previous=scenario["week2"].output)
    assert SHEET not in openpyxl.load_workbook(again.output, read_only=True).sheetnames
    assert any("same exports" in w.message for w in again.warnings)


def test_two_30_day_periods_a_week_apart_are_stated_as_sharing_23_days():
    from sheetbuilder.sheets.followup import Followup
    last = Period(dt.date(2026, 10, 27), dt.date(2026, 11, 25))
    this = Period(dt.date(2026, 11, 3), dt.date(2026, 12, 2))
    lines = period_lines(Followup([], {}, last, this, "w1.xlsx"))
    assert "Last period: 2026-10-27 to 2026-11-25 (30 days). This period: 2026-11-03 to 2026-12-02 (30 days)." == lines[0]
    assert lines[1].startswith("The periods overlap by 23 days")


def _history(path) -> list[tuple]:
    ws = openpyxl.load_workbook(path, data_only=True)["History"]
    out = []
    for row in ws.iter_rows(min_row=5, values_only=True):
        if row[0] in (None, ""):
            break
        out.append(tuple("" if v is None else v for v in row[:6]))
    return out


def _truth(keys: list[tuple], week: dt.date) -> list[tuple]:
    return [(week.isoformat(), *k) for k in keys]


@pytest.mark.libreoffice
def test_history_after_weeks_two_and_three_holds_exactly_the_applied_changes(scenario):
    require_libreoffice()
    work = scenario["work"]
    # Week is the period end of the exports that showed the change applied: demo_inputs/settings.toml ends
    # the demo's period on 2026-11-29 and tools/make_week2.py moves it on by seven days each week. Week 3 is
    # built on the same day as week 2, and still reads its own week.
    week2 = dt.date(2026, 12, 6)
    week3 = dt.date(2026, 12, 13)
    applied2 = [_key(c) for c in scenario["changes"] if _key(c) in scenario["applied"]]
    assert _truth(applied2, week2) == _history(scenario["week2"].output)
    (saved2,) = libreoffice_convert([scenario["week2"].output], work / "saved2")  # as a user's program saves it
    export_changes(saved2, work / "changes2.csv")
    with (work / "changes2.csv").open(newline="", encoding="utf-8-sig") as f:
        changes2 = list(csv.DictReader(f))
    applied, elsewhere = choose(changes2)
    exports3 = make_week2(scenario["exports2"], work / "exports3", applied, elsewhere)
    third = build(exports3, work / "week3.xlsx", built_on=BUILT_ON + dt.timedelta(days=7), previous=saved2)
    applied3 = [_key(c) for c in changes2 if _key(c) in {_key(a) for a in applied}]
    assert _truth(applied2, week2) + _truth(applied3, week3) == _history(third.output)


def test_changes_include_unapplied_writes_last_weeks_unapplied_rows_this_week_does_not_change_again(scenario):
    work = scenario["work"]
    plain = export_changes(scenario["week2"].output, work / "changes2_plain.csv")
    both = export_changes(scenario["week2"].output, work / "changes2_all.csv", include_unapplied=True)
    this_week = {tuple("" if v is None else v for v in row[:5]) for row in plain.rows}
    not_applied = [tuple(r[k] for k in KEY) for r in followup_rows(scenario["week2"].output) if r["Applied"] == "no"]
    expected = [k for k in not_applied if k not in this_week]
    added = [tuple("" if v is None else v for v in row[:5]) for row in both.rows
             if row[COLUMNS.index("reason")] == "last week's change, not yet applied"]
    assert expected == added
    assert plain.rows == both.rows[:len(plain.rows)]
    assert 0 < len(added)


def test_periods_a_week_apart_are_both_stated_with_their_overlap(scenario):
    ws = openpyxl.load_workbook(scenario["week2"].output, data_only=True)[SHEET]
    # the demo's settings.toml: period_end 2026-11-29, 30 days; make_week2 moves the end on by 7 days
    assert ("Last period: 2026-10-31 to 2026-11-29 (30 days). This period: 2026-11-07 to 2026-12-06 (30 days)."
            == ws["A2"].value)
    assert ws["A3"].value.startswith("The periods overlap by 23 days, so each comparison is diluted")


def test_a_previous_workbook_of_a_later_period_says_so_and_writes_no_follow_up(scenario):
    later = build(scenario["exports2"], scenario["work"] / "later.xlsx", built_on=BUILT_ON)
    out = build(DEMO, scenario["work"] / "earlier.xlsx", built_on=BUILT_ON, previous=later.output)
    assert SHEET not in openpyxl.load_workbook(out.output, read_only=True).sheetnames
    assert any("is later than this one's" in w.message for w in out.warnings)


def _tiny_week1(folder):
    """A one-product account whose change list holds a bid cut, a raise, a negative and a budget change."""
    folder.mkdir()
    files = {
        "catalog.csv": "product_id,product_name,price,unit_cost,fees_per_unit,target_acos\nP1,Widget,25,5,5,30%\n",
        "store_sales.csv": "product_id,units,revenue\nP1,80,2000\n",
        "ad_products.csv": "campaign,ad_group,product_id,ad_type,impressions,clicks,spend,ad_sales,orders\n"
                           "C1,G1,P1,product ads,9000,160,200,500,20\n",
        "targets.csv": "campaign,ad_group,target,match_type,state,bid,impressions,clicks,spend,ad_sales,orders\n"
                       "C1,G1,widget,exact,enabled,1.50,5000,100,150,250,10\n"
                       "C1,G1,blue widget,phrase,enabled,0.40,3000,60,24,250,10\n",
        "search_terms.csv": "campaign,ad_group,target,match_type,search_term,impressions,clicks,spend,ad_sales,orders\n"
                            "C1,G1,blue widget,phrase,blue widget cheap,900,30,12,0,0\n"
                            "C1,G1,blue widget,phrase,blue widget,2100,30,12,250,10\n",
        "campaigns.csv": "campaign,ad_type,state,daily_budget,targeting\nC1,product ads,enabled,10.00,manual\n",
        "negatives.csv": "campaign,ad_group,term,match_type\nC1,,free,negative phrase\n",
        "settings.toml": "period_days = 7\nperiod_end = 2026-11-29\n",
    }
    for name, text in files.items():
        (folder / name).write_text(text, encoding="utf-8")
    return folder


def test_follow_up_formulas_recalculated_by_the_formulas_library_equal_the_cached_values(tmp_path):
    from tools.recalc import formulas_values
    from workbook_io import engine_disagreements
    week1 = build(_tiny_week1(tmp_path / "w1"), tmp_path / "w1.xlsx", built_on=BUILT_ON)
    export_changes(week1.output, tmp_path / "c1.csv")
    with (tmp_path / "c1.csv").open(newline="", encoding="utf-8-sig") as f:
        changes = list(csv.DictReader(f))
    assert {"bid", "add negative"} <= {c["kind"] for c in changes}
    applied, elsewhere = choose(changes)
    week2 = build(make_week2(tmp_path / "w1", tmp_path / "w2", applied, elsewhere), tmp_path / "w2.xlsx",
                  built_on=BUILT_ON + dt.timedelta(days=7), previous=week1.output)
    recalculated = {k: v for k, v in formulas_values(week2.output).items() if k[0] == SHEET.upper()}
    wrong, checked = engine_disagreements(week2.output, recalculated)
    assert [] == [w for w in wrong if w.startswith(SHEET.upper())]
    assert 40 <= len(recalculated)
    assert "The periods do not overlap." == openpyxl.load_workbook(week2.output, data_only=True)[SHEET]["A3"].value


def test_the_periods_come_from_the_exports_dates_when_they_carry_them(tmp_path):
    folder = _tiny_week1(tmp_path / "w1")
    (folder / "settings.toml").write_text("", encoding="utf-8")  # no period in the settings
    for name in ("store_sales.csv", "ad_products.csv", "targets.csv", "search_terms.csv"):
        lines = (folder / name).read_text(encoding="utf-8").splitlines()
        dated = [lines[0] + ",start_date,end_date"] + [line + ",2026-11-23,2026-11-29" for line in lines[1:]]
        (folder / name).write_text("\n".join(dated) + "\n", encoding="utf-8")
    week1 = build(folder, tmp_path / "w1.xlsx", built_on=BUILT_ON)
    export_changes(week1.output, tmp_path / "c1.csv")
    with (tmp_path / "c1.csv").open(newline="", encoding="utf-8-sig") as f:
        applied, elsewhere = choose(list(csv.DictReader(f)))
    # next week's exports made without moving their dates: the same 7 days, shared in full
    week2 = build(make_week2(folder, tmp_path / "w2", applied, elsewhere), tmp_path / "w2.xlsx",
                  built_on=BUILT_ON + dt.timedelta(days=7), previous=week1.output)
    ws = openpyxl.load_workbook(week2.output, data_only=True)[SHEET]
    assert ("Last period: 2026-11-23 to 2026-11-29 (7 days). This period: 2026-11-23 to 2026-11-29 (7 days)."
            == ws["A2"].value)
    assert ws["A3"].value.startswith("The periods overlap by 7 days")


def test_four_weeks_built_on_one_day_read_four_weeks_in_history():
    from sheetbuilder.sheets.history import applied_rows, week_of
    one_day = dt.date(2026, 12, 20)
    ends = [dt.date(2026, 11, 29) + dt.timedelta(days=7 * i) for i in range(4)]
    row = {"applied": "yes", "kind": "bid", "campaign": "c", "ad_group": "g", "target": "t", "match_type": "exact",
           "was": 1.0, "planned": 1.2}
    weeks = [applied_rows([row], week_of(end, one_day))[0]["week"] for end in ends]
    assert ["2026-11-29", "2026-12-06", "2026-12-13", "2026-12-20"] == weeks


def test_history_week_without_dates_in_the_exports_is_the_build_date_said_plainly():
    from sheetbuilder.sheets.history import week_of
    assert "built 2026-12-02 (no dates in the exports)" == week_of(None, dt.date(2026, 12, 2))
