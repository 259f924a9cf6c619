"""The keyword history across builds: read back from last week's workbook, joined with past exports and this week's.

A saved Keyword history (:mod:`sheetbuilder.sheets.keyword_weeks`) is found by its defined name
(by sheet name and header when the name is gone) and read once, streaming, with the rest of the
saved workbook (:mod:`sheetbuilder.weekly.record`). A history the build cannot read (a header
that is not ours, packed cells whose items do not read or do not line up) is an error naming
the row and column, never silently started afresh: the seller repairs the cells, or deletes the
sheet from a copy of the workbook to start a new history on purpose.
"""
from __future__ import annotations

import datetime as dt
import math
from typing import Any

import pandas as pd

from sheetbuilder.errors import ERROR, WARNING, Problem
from sheetbuilder.reading.periods import Period
from sheetbuilder.reading.settings import Settings
from sheetbuilder.sheets.keyword_weeks import (EARLIER_HEADERS, HEADER_ROW, HEADERS, KEYS, METRICS, NAME, PACKED,
                                               SEPARATOR, SHEET, WEEK_NAME, KeywordHistory, add_week, history_key,
                                               keep_recent, read_period, week_of)
from sheetbuilder.values import is_blank
from sheetbuilder.weekly.saved import SavedBook

THIS_WEEK = "this week's exports"


def _key_text(value: Any) -> str:
    """A key cell as text (a number a spreadsheet program stored for a numeric-looking target, 12.0 as '12')."""
    if value is None:
        return ""
    if isinstance(value, float) and value.is_integer():
        return str(int(value))
    return value if isinstance(value, str) else str(value)


def _items(value: Any) -> list[str]:
    """The items of a packed cell (one for a lone number a spreadsheet program stored as a number)."""
    if is_blank(value):
        return [""]
    if isinstance(value, (int, float)) and not isinstance(value, bool):
        return [repr(float(value))]
    return str(value).split(SEPARATOR.strip())


def _figure(text: str, metric: str) -> float | None:
    """A packed item as a number (NaN for a blank bid); None when it does not read."""
    text = text.strip()
    if text == "":
        return math.nan if metric == "bid" else None
    try:
        value = float(text)
    except ValueError:
        return None
    return value if math.isfinite(value) and value >= 0 else None


def _figures(items: list[str], metric: str) -> list[float | None]:
    """The items of one packed cell as numbers (None where one does not read); the common case in one pass."""
    try:
        values = [float(t) for t in items]
    except ValueError:
        return [_figure(t, metric) for t in items]
    total = math.fsum(values)
    if math.isfinite(total) and min(values) >= 0:
        return values
    return [_figure(t, metric) for t in items]


def _row_weeks(values: list[Any], periods_of: dict[str, Period | None]) -> tuple[dict[Period, tuple], str | None]:
    """The weeks one saved row holds (its packed cells, the last of values), or the header of the first packed
    column that does not read.

    periods_of caches each period item's reading (a history repeats the same few dozen periods on every row).
    """
    packed = values[len(values) - len(PACKED):]
    periods = []
    for text in _items(packed[0]):
        if text not in periods_of:
            periods_of[text] = read_period(text)
        periods.append(periods_of[text])
    if any(p is None for p in periods) or len(set(periods)) != len(periods):
        return {}, PACKED[0][1]
    columns = []
    for (key, header), cell in zip(PACKED[1:], packed[1:]):
        figures = _figures(_items(cell), key)
        if len(figures) != len(periods) or any(f is None for f in figures):
            return {}, header
        columns.append(figures)
    return dict(zip(periods, zip(*columns))), None


def _layout(header: tuple[str, ...], area) -> tuple[str, ...] | None:
    """The saved sheet's columns: this build's (HEADERS) or, from a workbook built before, with the totals between
    the keys and the packed weeks (EARLIER_HEADERS); told by the defined name's width, else by the header row.
    None: no defined name and a header that is neither."""
    if area is not None:
        width = area.last_col - area.first_col + 1
        return EARLIER_HEADERS if width == len(EARLIER_HEADERS) or header == EARLIER_HEADERS else HEADERS
    if header[:len(HEADERS)] == HEADERS:
        return HEADERS
    return EARLIER_HEADERS if header == EARLIER_HEADERS else None


