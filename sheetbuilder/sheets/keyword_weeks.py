"""The Keyword history sheet: each keyword's and product target's results, week by week, carried by ``--previous``.

One row per keyword or product target (its keys as Bids keys them: campaign, ad group, target,
match type, compared as Bids compares them, trimmed, and shown as the latest export spelled them), holding every recorded week of it, oldest first, packed into text cells: the
periods, then impressions, clicks, orders, spend, ad sales and the bid in force, one item per
week separated by ``; `` (a week whose export gave no bid shows an empty item). Plain values,
records of what happened (as the History sheet), so they cost no recalculation; the totals over
the recorded weeks are Bids' history columns (not written here twice).

Why packed rather than one row per keyword per week: 52 weeks of a 10,000-keyword account are
520,000 rows of 12 cells, which took about 80 s to write and 65 s to read back on the project's
benchmark machine, far above the aim of carrying the history in under twice a ``--previous``
build; one row per keyword keeps 10,000 rows of 11 cells at any number of weeks (a cell holds
32,767 characters: about 1,200 weeks).

The rule for periods (:func:`add_week`): a week is a period (first and last day). A period
identical to one already recorded replaces that week's rows (the same week built again, or a
corrected export); a period sharing some days with a recorded one, but not identical, is refused
with both periods named (totals of different days cannot be split by day); any other period is
added. The ``history_weeks`` setting keeps only the weeks ending within that many weeks of the
newest one (0: every week); the build says which weeks it dropped.
"""
from __future__ import annotations

import datetime as dt
import math
import re
from dataclasses import dataclass, field
from functools import lru_cache
from typing import Any

import pandas as pd

from sheetbuilder.errors import ERROR, WARNING, Problem
from sheetbuilder.reading.periods import Period
from sheetbuilder.sheets.typed import entry_for
from sheetbuilder.workbook.formula import col_letter, quote_sheet
from sheetbuilder.workbook.spec import DATA, Cell, Column, Sheet, Table

SHEET = "Keyword history"
NAME = "sb_keyword_history"  # the defined name over the table's body (read back by weekly/keyword_weeks.py)
WEEK_NAME = "sb_keyword_history_week"  # the build's own week, when recorded: what Bids' history totals run through
HEADER_ROW = 3  # 0-based: title, note, blank, then the header
KEYS = (("campaign", "Campaign", 24), ("ad_group", "Ad group", 16), ("target", "Target", 26),
        ("match_type", "Match type", 9))
METRICS = ("impressions", "clicks", "orders", "spend", "ad_sales", "bid")  # per week, in this order
TOTALS = (("weeks", "Weeks", "int"), ("impressions", "Impressions", "int"), ("clicks", "Clicks", "int"),
          ("orders", "Orders", "int"), ("spend", "Spend", "money"), ("ad_sales", "Ad sales", "money"))
PACKED = (("periods", "Periods"), ("impressions", "Impressions by week"), ("clicks", "Clicks by week"),
          ("orders", "Orders by week"), ("spend", "Spend by week"), ("ad_sales", "Ad sales by week"),
          ("bid", "Bid by week"))
# The sheet's columns: the keys, then the packed weeks. The totals over the weeks (TOTALS) are computed for Bids
# (its history columns hold them) but not written: a workbook built before held them between the keys and the
# packed columns (EARLIER_HEADERS), and is read back by its width or its header (weekly/keyword_weeks.py).
HEADERS = tuple([h for _, h, _ in KEYS] + [h for _, h in PACKED])
EARLIER_HEADERS = tuple([h for _, h, _ in KEYS] + [h for _, h, _ in TOTALS] + [h for _, h in PACKED])
SEPARATOR = "; "
CELL_TEXT_LIMIT = 32_767  # Microsoft, "Excel specifications and limits": characters in a cell
_PERIOD = re.compile(r"(\d{4}-\d{2}-\d{2}) to (\d{4}-\d{2}-\d{2})")

Key = tuple[str, str, str, str]
Week = tuple[float, float, float, float, float, float]  # METRICS, in order (bid NaN when none)
SUMMED = len(METRICS) - 1  # the figures two rows of one keyword add up (all but the bid)
BIDS = entry_for("Bids")   # history rows are compared as Bids compares its rows


