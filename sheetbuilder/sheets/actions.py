"""The Actions sheet: a live review page of the changes whose Final value differs from today.

Five kinds of change, in this order: bid changes (Bids, Final bid different from the bid),
keywords and product targets to add (Harvest), negatives to add in the source ad groups of
promoted terms (Harvest), negatives to add (Negatives), daily budget changes (Budget).
The sheet is two blocks of rows. The first shows the first actions_cap bid changes (every one is
on Bids, and `changes` writes them all, from :func:`every_change`): its k-th row finds the k-th
change by MATCH on Bids' strictly increasing Changes key (the same macro-free method as the term
lists), and its formulas name only Bids ranges, so an edit that moves every bid marks only these
rows. The second lists every change of the other kinds: its k-th row finds its kind from the running
totals of their counts, then its row on the source sheet, directly for the Harvest and Negatives
lists (their k-th rows) or by MATCH on Harvest's or Budget's key. One hidden working column (Source
row) holds both, the kind as an offset of SPAN rows, so each row costs its ten visible cells and one
lookup.

Every row carries its product and the money at stake (the target's or term's spend, or the
size of the budget change). Within a kind the rows follow their source sheets, which are
sorted by that money when building (Bids and Terms by spend, budgets by the proposed
change): a Decision typed later changes which rows are listed, not their order.
"""
from __future__ import annotations

from dataclasses import dataclass, field, replace
from typing import Any

import numpy as np
import pandas as pd

from sheetbuilder.reading.numbers import cents, cents_formula
from sheetbuilder.sheets.anchors import without_absent
from sheetbuilder.values import is_empty
from sheetbuilder.workbook.columns import ColumnDef, PlannedTable, plan_table
from sheetbuilder.workbook.formula import cell_ref
from sheetbuilder.sheets.lists import SPARE_ROWS, count_formula, count_of as list_count
from sheetbuilder.reading.settings import Settings
from sheetbuilder.workbook.spec import DATA, Cell, Sheet, Table, stacked_pages

SHEET = "Actions"
HEADER_ROW = 3  # 0-based: title, counts, a note, then the header (the layout the changes command reads)
HEADERS = ("Kind", "Campaign", "Ad group", "Target or term", "Match type", "Current", "New", "Reason", "Product ID",
           "Money at stake")
SOURCES = ("bids", "harvest", "negative_list", "budget_campaigns")  # the tables the list reads (each may be absent)
BID_ROWS = "bid_rows"  # the planned table's count of the rows of its bid block (the page), in totals_values
NO_DESTINATION = "choose destination: a live campaign and ad group for this product"


@dataclass(frozen=True)
class Segment:
    """One part of the list, in list order: the changes of one kind read from one source table.

    Attributes:
        number: its number (1 to 5); the hidden Source row holds (number - 1) x SPAN + the source row.
        label: its count's label above the list.
        table: the planned table its changes come from.
        kinds: the Kind words its rows show.
    """

    number: int
    label: str
    table: str
    kinds: tuple[str, ...]


ADDS = ("add keyword", "add product target")  # the Kind words of a keyword or product target to add
SEGMENTS = (Segment(1, "Bid changes", "Bids", ("bid",)),
            Segment(2, "To add", "Harvest", ADDS),
            Segment(3, "Source negatives", "Harvest", ("add negative",)),
            Segment(4, "Negatives", "Negatives", ("add negative",)),
            Segment(5, "Budgets", "Budget campaigns", ("budget",)))
KINDS = tuple(dict.fromkeys(kind for s in SEGMENTS for kind in s.kinds))  # every Kind word, in list order


@dataclass
class ActionsContext:
    """What the Actions columns' references read: the changes in order."""

    changes: list[dict]
    totals: dict[str, Any] = field(default_factory=dict)


def _blank_safe(ref: str) -> str:
    """ref as shown, a blank cell as blank: the long form, for a value column that may hold a number."""
    return f'IF({ref}="","",{ref})'


