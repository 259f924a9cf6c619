"""Exports with one row per day: summed per key, the bid of the last day, the period read from the dates.

A keyword export downloaded with a daily breakdown holds seven rows per keyword for a week.
Built as it arrives, the workbook must hold one Bids row per keyword whose clicks are the
days' sum and whose current bid is the last day's, and every computed cell must equal the
workbook built from the same week written one row per keyword (summed here, in the test,
from the rows as written). Three ways: that canonical build's reference (tests/oracle.py),
the cached values, and the values after recalculation by `formulas` and by LibreOffice.
"""
from __future__ import annotations

import datetime as dt
from pathlib import Path

import minimal
import openpyxl
import pytest

from bids_io import bids_oracle_for
from conftest import BUILT_ON, require_libreoffice
from same_cells import computed_differences
from workbook_io import engine_disagreements, mismatches, open_values, read_table
from sheetbuilder.errors import ERROR, WARNING, InputProblems
from sheetbuilder.reading.periods import parse_dates
from sheetbuilder.pipeline import build, load
from tools.recalc import formulas_values, libreoffice_convert

WEEK = [dt.date(2026, 11, 23) + dt.timedelta(days=i) for i in range(7)]
TARGET_COLUMNS = ["campaign", "ad_group", "target", "match_type", "state", "bid", "impressions", "clicks", "spend",
                  "ad_sales", "orders"]


def _daily_targets() -> list[dict]:
    """Three keywords, seven days each; 'widget' has its bid raised from 0.50 to 0.65 on Thursday."""
    rows = []
    for i, day in enumerate(WEEK):
        rows.append({"date": day, "campaign": "C1", "ad_group": "G1", "target": "widget", "match_type": "exact",
                     "state": "enabled", "bid": 0.50 if i < 3 else 0.65, "impressions": 100 + i,
                     "clicks": 3 + i, "spend": round(1.21 + i * 0.13, 2), "ad_sales": 20.0 if i % 2 else 0.0,
                     "orders": 1 if i % 2 else 0})
        rows.append({"date": day, "campaign": "C1", "ad_group": "G1", "target": "gadget holder",
                     "match_type": "phrase", "state": "enabled", "bid": 0.40, "impressions": 40, "clicks": 2,
                     "spend": 0.83, "ad_sales": 10.0 if i == 5 else 0.0, "orders": 1 if i == 5 else 0})
        rows.append({"date": day, "campaign": "C1", "ad_group": "G1", "target": "widget set", "match_type": "broad",
                     "state": "enabled" if i < 6 else "paused", "bid": 0.30, "impressions": 10 * i,
                     "clicks": i, "spend": round(0.25 * i, 2), "ad_sales": 0.0, "orders": 0})
    return rows


def _summed(rows: list[dict]) -> list[dict]:
    """One row per keyword, written from the rule: counts and money summed, bid and state of the last day."""
    out: dict[tuple, dict] = {}
    for r in sorted(rows, key=lambda r: r["date"]):
        key = (r["campaign"], r["ad_group"], r["target"], r["match_type"])
        if key not in out:
            out[key] = {**r}
            continue
        kept = out[key]
        for col in ("impressions", "clicks", "spend", "ad_sales", "orders"):
            kept[col] = round(kept[col] + r[col], 2)
        kept["bid"], kept["state"] = r["bid"], r["state"]
    return list(out.values())


def _csv(rows: list[dict], columns: list[str], date_header: str | None = None) -> str:
    head = ([date_header] if date_header else []) + columns
    lines = [",".join(head)]
    for r in rows:
        cells = ([r["date"].isoformat()] if date_header else []) + [f"{r[c]:.2f}" if isinstance(r[c], float)
                                                                    else str(r[c]) for c in columns]
        lines.append(",".join(cells))
    return "\n".join(lines) + "\n"


@pytest.fixture(scope="module")
def week(tmp_path_factory):
    """(per-day folder and workbook, canonical folder and workbook)."""
    root = tmp_path_factory.mktemp("week")
    daily = minimal.write_account(root / "daily", {"targets.csv": _csv(_daily_targets(), TARGET_COLUMNS, "Date")})
    canonical = minimal.write_account(root / "canonical", {
        "targets.csv": _csv(_summed(_daily_targets()), TARGET_COLUMNS),
        "settings.toml": "period_days = 7\nperiod_end = 2026-11-29\n"})
    return (daily, build(daily, root / "daily.xlsx", built_on=BUILT_ON).output,
            canonical, build(canonical, root / "canonical.xlsx", built_on=BUILT_ON).output)


def _bids_by_keyword(path: Path) -> dict:
    rows, _, _ = read_table(open_values(path)["Bids"], 4, "Target row", stop=None)
    return {(r["Campaign"], r["Ad group"], r["Target"], r["Match type"]): r for r in rows.values()}


