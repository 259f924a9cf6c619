"""Live lists without macros or dynamic arrays: Harvest (terms to promote) and Negatives (to block).

The k-th row of a list shows the k-th Terms row whose Final is the list's word. On Terms
a helper column is strictly increasing: a qualifying row carries its running count k
exactly, any other row its running count plus a fraction that grows with the row. So
MATCH(k, helper, 1), a binary search, lands on the k-th qualifying row, and each list
row costs log(terms). Change a threshold or a Decision and the lists re-fill themselves.
Each list holds the rows that qualify at build plus SPARE_ROWS of room (never more than
the terms, nor list_cap): a threshold or Decision changed later re-fills it within that
room, and a line above each says when more qualify than it holds (rebuild to see them).
"""
from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any, Callable

import numpy as np
import pandas as pd

from sheetbuilder.workbook.columns import ColumnDef, PlannedTable, plan_table
from sheetbuilder.reading.settings import Settings
from sheetbuilder.workbook.spec import DATA, Cell, Sheet, Table, stacked_pages

HEADER_ROW = 3
SPARE_ROWS = 100  # list rows beyond what qualifies at build: room for thresholds and Decisions changed later


def running_key(prefix: str, what: str, condition: str, qualifies: Callable[[pd.DataFrame], pd.Series],
                position: str = "pos") -> list[ColumnDef]:
    """The one hidden column of the macro-free live list: a strictly increasing key holding the running count.

    A qualifying row's key is its running count k exactly; any other row's key is its count plus
    position / (rows + 1), a fraction below 1 that grows with the row. So the running count is
    INT of the key (INT of the previous row's key, plus 1 on a qualifying row), and MATCH(k, key, 1),
    a binary search, lands on the k-th qualifying row. condition is the formula test of a qualifying
    row, qualifies its pandas twin; position names the frame column holding the row's 1-based
    position (read from its cell where the table has that column, else written into each row's formula), and
    the frame's n_plus column holds rows + 1 (written into the formula).
    The count of qualifying rows is INT of the last key (:func:`count_formula`, :func:`count_of`).
    """
    key = f"{prefix}_key"

    def helper(df: pd.DataFrame, ctx: Any) -> pd.Series:
        hit = qualifies(df)
        return hit.astype(float).cumsum() + (df[position] / (len(df) + 1)).where(~hit, 0.0)
    return [
        ColumnDef(key, f"{what} key", "ratio",
                  f"Working: running count of {what.lower()} (whole part); a strictly increasing key, so "
                  "MATCH(k) finds the k-th.", helper,
                  "=INT(SUM({cp:%s}))+IF(%s,1,{at:%s}/{row:n_plus})" % (key, condition, position), width=6,
                  hidden=True),
    ]


def count_of(frame: pd.DataFrame, prefix: str) -> float:
    """How many rows of a planned table qualify for its running key (0 for an empty table)."""
    return float(np.floor(frame[f"{prefix}_key"].iloc[-1])) if len(frame) else 0.0


def count_formula(ranges: dict[str, str], table: str, prefix: str) -> str:
    """Formula text (no '=') of that count: INT of the table's last key."""
    return f"INT({ranges[f'{table}_last.{prefix}_key']})"


@dataclass
class ListContext:
    """What a list's columns read: the Terms frame and the settings."""

    terms: pd.DataFrame
    settings: Settings
    totals: dict[str, Any] = field(default_factory=dict)
    term_rows: dict[int, dict] = field(default_factory=dict)  # {0-based Terms row: its values}, each taken once


def _pick(column: str, text: bool = False, digits: bool = False):
    """A list column copying a Terms column from the matched row: formula and reference.

    A text column shows a blank Terms cell as blank: imported text (written as text, or left blank) reads as
    INDEX(..)&"", which gives "" for a blank cell and the text (or an error) as it is; a text column that may hold
    a number (digits: a product ID, which a spreadsheet turns into a number when it is typed again) keeps the long
    form IF(x="","",x), a number staying a number. Both give the same value in every engine
    (tests/test_recalc_engines.py checks each case).
    """
    inner = "INDEX({rng:terms.%s},{c:pos})" % column
    shown = ('IF(%s="","",%s)' % (inner, inner)) if digits else f'{inner}&""' if text else inner
    formula = '=IF({c:pos}="","",%s)' % shown
    text = text or digits

    def compute(df: pd.DataFrame, ctx: ListContext) -> pd.Series:
        values = ctx.terms[column].to_numpy(dtype=object)
        out = [values[int(p) - 1] if not pd.isna(p) else (np.nan if not text else "") for p in df["pos"]]
        if text:
            out = ["" if v is None or (isinstance(v, float) and np.isnan(v)) else v for v in out]
            return pd.Series(out, index=df.index, dtype=object)
        return pd.Series(out, index=df.index, dtype=float)
    return formula, compute


