"""What became of last week's changes: the facts the Follow-up sheet is planned from.

:func:`sheetbuilder.weekly.change_list.followup_of` takes last week's workbook (given with ``--previous``) and computes its
final change list from the inputs and decisions it holds, with the same planning code that
``changes`` uses (so it does not depend on whether the user ran ``changes``). Each change is
then looked up in this week's exports: whether it was applied (``yes``, ``no`` or ``cannot
tell``) and the metrics of its target, term or campaign in both periods. The products' figures
of last period come from the previous workbook's own Profit table, computed the same way.

When the two builds cannot be compared (the previous period is later than this one, or the
previous workbook was built from the same exports), no follow-up is made and the reason is
returned as a warning, so the sheet is skipped rather than showing zeros.
"""
from __future__ import annotations

import datetime as dt
import math
from typing import Any

import numpy as np
import pandas as pd

from sheetbuilder.reading import contract as c
from sheetbuilder.reading.periods import Period
from sheetbuilder.reading.settings import Settings
from sheetbuilder.sheets.followup import CANNOT_TELL, NO, YES, fold
from sheetbuilder.values import is_blank

METRICS = ("clicks", "spend", "orders", "ad_sales")
COMPARED_TABLES = ("store_sales", "ad_products", "targets", "search_terms")


def span_of(settings: Settings, period: Any = None) -> Period | None:
    """The period a build covers: the exports' dates when read, else the settings' end date and length.

    None when neither is known (no dates in the exports and no period end in the settings).
    """
    if period is not None and getattr(period, "start", None) and getattr(period, "end", None):
        return Period(period.start, period.end)
    end = getattr(settings, "period_end", None)
    days = getattr(settings, "period_days", None)
    if isinstance(end, dt.datetime):
        end = end.date()
    if not isinstance(end, dt.date) or not days:
        return None
    return Period(end - dt.timedelta(days=int(days) - 1), end)


def number_or_none(value: Any) -> float | None:
    """A cell value as a number, or None when it is blank, text or a bool."""
    if is_blank(value) or isinstance(value, bool) or isinstance(value, str):
        return None
    return float(value)


def _cents(value: Any) -> int | None:
    n = number_or_none(value)
    return None if n is None else int(round(n * 100))


def _compared(value: Any, numeric: bool) -> Any:
    """One cell as two builds' exports are compared: a number rounded (numeric columns), else its text."""
    if numeric and number_or_none(value) is not None:
        return round(float(value), 6)
    return "" if is_blank(value) else str(value)


def _column_of(series: pd.Series, numeric: bool) -> list:
    """A column's cells as :func:`_compared` gives them; a column of floats (every reader's numeric column) in one
    pass without the per-cell type tests (a NaN is blank, as number_or_none says)."""
    if numeric and series.dtype.kind == "f":
        return ["" if v != v else round(v, 6) for v in series.tolist()]
    return [_compared(v, numeric) for v in series.tolist()]


def _rows_of(table: pd.DataFrame | None, columns: tuple[str, ...]) -> list[tuple]:
    """A table's rows over the contract's columns, numbers rounded, for comparing two builds' exports (in the
    table's order)."""
    if table is None or not len(table):
        return []
    rule = c.TABLE_BY_NAME
    numeric = {name: next((col.kind for t in rule.values() for col in t.columns if col.name == name), c.TEXT)
               in c.NUMERIC_KINDS for name in columns}
    return list(zip(*(_column_of(table[name], numeric[name]) for name in columns)))


def _identical(a: pd.DataFrame, b: pd.DataFrame, columns: tuple[str, ...]) -> bool:
    """Whether two tables hold the same cells in the same order over columns (numbers of one type equal, NaN as
    NaN; texts equal): then their rows compare the same (:func:`_rows_of`), with no rounding or sorting."""
    for name in columns:
        if name not in b:
            return False
        x, y = a[name].to_numpy(), b[name].to_numpy()
        if x.dtype.kind == y.dtype.kind and x.dtype.kind in "iuf":
            if not np.array_equal(x, y, equal_nan=x.dtype.kind == "f"):
                return False
        elif x.dtype.kind != "O" or y.dtype.kind != "O":
            return False
        else:  # texts: an equal text is compared the same (1 == 1.0 would not be: str gives '1' and '1.0')
            xs = x.tolist()
            if xs != y.tolist() or not all(type(v) is str for v in xs):
                return False
    return True