def test_bids_has_one_row_per_keyword_with_the_days_clicks_and_the_last_days_bid(week):
    _, daily_xlsx, _, _ = week
    bids = _bids_by_keyword(daily_xlsx)
    assert {("C1", "G1", "widget", "exact"), ("C1", "G1", "gadget holder", "phrase")} == set(bids)
    assert 3 + 4 + 5 + 6 + 7 + 8 + 9 == bids[("C1", "G1", "widget", "exact")]["Clicks"]
    assert 0.65 == bids[("C1", "G1", "widget", "exact")]["Current bid"]
    assert 14 == bids[("C1", "G1", "gadget holder", "phrase")]["Clicks"]


def test_the_paused_on_the_last_day_keyword_is_paused(week):
    daily, _, _, _ = week
    inputs, _, _ = load(daily)
    targets = inputs.get("targets").set_index("target")
    assert "paused" == targets.loc["widget set", "state"]
    assert 3 == len(targets)


def test_every_computed_cell_equals_the_one_row_per_keyword_build(week):
    _, daily_xlsx, _, canonical_xlsx = week
    assert [] == computed_differences(canonical_xlsx, daily_xlsx)


def test_cached_bids_equal_the_reference_of_the_summed_week(week):
    _, daily_xlsx, canonical, _ = week
    expected = bids_oracle_for(canonical)
    by_key = {}
    rows, _, _ = read_table(open_values(daily_xlsx)["Bids"], 4, "Target row", stop=None)
    for r in rows.values():
        by_key[(r["Campaign"], r["Ad group"], r["Target"], r["Match type"])] = r
    want = {(r["Campaign"], r["Ad group"], r["Target"], r["Match type"]): r for r in expected.values()}
    assert sorted(want) == sorted(by_key)
    # Zero-order clicks are the ad group's blend on Groups (no Bids column): compared through the Reason.
    assert [] == mismatches(want, by_key, [h for h in next(iter(want.values()))
                                           if h not in ("Target row", "Zero-order clicks")], "daily")


@pytest.mark.slow  # several seconds: the fast lane stays under two minutes
def test_formulas_engine_equals_cached_values_of_the_daily_build(week):
    _, daily_xlsx, _, _ = week
    problems, checked = engine_disagreements(daily_xlsx, formulas_values(daily_xlsx))
    assert [] == problems
    assert checked > 100


@pytest.mark.libreoffice
def test_libreoffice_equals_cached_values_of_the_daily_build(week, tmp_path):
    require_libreoffice()
    _, daily_xlsx, _, _ = week
    recalculated = libreoffice_convert([daily_xlsx], tmp_path / "lo")[0]
    wb = open_values(recalculated)
    values = {(ws.title.upper(), c.coordinate): c.value for ws in wb.worksheets for row in ws.iter_rows() for c in row}
    problems, checked = engine_disagreements(daily_xlsx, values)
    assert [] == problems
    assert checked > 100


def test_the_period_is_read_from_the_dates_and_shown_on_settings_and_the_guide(week):
    daily, daily_xlsx, _, _ = week
    _, settings, problems = load(daily)
    assert (7, dt.date(2026, 11, 29)) == (settings.period_days, settings.period_end)
    notes = [p.message for p in problems if p.severity == WARNING]
    assert any("period read from the dates: 2026-11-23 to 2026-11-29 (7 days)" in n for n in notes)
    wb = openpyxl.load_workbook(daily_xlsx)
    shown = [r for r in wb["Settings"].iter_rows(values_only=True) if r[0] == "Period in the exports"]
    assert "2026-11-23 to 2026-11-29 (7 days)" == shown[0][1]
    guide = [str(r[1]) for r in wb["Guide"].iter_rows(values_only=True) if r[1]]
    assert any("period read from the dates" in text for text in guide)


def test_settings_toml_period_wins_over_the_dates(tmp_path):
    folder = minimal.write_account(tmp_path, {"targets.csv": _csv(_daily_targets(), TARGET_COLUMNS, "Date"),
                                              "settings.toml": "period_days = 30\n"})
    _, settings, _ = load(folder)
    assert (30, dt.date(2026, 11, 29)) == (settings.period_days, settings.period_end)


def test_a_start_and_end_date_export_gives_the_period(tmp_path):
    ads = ("Start Date,End Date," + minimal.AD_PRODUCTS.splitlines()[0] + "\n"
           + "".join(f"11/01/2026,11/30/2026,{line}\n" for line in minimal.AD_PRODUCTS.splitlines()[1:]))
    inputs, settings, _ = load(minimal.write_account(tmp_path, {"ad_products.csv": ads}))
    assert (dt.date(2026, 11, 1), dt.date(2026, 11, 30)) == (inputs.period.start, inputs.period.end)
    assert (30, dt.date(2026, 11, 30)) == (settings.period_days, settings.period_end)