@lru_cache(maxsize=1 << 16)  # the same keywords come back every week: a history of many weeks looks each up once
def history_key(parts: tuple[str, ...], exported: bool = True) -> Key:
    """The compared key of a keyword's four key texts, as Bids compares its rows (trimmed).

    exported: the texts as an export gives them (else as a saved workbook gives them back).
    """
    return (BIDS.export_key if exported else BIDS.key_of)(parts, False)


@dataclass
class KeywordHistory:
    """Every recorded week of every keyword and product target: {keys: {period: week figures}}, and the periods."""

    weeks: dict[Key, dict[Period, Week]] = field(default_factory=dict)
    recorded: set[Period] = field(default_factory=set)
    shown: dict[Key, Key] = field(default_factory=dict)  # {compared key: as the latest week spelled it} (else itself)
    current: Period | None = None  # read back: the week its build's Bids read the totals through (None: this week's rows)

    def __post_init__(self) -> None:
        if not self.recorded:
            self.recorded = {p for by_period in self.weeks.values() for p in by_period}

    def periods(self) -> list[Period]:
        """Every recorded period, oldest first."""
        return sorted(self.recorded, key=lambda p: (p.start, p.end))

    def rows(self) -> int:
        """How many keyword-weeks are recorded."""
        return sum(len(v) for v in self.weeks.values())


def week_of(frame: pd.DataFrame, source: str) -> tuple[dict[Key, Week], dict[Key, Key], list[Problem]]:
    """One week's figures per keyword and product target from a targets export, every row kept.

    Returns:
        ({compared key: figures}, {compared key: its key as the export spells it}, notes): rows whose keys
        differ only as Bids does not tell them apart (surrounding spaces) are one keyword: their figures are
        summed, the last row's bid and spelling kept, and a warning says so.
    """
    out: dict[Key, Week] = {}
    shown: dict[Key, Key] = {}
    first: dict[Key, Any] = {}
    merged: dict[Key, list[Any]] = {}
    rows = frame["_row"].tolist() if "_row" in frame else ["?"] * len(frame)
    columns = [frame[c].tolist() for c in ("campaign", "ad_group", "target", "match_type", *METRICS)]
    for row, campaign, ad_group, target, match, *figures in zip(rows, *columns):
        spelled = (str(campaign), str(ad_group), str(target), str(match))
        key = history_key(spelled)
        week = tuple(math.nan if v is None or pd.isna(v) else float(v) for v in figures)
        if key in out:
            merged.setdefault(key, [first[key]]).append(row)
            week = tuple(round(math.fsum(f for f in (a, b) if f == f), 9) if i < SUMMED else b
                         for i, (a, b) in enumerate(zip(out[key], week)))
        else:
            first[key] = row
        out[key], shown[key] = week, spelled
    notes = [Problem(source, None, None,
                     f"rows {', '.join(map(str, rows))} read as the keyword {' / '.join(key)} once surrounding "
                     "spaces are trimmed "
                     "(as Bids compares keywords): the keyword history sums their figures and keeps the last row's "
                     "bid and spelling. Keep one row per keyword if they are not the same", WARNING)
             for key, rows in merged.items()]
    return out, shown, notes


def add_week(history: KeywordHistory, period: Period, week: dict[Key, Week], source: str, severity: str = ERROR,
             shown: dict[Key, Key] | None = None) -> tuple[KeywordHistory, list[Problem]]:
    """history with one week added by the rule of the module docstring, and the problems (a refusal or a note).

    Args:
        history: the weeks recorded so far, changed in place (unchanged when the week is refused).
        period: the week's first and last day.
        week: its figures per keyword and product target.
        source: where the week was read (a file, or "this week's exports"), for the messages.
        severity: the refusal's severity (ERROR for a past export given with --history; the caller decides).
        shown: {compared key: as this week spells it}; a keyword's spelling follows its newest week.
    """
    clash = [p for p in history.periods() if p != period and p.overlap(period)]
    if clash:
        return history, [Problem(source, None, None,
                                 f"covers {period}, which shares days with the week {clash[0]} already in the "
                                 "keyword history but is not the same period; totals of different days cannot be "
                                 "split by day, so it was not added. Give exports of whole weeks that follow one "
                                 "another, or the very same period to replace a week", severity)]
    notes = []
    weeks = history.weeks
    if period in history.recorded:
        for by_period in weeks.values():
            by_period.pop(period, None)
        for key in [k for k, v in weeks.items() if not v]:
            del weeks[key]
        notes.append(Problem(source, None, None, f"covers {period}, a week already in the keyword history: its rows "
                                                  "replace that week's", WARNING))
    for key, figures in week.items():
        by_period = weeks.setdefault(key, {})
        by_period[period] = figures
        if shown and key in shown and period.end >= max(p.end for p in by_period):
            history.shown[key] = shown[key]
    history.recorded.add(period)
    return history, notes