# How a column of the bid block or of the other kinds reads its source row, by what the source cell holds. The
# three forms give the value the long form gives in every engine (tests/test_recalc_engines.py checks each case):
# - a formula column of Harvest or Negatives (_idx): never a blank cell (every row of those lists holds its
#   formulas, and the list's count keeps the row within them), so INDEX alone gives its value, "" included;
# - a column of imported text (_text: campaigns, ad groups, terms, match types), which the build writes as text or
#   leaves blank: INDEX(..)&"" turns a blank cell into "" and leaves text (and an error) as it is;
# - a value column that may hold a number (_any: product IDs, written as text, can be digits a spreadsheet
#   turns into a number when typed again): the long form, a number stays a number.


SPAN = 10_000_000  # Source row holds (segment - 1) x SPAN + the row: a sheet has fewer rows than SPAN


def _branch(part: str, seg: int) -> str:
    """part reading its segment's source row: the Source row less the segment's offset."""
    return part if seg == 1 else part.replace("{c:pos}", f"{{c:pos}}-{(seg - 1) * SPAN}")


def _field(parts: dict[int, str], first: int = 1, never: frozenset[int] = frozenset()) -> str:
    """A formula choosing, by the row's segment (read from its Source row), one of parts; blank for the others.

    Segments before first never reach the rows the formula is written in, nor do those in never (a kind whose
    count is a constant 0: its source is not in this workbook), so each of those joins the run before it (or the
    one after, at the start). Neighbouring segments with the same branch (a blank, a fixed word) share one test.
    """
    runs: list[tuple[int, str]] = []  # (last segment of the run, its branch), in segment order
    for seg in range(first, len(SEGMENTS) + 1):
        if seg in never:
            if runs:
                runs[-1] = (seg, runs[-1][1])
            continue
        branch = _branch(parts.get(seg, '""'), seg)
        if runs and runs[-1][1] == branch:
            runs[-1] = (seg, branch)
        else:
            runs.append((seg, branch))
    out = '""'
    for last, branch in reversed(runs):
        if last == len(SEGMENTS):
            out = branch
        elif not branch == out == '""':
            out = f"IF({{c:pos}}<{last * SPAN},{branch},{out})"
    return f'=IF({{c:pos}}="","",{out})'


def _idx(rng: str) -> str:
    """A formula column of Harvest or Negatives at the row's source row (never a blank cell)."""
    return f"INDEX({{rng:{rng}}},{{c:pos}})"


def _text(rng: str) -> str:
    """A column of imported text at the row's source row, a blank cell read as ""."""
    return f'{_idx(rng)}&""'


def _any(rng: str) -> str:
    """A value column that may hold a number at the row's source row, a blank cell read as "" (the long form)."""
    return _blank_safe(_idx(rng))


def _ref(key: str):
    def compute(df: pd.DataFrame, ctx: ActionsContext) -> pd.Series:
        values = [ctx.changes[int(k) - 1].get(key, "") if k <= len(ctx.changes) else "" for k in df["k"]]
        return pd.Series(values, index=df.index, dtype=object)
    return compute


def _num(key: str):
    def compute(df: pd.DataFrame, ctx: ActionsContext) -> pd.Series:
        values = [ctx.changes[int(k) - 1].get(key, np.nan) if k <= len(ctx.changes) else np.nan for k in df["k"]]
        values = [np.nan if v == "" else v for v in values]  # text only where a Final shows 'invalid'
        return pd.Series(values, index=df.index, dtype=object if any(isinstance(v, str) for v in values) else float)
    return compute


def _bid_formula(part: str) -> str:
    """A column of the bid rows: part read at the row's Bids position (these rows name only Bids ranges)."""
    return f'=IF({{c:pos}}="","",{part})'


