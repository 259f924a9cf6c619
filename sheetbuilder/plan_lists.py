"""Live lists without macros or dynamic arrays: Harvest (terms to promote) and Negatives (to block).

The k-th row of a list shows the k-th Terms row whose Final is the list's word. On Terms
a helper column is strictly increasing: a qualifying row carries its running count k
exactly, any other row its running count plus a fraction that grows with the row. So
MATCH(k, helper, 1), a binary search, lands on the k-th qualifying row, and each list
row costs log(terms). Change a threshold or a Decision and the lists re-fill themselves.
The lists have as many rows as there are terms, capped by list_cap; a line above each
says when the cap hides rows.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pandas as pd

from .columns import ColumnDef, PlannedTable, plan_table, running_key
from .settings import Settings
from .spec import DATA, Cell, Sheet, Table, stacked_pages

HEADER_ROW = 3


@dataclass
class ListContext:
    """What a list's columns read: the Terms frame and the settings."""

    terms: pd.DataFrame
    settings: Settings
    totals: dict[str, Any] = field(default_factory=dict)


def _pick(column: str, text: bool = False):
    """A list column copying a Terms column from the matched row: formula and reference."""
    inner = "INDEX({rng:terms.%s},{c:pos})" % column
    formula = ('=IF({c:pos}="","",IF(%s="","",%s))' % (inner, inner)) if text else \
        '=IF({c:pos}="","",%s)' % inner

    def compute(df: pd.DataFrame, ctx: ListContext) -> pd.Series:
        values = ctx.terms[column].to_numpy(dtype=object)
        out = [values[int(p) - 1] if not pd.isna(p) else (np.nan if not text else "") for p in df["pos"]]
        if text:
            out = ["" if v is None or (isinstance(v, float) and np.isnan(v)) else v for v in out]
            return pd.Series(out, index=df.index, dtype=object)
        return pd.Series(out, index=df.index, dtype=float)
    return formula, compute


def _derived(fn, formula: str):
    """A list column computed from the row's own picked values (blank where the row is empty)."""
    def compute(df: pd.DataFrame, ctx: ListContext) -> pd.Series:
        return pd.Series([fn(r, ctx.settings) if not pd.isna(r["pos"]) else "" for r in df.to_dict("records")],
                         index=df.index, dtype=object)
    return compute, formula


def _pos_column(word: str) -> ColumnDef:
    cnt, key = f"{word[0]}_cnt", f"{word[0]}_key"

    def compute(df: pd.DataFrame, ctx: ListContext) -> pd.Series:
        counts = ctx.terms[cnt].to_numpy(dtype=float)
        hits = np.flatnonzero(np.diff(counts, prepend=0.0) > 0) + 1  # the rows the running count counts
        return pd.Series([float(hits[int(k) - 1]) if k <= len(hits) else np.nan for k in df["k"]],
                         index=df.index, dtype=float)
    return ColumnDef("pos", "Terms row", "int", "Working: the position on Terms of the k-th qualifying term.",
                     compute, '=IF({c:k}>{rng:terms_last.%s},"",MATCH({c:k},{rng:terms.%s},1))' % (cnt, key),
                     width=8, hidden=True)


def _k_column() -> ColumnDef:
    return ColumnDef("k", "Number", "int", "The row's number in the list.", lambda df, ctx: df["k"], kind=DATA,
                     width=8)


def _kind(r, s):
    return "product target" if r["pid_like"] == 1 else "keyword"


def _match(r, s):
    return "product" if r["kind"] == "product target" else s.harvest_match_type


HARVEST_DEFS: list[ColumnDef] = [
    _k_column(),
    ColumnDef("term", "Search term", "text", "The term to add.", *reversed(_pick("term", text=True)), width=28),
    ColumnDef("pid_like", "Looks like a product ID", "int", "Working.", *reversed(_pick("pid_like")), width=6,
              hidden=True),
    ColumnDef("src_match", "Source match type", "text", "Working: the match type it came through.",
              *reversed(_pick("from_match", text=True)), width=8, hidden=True),
    ColumnDef("kind", "Kind", "text", "keyword, or product target where the term looks like a product identifier.",
              *_derived(_kind, '=IF({c:pos}="","",IF({c:pid_like}=1,"product target","keyword"))'), width=14),
    ColumnDef("match", "Match type", "text", "The match type to add it with (Settings), or product.",
              *_derived(_match, '=IF({c:pos}="","",IF({c:kind}="product target","product",harvest_match_type))'),
              width=10),
    ColumnDef("dest_campaign", "Destination campaign", "text",
              "The same campaign for manual sources; the destination named in settings.toml for the product; else "
              "blank: choose one.", *reversed(_pick("dest_campaign", text=True)), width=22),
    ColumnDef("dest_ad_group", "Destination ad group", "text", "As the destination campaign.",
              *reversed(_pick("dest_ad_group", text=True)), width=16),
    ColumnDef("start_bid", "Starting bid", "money", "The lower of the term's CPC and its value bid (Settings).",
              *reversed(_pick("start_bid")), width=10),
    ColumnDef("source_negative", "Negative in source", "text",
              "A negative exact to add in the source ad group so the new keyword does not compete with it: only "
              "where the keyword goes to another ad group of a live campaign and nothing there blocks the term yet.",
              *reversed(_pick("src_neg", text=True)), width=14),
    *running_key("n", "Source negatives", '{c:source_negative}<>""', lambda df: df["source_negative"] != "", "k"),
    ColumnDef("campaign", "Source campaign", "text", "Where the term was found.",
              *reversed(_pick("campaign", text=True)), width=22),
    ColumnDef("ad_group", "Source ad group", "text", "Where the term was found.",
              *reversed(_pick("ad_group", text=True)), width=16),
    ColumnDef("product_id", "Product ID", "text", "The product.", *reversed(_pick("product_id", text=True)),
              width=12),
    ColumnDef("orders", "Orders", "int", "The term's orders.", *reversed(_pick("orders")), width=7),
    ColumnDef("spend", "Spend", "money", "The term's spend: the money at stake.", *reversed(_pick("spend")), width=9),
    ColumnDef("acos", "ACoS", "percent", "The term's ACoS.", *reversed(_pick("acos")), width=8),
    ColumnDef("reason", "Reason", "label", "choose destination, where none could be proposed.",
              *_derived(lambda r, s: "choose destination" if r["dest_campaign"] == "" else "",
                        '=IF({c:pos}="","",IF({c:dest_campaign}="","choose destination",""))'), width=18),
    _pos_column("promote"),
]