def keep_recent(history: KeywordHistory, weeks: int) -> tuple[KeywordHistory, list[Period]]:
    """(history with only the weeks ending within `weeks` weeks of the newest end, the periods dropped); 0 keeps all."""
    periods = history.periods()
    if weeks <= 0 or not periods:
        return history, []
    newest = max(p.end for p in periods)
    dropped = [p for p in periods if (newest - p.end).days >= 7 * weeks]
    if not dropped:
        return history, []
    gone = set(dropped)
    kept = {k: {p: w for p, w in v.items() if p not in gone} for k, v in history.weeks.items()}
    return KeywordHistory({k: v for k, v in kept.items() if v}, history.recorded - gone,
                          {k: v for k, v in history.shown.items() if kept.get(k)}), dropped


def number_text(value: float) -> str:
    """A figure as a packed item: whole numbers without a point, others as the shortest text that reads back exactly."""
    if math.isnan(value):
        return ""
    if value.is_integer() and abs(value) < 1e15:
        return str(int(value))
    return repr(value)


def period_text(period: Period) -> str:
    """A period as a packed item: 2026-11-23 to 2026-11-29."""
    return f"{period.start.isoformat()} to {period.end.isoformat()}"


def read_period(text: str) -> Period | None:
    """The period a packed item names, or None when it does not read."""
    m = _PERIOD.fullmatch(text.strip())
    if not m:
        return None
    try:
        start, end = dt.date.fromisoformat(m[1]), dt.date.fromisoformat(m[2])
    except ValueError:
        return None
    return Period(start, end) if start <= end else None


def _texts(values: list[float] | tuple[float, ...]) -> list[str]:
    """number_text of each value, inlined for speed (a history of 10,000 keywords packs millions of figures)."""
    return ["" if v != v else (str(int(v)) if v.is_integer() and -1e15 < v < 1e15 else repr(v)) for v in values]


def packed_rows(history: KeywordHistory, texts: bool = True) -> list[dict[str, Any]]:
    """One record per keyword and product target: its keys, totals and packed weeks (oldest first), in key order.

    texts: False leaves out the packed weeks (the periods and each metric's items): the totals alone, which is
    all Bids reads (``changes`` plans no Keyword history sheet).
    """
    order = {p: i for i, p in enumerate(history.periods())}
    period_texts = {p: period_text(p) for p in order}
    out = []
    shown = history.shown
    for key in sorted(history.weeks, key=lambda k: (shown.get(k, k), k)):
        by_period = history.weeks[key]
        periods = sorted(by_period, key=order.__getitem__)
        row: dict[str, Any] = dict(zip((k for k, _, _ in KEYS), shown.get(key, key)))
        row["key"] = key
        row["weeks"] = float(len(periods))
        if texts:
            row["periods"] = SEPARATOR.join([period_texts[p] for p in periods])
        figures = [by_period[p] for p in periods]
        for metric, values in zip(METRICS, zip(*figures) if figures else [()] * len(METRICS)):  # each metric's weeks
            if texts:
                row[metric + "_packed"] = SEPARATOR.join(_texts(values))
            if metric != "bid":
                row[metric] = round(math.fsum([v for v in values if v == v]), 9)
        priced = [f for f in figures if f[5] == f[5] and f[1] == f[1]]  # weeks whose bid in force is known
        row["bid_clicks"] = round(math.fsum(f[1] * f[5] for f in priced), 9)
        row["bid_spend"] = round(math.fsum(f[3] for f in priced if f[3] == f[3]), 9)
        out.append(row)
    return out