def _derived(fn, formula: str, reads: tuple[str, ...] = ()):
    """A list column computed from the row's own values and its Terms row (_<column>) (blank where it is empty).

    fn reads only the row's columns named in reads and the Terms columns of TERM_READS (as _<column>; _src_ad_group
    is the Terms ad group): a name it reads beyond them is a KeyError, never a blank.
    """
    def compute(df: pd.DataFrame, ctx: ListContext) -> pd.Series:
        rows = df[["pos", *reads]].to_dict("records")
        taken = ctx.term_rows  # the Terms rows shown, each taken once for all the list's columns
        at = sorted({p for r in rows if not pd.isna(r["pos"]) and (p := int(r["pos"]) - 1) not in taken})
        taken.update(zip(at, ctx.terms.iloc[at][list(TERM_READS)].to_dict("records")))
        terms = taken

        def row(r: dict) -> dict:
            term = terms[int(r["pos"]) - 1]
            return {**r, **{"_" + k: v for k, v in term.items()}, "_src_ad_group": term["ad_group"]}
        return pd.Series([fn(row(r), ctx.settings) if not pd.isna(r["pos"]) else "" for r in rows],
                         index=df.index, dtype=object)
    return compute, formula


TERM_READS = ("ad_group", "words")  # the Terms columns a derived list column reads (see _derived)


def _pos_column(word: str) -> ColumnDef:
    key = f"{word[0]}_key"

    def compute(df: pd.DataFrame, ctx: ListContext) -> pd.Series:
        counts = np.floor(ctx.terms[key].to_numpy(dtype=float))
        hits = np.flatnonzero(np.diff(counts, prepend=0.0) > 0) + 1  # the rows the running count counts
        return pd.Series([float(hits[int(k) - 1]) if k <= len(hits) else np.nan for k in df["k"]],
                         index=df.index, dtype=float)
    return ColumnDef("pos", "Terms row", "int", "Working: the position on Terms of the k-th qualifying term.",
                     compute, '=IF({c:k}>INT({rng:terms_last.%s}),"",MATCH({c:k},{rng:terms.%s},1))' % (key, key),
                     width=8, hidden=True)


def _k_column() -> ColumnDef:
    return ColumnDef("k", "Number", "int", "The row's number in the list.", lambda df, ctx: df["k"], kind=DATA,
                     width=8)


def _t(column: str) -> str:
    """The list row's Terms value of a column (INDEX on the row's Terms position)."""
    return "INDEX({rng:terms.%s},{c:pos})" % column


def _b(column: str) -> str:
    """The list row's ad-group blend of a column (INDEX on its term's blends row)."""
    return "INDEX({rng:blends.%s},%s)" % (column, _t("brow"))


def _from_terms(column: str, text: bool = False, formula: str = ""):
    """A list column computed live from its Terms row (formula), whose reference is the Terms frame's column."""
    return _pick(column, text)[1], formula


def _match(r, s):
    return "product" if r["kind"] == "product target" else s.harvest_match_type


_VALUE_BID = ('=IF({c:pos}="","",IF(%(clicks)s+prior_clicks=0,"",%(target)s*(%(orders)s+prior_clicks*%(cvr)s)/'
              '(%(clicks)s+prior_clicks)*IF(%(orders)s>0,%(sales)s/%(orders)s,%(aov)s)))'
              % {"clicks": _t("clicks"), "orders": _t("orders"), "sales": _t("ad_sales"), "target": _b("target_acos"),
                 "cvr": _b("p_cvr"), "aov": _b("p_aov")})
_START_BID = ('=IF({c:pos}="","",IF(OR(%(cpc)s="",{c:value_bid}=""),"",MIN(bid_ceiling,MAX(bid_floor,ROUND('
              'IF(starting_bid="cpc",%(cpc)s,IF(starting_bid="value",{c:value_bid},MIN(%(cpc)s,{c:value_bid})))'
              '+0.000000001,2)))))' % {"cpc": _t("cpc")})
