"""Dates in exports: one row per day summed per key, and the period the exports cover.

Exports downloaded with a daily breakdown hold one row per key (a keyword, a product, a
campaign) per day. Such rows are summed per key here, counts and money alike, and the
settings a key carries (bid, state, budget) are taken from its row with the latest date, so
that a mid-week bid change proposes one bid from the bid in force at the end. The period
the exports cover (first day, last day, length) is read from the same dates.

Without a date column, rows repeating a keyword or a campaign are summed only when their
bid and state (budget and state for a campaign) agree; otherwise they are an error naming
the rows, since no rule says which bid is current.
"""
from __future__ import annotations

import datetime as dt
import re
from dataclasses import dataclass

import pandas as pd

from sheetbuilder.reading import contract as c
from sheetbuilder.errors import WARNING, Problem

DATE = "date"
# The date columns looked for, besides the contract's: (name, synonyms as contract.header_key folds them).
DATE_RULES = (
    c.ColumnRule("date", DATE, False, ("day", "reportdate", "dateday", "datum")),
    c.ColumnRule("start_date", DATE, False, ("startdate", "fromdate", "datefrom", "periodstart", "from", "start",
                                             "startday")),
    c.ColumnRule("end_date", DATE, False, ("enddate", "todate", "dateto", "periodend", "to", "end", "endday")),
)
# A campaigns export's start and end dates are the campaign's lifetime, not the report's period.
DATED_TABLES = {"store_sales": ("date", "start_date", "end_date"), "ad_products": ("date", "start_date", "end_date"),
                "targets": ("date", "start_date", "end_date"), "search_terms": ("date", "start_date", "end_date"),
                "campaigns": ("date",)}
# The key of each table's rows, for summing one row per day into one row per key.
REPEAT_KEYS = {
    "store_sales": ("product_id",),
    "ad_products": ("campaign", "ad_group", "product_id", "ad_type"),
    "targets": ("campaign", "ad_group", "target", "match_type"),
    "search_terms": ("campaign", "ad_group", "target", "match_type", "search_term"),
    "campaigns": ("campaign",),
}
# Without dates, repeated keys of these tables are summed only when these columns agree.
MUST_AGREE = {"targets": ("bid", "state"), "campaigns": ("state", "daily_budget")}
_WHAT = {"targets": "keyword or target", "campaigns": "campaign"}

_ISO = re.compile(r"(\d{4})[-/.](\d{1,2})[-/.](\d{1,2})(?:[T ]\d{1,2}:\d{2}(?::\d{2}(?:\.\d+)?)?)?")
_COMPACT = re.compile(r"(\d{4})(\d{2})(\d{2})")
_SLASHED = re.compile(r"(\d{1,2})[-/.](\d{1,2})[-/.](\d{4})")
_NAMED = ("%b %d, %Y", "%B %d, %Y", "%b %d %Y", "%B %d %Y", "%d %b %Y", "%d %B %Y", "%d-%b-%Y", "%d-%B-%Y",
          "%a, %b %d, %Y")


@dataclass(frozen=True)
class Period:
    """The days a table (or all tables) cover: first and last day, inclusive."""

    start: dt.date
    end: dt.date

    @property
    def days(self) -> int:
        """The period's length in days, both ends included."""
        return (self.end - self.start).days + 1

    def overlap(self, other: "Period") -> int:
        """The days both periods share (0 when none)."""
        return max(0, (min(self.end, other.end) - max(self.start, other.start)).days + 1)

    def __str__(self) -> str:
        return f"{self.start.isoformat()} to {self.end.isoformat()} ({self.days} days)"