def defs(counts: list[str], bids: bool = False, never: frozenset[int] = frozenset()) -> list[ColumnDef]:
    """The Actions columns of one block of rows, given the cells holding each segment's count (absolute
    references), in SEGMENTS' order.

    The list is two blocks, each row numbered (k) within its block. The first block (bids True) holds the
    first bid changes, each row the k-th of Bids' changes (MATCH over Bids' Changes key): its formulas name
    only Bids ranges, so an edit that moves every bid marks only these rows. The second block holds the other
    kinds, its row's segment following from k against the running totals of their counts. The hidden Source
    row is the only working column: it holds (segment - 1) x SPAN + the change's row on its source sheet (the
    k-th of Bids' changes, Harvest's rows, Harvest's source negatives, Negatives' rows, Budget's changes), so
    each visible column finds both the segment and the row in it. never holds the segments whose count is a
    constant 0 (their source is not in this workbook): no row reaches them, so the columns leave them out.
    """
    if bids:
        pos = '=IF({c:k}<=%s,MATCH({c:k},{rng:bids.a_key},1),"")' % counts[0]
        kind = '=IF({c:pos}="","","bid")'
    else:
        cum = ["+".join(counts[1:i + 1]) for i in range(1, len(counts))]  # the other kinds' running totals
        # The change's number within its kind is k less the kinds before it; the source row follows from it.
        # The budget kind last: where the workbook lacks it (never), no row reaches it and its test goes.
        budget = ('IF({c:k}<=%s,%d+MATCH({c:k}-(%s),{rng:budget_campaigns.c_key},1),"")' % (cum[3], 4 * SPAN, cum[2])
                  if 5 not in never else '""')
        pos = ('=IF({c:k}<=%s,%d+{c:k},IF({c:k}<=%s,%d+MATCH({c:k}-(%s),{rng:harvest.n_key},1),'
               'IF({c:k}<=%s,%d+{c:k}-(%s),%s)))'
               % (cum[0], SPAN, cum[1], 2 * SPAN, cum[0], cum[2], 3 * SPAN, cum[1], budget))
        negative = 'IF({c:pos}<%d,"add negative","budget")' % (4 * SPAN) if 5 not in never else '"add negative"'
        kind = ('=IF({c:pos}="","",IF({c:pos}<%d,IF(INDEX({rng:harvest.kind},{c:pos}-%d)="product target",'
                '"add product target","add keyword"),%s))' % (2 * SPAN, SPAN, negative))

    def pick(parts: dict[int, str]) -> str:
        """The column's formula in this block: its bid branch, or the other kinds' chain."""
        return _bid_formula(parts[1]) if bids else _field(parts, first=2, never=never)

    return [
        ColumnDef("kind", "Kind", "text", "bid, add keyword, add product target, add negative or budget.",
                  _ref("Kind"), kind, width=16),
        ColumnDef("campaign", "Campaign", "text", "Where the change goes.", _ref("Campaign"), pick({
            1: _text("bids.campaign"), 2: _idx("harvest.dest_campaign"), 3: _idx("harvest.campaign"),
            4: _idx("negative_list.campaign"), 5: _text("budget_campaigns.campaign")}), width=26),
        ColumnDef("ad_group", "Ad group", "text", "Blank for a campaign-level change.", _ref("Ad group"), pick({
            1: _text("bids.ad_group"), 2: _idx("harvest.dest_ad_group"), 3: _idx("harvest.ad_group"),
            4: _idx("negative_list.ad_group")}), width=18),
        ColumnDef("target", "Target or term", "text", "The keyword, target or search term.", _ref("Target or term"),
                  pick({1: _text("bids.target"), 2: _idx("harvest.term"), 3: _idx("harvest.term"),
                          4: _idx("negative_list.term")}), width=28),
        ColumnDef("match_type", "Match type", "text", "The match type to use.", _ref("Match type"), pick({
            1: _text("bids.match_type"), 2: _idx("harvest.match"), 3: '"negative exact"',
            4: _idx("negative_list.neg_match")}), width=15),
        ColumnDef("current", "Current", "money", "The bid or daily budget now.", _num("Current"), pick({
            1: "INDEX({rng:bids.bid},{c:pos})", 5: "INDEX({rng:budget_campaigns.budget},{c:pos})"}), width=10),
        ColumnDef("new", "New", "money", "The new bid, starting bid or daily budget.", _num("New"), pick({
            1: "INDEX({rng:bids.final},{c:pos})", 2: "INDEX({rng:harvest.start_bid},{c:pos})",
            5: "INDEX({rng:budget_campaigns.final},{c:pos})"}), width=10),
        ColumnDef("reason", "Reason", "label", "Why: the rule, or your decision.", _ref("Reason"), pick({
            1: 'IF(INDEX({rng:bids.decision},{c:pos})="",INDEX({rng:bids.reason},{c:pos}),"your decision")',
            2: 'IF(INDEX({rng:harvest.dest_campaign},{c:pos})="","%s","search term that sells")' % NO_DESTINATION,
            3: '"so the new keyword does not compete with its source"',
            4: _idx("negative_list.rule"),
            5: 'IF(INDEX({rng:budget_campaigns.decision},{c:pos})="","follows its products\' spend","your decision")'}),
                  width=40),
        ColumnDef("product_id", "Product ID", "text", "The product (or the campaign's products) the change is for.",
                  _ref("Product ID"), pick({
                      1: _any("bids.product_id"), 2: _idx("harvest.product_id"), 3: _idx("harvest.product_id"),
                      4: _idx("negative_list.product_id"), 5: _any("budget_campaigns.products")}), width=16),
        ColumnDef("money", "Money at stake", "money",
                  "Last period's spend of the target or term, or the size of the budget change.", _num("Money at stake"),
                  pick({1: "INDEX({rng:bids.spend},{c:pos})", 2: "INDEX({rng:harvest.spend},{c:pos})",
                          3: "INDEX({rng:harvest.spend},{c:pos})", 4: "INDEX({rng:negative_list.spend},{c:pos})",
                          5: "IF(ISNUMBER(INDEX({rng:budget_campaigns.final},{c:pos})),"
                             + cents_formula("ABS(INDEX({rng:budget_campaigns.final},{c:pos})-INDEX("
                                             "{rng:budget_campaigns.budget},{c:pos}))", never_negative=True)
                             + ",\"\")"}),
                  width=11),
        ColumnDef("k", "Number", "int", "Helper: the row's number within its block (bid changes, other changes).",
                  lambda df, ctx: df["k"], kind=DATA, width=6, hidden=True),
        ColumnDef("pos", "Source row", "int",
                  "Working: the change's kind and its row on its source sheet, (kind's number - 1) x 10,000,000 + row.",
                  _num("_pos"), pos, width=6, hidden=True),
    ]