_SPENT = "%s>=%s*block_spend_multiple" % (_t("spend"), _b("p_price"))
_DECIDED, _SPEND_RULE = "your decision", "spend reached price x multiple"  # two of the Rule's three texts
_RULE = ('=IF({c:pos}="","",IF(%s<>"block","%s",IF(%s,"%s",'
         '"no orders after "&%s&" clicks")))' % (_t("verdict"), _DECIDED, _SPENT, _SPEND_RULE, _b("n_zero")))
# The threshold follows the row's Rule, which tells the three cases apart (an error in the verdict or the test
# reaches the Rule as it reached the threshold).
_THRESHOLD = ('=IF({c:pos}="","",IF({c:rule}="%s","",IF({c:rule}="%s",%s*block_spend_multiple,%s)))'
              % (_DECIDED, _SPEND_RULE, _b("p_price"), _b("n_zero")))


HARVEST_DEFS: list[ColumnDef] = [
    _k_column(),
    ColumnDef("term", "Search term", "text", "The term to add.", *reversed(_pick("term", text=True)), width=28),
    ColumnDef("kind", "Kind", "text", "keyword, or product target where the term looks like a product identifier.",
              lambda df, ctx: pd.Series([("product target" if ctx.terms["pid_like"].iloc[int(p) - 1] == 1 else "keyword")
                                         if not pd.isna(p) else "" for p in df["pos"]], index=df.index, dtype=object),
              '=IF({c:pos}="","",IF(%s=1,"product target","keyword"))' % _t("pid_like"), width=14),
    ColumnDef("match", "Match type", "text", "The match type to add it with (Settings), or product.",
              *_derived(_match, '=IF({c:pos}="","",IF({c:kind}="product target","product",harvest_match_type))',
                        ("kind",)),
              width=10),
    ColumnDef("dest_campaign", "Destination campaign", "text",
              "The same campaign for manual sources; the destination named in settings.toml for the product; else "
              "blank: choose one.", *reversed(_pick("dest_campaign", text=True)), width=22),
    ColumnDef("dest_ad_group", "Destination ad group", "text", "As the destination campaign.",
              *reversed(_pick("dest_ad_group", text=True)), width=16),
    ColumnDef("start_bid", "Starting bid", "money", "The lower of the term's CPC and its value bid (Settings).",
              *_from_terms("start_bid", formula=_START_BID), width=10),
    ColumnDef("source_negative", "Negative in source", "text",
              "A negative exact to add in the source ad group so the new keyword does not compete with it: only "
              "where the keyword goes to another ad group of a live campaign and nothing there blocks the term yet.",
              *reversed(_pick("src_neg", text=True)), width=14),
    *running_key("n", "Source negatives", '{c:source_negative}<>""', lambda df: df["source_negative"] != "", "k"),
    ColumnDef("campaign", "Source campaign", "text", "Where the term was found.",
              *reversed(_pick("campaign", text=True)), width=22),
    ColumnDef("ad_group", "Source ad group", "text", "Where the term was found.",
              *reversed(_pick("ad_group", text=True)), width=16),
    ColumnDef("product_id", "Product ID", "text", "The product.", *reversed(_pick("product_id", digits=True)),
              width=12),
    ColumnDef("orders", "Orders", "int", "The term's orders.", *reversed(_pick("orders")), width=7),
    ColumnDef("spend", "Spend", "money", "The term's spend: the money at stake.", *reversed(_pick("spend")), width=9),
    ColumnDef("acos", "ACoS", "percent", "The term's ACoS.", *reversed(_pick("acos")), width=8),
    ColumnDef("reason", "Reason", "label", "choose destination, where none could be proposed.",
              *_derived(lambda r, s: "choose destination" if r["dest_campaign"] == "" else "",
                        '=IF({c:pos}="","",IF({c:dest_campaign}="","choose destination",""))', ("dest_campaign",)),
              width=18),
    ColumnDef("value_bid", "Value bid", "money",
              "Working: aim ACoS x smoothed CVR x order value (the ad group's blends from Groups; the order value "
              "is the term's own where it has orders): what a click on the term is worth.",
              *_from_terms("value_bid", formula=_VALUE_BID), width=9, hidden=True),
    _pos_column("promote"),
]


def _level(r, s):
    return s.negative_level