def too_long(rows: list[dict[str, Any]]) -> list[Problem]:
    """An error when a packed cell would hold more than a cell holds (the history_weeks setting keeps fewer weeks)."""
    longest = max((len(r[k]) for r in rows for k in ["periods", *(m + "_packed" for m in METRICS)]), default=0)
    if longest <= CELL_TEXT_LIMIT:
        return []
    weeks = max(int(r["weeks"]) for r in rows)
    return [Problem(SHEET, None, None, f"the keyword history holds {weeks} weeks of a keyword, more than a cell of "
                                       f"the {SHEET} sheet holds ({CELL_TEXT_LIMIT:,} characters); set "
                                       "history_weeks in settings.toml (for example 104) to keep fewer weeks")]


@dataclass(frozen=True)
class PackedHistory:
    """The history as the sheet writes it: its packed rows, the periods recorded and those dropped this build."""

    rows: list[dict[str, Any]]
    periods: list[Period]
    dropped: list[Period] = ()
    current: Period | None = None  # the build's own week when the history holds it (Bids then reads the totals)

    def lookup(self, exported: bool = True):
        """A function giving each keyword's totals over every week from its four key texts, or None.

        The totals: (clicks, orders, spend, ad sales, clicks x bid, spend at a known bid), None for a keyword the
        history lacks. None (no function) when the history does not hold the build's own week: Bids then reads
        this week's rows alone, so no week is counted twice and none is taken for this week's.
        exported: the key texts are as an export gives them (else as a saved workbook gives them back).
        """
        if self.current is None:
            return None
        totals = {r["key"]: (r["clicks"], r["orders"], r["spend"], r["ad_sales"], r["bid_clicks"], r["bid_spend"])
                  for r in self.rows}
        return lambda rows: [totals.get(history_key(tuple(map(str, parts)), exported)) for parts in rows]


def packed(history: KeywordHistory, dropped: list[Period] = (), current: Period | None = None,
           texts: bool = True) -> PackedHistory:
    """The history packed for the sheet (rows in key order); current: this build's week, if recorded; texts:
    False for the totals alone (see :func:`packed_rows`)."""
    return PackedHistory(packed_rows(history, texts), history.periods(), list(dropped),
                         current if current is not None and current in history.recorded else None)


def plan_keyword_history(history: PackedHistory) -> tuple[Sheet, list[tuple[str, str]]]:
    """The Keyword history sheet and the defined name over its body."""
    rows, dropped = history.rows, history.dropped
    columns = [Column(header, "text", DATA, [r[key] for r in rows], width=width) for key, header, width in KEYS]
    columns += [Column(header, "text", DATA, [r["periods" if key == "periods" else key + "_packed"] for r in rows],
                       width=30 if key == "periods" else 18) for key, header in PACKED]
    periods = history.periods
    span = f"{len(periods)} week(s), {periods[0].start.isoformat()} to {periods[-1].end.isoformat()}" if periods \
        else "no week recorded yet"
    note = ("Each row is a keyword or product target; its weeks are listed oldest first, one item per week "
            "separated by '; ' (Periods says which days each item covers); their totals are Bids' hidden History columns. "
            "Rows are carried into every rebuild with --previous and never dropped; history_weeks on Settings "
            "limits how many weeks are kept.")
    if dropped:
        note += f" This build dropped {len(dropped)} week(s) older than history_weeks allows."
    week = ("Bids reads each keyword's totals over these weeks, this build's week included:" if history.current
            else "Bids reads this week's rows alone (this build's week is not recorded here):")
    above = [[Cell(f"Keyword history: every keyword's results week by week ({span})", style="title")],
             [Cell(note, style="note")],
             [Cell(week, style="note"), None, None,
              Cell(period_text(history.current) if history.current else "", style="text")]]
    sheet = Sheet(SHEET, above=above, table=Table(HEADER_ROW, columns), freeze=(HEADER_ROW + 1, 3),
                  tab_color="#5A5A5A")
    last = HEADER_ROW + max(len(rows), 1) + 1  # 1-based row of the last body row
    return sheet, [(NAME, f"={quote_sheet(SHEET)}!$A${HEADER_ROW + 2}:${col_letter(len(columns) - 1)}${last}"),
                   (WEEK_NAME, f"={quote_sheet(SHEET)}!$D${HEADER_ROW}")]