def _numbers_differ(a: pd.DataFrame, b: pd.DataFrame, columns: tuple[str, ...]) -> bool:
    """Whether a column of floats in both tables surely holds other numbers: rounding to 6 places keeps order, so
    the same rounded numbers sorted differ by at most 1e-6 at each place (any count of blanks apart: not the same).
    False says nothing; the rows are then compared in full."""
    for name in columns:
        if name not in b:
            continue
        x, y = a[name].to_numpy(), b[name].to_numpy()
        if x.dtype.kind != "f" or y.dtype.kind != "f":
            continue
        blank_x, blank_y = np.isnan(x), np.isnan(y)
        if blank_x.sum() != blank_y.sum():
            return True
        gap = np.abs(np.sort(x[~blank_x]) - np.sort(y[~blank_y]))
        if gap.size and gap.max() > 2e-6:
            return True
    return False


def same_exports(before: dict, now: dict) -> bool:
    """Whether two builds read the same sales and ad exports (row for row, any order)."""
    for name in COMPARED_TABLES:
        cols = tuple(col.name for col in c.TABLE_BY_NAME[name].columns)
        a, b = before.get(name), now.get(name)
        if (a is None) != (b is None) or (a is not None and len(a) != len(b)):  # a row more: not the same
            return False
        if a is None or _identical(a, b, tuple(k for k in cols if k in a)):
            continue
        if _numbers_differ(a, b, tuple(k for k in cols if k in a)):
            return False
        rows_a, rows_b = _rows_of(a, tuple(k for k in cols if k in a)), _rows_of(b, tuple(k for k in cols if k in a))
        if rows_a != rows_b and sorted(rows_a) != sorted(rows_b):  # the same rows in the same order need no sort
            return False
    return True


def _phrase_in(words: list[str], term_words: list[str]) -> bool:
    n = len(words)
    return any(term_words[i:i + n] == words for i in range(len(term_words) - n + 1)) if n else False


class _Period:
    """One period's input tables, each indexed once by what a change is looked up by, so that a change costs the
    rows it names, not a pass over every row (the follow-up of 10k changes against 10k targets and 20k search
    terms took minutes that way). Each look-up gives the rows a mask over the whole table gives, in table order:

    - a target: campaign, ad group and match type equal, the target's text equal once folded (:func:`fold`);
    - the search terms a negative stops: campaign equal (and ad group, unless the negative's is blank), the term's
      folded words the same (exact) or holding the negative's words in order (phrase);
    - a campaign's ad rows: campaign equal.
    """

    def __init__(self, tables: dict):
        self.tables = tables
        self._index: dict[str, dict] = {}
        self._metrics: dict[str, dict[str, np.ndarray]] = {}

    def table(self, name: str) -> pd.DataFrame | None:
        """The table, or None when the period has none or it has no rows."""
        t = self.tables.get(name)
        return None if t is None or not len(t) else t

    def _indexed(self, name: str, key) -> dict:
        """{key of a row: [its positions, in table order]} of a table (built once)."""
        if name not in self._index:
            index: dict = {}
            for i, k in enumerate(key(self.tables[name])):
                index.setdefault(k, []).append(i)
            self._index[name] = index
        return self._index[name]

    def target_rows(self, campaign, group, target, match) -> list[int]:
        """The positions of a target's rows on the targets table."""
        if self.table("targets") is None:
            return []
        index = self._indexed("targets", lambda t: zip(t["campaign"], t["ad_group"], t["target"].map(fold),
                                                      t["match_type"]))
        return index.get((campaign, group, fold(target), match), [])

    def term_rows(self, campaign, group, term, match) -> list[int]:
        """The positions of the search-term rows a negative (exact: the same term; phrase: its words in order) stops."""
        if self.table("search_terms") is None:
            return []
        if "search_terms words" not in self._index:
            t = self.tables["search_terms"]
            words_of = [fold(v).split() for v in t["search_term"]]
            by_word: dict = {}  # {(campaign, a word): the positions of the campaign's terms holding it}
            for i, (c, words) in enumerate(zip(t["campaign"], words_of)):
                for word in dict.fromkeys(words):
                    by_word.setdefault((c, word), []).append(i)
            self._index["search_terms words"] = {"words": words_of, "groups": t["ad_group"].tolist(),
                                                 "by_word": by_word}
        held = self._index["search_terms words"]
        words_of, groups = held["words"], held["groups"]
        words, any_group = fold(term).split(), is_blank(group)
        exact = str(match).endswith("exact")
        if words:  # a term stopped holds every word of the negative: the campaign's terms holding its rarest one
            candidates = min((held["by_word"].get((campaign, w), []) for w in words), key=len)
        else:
            candidates = self._indexed("search_terms", lambda t: t["campaign"]).get(campaign, [])
        return [i for i in candidates if (any_group or groups[i] == group)
                and (words_of[i] == words if exact else _phrase_in(words, words_of[i]))]

    def negative_held(self, campaign, group, term, match) -> bool:
        """Whether the negatives table holds a negative: campaign and match type equal, the ad group equal (a blank as
        blank), the term equal once folded (the set built once; a NaN equals nothing, as in a mask)."""
        if "negatives held" not in self._index:
            t = self.tables["negatives"]
            self._index["negatives held"] = {
                key for key in zip(t["campaign"], t["ad_group"].map(lambda g: "" if is_blank(g) else g),
                                   t["term"].map(fold), t["match_type"]) if all(v == v for v in key)}
        group = "" if is_blank(group) else group
        key = (campaign, group, fold(term), match)
        return all(v == v for v in key) and key in self._index["negatives held"]

    def bids(self) -> list:
        """The targets table's bids, as a list (taken once: a table's column taken per look-up costs a copy)."""
        if "targets bids" not in self._index:
            self._index["targets bids"] = self.tables["targets"]["bid"].tolist()
        return self._index["targets bids"]

    def campaign_rows(self, name: str, campaign) -> list[int]:
        """The positions of a campaign's rows on a table."""
        if self.table(name) is None:
            return []
        return self._indexed(name, lambda t: t["campaign"]).get(campaign, [])

    def sums(self, name: str, rows: list[int]) -> dict[str, float]:
        """Each metric summed over rows of a table (a blank as 0, as pandas sums a column; 0 without the table)."""
        if self.table(name) is None:
            return {m: 0.0 for m in METRICS}
        if name not in self._metrics:
            t = self.tables[name]
            self._metrics[name] = {m: t[m].astype(float).fillna(0.0).to_numpy() for m in METRICS}
        metrics = self._metrics[name]
        if len(rows) < 8:  # numpy sums fewer than 8 numbers one after the other from 0.0: the same sum, at once
            out = {}
            for m, values in metrics.items():
                total = 0.0
                for i in rows:
                    total += float(values[i])
                out[m] = total
            return out
        return {m: float(values[rows].sum()) for m, values in metrics.items()}


