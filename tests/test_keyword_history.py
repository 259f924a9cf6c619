"""The Keyword history: weekly results per keyword carried by --previous, started from past exports, never a week twice.

Expected figures are summed here from the CSV text the tests write (with the csv module and
Decimal), never read from the build's own code; the sheet is read back with openpyxl and its
packed cells split here.
"""
from __future__ import annotations

import csv
import datetime as dt
import io
import shutil
from decimal import Decimal
from pathlib import Path

import openpyxl
import pytest

from conftest import require_libreoffice
from minimal import write_account
from sheetbuilder.errors import ERROR, WARNING, InputProblems
from sheetbuilder.pipeline import build
from sheetbuilder.reading.periods import Period
from sheetbuilder.sheets.keyword_weeks import KeywordHistory, add_week, keep_recent, number_text
from tools.recalc import libreoffice_convert

BUILT_ON = dt.date(2026, 12, 2)
HEADER = ["campaign", "ad_group", "target", "match_type", "state", "bid", "impressions", "clicks", "spend",
          "ad_sales", "orders"]
# Keys a stranger could type, each kept exactly: formula-like text, a leading space, emoji, right-to-left text.
HOSTILE = ["widget", " lead space", '=HYPERLINK("http://x","y")', "+1+2",
           "@SUM(A1) \U0001F331 \u062d\u062f\u064a\u0642\u0629", "-minus first"]


def _targets_csv(rows: list[list]) -> str:
    out = io.StringIO()
    w = csv.writer(out, lineterminator="\n")
    w.writerow(HEADER)
    w.writerows(rows)
    return out.getvalue()


def _week_rows(week: int) -> list[list]:
    """One week's targets rows: every hostile key with figures that differ per week, one bid change a week."""
    rows = []
    for i, text in enumerate(HOSTILE):
        clicks = 3 * week + i
        rows.append(["C1", "G1", text, "exact" if i % 2 == 0 else "phrase", "enabled", f"{0.4 + 0.05 * week:.2f}",
                     str(100 * week + 7 * i), str(clicks), f"{clicks * 0.37:.2f}", f"{(week + i) * 12.5:.2f}",
                     str((week + i) % 3)])
    return rows


def _week_folder(base: Path, name: str, rows: list[list], end: dt.date, days: int = 7) -> Path:
    return write_account(base / name, {"targets.csv": _targets_csv(rows),
                                       "settings.toml": f"period_days = {days}\nperiod_end = {end.isoformat()}\n"})


def _history(path: Path) -> dict[tuple, dict]:
    """{(campaign, ad group, target, match type): {header: value}} of the Keyword history, packed cells split."""
    ws = openpyxl.load_workbook(path, read_only=True)["Keyword history"]
    rows = list(ws.iter_rows(min_row=4, values_only=True))
    header = list(rows[0])
    out = {}
    for r in rows[1:]:
        if r[0] is None:
            continue
        row = dict(zip(header, r))
        for h in header[header.index("Periods"):]:
            row[h] = str(row[h]).split("; ")
        out[tuple(r[:4])] = row
    return out


def _expected(weeks: list[tuple[Period, list[list]]]) -> dict[tuple, dict]:
    """{keys: {period: (impressions, clicks, orders, spend, ad sales, bid)}} summed from the CSV rows as Decimals."""
    out: dict[tuple, dict] = {}
    for period, rows in weeks:
        for r in rows:
            key = tuple(r[:4])
            figures = tuple(Decimal(r[HEADER.index(c)]) for c in ("impressions", "clicks", "orders", "spend",
                                                                  "ad_sales", "bid"))
            out.setdefault(key, {})[period] = figures
    return out


