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
    "inventory": ("product_id",),  # undated: rows pasted twice refused; other repeats checked by the readers
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


def parse_dates(texts: list[str], order: str = "auto") -> tuple[list[dt.date | None], list[tuple[int, str]]]:
    """The dates of one column, and (position, message) for each cell that is not one.

    Accepts 2026-11-23 (with or without a time; ISO 8601), 20261123 (ISO 8601 basic form),
    Nov 23, 2026, 23 Nov 2026, and 23/11/2026 or 11/23/2026 when the column itself shows which
    number is the day (some day above 12) or order (the date_order setting: dmy, mdy) says;
    a column where every such date could be either is refused, never guessed. With order ymd
    only year-first dates are accepted.
    """
    raw = [_one_date(t) if t.strip() else None for t in texts]
    slashed = [r for r in raw if isinstance(r, tuple)]
    day_first = any(a > 12 for a, _, _ in slashed)
    month_first = any(b > 12 for _, b, _ in slashed)
    if order in ("dmy", "mdy") and not (day_first and month_first):
        day_first, month_first = order == "dmy", order == "mdy"
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
            elif not day_first and order != "ymd":
                out.append(None)
                problems.append((i, f"'{text}' could be day/month or month/day and no date in the column says "
                                    "which; set date_order = \"dmy\" or \"mdy\" in settings.toml, or write dates "
                                    "as 2026-11-23"))
                continue
            out.append(None)
            problems.append((i, f"'{text}' is not a date; expected a date such as 2026-11-23"))
            continue
        out.append(r)
        if r is None:
            problems.append((i, "is blank; expected the row's date" if not text.strip()
                             else f"'{text}' is not a date; expected a date such as 2026-11-23"))
    return out, problems


# Dates as titles and file names write them: ISO 8601 (2026-11-01, 20261101), slashed, or with the month's name.
_IN_TEXT = re.compile(r"(?<![\d/.-])(?:\d{4}-\d{1,2}-\d{1,2}|\d{8}|\d{1,2}[/.-]\d{1,2}[/.-]\d{4}"
                      r"|[A-Za-z]{3,9}\.? \d{1,2},? \d{4}|\d{1,2} [A-Za-z]{3,9}\.? \d{4})(?![\d/.-])")
_IN_NAME = re.compile(r"(?<!\d)(\d{4}-?\d{2}-?\d{2})(?!\d)")  # file names: ISO 8601 only


def _range_in(texts: list[str], order: str) -> tuple[Period | None, str | None]:
    """The period written as two dates (a start and an end) in texts, or a message when they do not read."""
    found, problems = parse_dates([t.replace(".", "") if t[:1].isalpha() else t for t in texts], order)
    ambiguous = [m for _, m in problems if "could be day/month" in m]
    if ambiguous:
        a, b = (_one_date(t) for t in texts)
        readings = " or ".join(f"{Period(dt.date(a[2], x, y), dt.date(b[2], u, v))}"
                               for (x, y), (u, v) in (((a[1], a[0]), (b[1], b[0])), ((a[0], a[1]), (b[0], b[1]))))
        return None, (f"the dates {texts[0]} and {texts[1]} could be read as {readings}; set date_order = \"dmy\" "
                      "or \"mdy\" in settings.toml")
    if problems or found[1] < found[0]:
        return None, None  # two numbers that are not a start and an end: no period stated
    return Period(found[0], found[1]), None


def stem_without_dates(stem: str) -> str:
    """A file's stem without the ISO 8601 dates of a period it names (sales 2026-11-01 to 2026-11-30 -> sales)."""
    if len(_IN_NAME.findall(stem)) != 2:
        return stem
    return re.sub(r"(?i)\b(?:to|from|bis|au)\b", " ", _IN_NAME.sub(" ", stem))