# The columns as the Guide describes them and the change list reads their keys (no counts needed).
DEFS: list[ColumnDef] = defs(["0"] * len(SEGMENTS))
VISIBLE = tuple(d for d in DEFS if not d.hidden)  # the columns the sheet shows and `changes` writes


def _records(frame: pd.DataFrame, columns: tuple[str, ...]) -> list[dict]:
    """The rows of frame as {column: value} for the columns named only (the frames are wide: Bids has 60 columns)."""
    return frame[list(columns)].to_dict("records")


def _changes(tables: dict[str, PlannedTable]) -> tuple[list[dict], list[int]]:
    """The changes in list order as the reference computes them, and the count of each segment."""
    out: list[dict] = []
    counts = [0] * len(SEGMENTS)
    if "Bids" in tables:
        b = tables["Bids"].frame
        for r in _records(b.loc[b["final"] != b["bid"]], ("pos", "campaign", "ad_group", "target", "match_type",
                                                           "bid", "final", "product_id", "spend", "reason", "decision")):
            counts[0] += 1
            out.append({"_seg": 1, "_pos": r["pos"], "Kind": "bid", "Campaign": r["campaign"],
                        "Ad group": r["ad_group"], "Target or term": r["target"], "Match type": r["match_type"],
                        "Current": r["bid"], "New": r["final"], "Product ID": r["product_id"],
                        "Money at stake": r["spend"],
                        "Reason": r["reason"] if is_empty(r["decision"]) else "your decision"})
    if "Harvest" in tables:
        h = tables["Harvest"].frame
        filled = h.loc[h["pos"].notna()]
        for r in _records(filled, ("k", "kind", "dest_campaign", "dest_ad_group", "term", "match", "start_bid",
                                   "product_id", "spend")):
            counts[1] += 1
            out.append({"_seg": 2, "_pos": SPAN + r["k"],
                        "Kind": "add product target" if r["kind"] == "product target" else "add keyword",
                        "Campaign": r["dest_campaign"], "Ad group": r["dest_ad_group"], "Target or term": r["term"],
                        "Match type": r["match"], "New": r["start_bid"], "Product ID": r["product_id"],
                        "Money at stake": r["spend"],
                        "Reason": NO_DESTINATION if r["dest_campaign"] == "" else "search term that sells"})
        for r in _records(filled.loc[filled["source_negative"] != ""], ("k", "campaign", "ad_group", "term",
                                                                       "product_id", "spend")):
            counts[2] += 1
            out.append({"_seg": 3, "_pos": 2 * SPAN + r["k"], "Kind": "add negative",
                        "Campaign": r["campaign"], "Ad group": r["ad_group"], "Target or term": r["term"],
                        "Match type": "negative exact", "Product ID": r["product_id"], "Money at stake": r["spend"],
                        "Reason": "so the new keyword does not compete with its source"})
    if "Negatives" in tables:
        n = tables["Negatives"].frame
        for r in _records(n.loc[n["pos"].notna()], ("k", "campaign", "ad_group", "term", "neg_match", "product_id",
                                                     "spend", "rule")):
            counts[3] += 1
            out.append({"_seg": 4, "_pos": 3 * SPAN + r["k"], "Kind": "add negative", "Campaign": r["campaign"],
                        "Ad group": r["ad_group"], "Target or term": r["term"], "Match type": r["neg_match"],
                        "Product ID": r["product_id"], "Money at stake": r["spend"], "Reason": r["rule"]})
    if "Budget campaigns" in tables:
        c = tables["Budget campaigns"].frame
        for r in _records(c.loc[(c["final"] != c["budget"]) & (c["state"] == "enabled")],
                          ("cpos", "campaign", "budget", "final", "products", "decision")):
            counts[4] += 1
            out.append({"_seg": 5, "_pos": 4 * SPAN + r["cpos"], "Kind": "budget", "Campaign": r["campaign"],
                        "Current": r["budget"], "New": r["final"], "Product ID": r["products"],
                        "Money at stake": "" if isinstance(r["final"], str) else cents(abs(r["final"] - r["budget"])),
                        "Reason": "follows its products' spend" if is_empty(r["decision"]) else "your decision"})
    return out, counts