def _check(path: Path, weeks: list[tuple[Period, list[list]]]) -> None:
    """The sheet holds exactly the expected weeks of every key, oldest first, and their totals."""
    got, want = _history(path), _expected(weeks)
    assert sorted(want) == sorted(got)
    for key, by_period in want.items():
        row = got[key]
        periods = sorted(by_period, key=lambda p: p.start)
        assert [f"{p.start} to {p.end}" for p in periods] == row["Periods"]
        for i, header in enumerate(("Impressions by week", "Clicks by week", "Orders by week", "Spend by week",
                                    "Ad sales by week", "Bid by week")):
            assert [by_period[p][i] for p in periods] == [Decimal(v) for v in row[header]], (key, header)
        # The totals over the weeks are Bids' history columns, not written on this sheet a second time.
        assert not {"Weeks", "Impressions", "Clicks", "Orders", "Spend", "Ad sales"} & set(row), key


def _period(end: dt.date, days: int = 7) -> Period:
    return Period(end - dt.timedelta(days=days - 1), end)


# -- the rule for periods, on the records ---------------------------------------------------------------------------

def test_the_same_period_replaces_its_week_and_one_sharing_days_is_refused_naming_both():
    first, second = _period(dt.date(2026, 11, 8)), _period(dt.date(2026, 11, 15))
    key = ("C1", "G1", "widget", "exact")
    history, problems = add_week(KeywordHistory(), first, {key: (1.0, 1.0, 0.0, 0.5, 0.0, 0.4)}, "a.csv")
    history, problems = add_week(history, second, {key: (2.0, 2.0, 1.0, 0.9, 10.0, 0.45)}, "b.csv")
    assert [] == problems
    assert [first, second] == history.periods()
    history, problems = add_week(history, second, {key: (3.0, 3.0, 1.0, 1.2, 10.0, 0.5)}, "c.csv")
    assert (3.0, 3.0, 1.0, 1.2, 10.0, 0.5) == history.weeks[key][second]
    assert [WARNING] == [p.severity for p in problems]
    shifted = Period(dt.date(2026, 11, 12), dt.date(2026, 11, 18))
    refused, problems = add_week(history, shifted, {key: (9.0, 9.0, 9.0, 9.0, 9.0, 9.0)}, "d.csv")
    assert refused is history
    assert [ERROR] == [p.severity for p in problems]
    assert "2026-11-12 to 2026-11-18" in problems[0].message and "2026-11-09 to 2026-11-15" in problems[0].message


def test_weeks_ending_more_than_history_weeks_before_the_newest_are_dropped_and_returned():
    key = ("C1", "G1", "widget", "exact")
    ends = [dt.date(2026, 11, 1) + dt.timedelta(days=7 * i) for i in range(5)]
    history = KeywordHistory({key: {_period(e): (1.0, 1.0, 0.0, 0.5, 0.0, 0.4) for e in ends}})
    kept, dropped = keep_recent(history, 3)
    assert [_period(e) for e in ends[:2]] == dropped
    assert [_period(e) for e in ends[2:]] == kept.periods()
    assert (history, []) == keep_recent(history, 0)


@pytest.mark.parametrize("value", [0.0, 7.0, 0.1, 0.1 + 0.2, 1234.56, 1e-7, 123456789.125, 2.0 ** 52 + 0.5])
def test_a_packed_figure_reads_back_as_the_same_number(value):
    assert value == float(number_text(value))


# -- builds ---------------------------------------------------------------------------------------------------------

def test_this_weeks_exports_sharing_days_with_a_recorded_week_are_not_added_and_said(tmp_path):
    week1 = _week_rows(1)
    first = build(_week_folder(tmp_path, "w1", week1, dt.date(2026, 11, 8)), tmp_path / "w1.xlsx",
                  built_on=BUILT_ON)
    assert [] == [p for p in first.warnings if "keyword history" in p.message]
    second = build(_week_folder(tmp_path, "w2", _week_rows(2), dt.date(2026, 11, 11)), tmp_path / "w2.xlsx",
                   built_on=BUILT_ON, previous=tmp_path / "w1.xlsx")
    said = [p.message for p in second.warnings if "shares days" in p.message]
    assert 1 == len(said) and "2026-11-05 to 2026-11-11" in said[0] and "2026-11-02 to 2026-11-08" in said[0]
    _check(tmp_path / "w2.xlsx", [(_period(dt.date(2026, 11, 8)), week1)])
    again = _week_rows(3)  # the same period as week 1, corrected figures: they replace week 1's
    build(_week_folder(tmp_path, "w1b", again, dt.date(2026, 11, 8)), tmp_path / "w1b.xlsx", built_on=BUILT_ON,
          previous=tmp_path / "w2.xlsx")
    _check(tmp_path / "w1b.xlsx", [(_period(dt.date(2026, 11, 8)), again)])