def test_tables_covering_different_periods_are_refused_naming_both(tmp_path):
    sales = "Date,product_id,units,revenue\n2026-11-01,P1,10,200.00\n2026-11-01,P2,5,50.00\n"
    folder = minimal.write_account(tmp_path, {"targets.csv": _csv(_daily_targets(), TARGET_COLUMNS, "Date"),
                                              "store_sales.csv": sales})
    with pytest.raises(InputProblems) as caught:
        load(folder)
    differ = [p for p in caught.value.problems if "different periods" in p.message]
    assert [ERROR] == [p.severity for p in differ]
    assert ("store_sales.csv 2026-11-01 to 2026-11-01 (1 days); targets.csv 2026-11-23 to 2026-11-29 (7 days)"
            in differ[0].message)


def test_without_dates_repeated_keywords_with_the_same_bid_and_state_are_summed_with_a_note(tmp_path):
    targets = minimal.TARGETS + "C1,G1,widget,exact,enabled,0.50,50,4,2.00,0.00,0\n"
    inputs, _, problems = load(minimal.write_account(tmp_path, {"targets.csv": targets}))
    frame = inputs.get("targets")
    assert [14.0] == frame["clicks"].tolist()
    assert [7.0] == frame["spend"].tolist()
    assert any("repeat a keyword or target" in p.message and p.severity == WARNING for p in problems)


def test_without_dates_repeated_keywords_with_different_bids_are_an_error_naming_the_rows(tmp_path):
    targets = minimal.TARGETS + "C1,G1,other,exact,enabled,0.20,5,1,0.20,0,0\nC1,G1,widget,exact,enabled,0.70,50,4,2,0,0\n"
    with pytest.raises(InputProblems) as caught:
        load(minimal.write_account(tmp_path, {"targets.csv": targets}))
    errors = [p for p in caught.value.problems if p.severity == ERROR]
    assert [("targets.csv", 4, "bid")] == [(p.file, p.row, p.column) for p in errors]
    assert "rows 2, 4" in errors[0].message and "0.5, 0.7" in errors[0].message


def test_daily_campaign_rows_take_the_budget_of_the_latest_day(tmp_path):
    campaigns = ("Date,campaign,ad_type,state,daily_budget,targeting\n"
                 "2026-11-24,C1,product ads,enabled,20.00,manual\n"
                 "2026-11-23,C1,product ads,enabled,15.00,manual\n")
    inputs, _, _ = load(minimal.write_account(tmp_path, {"campaigns.csv": campaigns}))
    assert [20.0] == inputs.get("campaigns")["daily_budget"].tolist()


@pytest.mark.parametrize("texts, expected", [
    (["2026-11-23", "2026-11-24T00:00:00"], [dt.date(2026, 11, 23), dt.date(2026, 11, 24)]),
    (["23/11/2026", "01/12/2026"], [dt.date(2026, 11, 23), dt.date(2026, 12, 1)]),       # 23 can only be a day
    (["11/23/2026", "12/01/2026"], [dt.date(2026, 11, 23), dt.date(2026, 12, 1)]),       # so can 23 here
    (["Nov 23, 2026", "23 Nov 2026", "20261123"], [dt.date(2026, 11, 23)] * 3),
])
def test_dates_as_exports_write_them(texts, expected):
    assert (expected, []) == parse_dates(texts)


def test_a_column_of_dates_that_could_be_day_or_month_first_is_refused():
    dates, problems = parse_dates(["01/02/2026", "03/04/2026"])
    assert [None, None] == dates
    assert [0, 1] == [i for i, _ in problems]
    assert "could be day/month or month/day" in problems[0][1]


def test_a_date_that_is_not_a_date_is_an_error_naming_file_row_and_column(tmp_path):
    rows = _csv(_daily_targets(), TARGET_COLUMNS, "Date").replace("2026-11-25", "next week", 1)
    with pytest.raises(InputProblems) as caught:
        load(minimal.write_account(tmp_path, {"targets.csv": rows}))
    errors = [(p.file, p.row, p.column) for p in caught.value.problems if p.severity == ERROR]
    assert [("targets.csv", 8, "Date")] == errors


def test_a_date_column_can_be_mapped_in_settings(tmp_path):
    folder = minimal.write_account(tmp_path, {"targets.csv": _csv(_daily_targets(), TARGET_COLUMNS, "Report Day"),
                                              "settings.toml": '[columns.targets]\ndate = "Report Day"\n'})
    inputs, settings, _ = load(folder)
    assert 3 == len(inputs.get("targets"))
    assert (7, dt.date(2026, 11, 29)) == (settings.period_days, settings.period_end)