def read_keyword_history(book: SavedBook) -> tuple[KeywordHistory | None, list[Problem]]:
    """The Keyword history of an opened previous workbook (None when it has none), and why it could not be read."""
    area = book.area(NAME)
    sheet = area.sheet if area else SHEET
    if sheet not in book.sheetnames:
        return None, []
    first_col = area.first_col if area else 0
    rows = book.rows(sheet, frozenset(range(first_col, first_col + len(EARLIER_HEADERS))))
    first = area.first_row if area else HEADER_ROW + 1
    header = tuple("" if h is None else str(h).strip() for h in (
        rows[first - 1][first_col + i] if first - 1 < len(rows) and first_col + i < len(rows[first - 1]) else None
        for i in range(len(EARLIER_HEADERS))))
    layout = _layout(header, area)
    if layout is None:
        return None, [Problem(book.path.name, first, SHEET,
                              f"the {SHEET} sheet's row {first} should read {', '.join(HEADERS)}; the keyword history "
                              "it holds could not be read, and it is never started afresh without a word. Restore "
                              f"the header, or delete the {SHEET} sheet from a copy of the workbook to start a new "
                              "history (its weeks are then lost)", ERROR)]
    last = area.last_row if area else len(rows) - 1
    history = KeywordHistory()
    problems, periods_of = [], {}
    for r in range(first, min(last, len(rows) - 1) + 1):
        values = [rows[r][first_col + i] if first_col + i < len(rows[r]) else None for i in range(len(layout))]
        if all(is_blank(v) for v in values):
            continue
        weeks, bad = _row_weeks(values, periods_of)
        if bad is not None:
            problems.append(Problem(book.path.name, r + 1, bad,
                                    f"the {SHEET} sheet's row {r + 1} cannot be read: its {bad} items do not read as "
                                    "the row's weeks (one item per period, separated by ';'); restore the cell from "
                                    "an earlier workbook, or delete the row to drop that keyword's history", ERROR))
            continue
        spelled = tuple(_key_text(v) for v in values[:len(KEYS)])
        key = history_key(spelled, exported=False)
        earlier = history.weeks.get(key, {})
        if earlier.keys() & weeks.keys():  # rows split by spacing (an earlier build) join when their weeks differ
            problems.append(Problem(book.path.name, r + 1, KEYS[2][1],
                                    f"the {SHEET} sheet lists {' / '.join(key)} on more than one row (keys compared "
                                    "with surrounding spaces trimmed) with the same week; keep one", ERROR))
            continue
        if not earlier or max(p.end for p in weeks) > max(p.end for p in earlier):
            history.shown[key] = spelled
        history.weeks[key] = {**earlier, **weeks}
        history.recorded.update(weeks)
    history.current = _current_week(book, sheet, rows, history)
    return history, problems


def _current_week(book: SavedBook, sheet: str, rows: list, history: KeywordHistory) -> Period | None:
    """The week its build's Bids read the history totals through (WEEK_NAME), when it is a recorded one."""
    area = book.area(WEEK_NAME)
    if area is None or area.sheet != sheet or area.first_row >= len(rows) or area.first_col >= len(rows[area.first_row]):
        return None
    value = rows[area.first_row][area.first_col]
    period = read_period(value) if isinstance(value, str) else None
    return period if period in history.recorded else None


def this_week_period(inputs_period: Period | None, settings: Settings) -> Period | None:
    """The period of this week's exports: their dates, else period_end and period_days of settings.toml."""
    if inputs_period is not None:
        return inputs_period
    if settings.period_end is not None:
        return Period(settings.period_end - dt.timedelta(days=settings.period_days - 1), settings.period_end)
    return None


def joined_history(saved: KeywordHistory | None, past: list[tuple[str, Period, pd.DataFrame]],
                   this_week: pd.DataFrame | None, period: Period | None, settings: Settings,
                   previous_name: str | None = None) -> tuple[KeywordHistory, list[Period], list[Problem]]:
    """The keyword history this build writes: the saved one, then past exports (oldest first), then this week.

    Args:
        saved: the history read from the previous workbook (None: none was given, or it holds none).
        past: (file name, period, targets frame) of each export given with --history.
        this_week: this week's targets export (None when there is none).
        period: this week's period (None when no date or setting says it).
        settings: for history_weeks.
        previous_name: the previous workbook's file name, when one was given.

    Returns:
        (history, weeks dropped by history_weeks, problems): a past export that overlaps another is an error;
        this week overlapping a recorded week, or without a period, is a warning (the build goes on, this
        week is not recorded).
    """
    history = saved if saved is not None else KeywordHistory()
    problems: list[Problem] = []
    if previous_name is not None and saved is None:
        problems.append(Problem(previous_name, None, None, f"holds no {SHEET} sheet (built before it existed); the "
                                                           "keyword history starts with this build", WARNING))
    by_period: dict[Period, list[str]] = {}
    for name, past_period, _ in past:
        by_period.setdefault(past_period, []).append(name)
    for name, past_period, frame in sorted(past, key=lambda x: (x[1].start, x[1].end, x[0])):
        twins = [other for other in by_period[past_period] if other != name]
        if twins:  # two past exports of one period: which is right cannot be told
            problems.append(Problem(name, None, None, f"covers {past_period}, the same period as {twins[0]}; the "
                                                      "build cannot tell which is right. Keep one of them"))
            continue
        figures, shown, merged = week_of(frame, name)
        history, found = add_week(history, past_period, figures, name, ERROR, shown)
        problems += merged + found
    if this_week is not None and period is None:
        problems.append(Problem(THIS_WEEK, None, None, "state no period (no dates in their rows, title or file "
                                                       "name, and no period_end in settings.toml), so this week's "
                                                       "keyword results were not added to the keyword history",
                                WARNING))
    elif this_week is not None:
        figures, shown, merged = week_of(this_week, THIS_WEEK)
        history, found = add_week(history, period, figures, THIS_WEEK, WARNING, shown)
        problems += merged + found
    history, dropped = keep_recent(history, settings.history_weeks)
    if dropped:
        problems.append(Problem(SHEET, None, None, f"dropped {len(dropped)} week(s) from {dropped[0].start} to "
                                                   f"{dropped[-1].end}: history_weeks = {settings.history_weeks} keeps "
                                                   "only the weeks ending within that many weeks of the newest",
                                WARNING))
    return history, dropped, problems