def declared_period(title: list[list[str]], stem: str, order: str = "auto"
                    ) -> tuple[Period | None, str, str | None]:
    """The period an export states above its header (a title row holding two dates) or in its file name.

    Args:
        title: the rows above the header (the title or notes block).
        stem: the file's name without its suffix.
        order: the date_order setting, for slashed dates.

    Returns:
        (period, where it was read, None) or (None, where, message) when the stated dates do not
        read (a slashed range whose day/month order nothing decides); (None, "", None) when neither
        states one. A single date (the day a report was made) states no period.
    """
    for i, row in enumerate(title):
        texts = _IN_TEXT.findall(" ".join(str(x) for x in row if str(x).strip()))
        if len(texts) == 2:
            period, message = _range_in(texts, order)
            if period or message:
                return period, f"the title row {i + 1} '{' '.join(str(x).strip() for x in row if str(x).strip())}'", message
    texts = _IN_NAME.findall(stem)
    if len(texts) == 2:
        period, message = _range_in(texts, order)
        if period or message:
            return period, "the file name", message
    return None, "", None


def repeated_rows(name: str, frame: pd.DataFrame, raw: list[tuple]) -> list[Problem]:
    """An error for rows that repeat an earlier row exactly: the same data pasted or downloaded twice.

    The rule: a row equal to another in every cell of the file (its date, and columns not read,
    such as an order number, included) is a copy. Rows of different days differ by their date and
    are summed by combine_repeats; rows that differ in any cell are read as written.

    Args:
        name: the table's canonical name.
        frame: its validated rows.
        raw: each frame row's cells as written (all columns of the file).
    """
    if name not in REPEAT_KEYS or len(frame) < 2:
        return []
    cells = pd.Series(raw, index=frame.index, dtype=object)
    copies = cells.duplicated(keep=False)
    if not copies.any():
        return []
    first = cells[copies].iloc[0]
    same = frame.loc[copies & (cells == pd.Series([first] * len(cells), index=cells.index)), "_row"].tolist()
    extra = int(cells.duplicated().sum())
    return [Problem(frame.attrs["file"], int(same[1]), None,
                    f"rows {', '.join(map(str, same))} are the same in every column; {extra} row(s) of the file "
                    "repeat an earlier row exactly. A row repeated in every cell (its date and any order number "
                    "included) is the same data pasted or downloaded twice, and summing it would count it twice; "
                    "remove the copies")]


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


def overall_period(periods: dict[str, Period], undated: list[str] = (), mismatch: str = "refuse"
                   ) -> tuple[Period | None, list[Problem]]:
    """The period all dated tables cover together; an error when tables cover different periods.

    Revenue, ad spend and the ratios between them (TACoS, net profit after ads) are only right
    when every export covers the same days, so different periods stop the build unless the
    period_mismatch setting is "accept" (then a warning, shown on the Guide, says the figures
    combine different days).

    Args:
        periods: each dated table's file name and its period.
        undated: the files that state no period (named in a warning when others do).
        mismatch: the period_mismatch setting ("refuse" or "accept").
    """
    if not periods:
        return None, []
    whole = Period(min(p.start for p in periods.values()), max(p.end for p in periods.values()))
    problems = []
    if undated:
        problems.append(Problem(", ".join(undated), None, None,
                                f"states no period (no dates in its rows, title or file name) while the other "
                                f"exports cover {whole}; check it was downloaded for the same days", WARNING))
    if len(set(periods.values())) == 1:
        return whole, problems
    listed = "; ".join(f"{file} {period}" for file, period in sorted(periods.items()))
    files = ", ".join(sorted(periods))
    if mismatch == "accept":
        return whole, problems + [Problem(files, None, None,
                                          f"the exports cover different periods ({listed}) and settings.toml has "
                                          "period_mismatch = \"accept\": figures that combine them (TACoS, net "
                                          "profit after ads, ACoS against store sales) compare different days, as "
                                          f"written; the period used is {whole}", WARNING)]
    return whole, problems + [Problem(files, None, None,
                                      f"the exports cover different periods ({listed}); revenue, ad spend and the "
                                      "figures that combine them (TACoS, net profit after ads) would compare "
                                      "different days. Download every export for the same date range, or set "
                                      "period_mismatch = \"accept\" in settings.toml to build from them as they are")]


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