def _one_date(text: str) -> dt.date | tuple[int, int, int] | None:
    """A date, or (a, b, year) for a slashed date whose day and month order the column decides."""
    t = " ".join(text.split())
    for pattern in (_ISO, _COMPACT):
        m = pattern.fullmatch(t)
        if m:
            try:
                return dt.date(int(m[1]), int(m[2]), int(m[3]))
            except ValueError:
                return None
    m = _SLASHED.fullmatch(t)
    if m:
        return int(m[1]), int(m[2]), int(m[3])
    for fmt in _NAMED:
        try:
            return dt.datetime.strptime(t, fmt).date()
        except ValueError:
            continue
    return None


def parse_dates(texts: list[str]) -> tuple[list[dt.date | None], list[tuple[int, str]]]:
    """The dates of one column, and (position, message) for each cell that is not one.

    Accepts 2026-11-23 (with or without a time), 20261123, Nov 23, 2026, 23 Nov 2026, and
    23/11/2026 or 11/23/2026 when the column itself shows which number is the day (some day
    above 12); a column where every such date could be either is refused, never guessed.
    """
    raw = [_one_date(t) if t.strip() else None for t in texts]
    slashed = [r for r in raw if isinstance(r, tuple)]
    day_first = any(a > 12 for a, _, _ in slashed)
    month_first = any(b > 12 for _, b, _ in slashed)
    out: list[dt.date | None] = []
    problems: list[tuple[int, str]] = []
    for i, (text, r) in enumerate(zip(texts, raw)):
        if isinstance(r, tuple):
            a, b, year = r
            if a == b or day_first != month_first:
                try:
                    out.append(dt.date(year, a, b) if month_first else dt.date(year, b, a))
                    continue
                except ValueError:
                    pass
            elif not day_first:
                out.append(None)
                problems.append((i, f"'{text}' could be day/month or month/day and no date in the column says "
                                    "which; write dates as 2026-11-23"))
                continue
            out.append(None)
            problems.append((i, f"'{text}' is not a date; expected a date such as 2026-11-23"))
            continue
        out.append(r)
        if r is None:
            problems.append((i, "is blank; expected the row's date" if not text.strip()
                             else f"'{text}' is not a date; expected a date such as 2026-11-23"))
    return out, problems


def combine_repeats(name: str, frame: pd.DataFrame, dated: bool) -> tuple[pd.DataFrame, list[Problem]]:
    """One row per key: rows repeating a key summed (see the module docstring).

    Args:
        name: the table's canonical name.
        frame: its validated rows, with _start and _end columns (dates) when dated.
        dated: whether the table has a date column.

    Returns:
        The frame with one row per key (each keeps its first source row as _row, the sums
        of its counts and money, and the other columns of its latest row; in first-row
        order) and the problems: a note when rows were summed without dates, an error per
        key whose repeated rows disagree on bid or state.
    """
    keys = list(REPEAT_KEYS.get(name, ()))
    if not keys or len(frame) < 2 or (not dated and name not in MUST_AGREE):
        return frame, []
    repeated = frame.duplicated(keys, keep=False)
    if not repeated.any():
        return frame, []
    file, headers = frame.attrs["file"], frame.attrs["headers"]
    problems: list[Problem] = []
    if not dated:
        agree = list(MUST_AGREE[name])
        spread = frame[repeated].astype({k: object for k in agree}).fillna({k: "" for k in agree})
        bad = spread.groupby(keys, sort=False)[agree].nunique() > 1
        for key, flags in bad[bad.any(axis=1)].iterrows():
            key = key if isinstance(key, tuple) else (key,)
            group = spread[(spread[keys] == pd.Series(key, index=keys)).all(axis=1)]
            columns = [col for col in agree if flags[col]]
            values = "; ".join(f"{col} " + ", ".join(f"{v:g}" if isinstance(v, float) else str(v)
                                                   for v in group[col]) for col in columns)
            rows = ", ".join(str(r) for r in group["_row"])
            problems.append(Problem(file, int(group["_row"].iloc[1]), headers[columns[0]],
                                    f"rows {rows} repeat the {_WHAT[name]} {' / '.join(map(str, key))} with different "
                                    f"{' and '.join(columns)} ({values}) and the file has no date column to say which "
                                    "is current; keep one row per " + _WHAT[name] + " or export with a date column"))
        if problems:
            return frame, problems
    sums = [r.name for r in c.TABLE_BY_NAME[name].columns if r.kind in (c.COUNT, c.MONEY)]
    order = ["_end", "_row"] if dated else ["_row"]
    latest = frame.sort_values(order, kind="stable").groupby(keys, sort=False, dropna=False).tail(1)
    grouped = frame.groupby(keys, sort=False, dropna=False)
    merged = latest.set_index(keys)
    totals = grouped[sums].sum()
    for col in sums:
        merged[col] = totals[col].reindex(merged.index).round(9)  # the float noise of summing cents
    merged["_row"] = grouped["_row"].min().reindex(merged.index)
    if dated:
        merged["_start"] = grouped["_start"].min().reindex(merged.index)
        merged["_end"] = grouped["_end"].max().reindex(merged.index)
    merged = merged.reset_index()[list(frame.columns)].sort_values("_row", kind="stable").reset_index(drop=True)
    for col in frame.columns:
        merged[col] = merged[col].astype(frame[col].dtype)
    merged.attrs.update(frame.attrs, summed=len(frame) - len(merged))
    if not dated:
        first = frame[repeated].sort_values("_row").iloc[0]
        rows = ", ".join(str(r) for r in frame.loc[repeated & (frame[keys] == first[keys]).all(axis=1), "_row"])
        problems.append(Problem(file, None, None,
                                f"{int(repeated.sum())} rows repeat a {_WHAT[name]} with the same "
                                f"{' and '.join(MUST_AGREE[name])} (first: rows {rows}); with no date column they "
                                f"were summed into {len(merged) - int((~repeated).sum())} rows", WARNING))
    return merged, problems