NEGATIVE_DEFS: list[ColumnDef] = [
    _k_column(),
    ColumnDef("term", "Search term", "text", "The term to block.", *reversed(_pick("term", text=True)), width=28),
    ColumnDef("campaign", "Campaign", "text", "The term's campaign.", *reversed(_pick("campaign", text=True)),
              width=22),
    ColumnDef("ad_group", "Ad group", "text", "The ad group, or blank where the negative goes on the whole campaign.",
              *_derived(lambda r, s: "" if s.negative_level == "campaign" else r["_src_ad_group"],
                        '=IF({c:pos}="","",IF(negative_level="campaign","",%s&""))' % _t("ad_group")), width=16),
    ColumnDef("level", "Level", "text", "ad group or campaign (Settings).",
              *_derived(_level, '=IF({c:pos}="","",negative_level)'), width=10),
    ColumnDef("neg_match", "Negative match type", "text",
              "negative exact; negative phrase for terms with fewer words than the Settings value.",
              *_derived(lambda r, s: "negative phrase" if r["_words"] < s.phrase_below_words else "negative exact",
                        '=IF({c:pos}="","",IF(%s<phrase_below_words,"negative phrase","negative exact"))'
                        % _t("words")), width=15),
    ColumnDef("rule", "Rule", "label", "The rule that fired.", *_from_terms("block_rule", True, _RULE), width=28),
    ColumnDef("threshold", "Threshold", "ratio", "Its threshold: a spend, or a number of clicks.",
              *_from_terms("block_threshold", formula=_THRESHOLD), width=10),
    ColumnDef("spend", "Spend", "money", "The term's spend.", *reversed(_pick("spend")), width=9),
    ColumnDef("clicks", "Clicks", "int", "The term's clicks.", *reversed(_pick("clicks")), width=7),
    ColumnDef("product_id", "Product ID", "text", "The product.", *reversed(_pick("product_id", digits=True)),
              width=12),
    _pos_column("block"),
]


@dataclass(frozen=True)
class ListSpec:
    """One live list: its sheet, the Final word it gathers, its title and its columns."""

    sheet: str
    word: str
    title: str
    noun: str
    defs: list[ColumnDef]


HARVEST = ListSpec("Harvest", "promote", "Search terms to promote to keywords or product targets",
                   "terms to promote", HARVEST_DEFS)
NEGATIVES = ListSpec("Negatives", "block", "Search terms to block as negative keywords", "terms to block",
                     NEGATIVE_DEFS)


def list_rows(qualifying: int, candidates: int, cap: int) -> int:
    """A list's capacity: what qualifies at build plus SPARE_ROWS of room, within the candidates and the cap."""
    return max(0, min(candidates, cap, qualifying + SPARE_ROWS))


def plan_list(spec: ListSpec, terms: PlannedTable, settings: Settings, ranges: dict[str, str]
              ) -> tuple[Sheet, PlannedTable]:
    """A live list sheet sized to what qualifies at build plus SPARE_ROWS, within the terms and list_cap."""
    total = int(count_of(terms.frame, spec.word[0]))
    n_rows = list_rows(total, len(terms.frame), settings.list_cap)
    base = pd.DataFrame({"k": np.arange(1, n_rows + 1, dtype=float), "n_plus": float(n_rows + 1)})
    ctx = ListContext(terms.frame, settings)
    planned = plan_table(spec.defs, base, ctx, HEADER_ROW + 1, ranges, with_totals=False)
    total_ref = count_formula(ranges, "terms", spec.word[0])
    how = ("raise list_cap in settings.toml and rebuild" if n_rows >= settings.list_cap
           else "rebuild the workbook")
    note = f"Showing the first {n_rows} of {total} {spec.noun}; {how} to see them all." if total > n_rows else ""
    note_formula = (f'=IF({total_ref}>{n_rows},"Showing the first {n_rows} of "&{total_ref}&" {spec.noun}; '
                    f'{how} to see them all.","")')
    room = (f"Live: a changed threshold or Decision re-fills this list. It has {n_rows} rows: the {total} "
            f"{spec.noun} at build and room for up to {SPARE_ROWS} more (at most list_cap); the line above says "
            "when more qualify than it holds.")
    above = [[Cell(spec.title, style="title")],
             [Cell(note, note_formula, "alert")],
             [Cell(room, style="note")]]
    table = Table(HEADER_ROW, planned.columns)
    # Printed: the rows filled when built (rows the list fills later, after a Decision, print once rebuilt).
    sheet = Sheet(spec.sheet, above=above, table=table, freeze=(HEADER_ROW + 1, 2),
                  page=stacked_pages([table], last_row=HEADER_ROW + min(total, n_rows)),
                  tab_color="#063F63" if spec.word == "promote" else "#5E1F4E")
    return sheet, planned