def test_history_dir_reads_title_rows_totals_rows_and_one_row_per_day(tmp_path):
    past = tmp_path / "past"
    past.mkdir()
    p1 = [["C1", "G1", "widget", "exact", "enabled", "0.45", "120", "6", "2.22", "25.00", "1"],
          ["C1", "G1", "gizmo", "phrase", "paused", "0.30", "0", "0", "0.00", "0.00", "0"]]
    # an export with a title block stating its period and a totals row under the data
    titled = ("Keyword report\nReporting period: 2026-10-19 to 2026-10-25\n\n" + _targets_csv(p1)
              + "Total,,,,,,120,6,2.22,25.00,1\n")
    (past / "report one.csv").write_text(titled, encoding="utf-8")
    # one row per day with a date column: figures summed, the bid in force on the last day kept
    daily = io.StringIO()
    w = csv.writer(daily, lineterminator="\n")
    w.writerow(["date", *HEADER])
    days = [dt.date(2026, 10, 26) + dt.timedelta(days=i) for i in range(7)]
    for i, day in enumerate(days):
        w.writerow([day.isoformat(), "C1", "G1", "widget", "exact", "enabled", "0.50" if i < 4 else "0.55",
                    str(10 + i), str(i % 3), f"{0.31 * (i % 3):.2f}", "12.50" if i == 5 else "0.00",
                    "1" if i == 5 else "0"])
    (past / "daily.csv").write_text(daily.getvalue(), encoding="utf-8")
    # a past week's exports folder, its targets export named with its period
    week_dir = past / "week 45"
    week_dir.mkdir()
    p3 = [["C1", "G1", "widget", "exact", "enabled", "0.55", "90", "4", "1.60", "0.00", "0"]]
    (week_dir / "targets 2026-11-02 to 2026-11-08.csv").write_text(_targets_csv(p3), encoding="utf-8")
    this = _week_rows(1)
    result = build(_week_folder(tmp_path, "now", this, dt.date(2026, 11, 15)), tmp_path / "now.xlsx",
                   built_on=BUILT_ON, history=past)
    daily_week = [["C1", "G1", "widget", "exact", "enabled", "0.55",
                   str(sum(10 + i for i in range(7))), str(sum(i % 3 for i in range(7))),
                   str(sum(Decimal("0.31") * (i % 3) for i in range(7)).quantize(Decimal("0.01"))), "12.50", "1"]]
    _check(tmp_path / "now.xlsx", [(Period(dt.date(2026, 10, 19), dt.date(2026, 10, 25)), p1),
                                   (Period(days[0], days[-1]), daily_week),
                                   (_period(dt.date(2026, 11, 8)), p3), (_period(dt.date(2026, 11, 15)), this)])
    assert [] == [p for p in result.warnings if "keyword history" in p.message]


def test_two_past_exports_sharing_days_stop_the_build_naming_both_periods(tmp_path):
    past = tmp_path / "past"
    past.mkdir()
    rows = [["C1", "G1", "widget", "exact", "enabled", "0.45", "120", "6", "2.22", "25.00", "1"]]
    (past / "targets 2026-10-19 to 2026-10-25.csv").write_text(_targets_csv(rows), encoding="utf-8")
    (past / "targets 2026-10-22 to 2026-10-28.csv").write_text(_targets_csv(rows), encoding="utf-8")
    with pytest.raises(InputProblems) as caught:
        build(_week_folder(tmp_path, "now", _week_rows(1), dt.date(2026, 11, 15)), tmp_path / "now.xlsx",
              built_on=BUILT_ON, history=past)
    messages = [p.message for p in caught.value.problems if p.severity == ERROR]
    assert 1 == len(messages)
    assert "2026-10-22 to 2026-10-28" in messages[0] and "2026-10-19 to 2026-10-25" in messages[0]
    assert not (tmp_path / "now.xlsx").exists()