def every_change(tables: dict[str, PlannedTable]) -> tuple[pd.DataFrame, int]:
    """Every change the planned tables hold, in list order (every bid change, then the other kinds), as the
    visible columns' references compute them (keyed as DEFS), and how many are bid changes.

    What `changes` writes: the Actions sheet shows only the first actions_cap bid changes, this all of them.
    The list is the one plan_actions made (kept on the planned Actions table), else made here.
    """
    kept = tables[SHEET].kept if SHEET in tables else None
    changes, counts = kept if kept is not None else _changes(tables)
    frame = pd.DataFrame({"k": np.arange(1, len(changes) + 1, dtype=float)})
    ctx = ActionsContext(changes)
    return pd.DataFrame({d.key: d.reference(frame, ctx) for d in VISIBLE}, index=frame.index), counts[0]


def unlisted(tables: dict[str, PlannedTable]) -> list[tuple[str, str]]:
    """[(sheet, sentence)] for each list holding fewer rows than qualify now (its cap reached): those changes are
    in neither the sheet nor the change list `changes` writes. Empty when every change is listed.

    What brings a row in: a Terms row whose Final is promote (not already a keyword of its product) or block
    (in a live campaign, not negated, blocking nothing the list adds), each through its Harvest or Negatives
    row. Each list holds what qualified at build plus SPARE_ROWS, within list_cap, so the room runs out only at
    list_cap, or after more than SPARE_ROWS rows qualify since the build (the sheets say so above each list; a
    rebuild makes room). The Actions sheet is not one of them: `changes` writes every change (every bid
    change, the page showing only the first actions_cap), whatever the sheet's room.
    """
    out = []
    if "Terms" in tables:
        terms = tables["Terms"].frame
        for sheet, word, noun in (("Harvest", "p", "terms to promote"), ("Negatives", "b", "terms to block")):
            if sheet in tables:
                qualify, rows = int(list_count(terms, word)), len(tables[sheet].frame)
                if qualify > rows:
                    out.append((sheet, f"{qualify - rows} of the {qualify} {noun} are beyond the {sheet} list's "
                                       f"{rows} rows (list_cap in settings.toml): they and their changes are not "
                                       "listed; raise list_cap, rebuild the workbook and export again"))
    return out


