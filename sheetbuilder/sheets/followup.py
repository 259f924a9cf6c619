"""The Follow-up sheet: what became of last week's changes, and how each product moved since.

Written only when the build is given last week's workbook (``--previous``), from the facts
:mod:`sheetbuilder.weekly.applied` gathers into a :class:`Followup`. Three parts, top to bottom: a Summary (live counts over
the tables below), "Last week's changes" (one row per change of last week's final change list,
with Applied, the metrics of its target, term or campaign in both periods, and a live Outcome
in words), and "Products then and now" (last period's figures beside live references to this
period's Profit rows, with the change).

Last period's figures are values (they come from last week's workbook, not this one's inputs);
Applied is a value read from this week's exports; this period's clicks, spend, orders and ad
sales of a bid or added target are live from its in_targets row (a negative's term and a
budget's campaign sum several rows: values as read); CPC, ACoS, Outcome, the products' current
figures, their changes and the Summary are live formulas.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

import pandas as pd

from sheetbuilder.reading.numbers import cents, cents_formula
from sheetbuilder.reading.periods import Period
from sheetbuilder.sheets.actions import ADDS
from sheetbuilder.sheets.anchors import without_absent
from sheetbuilder.values import is_number
from sheetbuilder.workbook.columns import ColumnDef, PlannedTable, plan_table
from sheetbuilder.workbook.formula import keyed_row, quote_sheet
from sheetbuilder.workbook.palette import DIRECTION_STATES
from sheetbuilder.workbook.spec import DATA, Cell, Highlight, Sheet, Table

SHEET = "Follow-up"
NAME = "sb_followup"  # the defined name over the Last week's changes body (changes --include-unapplied reads it)
CAUTION = ("A before-and-after comparison is observational: seasonality, competitors, prices and stock all move "
           "too. Treat each Outcome as a signal to look closer, not as proof that a change worked.")
# The Summary's figures, top to bottom: label and number format (the Guide's dashboard shows them alike).
SUMMARY = (("Changes planned last week", "int"), ("Applied", "int"), ("Not applied", "int"), ("Cannot tell", "int"),
           ("Spend on negated terms, last period", "money"), ("Spend on negated terms, this period", "money"),
           ("Net profit after ads, last period", "money"), ("Net profit after ads, this period", "money"))
SUMMARY_FIRST_ROW = 6  # 0-based: the title, two lines on the periods, the caution, a blank row and "Summary" above
# 0-based header row of Last week's changes: below the Summary, a blank row and the table's title (fixed height).
FIRST_TABLE_ROW = SUMMARY_FIRST_ROW + len(SUMMARY) + 3
AS_INTENDED, MIXED, AGAINST = "as intended", "mixed", "not as intended"
TOO_FEW, NOT_APPLIED = "too few clicks", "not applied"


YES, NO, CANNOT_TELL = "yes", "no", "cannot tell"


def fold(text: Any) -> str:
    """Text compared as the exports write it loosely: case folded, whitespace collapsed."""
    return " ".join(str(text).casefold().split())


@dataclass
class Followup:
    """Last week's change list looked up in this week's exports, and both periods' product figures.

    Attributes:
        rows: one dict per change: kind, campaign, ad_group, target, match_type, product_id, planned,
            now, applied, was (last week's current value), target_acos, and <metric>_b / <metric>_n
            for clicks, spend, orders and ad_sales.
        products: last period's Profit figures per product id (revenue, ad_spend, tacos, net_profit,
            status, direction).
        previous: last period, when known; current: this period, when known.
        source: the previous workbook's file name.
    """

    rows: list[dict]
    products: dict[str, dict]
    previous: Period | None
    current: Period | None
    source: str
    min_clicks: int = 10
    notes: list[str] = field(default_factory=list)

    @property
    def overlap(self) -> int:
        """Days the two periods share (0 when either is unknown)."""
        return self.previous.overlap(self.current) if self.previous and self.current else 0


def _div(a: pd.Series, b: pd.Series) -> pd.Series:
    return pd.Series([a_ / b_ if b_ else "" for a_, b_ in zip(a, b)], index=a.index, dtype=object)


def _data(key: str, header: str, style: str, help_: str, width: float = 11, hidden: bool = False) -> ColumnDef:
    return ColumnDef(key, header, style, help_, lambda df, ctx, k=key: df[k], kind=DATA, width=width, hidden=hidden)


def _rate(key: str, header: str, num: str, den: str, help_: str, style: str) -> ColumnDef:
    return ColumnDef(key, header, style, help_, lambda df, ctx: _div(df[num], df[den]),
                     '=IF({c:%s}=0,"",{c:%s}/{c:%s})' % (den, num, den), width=9)


NOW_METRICS = ("clicks", "spend", "orders", "ad_sales")
TARGET_KINDS = ("bid", *ADDS)  # the changes of one target row


def _live_now(metric: str, header: str, style: str, help_: str, hidden: bool = False) -> ColumnDef:
    """A this-period figure: live from its in_targets row when the change has exactly one, else as read."""
    return ColumnDef(f"{metric}_n", header, style, help_, lambda df, ctx: df[f"{metric}_nx"],
                     '=IF({row:tpos}=0,{c:%s_nx},INDEX({rng:targets.%s},{row:tpos}))' % (metric, metric),
                     width=11, hidden=hidden)


def target_positions(rows: list[dict], targets: pd.DataFrame | None) -> list[int]:
    """Each change's 1-based row on in_targets when it is a target change with exactly one row there, else 0."""
    if targets is None or not len(targets):
        return [0] * len(rows)
    where: dict[tuple, list[int]] = {}
    for i, key in enumerate(targets[["campaign", "ad_group", "target", "match_type"]].itertuples(index=False,
                                                                                               name=None)):
        where.setdefault((key[0], key[1], fold(key[2]), key[3]), []).append(i + 1)
    out = []
    for r in rows:
        found = where.get((r["campaign"], r["ad_group"], fold(r["target"]), r["match_type"]), [])
        out.append(found[0] if r["kind"] in TARGET_KINDS and len(found) == 1 else 0)
    return out