def _applied(change: dict, now: _Period) -> tuple[str, Any]:
    """(Applied, the value this week's exports show) for one change."""
    kind = change["kind"]
    targets, negatives, campaigns = (now.tables.get(k) for k in ("targets", "negatives", "campaigns"))
    if kind in ("bid", "add keyword", "add product target"):
        if targets is None:
            return CANNOT_TELL, None
        rows = now.target_rows(change["campaign"], change["ad_group"], change["target"], change["match_type"])
        if kind != "bid":
            first = now.bids()[rows[0]] if rows else None
            return (YES if rows else NO), (float(first) if rows and number_or_none(first) is not None else None)
        if not rows:
            return NO, None
        bid = number_or_none(now.bids()[rows[-1]])
        return (YES if _cents(bid) == _cents(change["planned"]) else NO), bid
    if kind == "add negative":
        if negatives is None:
            return CANNOT_TELL, None
        held = now.negative_held(change["campaign"], change["ad_group"], change["target"], change["match_type"])
        return (YES if held else NO), None
    if kind == "budget":
        if campaigns is None:
            return CANNOT_TELL, None
        rows = campaigns.loc[campaigns["campaign"] == change["campaign"]]
        if not len(rows):
            return NO, None
        budget = number_or_none(rows["daily_budget"].iloc[-1])
        return (YES if _cents(budget) == _cents(change["planned"]) else NO), budget
    return CANNOT_TELL, None


def _metrics(change: dict, period: _Period) -> dict[str, float]:
    """Clicks, spend, orders and ad sales of a change's target, term or campaign in one period's exports."""
    kind = change["kind"]
    if kind == "add negative":
        return period.sums("search_terms", period.term_rows(change["campaign"], change["ad_group"], change["target"],
                                                            change["match_type"]))
    if kind == "budget":
        return period.sums("ad_products", period.campaign_rows("ad_products", change["campaign"]))
    return period.sums("targets", period.target_rows(change["campaign"], change["ad_group"], change["target"],
                                                     change["match_type"]))


def followup_rows(changes: list[dict], before: dict, now: dict, targets: dict[str, float]) -> list[dict]:
    """Each change with its Applied, this week's value, and its metrics in both periods.

    Args:
        changes: last week's change list (kind, campaign, ad_group, target, match_type, product_id,
            current, new).
        before, now: the two periods' input tables.
        targets: the aim ACoS of each product last week (for a raised bid's outcome).
    """
    out = []
    periods = (("_b", _Period(before)), ("_n", _Period(now)))
    for ch in changes:
        row = {k: ("" if is_blank(ch.get(k)) else ch.get(k)) for k in
               ("kind", "campaign", "ad_group", "target", "match_type", "product_id")}
        row["planned"] = number_or_none(ch.get("new"))
        row["was"] = number_or_none(ch.get("current"))
        row["applied"], row["now"] = _applied({**row, "planned": row["planned"]}, periods[1][1])
        row["target_acos"] = targets.get(str(row["product_id"]), math.nan)
        for suffix, period in periods:
            for m, v in _metrics(row, period).items():
                row[m + suffix] = v
        out.append(row)
    return out