def table_period(frame: pd.DataFrame) -> Period | None:
    """The days a dated frame covers (None without dates or rows)."""
    if "_start" not in frame or not len(frame):
        return None
    start, end = frame["_start"].dropna(), frame["_end"].dropna()
    if not len(start) or not len(end):
        return None
    return Period(min(start), max(end))


def overall_period(periods: dict[str, Period]) -> tuple[Period | None, list[Problem]]:
    """The period all dated tables cover together, and a warning when tables cover different periods.

    Args:
        periods: each dated table's file name and its period.
    """
    if not periods:
        return None, []
    whole = Period(min(p.start for p in periods.values()), max(p.end for p in periods.values()))
    if len(set(periods.values())) == 1:
        return whole, []
    listed = "; ".join(f"{file} {period}" for file, period in sorted(periods.items()))
    return whole, [Problem(", ".join(sorted(periods)), None, None,
                           f"the exports cover different periods ({listed}); figures that combine them (ACoS "
                           "against store sales, TACoS) compare different days. Export the same days for every "
                           f"table; the period used is {whole}", WARNING)]


def apply_period(settings, period: Period | None, given: frozenset[str], files: list[str]):
    """settings with period_days and period_end read from the dates, unless settings.toml sets them.

    Returns:
        (settings, problems): a note saying what was read and used.
    """
    if period is None:
        return settings, []
    changes = {}
    if "period_days" not in given:
        changes["period_days"] = period.days
    if "period_end" not in given:
        changes["period_end"] = period.end
    used = " and ".join(changes) or "nothing (settings.toml sets period_days and period_end)"
    note = Problem(", ".join(files), None, None,
                   f"period read from the dates: {period}; used for {used}", WARNING)
    return (settings.replace(**changes) if changes else settings), [note]


def settings_for_inputs(settings, inputs):
    """apply_period for read inputs: (settings with the period of their dates, the note saying so)."""
    dated = sorted(inputs.sources[n].name for n, f in inputs.tables.items()
                   if f is not None and f.attrs.get("period") is not None)
    return apply_period(settings, inputs.period, settings.given, dated)