def test_a_past_export_stating_no_period_is_refused_by_name(tmp_path):
    past = tmp_path / "past"
    past.mkdir()
    (past / "old keywords.csv").write_text(_targets_csv(_week_rows(1)), encoding="utf-8")
    with pytest.raises(InputProblems) as caught:
        build(_week_folder(tmp_path, "now", _week_rows(2), dt.date(2026, 11, 15)), tmp_path / "now.xlsx",
              built_on=BUILT_ON, history=past)
    assert ["old keywords.csv"] == [p.file for p in caught.value.problems if p.severity == ERROR]


@pytest.mark.parametrize("cell, text", [("Clicks by week", "3; x"), ("Periods", "2026-11-02 to 2026-11-08; soon"),
                                        ("Spend by week", "1.11")])
@pytest.mark.slow  # moved out of the fast lane, which must stay under two minutes
def test_a_keyword_history_the_build_cannot_read_stops_the_build_naming_its_row_and_column(tmp_path, cell, text):
    build(_week_folder(tmp_path, "w1", _week_rows(1), dt.date(2026, 11, 8)), tmp_path / "w1.xlsx", built_on=BUILT_ON)
    build(_week_folder(tmp_path, "w2", _week_rows(2), dt.date(2026, 11, 15)), tmp_path / "w2.xlsx",
          built_on=BUILT_ON, previous=tmp_path / "w1.xlsx")
    wb = openpyxl.load_workbook(tmp_path / "w2.xlsx")
    ws = wb["Keyword history"]
    column = [c.value for c in ws[4]].index(cell) + 1
    ws.cell(row=6, column=column).value = text
    wb.save(tmp_path / "damaged.xlsx")
    with pytest.raises(InputProblems) as caught:
        build(_week_folder(tmp_path, "w3", _week_rows(3), dt.date(2026, 11, 22)), tmp_path / "w3.xlsx",
              built_on=BUILT_ON, previous=tmp_path / "damaged.xlsx")
    errors = [p for p in caught.value.problems if p.severity == ERROR]
    assert [("damaged.xlsx", 6, cell)] == [(p.file, p.row, p.column) for p in errors]
    assert not (tmp_path / "w3.xlsx").exists()


def test_a_week_without_a_period_is_not_recorded_and_the_weeks_carried_stay(tmp_path):
    week1 = _week_rows(1)
    build(_week_folder(tmp_path, "w1", week1, dt.date(2026, 11, 8)), tmp_path / "w1.xlsx", built_on=BUILT_ON)
    undated = write_account(tmp_path / "w2", {"targets.csv": _targets_csv(_week_rows(2))})
    result = build(undated, tmp_path / "w2.xlsx", built_on=BUILT_ON, previous=tmp_path / "w1.xlsx")
    assert any("state no period" in p.message for p in result.warnings)
    _check(tmp_path / "w2.xlsx", [(_period(dt.date(2026, 11, 8)), week1)])


@pytest.mark.slow
def test_four_weeks_built_in_a_row_each_saved_by_libreoffice_keep_every_week_and_every_string(tmp_path):
    require_libreoffice()
    weeks, previous = [], None
    for n in range(1, 5):
        end = dt.date(2026, 11, 1) + dt.timedelta(days=7 * n)
        rows = _week_rows(n)
        if n == 3:  # a keyword that is new this week
            rows.append(["C1", "G1", "new one", "broad", "enabled", "0.61", "40", "2", "0.80", "0.00", "0"])
        weeks.append((_period(end), rows))
        out = tmp_path / f"w{n}.xlsx"
        build(_week_folder(tmp_path, f"w{n}", rows, end), out, built_on=BUILT_ON, previous=previous)
        _check(out, weeks)
        saved_dir = tmp_path / f"saved{n}"
        saved_dir.mkdir()
        shutil.copy(out, saved_dir / "in.xlsx")
        previous = libreoffice_convert([saved_dir / "in.xlsx"], saved_dir / "out")[0]  # as a user's save
        _check(previous, weeks)