def _score(row: dict) -> int:
    """How many of a bid move's two intended effects happened (cut: CPC and ACoS down; raise: clicks up, ACoS on target)."""
    def there(*v):
        return all(x != "" and not (isinstance(x, float) and math.isnan(x)) for x in v)
    if row["planned"] < row["was"]:
        return int(there(row["cpc_b"], row["cpc_n"]) and row["cpc_n"] < row["cpc_b"]) + int(
            there(row["acos_b"], row["acos_n"]) and row["acos_n"] < row["acos_b"])
    return int(row["clicks_n"] > row["clicks_b"]) + int(
        there(row["acos_n"], row["target_acos"]) and row["acos_n"] <= row["target_acos"])


def outcome(row: dict, min_clicks: int) -> str:
    """The Outcome of one change in words (the formula it mirrors: OUTCOME)."""
    kind = row["kind"]
    if row["applied"] == NO:
        return NOT_APPLIED
    if kind == "add negative":
        return "as intended: no spend" if row["spend_n"] == 0 else "still spending"
    if kind in ADDS:
        if row["clicks_n"] == 0:
            return "no clicks yet"
        if row["orders_n"] > 0:
            return "first orders"
        return TOO_FEW if row["clicks_n"] < min_clicks else "clicks, no orders yet"
    if row["clicks_b"] < min_clicks or row["clicks_n"] < min_clicks:
        return TOO_FEW
    if kind == "budget":
        return AS_INTENDED if (row["spend_n"] - row["spend_b"]) * (row["planned"] - row["was"]) > 0 else AGAINST
    return (AGAINST, MIXED, AS_INTENDED)[_score(row)]


def _there(ref: str) -> str:
    return '{c:%s}<>""' % ref


_SCORE = ('IF({c:planned}<{c:was},IF(AND(%s,%s,{c:cpc_n}<{c:cpc_b}),1,0)+IF(AND(%s,%s,{c:acos_n}<{c:acos_b}),1,0),'
          'IF({c:clicks_n}>{c:clicks_b},1,0)+IF(AND(%s,%s,{c:acos_n}<={c:target_acos}),1,0))'
          % (_there("cpc_b"), _there("cpc_n"), _there("acos_b"), _there("acos_n"), _there("acos_n"),
             _there("target_acos")))