def _note(counts: list[str], listed: tuple[int, int], values: tuple[int, int]) -> tuple[str, str, bool]:
    """The line above the list: (its value, its formula, whether it says that rows are left out).

    counts are the cells of the segment counts, listed the rows of each block, values the changes of each
    block at build (bid changes, the other kinds).
    """
    static = ("Decision aid only: review every change before applying it to a live ad account. "
              "Export every change with: sheetbuilder changes WORKBOOK -o changes.csv")
    bids, others = counts[0], "+".join(counts[1:])
    (p, q), (m, n) = listed, values
    bid_text = ("Showing the first %d of {m} bid changes; every one is on Bids (its Final bid) and sheetbuilder "
                "changes writes them all." % p)
    other_text = "Showing the first %d of {n} other changes; rebuild the workbook to see them all." % q
    formula = (f'=IF(AND({bids}<={p},{others}<={q}),"{static}",IF({bids}>{p},"'
               + bid_text.replace("{m}", f'"&{bids}&"') + f'","")&IF({others}>{q},IF({bids}>{p}," ","")&"'
               + other_text.replace("{n}", f'"&({others})&"') + '",""))')
    said = " ".join(([bid_text.replace("{m}", str(m))] if m > p else [])
                    + ([other_text.replace("{n}", str(n))] if n > q else []))
    return (said or static), formula, bool(said)