def _level(r, s):
    return s.negative_level


NEGATIVE_DEFS: list[ColumnDef] = [
    _k_column(),
    ColumnDef("term", "Search term", "text", "The term to block.", *reversed(_pick("term", text=True)), width=28),
    ColumnDef("campaign", "Campaign", "text", "The term's campaign.", *reversed(_pick("campaign", text=True)),
              width=22),
    ColumnDef("src_ad_group", "Source ad group", "text", "Working.", *reversed(_pick("ad_group", text=True)),
              width=8, hidden=True),
    ColumnDef("ad_group", "Ad group", "text", "The ad group, or blank where the negative goes on the whole campaign.",
              *_derived(lambda r, s: "" if s.negative_level == "campaign" else r["src_ad_group"],
                        '=IF({c:pos}="","",IF(negative_level="campaign","",{c:src_ad_group}))'), width=16),
    ColumnDef("level", "Level", "text", "ad group or campaign (Settings).",
              *_derived(_level, '=IF({c:pos}="","",negative_level)'), width=10),
    ColumnDef("words", "Words", "int", "Working.", *reversed(_pick("words")), width=6, hidden=True),
    ColumnDef("neg_match", "Negative match type", "text",
              "negative exact; negative phrase for terms with fewer words than the Settings value.",
              *_derived(lambda r, s: "negative phrase" if r["words"] < s.phrase_below_words else "negative exact",
                        '=IF({c:pos}="","",IF({c:words}<phrase_below_words,"negative phrase","negative exact"))'),
              width=15),
    ColumnDef("rule", "Rule", "label", "The rule that fired.", *reversed(_pick("block_rule", text=True)), width=28),
    ColumnDef("threshold", "Threshold", "ratio", "Its threshold: a spend, or a number of clicks.",
              *reversed(_pick("block_threshold")), width=10),
    ColumnDef("spend", "Spend", "money", "The term's spend.", *reversed(_pick("spend")), width=9),
    ColumnDef("clicks", "Clicks", "int", "The term's clicks.", *reversed(_pick("clicks")), width=7),
    ColumnDef("product_id", "Product ID", "text", "The product.", *reversed(_pick("product_id", text=True)),
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


def plan_list(spec: ListSpec, terms: PlannedTable, settings: Settings, ranges: dict[str, str]
              ) -> tuple[Sheet, PlannedTable]:
    """A live list sheet sized to the number of terms, capped by list_cap."""
    n_rows = min(len(terms.frame), settings.list_cap)
    base = pd.DataFrame({"k": np.arange(1, n_rows + 1, dtype=float), "n_plus": float(n_rows + 1)})
    ctx = ListContext(terms.frame, settings)
    planned = plan_table(spec.defs, base, ctx, HEADER_ROW + 1, ranges, with_totals=False)
    cnt = f"{spec.word[0]}_cnt"
    total_ref = ranges[f"terms_last.{cnt}"]
    total = int(terms.frame[cnt].iloc[-1]) if len(terms.frame) else 0
    note = (f"Showing the first {n_rows} of {total} {spec.noun}; raise list_cap in settings.toml and rebuild to "
            "see them all.") if total > n_rows else ""
    note_formula = (f'=IF({total_ref}>{n_rows},"Showing the first {n_rows} of "&{total_ref}&" {spec.noun}; '
                    f'raise list_cap in settings.toml and rebuild to see them all.","")')
    above = [[Cell(spec.title, style="title")],
             [Cell(note, note_formula, "alert")]]
    table = Table(HEADER_ROW, planned.columns)
    # Printed: the rows filled when built (rows the list fills later, after a Decision, print once rebuilt).
    sheet = Sheet(spec.sheet, above=above, table=table, freeze=(HEADER_ROW + 1, 2),
                  page=stacked_pages([table], last_row=HEADER_ROW + min(total, n_rows)),
                  tab_color="#063F63" if spec.word == "promote" else "#5E1F4E")
    return sheet, planned