OUTCOME = (
    '=IF({c:applied}="no","%s",IF({c:kind}="add negative",IF({c:spend_n}=0,"as intended: no spend","still spending"),'
    'IF(OR({c:kind}="add keyword",{c:kind}="add product target"),IF({c:clicks_n}=0,"no clicks yet",'
    'IF({c:orders_n}>0,"first orders",IF({c:clicks_n}<min_clicks,"%s","clicks, no orders yet"))),'
    'IF(OR({c:clicks_b}<min_clicks,{c:clicks_n}<min_clicks),"%s",IF({c:kind}="budget",'
    'IF(({c:spend_n}-{c:spend_b})*({c:planned}-{c:was})>0,"%s","%s"),CHOOSE(1+%s,"%s","%s","%s"))))))'
    % (NOT_APPLIED, TOO_FEW, TOO_FEW, AS_INTENDED, AGAINST, _SCORE, AGAINST, MIXED, AS_INTENDED))


def _outcomes(df: pd.DataFrame, ctx: Any) -> pd.Series:
    return pd.Series([outcome(r, ctx.min_clicks) for r in df.to_dict("records")], index=df.index, dtype=object)


CHANGE_DEFS = [
    _data("kind", "Kind", "text", "The kind of change last week's list held.", 16),
    _data("campaign", "Campaign", "text", "Where the change went.", 24),
    _data("ad_group", "Ad group", "text", "Blank for a campaign-level change.", 16),
    _data("target", "Target or term", "text", "The keyword, target or search term.", 24),
    _data("match_type", "Match type", "text", "The match type.", 12),
    _data("product_id", "Product ID", "text", "The product the change serves (where known).", 12),
    _data("planned", "Planned", "money", "The bid or daily budget last week's list set.", 9),
    _data("now", "Now", "money", "The bid or daily budget this week's exports show.", 9),
    _data("applied", "Applied", "label", "yes, no or cannot tell (see the Guide).", 11),
    _data("clicks_b", "Clicks before", "int", "Clicks last period."),
    _live_now("clicks", "Clicks now", "int", "Clicks this period."),
    _rate("cpc_b", "CPC before", "spend_b", "clicks_b", "Spend / clicks last period.", "money"),
    _rate("cpc_n", "CPC now", "spend_n", "clicks_n", "Spend / clicks this period.", "money"),
    _data("spend_b", "Spend before", "money", "Spend last period."),
    _live_now("spend", "Spend now", "money", "Spend this period."),
    _data("orders_b", "Orders before", "int", "Orders last period."),
    _live_now("orders", "Orders now", "int", "Orders this period."),
    _rate("acos_b", "ACoS before", "spend_b", "ad_sales_b", "Spend / ad sales last period.", "percent"),
    _rate("acos_n", "ACoS now", "spend_n", "ad_sales_n", "Spend / ad sales this period.", "percent"),
    ColumnDef("outcome", "Outcome", "label", "The move compared with its intent, in words (see the Guide).",
              _outcomes, OUTCOME, width=22),
    _data("ad_sales_b", "Ad sales before", "money", "Working: ad sales last period.", hidden=True),
    _live_now("ad_sales", "Ad sales now", "money", "Working: ad sales this period.", hidden=True),
    _data("was", "Was", "money", "Working: the bid or budget when last week's list was made.", hidden=True),
    _data("target_acos", "Aim ACoS then", "percent", "Working: the ACoS the product's bids aimed at last week "
          "(Profit's Aim ACoS).",
          hidden=True),
    *[_data(f"{m}_nx", f"{m} now as read", "int", "Working: the figure this period as read from the exports.",
            hidden=True) for m in NOW_METRICS],
]

_PRODUCT_FIGURES = (("revenue", "Revenue", "money"), ("ad_spend", "Ad spend", "money"), ("tacos", "TACoS", "percent"),
                    ("net_profit", "Net profit after ads", "money"))
_PRODUCT_WORDS = (("status", "Status"), ("direction", "Direction"))


def _now(key: str):
    def compute(df: pd.DataFrame, ctx: Any) -> pd.Series:
        return df[f"_{key}_now"]
    return compute