def test_a_previous_workbook_without_the_sheet_is_said_and_the_history_starts_with_this_week(tmp_path):
    build(_week_folder(tmp_path, "w1", _week_rows(1), dt.date(2026, 11, 8)), tmp_path / "w1.xlsx", built_on=BUILT_ON)
    wb = openpyxl.load_workbook(tmp_path / "w1.xlsx")
    del wb["Keyword history"]  # the seller deleted it on purpose, to start a new history
    wb.save(tmp_path / "without.xlsx")
    week2 = _week_rows(2)
    result = build(_week_folder(tmp_path, "w2", week2, dt.date(2026, 11, 15)), tmp_path / "w2.xlsx",
                   built_on=BUILT_ON, previous=tmp_path / "without.xlsx")
    assert [("without.xlsx", WARNING)] == [(p.file, p.severity) for p in result.warnings
                                           if "holds no Keyword history" in p.message]
    _check(tmp_path / "w2.xlsx", [(_period(dt.date(2026, 11, 15)), week2)])


# -- keys compared as Bids compares them (trimmed), shown as the latest export spelled them -------------------------

def test_a_keyword_spelled_with_a_trailing_space_one_week_and_without_the_next_keeps_one_history(tmp_path):
    week1 = [["C1", "G1", "widget ", "exact", "enabled", "0.45", "100", "10", "3.70", "12.50", "1"]]
    week2 = [["C1", "G1", "widget", "exact", "enabled", "0.50", "200", "13", "4.81", "25.00", "2"]]
    build(_week_folder(tmp_path, "w1", week1, dt.date(2026, 11, 8)), tmp_path / "w1.xlsx", built_on=BUILT_ON)
    build(_week_folder(tmp_path, "w2", week2, dt.date(2026, 11, 15)), tmp_path / "w2.xlsx", built_on=BUILT_ON,
          previous=tmp_path / "w1.xlsx")
    got = _history(tmp_path / "w2.xlsx")
    assert [("C1", "G1", "widget", "exact")] == list(got)  # one row, spelled as the latest export spells it
    row = got[("C1", "G1", "widget", "exact")]
    assert (["2026-11-02 to 2026-11-08", "2026-11-09 to 2026-11-15"], ["100", "200"], ["10", "13"], ["3.7", "4.81"],
            ["0.45", "0.5"]) == (row["Periods"], row["Impressions by week"], row["Clicks by week"],
                                 row["Spend by week"], row["Bid by week"])
    build(_week_folder(tmp_path, "w3", [[" C1", "G1", " widget  ", "exact", "enabled", "0.50", "50", "5", "1.00",
                                         "0.00", "0"]], dt.date(2026, 11, 22)),
          tmp_path / "w3.xlsx", built_on=BUILT_ON, previous=tmp_path / "w2.xlsx")
    got = _history(tmp_path / "w3.xlsx")
    assert [("C1", "G1", " widget  ", "exact")] == list(got)  # the newest spelling again (campaigns are read trimmed)
    assert ["100", "200", "50"] == got[("C1", "G1", " widget  ", "exact")]["Impressions by week"]


def test_two_rows_of_one_export_that_differ_only_by_surrounding_spaces_are_summed_and_said():
    import pandas as pd
    from sheetbuilder.sheets.keyword_weeks import week_of
    frame = pd.DataFrame({"campaign": ["C1", "C1"], "ad_group": ["G1", "G1"], "target": ["widget", "widget "],
                          "match_type": ["exact", "exact"], "impressions": [100, 50], "clicks": [10, 5],
                          "orders": [1, 0], "spend": [3.7, 1.1], "ad_sales": [12.5, 0.0], "bid": [0.45, 0.5],
                          "_row": [2, 3]})
    figures, shown, notes = week_of(frame, "targets.csv")
    key = ("C1", "G1", "widget", "exact")
    assert ({key: (150.0, 15.0, 1.0, 4.8, 12.5, 0.5)}, {key: ("C1", "G1", "widget ", "exact")}) == (figures, shown)
    assert [(WARNING, True)] == [(p.severity, "rows 2, 3" in p.message) for p in notes]