def plan_actions(tables: dict[str, PlannedTable], ranges: dict[str, str], settings: Settings,
                 sizes: dict[str, int]) -> tuple[Sheet, PlannedTable, list[int], list[str]]:
    """The Actions sheet, its reference frame, the count of changes of each kind and the cells that count them.

    The list is a review page: its first block shows the first actions_cap bid changes (every one is on Bids,
    and `changes` writes them all), its second every change of the other kinds.
    """
    changes, counts = _changes(tables)  # counts in SEGMENTS' order
    count_cells = []
    totals = []
    def capped(word: str, table: str) -> str:
        return f"MIN({count_formula(ranges, 'terms', word)},{len(tables[table].frame)})"
    count_of = {1: lambda: count_formula(ranges, "bids", "a"), 2: lambda: capped("p", "Harvest"),
                3: lambda: count_formula(ranges, "harvest", "n"), 4: lambda: capped("b", "Negatives"),
                5: lambda: count_formula(ranges, "budget_campaigns", "c")}  # each segment's count, by its number
    for segment in SEGMENTS:
        table = segment.table
        totals.append(count_of[segment.number]() if table in tables and len(tables[table].frame) else "0")
    count_refs, local_refs = [], []
    for label, total, value in zip((s.label for s in SEGMENTS), totals, counts):
        local_refs.append(cell_ref(1, len(count_cells) + 1, True))  # row 2, beside its label
        count_refs.append(f"{SHEET}!{local_refs[-1]}")
        count_cells += [Cell(label, style="note"), Cell(float(value), "=" + total if total != "0" else "=0", "int_left")]
    # Each block sized to its changes at build plus SPARE_ROWS of room (a Decision or threshold changed later),
    # within its candidate rows; the bid block within actions_cap too. The note says when more qualify.
    bids, others = changes[:counts[0]], changes[counts[0]:]
    candidates = [sizes.get(s.label, 0) for s in SEGMENTS]
    p = max(0, min(candidates[0], settings.actions_cap, len(bids) + SPARE_ROWS))
    q = max(0, min(sum(candidates[1:]), len(others) + SPARE_ROWS))
    # A source this workbook lacks has a count of 0, so its branch is never taken: the columns leave it out, and
    # what else reads it (the Source row's own chain) reads it as blank.
    never = frozenset(seg.number for seg, total in zip(SEGMENTS, totals) if total == "0")
    blocks = []
    for block, n, bid_block, first in ((bids[:p], p, True, HEADER_ROW + 1), (others, q, False, HEADER_ROW + 1 + p)):
        # seg (each row's segment, 0 when empty) stays in the reference frame only: the sheet reads it from Source row.
        base = pd.DataFrame({"k": np.arange(1, n + 1, dtype=float),
                             "seg": [float(block[i]["_seg"]) if i < len(block) else 0.0 for i in range(n)]})
        columns = without_absent(defs(local_refs, bids=bid_block, never=never), ranges, SOURCES)
        blocks.append(plan_table(columns, base, ActionsContext(block), first, ranges, with_totals=False))
    planned = _joined(*blocks)
    planned.totals_values[BID_ROWS] = p
    planned.kept = (changes, counts)  # the change list, made once: every_change reads it
    note_value, note_formula, short = _note(local_refs, (p, q), (len(bids), len(others)))
    above = [[Cell("Actions: every change whose final value differs from today (bid changes: the first "
                   f"{p:,}, all on Bids)" if len(bids) > p else
                   "Actions: every change whose final value differs from today", style="title")],
             count_cells,
             [Cell(note_value, note_formula, "alert" if short else "note")]]
    table = Table(HEADER_ROW, planned.columns)
    # Printed: the rows filled when built (changes settled later print once rebuilt), the bid block's room between.
    filled = p + len(others) if others else min(len(bids), p)
    sheet = Sheet(SHEET, above=above, table=table, freeze=(HEADER_ROW + 1, 1), tab_color="#0B5C8A",
                  page=stacked_pages([table], last_row=HEADER_ROW + filled))
    return sheet, planned, counts, count_refs


def _joined(bids: PlannedTable, others: PlannedTable) -> PlannedTable:
    """The two blocks as one table: each column's values one after the other, a formula per row where they differ."""
    columns = []
    for a, b in zip(bids.columns, others.columns):
        formula = a.formula if not b.values or a.formula is None else b.formula if not a.values else (
            ([a.formula] * len(a.values) if isinstance(a.formula, str) else list(a.formula))
            + ([b.formula] * len(b.values) if isinstance(b.formula, str) else list(b.formula)))
        columns.append(replace(a, values=list(a.values) + list(b.values), formula=formula))
    frame = pd.concat([bids.frame, others.frame], ignore_index=True)
    return PlannedTable(columns, None, frame, {}, bids.letters, bids.first_body_row)