def _change(key: str, money: bool):
    """Now minus then; a money change to the cent (an unchanged figure reads 0, never -5.7e-14)."""
    def compute(df: pd.DataFrame, ctx: Any) -> pd.Series:
        return pd.Series([(cents(n - t) if money else n - t) if is_number(n) and is_number(t) else ""
                          for t, n in zip(df[f"{key}_then"], df[f"{key}_now"])], index=df.index, dtype=object)
    return compute


def _change_formula(key: str, money: bool) -> str:
    difference = "{c:%s_now}-{c:%s_then}" % (key, key)
    return '=IF(OR({c:%s_then}="",{c:%s_now}=""),"",%s)' % (key, key, cents_formula(difference) if money else difference)


def product_defs() -> list[ColumnDef]:
    """The Products then and now columns: each figure last period, this period (live) and the change."""
    out = [_data("product_id", "Product ID", "text", "The product.", 12)]
    live = '=IF({row:ppos}=0,"",INDEX({rng:profit.%s},' + keyed_row("{rng:profit.pos}", "MAX(1,{row:ppos})") + '))'
    for key, header, style in _PRODUCT_FIGURES:
        out += [_data(f"{key}_then", f"{header} then", style, f"{header} last period (last week's workbook)."),
                ColumnDef(f"{key}_now", f"{header} now", style, f"{header} this period (Profit, live).", _now(key),
                          live % key),
                ColumnDef(f"{key}_chg", f"{header} change", style,
                          f"{header} now minus then" + (", to the cent." if style == "money" else "."),
                          _change(key, style == "money"), _change_formula(key, style == "money"))]
    for key, header in _PRODUCT_WORDS:
        out += [_data(f"{key}_then", f"{header} then", "label", f"{header} last period."),
                ColumnDef(f"{key}_now", f"{header} now", "label", f"{header} this period (Profit, live).", _now(key),
                          live % key)]
    return out


class _Ctx:
    def __init__(self, min_clicks: int):
        self.min_clicks = min_clicks
        self.totals: dict = {}


def _blank_nan(v: Any) -> Any:
    return "" if v is None or (isinstance(v, float) and math.isnan(v)) else v


def _products_frame(followup: Followup, profit: PlannedTable) -> pd.DataFrame:
    """One row per product of this period's Profit (then those only last period had): then, now and position."""
    now = profit.frame
    ids = [str(p) for p in now["product_id"]]
    ids += [p for p in followup.products if p not in set(ids)]
    pos = {str(p): i + 1 for i, p in enumerate(now["product_id"])}
    rows = []
    for pid in ids:
        then = followup.products.get(pid, {})
        row = {"product_id": pid, "ppos": pos.get(pid, 0)}
        for key in [k for k, _, _ in _PRODUCT_FIGURES] + [k for k, _ in _PRODUCT_WORDS]:
            row[f"{key}_then"] = _blank_nan(then.get(key, ""))
            row[f"_{key}_now"] = _blank_nan(now[key].iloc[pos[pid] - 1]) if pid in pos else ""
        rows.append(row)
    return pd.DataFrame(rows, columns=None if rows else ["product_id", "ppos"])


def period_lines(followup: Followup) -> list[str]:
    """The sheet's statements of both periods and of their overlap."""
    last = str(followup.previous) if followup.previous else "not stated (no dates in its exports or settings)"
    this = str(followup.current) if followup.current else "not stated (no dates in the exports or settings)"
    lines = [f"Last period: {last}. This period: {this}."]
    if followup.overlap:
        lines.append(f"The periods overlap by {followup.overlap} days, so each comparison is diluted: the shared days "
                     "count in both. Weekly 7-day exports give periods that do not overlap.")
    elif followup.previous and followup.current:
        lines.append("The periods do not overlap.")
    else:
        lines.append("Whether the periods overlap cannot be told; export with dates, or set period_end in "
                     "settings.toml.")
    return lines