class _SavedSheet:
    """A saved workbook holding only a Keyword history sheet, as the reader asks for it (no defined name left)."""

    def __init__(self, rows: list[list], headers: tuple[str, ...]):
        self.path, self.sheetnames = Path("last week.xlsx"), ["Keyword history"]
        self._rows = [[None] * len(headers)] * 3 + [list(headers)] + rows

    def area(self, name):
        return None

    def rows(self, sheet, columns=None):
        return self._rows


def _saved_row(target: str, period: str, impressions: str, totals: bool) -> list:
    """A saved row: keys, (in a workbook built before the totals left the sheet: weeks and totals), packed weeks."""
    return ["C1", "G1", target, "exact", *([1, float(impressions), 1, 0, 0.5, 0.0] if totals else []),
            period, impressions, "1", "0", "0.5", "0", "0.4"]


@pytest.mark.parametrize("totals", [False, True], ids=["this layout", "built before, with totals"])
def test_rows_an_earlier_build_split_by_surrounding_spaces_are_read_back_as_one_keyword(totals):
    from sheetbuilder.sheets.keyword_weeks import EARLIER_HEADERS, HEADERS
    from sheetbuilder.weekly.keyword_weeks import read_keyword_history
    first, second = _period(dt.date(2026, 11, 8)), _period(dt.date(2026, 11, 15))
    headers = EARLIER_HEADERS if totals else HEADERS
    history, problems = read_keyword_history(_SavedSheet(
        [_saved_row("widget", "2026-11-09 to 2026-11-15", "200", totals),
         _saved_row("widget ", "2026-11-02 to 2026-11-08", "100", totals)], headers))
    key = ("C1", "G1", "widget", "exact")
    assert ([], [key], {first: 100.0, second: 200.0}) == (
        problems, list(history.weeks), {p: w[0] for p, w in history.weeks[key].items()})
    assert ("C1", "G1", "widget", "exact") == history.shown[key]  # the spelling of the row with the newest week
    _, problems = read_keyword_history(_SavedSheet([_saved_row("widget", "2026-11-09 to 2026-11-15", "200", totals),
                                                    _saved_row(" widget", "2026-11-09 to 2026-11-15", "100", totals)],
                                                   headers))
    assert [(ERROR, 6)] == [(p.severity, p.row) for p in problems]  # the same week twice: which is right is unknown


def test_a_workbook_built_with_the_totals_on_the_sheet_keeps_every_week(tmp_path):
    """A workbook built before the totals left the sheet (its defined name six columns wider) is read by its layout."""
    week1, week2 = _week_rows(1), _week_rows(2)
    build(_week_folder(tmp_path, "w1", week1, dt.date(2026, 11, 8)), tmp_path / "w1.xlsx", built_on=BUILT_ON)
    wb = openpyxl.load_workbook(tmp_path / "w1.xlsx")
    ws = wb["Keyword history"]
    ws.insert_cols(5, 6)  # the earlier layout: Weeks and the five totals between the keys and the packed weeks
    for i, header in enumerate(("Weeks", "Impressions", "Clicks", "Orders", "Spend", "Ad sales")):
        ws.cell(4, 5 + i).value = header
        for r in range(5, ws.max_row + 1):
            ws.cell(r, 5 + i).value = 999  # totals the reader must not take for weeks
    name = wb.defined_names["sb_keyword_history"]
    name.attr_text = f"'Keyword history'!$A$5:$Q${ws.max_row}"
    wb.save(tmp_path / "earlier.xlsx")
    build(_week_folder(tmp_path, "w2", week2, dt.date(2026, 11, 15)), tmp_path / "w2.xlsx", built_on=BUILT_ON,
          previous=tmp_path / "earlier.xlsx")
    _check(tmp_path / "w2.xlsx", [(_period(dt.date(2026, 11, 8)), week1), (_period(dt.date(2026, 11, 15)), week2)])