def plan_followup(followup: Followup, profit: PlannedTable, ranges: dict[str, str], targets: pd.DataFrame | None
                  ) -> tuple[Sheet, PlannedTable, PlannedTable, dict[str, tuple[str, Any]]]:
    """The Follow-up sheet, its two tables, and the summary figures {label: (cell reference, value)}.

    targets is this week's in_targets rows in sheet order (None without a targets export).
    """
    ctx = _Ctx(followup.min_clicks)
    rows = [{**{k: v for k, v in r.items() if k not in {f"{m}_n" for m in NOW_METRICS}},
             **{f"{m}_nx": r[f"{m}_n"] for m in NOW_METRICS}} for r in followup.rows]
    data_keys = [d.key for d in CHANGE_DEFS if d.formula is None]
    base = pd.DataFrame(rows, columns=data_keys) if rows else pd.DataFrame(
        {k: pd.Series(dtype=object) for k in data_keys})
    base["tpos"] = target_positions(followup.rows, targets)
    defs = without_absent(CHANGE_DEFS, ranges, ("targets",))  # without targets every tpos is 0: never read
    changes = plan_table(defs, base, ctx, FIRST_TABLE_ROW + 1, ranges, with_totals=False)
    c_rng = changes.ranges(SHEET, "fu")
    products_first = FIRST_TABLE_ROW + 1 + max(len(base), 1) + 2
    products = plan_table(product_defs(), _products_frame(followup, profit), ctx, products_first + 1, ranges,
                          with_totals=False)
    p_rng = products.ranges(SHEET, "fp")
    frame = changes.frame
    spend = {s: float(frame.loc[frame["kind"] == "add negative", f"spend_{s}"].sum()) if len(frame) else 0.0
             for s in ("b", "n")}
    then_profit = float(sum(v for v in products.frame["net_profit_then"] if is_number(v)))
    summary = {  # label: (formula, value), in SUMMARY's order
        "Changes planned last week": (f"={len(frame)}", float(len(frame))),
        "Applied": (f'=COUNTIFS({c_rng["fu.applied"]},"{YES}")', float((frame["applied"] == YES).sum())),
        "Not applied": (f'=COUNTIFS({c_rng["fu.applied"]},"{NO}")', float((frame["applied"] == NO).sum())),
        "Cannot tell": (f'=COUNTIFS({c_rng["fu.applied"]},"{CANNOT_TELL}")',
                        float((frame["applied"] == CANNOT_TELL).sum())),
        "Spend on negated terms, last period": (
            f'=SUMIFS({c_rng["fu.spend_b"]},{c_rng["fu.kind"]},"add negative")', spend["b"]),
        "Spend on negated terms, this period": (
            f'=SUMIFS({c_rng["fu.spend_n"]},{c_rng["fu.kind"]},"add negative")', spend["n"]),
        "Net profit after ads, last period": (f'=SUM({p_rng["fp.net_profit_then"]})', then_profit),
        "Net profit after ads, this period": ("=" + ranges["profit_total.net_profit"],
                                              float(profit.totals_values["net_profit"])),
    }
    lines = period_lines(followup)
    above: list[list[Cell | None]] = [
        [Cell(f"Follow-up: what became of last week's changes ({followup.source})", style="title")],
        [Cell(lines[0], style="note")],
        [Cell(lines[1], style="alert" if followup.overlap else "note")],
        [Cell(CAUTION, style="note")],
        [None],
        [Cell("Summary", style="subtitle")],
    ]
    figures: dict[str, tuple[str, Any]] = {}
    for label, style in SUMMARY:
        formula, value = summary[label]
        figures[label] = (f"{quote_sheet(SHEET)}!$B${len(above) + 1}", value)
        above.append([Cell(label), Cell(value, formula, style)])
    good, bad = DIRECTION_STATES["grow"], DIRECTION_STATES["cut"]
    applied, outcome = (list(changes.letters).index(key) for key in ("applied", "outcome"))
    highlights = [Highlight(applied, YES, good), Highlight(applied, NO, bad),
                  Highlight(outcome, AS_INTENDED, good, True), Highlight(outcome, AGAINST, bad),
                  Highlight(outcome, NOT_APPLIED, bad)]
    table = Table(FIRST_TABLE_ROW, changes.columns, highlights=highlights, title="Last week's changes")
    more = [Table(products_first, products.columns, autofilter=False, title="Products then and now")]
    sheet = Sheet(SHEET, above=above, table=table, more=more, freeze=(FIRST_TABLE_ROW + 1, 1), tab_color="#3B7A57",
                  widths={0: 34})  # wide enough for the summary's labels
    return sheet, changes, products, figures
