"""The Terms sheet: every customer search term per campaign and ad group, with a live verdict.

Verdicts (the thresholds are settings):
- promote: at least the minimum orders, not yet an exact keyword for its product, and not
  the very exact keyword it came from;
- low stock: a term that would be promoted whose ad group advertises a product low on stock
  (Profit's Days of cover below the minimum): not promoted, so not on Harvest;
- block: no orders, and either spend of at least the product's price x the multiple (the
  trade's rule of thumb: a term that spent the product's price without a sale is suspect;
  common practice, no source) or at least the zero-order clicks;
- watch: no orders, under both thresholds (or selling, below the minimum orders);
- keep: selling and already targeted, or already negated.

Terms are compared after normalisation (NFKC, case folding, trimmed and collapsed
whitespace). "Already targeted" and "Already negated" are found when building, each term's key
looked up among the existing exact keywords and negatives of the exports, and written as plain
values (no input cell can change them). No term text is ever used as a criterion (MATCH,
COUNTIFS and SUMIFS read * ? ~ in text as wildcards).

Rows come largest spend first (as built), so the lists and Actions show the most money at
stake first. The lists only take what is safe to apply: a promoted term that is new for its
product and its destination (never a paused or archived campaign); a source negative only
where the keyword goes to another ad group; no negative in a paused campaign, where one
already blocks the term, or where it would block a keyword the list adds or a term that
sells. Those last pairs are found through a word index when building and written on the
Keys sheet's Clashes table, whose Blocks column is live.
"""
from __future__ import annotations

from collections import defaultdict
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pandas as pd

from sheetbuilder.sheets.blends import attach_groups, blended, blends_row_column, fetch, stock_as_values, with_blended
from sheetbuilder.sheets.decisions import (NOTES, apply_word_decision, decision_validation, editable, notes_column,
                                          word_decision_formula)
from sheetbuilder.sheets.lists import running_key
from sheetbuilder.workbook.columns import ColumnDef, PlannedTable, blank_div, exports_only, plan_table
from sheetbuilder.reading.normalise import contains_phrase, looks_like_product_id, normalise, words
from sheetbuilder.reading.numbers import ROUNDING_NUDGE, round_half_away
from sheetbuilder.sheets.inputs import InputSheet
from sheetbuilder.reading.settings import Settings
from sheetbuilder.workbook.formula import block_sum, keyed_row, range_ref
from sheetbuilder.workbook.spec import DATA, INPUT, Cell, Highlight, Sheet, Table

SHEET = "Terms"
KEYS_SHEET = "Keys"
HEADER_ROW = 3
VERDICTS = ("promote", "block", "watch", "keep")
DECISIONS = VERDICTS + ("skip",)
LOW_STOCK = "low stock"  # a verdict only (what would be promoted, held while stock runs short), never a Decision


@dataclass
class TermsContext:
    """What the Terms columns' references read besides the frame."""

    settings: Settings
    blends: pd.DataFrame
    lookup: dict[tuple, str]
    clashes: pd.DataFrame = field(default_factory=pd.DataFrame)
    totals: dict[str, Any] = field(default_factory=dict)


def _block(column: str) -> str:
    rng = "{rng:search_terms.%s}" % column
    return "=" + block_sum(rng, "{c:first}", "{c:last}")


def _found(key: str):
    """Reference of a lookup column: what the existing exact keyword or negative of the term's key says."""
    def compute(df: pd.DataFrame, ctx: TermsContext) -> pd.Series:
        return df[key].map(lambda k: ctx.lookup.get(k, "") if k else "").astype(object)
    return compute


def _verdict(df: pd.DataFrame, ctx: TermsContext) -> pd.Series:
    s = ctx.settings
    out = []
    for r in df[["orders", "targeted", "self", "negated", "spend", "p_price", "n_zero", "clicks",
                 "p_low"]].itertuples():
        if r.orders >= s.min_promote_orders and r.targeted == "" and r.self == 0:
            out.append(LOW_STOCK if r.p_low == 1 else "promote")
        elif r.orders > 0:
            out.append("keep" if r.targeted != "" or r.self == 1 else "watch")
        elif r.negated != "":
            out.append("keep")
        elif r.spend >= r.p_price * s.block_spend_multiple or (not pd.isna(r.n_zero) and r.clicks >= r.n_zero):
            out.append("block")
        else:
            out.append("watch")
    return pd.Series(out, index=df.index, dtype=object)


def _value_bid(df: pd.DataFrame, ctx: TermsContext) -> pd.Series:
    at = df["brow"].to_numpy(dtype=int) - 1
    target, cvr, aov = (ctx.blends[k].to_numpy(dtype=float)[at] for k in ("target_acos", "p_cvr", "p_aov"))
    k = ctx.settings.prior_clicks
    order_value = blank_div(df["ad_sales"], df["orders"]).where(df["orders"] > 0, pd.Series(aov, index=df.index))
    return target * (df["orders"] + k * cvr) / (df["clicks"] + k).where(df["clicks"] + k != 0) * order_value


def _final(df: pd.DataFrame, ctx: TermsContext) -> pd.Series:
    return apply_word_decision(df, "verdict", DECISIONS)


def _start_bid(df: pd.DataFrame, ctx: TermsContext) -> pd.Series:
    s = ctx.settings
    cpc, value = df["cpc"], df["value_bid"]
    base = {"cpc": cpc, "value": value}.get(s.starting_bid, np.minimum(cpc, value))
    rounded = base.map(lambda v: round_half_away(v + ROUNDING_NUDGE, 2) if not pd.isna(v) else np.nan)
    out = rounded.clip(lower=s.bid_floor).clip(upper=s.bid_ceiling)
    return out.where(cpc.notna() & value.notna())


def _block_rule(df: pd.DataFrame, ctx: TermsContext) -> pd.Series:
    s = ctx.settings
    spent = df["spend"] >= df["p_price"] * s.block_spend_multiple
    text = np.where(spent, "spend reached price x multiple",
                    ["no orders after " + ("" if pd.isna(n) else str(int(n))) + " clicks" for n in df["n_zero"]])
    return pd.Series(np.where(df["verdict"] == "block", text, "your decision"), index=df.index, dtype=object)


def _block_threshold(df: pd.DataFrame, ctx: TermsContext) -> pd.Series:
    s = ctx.settings
    spent = df["spend"] >= df["p_price"] * s.block_spend_multiple
    out = pd.Series(np.where(spent, df["p_price"] * s.block_spend_multiple, df["n_zero"]), index=df.index)
    return out.where(df["verdict"] == "block")


# Working values only a list shows (Harvest: value and starting bid; Negatives: the block rule and its
# threshold): the lists compute them live on their own rows; Terms keeps them in its reference frame only.
LIST_WORKING = (("value_bid", _value_bid), ("start_bid", _start_bid), ("block_rule", _block_rule),
                ("block_threshold", _block_threshold))

_TARGETED_REF, _NEGATED_REF = _found("tkey_t"), _found("nkey_t")


# Summed from the term's in_search_terms rows, computed only from such sums, or found among the exports' exact
# keywords and negatives: plain values, since no input can change them.
EXPORTS = ("impressions", "clicks", "spend", "ad_sales", "orders", "cpc", "cvr", "acos", "targeted", "negated", "new_kw",
           "src_fits")


# The ad group's blended price and zero-order clicks, read where the verdict needs them (no column of their own).
BLENDED = ("p_price", "n_zero")
_PRICE, _N_ZERO = (blended(key) for key in BLENDED)


def _all_defs() -> list[ColumnDef]:
    """The Terms columns, every one with its formula (the method as written)."""
    return [
        ColumnDef("campaign", "Campaign", "text", "The campaign.", lambda df, ctx: df["campaign"], kind=DATA, width=22),
        ColumnDef("ad_group", "Ad group", "text", "The ad group.", lambda df, ctx: df["ad_group"], kind=DATA,
                  width=16),
        ColumnDef("from_target", "From target", "text",
                  "The keyword or target the term came through (the one with most clicks, if several).",
                  lambda df, ctx: df["from_target"], kind=DATA, width=20),
        ColumnDef("from_match", "From match type", "text", "Its match type.", lambda df, ctx: df["from_match"],
                  kind=DATA, width=9),
        ColumnDef("term", "Search term", "text", "What the customer typed (as first seen in the export).",
                  lambda df, ctx: df["term"], kind=DATA, width=28),
        ColumnDef("product_id", "Product ID", "text", "The product the ad group advertises ('shared: ...' if several).",
                  lambda df, ctx: df["product_label"], kind=DATA, width=14),
        *[ColumnDef(k, h, st, f"Summed over the term's rows on in_search_terms.", (lambda key: lambda df, ctx: df[key])(k),
                    _block(k), width=w) for k, h, st, w in (
            ("impressions", "Impressions", "int", 10), ("clicks", "Clicks", "int", 8), ("spend", "Spend", "money", 10),
            ("ad_sales", "Ad sales", "money", 10), ("orders", "Orders", "int", 8))],
        ColumnDef("cpc", "CPC", "money", "Spend / clicks.", lambda df, ctx: blank_div(df["spend"], df["clicks"]),
                  '=IF({c:clicks}=0,"",{c:spend}/{c:clicks})', width=8),
        ColumnDef("cvr", "CVR", "percent", "Orders / clicks.", lambda df, ctx: blank_div(df["orders"], df["clicks"]),
                  '=IF({c:clicks}=0,"",{c:orders}/{c:clicks})', width=8),
        ColumnDef("acos", "ACoS", "percent", "Spend / ad sales.",
                  lambda df, ctx: blank_div(df["spend"], df["ad_sales"]),
                  '=IF({c:ad_sales}=0,"",{c:spend}/{c:ad_sales})', width=8),
        ColumnDef("targeted", "Already targeted", "text",
                  "Where the term already runs as an exact keyword for the same product (campaign / ad group).",
                  _TARGETED_REF, width=30),
        ColumnDef("negated", "Already negated", "text", "The negative that already blocks the term here, if any.",
                  _NEGATED_REF, width=30),
        ColumnDef("verdict", "Verdict", "label",
                  "promote, block, watch or keep; low stock where it would be promoted but a product of its ad "
                  "group is low on stock (see the Guide).", _verdict,
                  '=IF(AND({c:orders}>=min_promote_orders,{c:new_kw}>0),IF({c:p_low}=1,"%s","promote"),'
                  'IF({c:orders}>0,IF({c:new_kw}=0,"keep","watch"),IF({c:negated}<>"","keep",'
                  'IF(OR({c:spend}>=%s*block_spend_multiple,IF(%s="",FALSE,{c:clicks}>=%s)),'
                  '"block","watch"))))' % (LOW_STOCK, _PRICE, _N_ZERO, _N_ZERO), width=9),
        ColumnDef("decision", "Decision", "text_input",
                  "Input: blank follows the verdict; or type promote, block, watch, keep or skip.",
                  lambda df, ctx: df["decision"], kind=INPUT, width=9),
        ColumnDef("final", "Final", "label", "The Decision if typed, else the verdict; 'invalid' for any other text.",
                  _final, word_decision_formula("verdict", DECISIONS), width=9),
        # Working columns, hidden.
        ColumnDef("first", "Term first row", "int",
                  "First of the term's data rows on in_search_terms: its grey figures are summed from these rows.",
                  lambda df, ctx: df["first"], kind=DATA, width=8),
        ColumnDef("last", "Term last row", "int", "Last of the term's data rows on in_search_terms.",
                  lambda df, ctx: df["last"], kind=DATA, width=8),
        ColumnDef("pos", "Position", "int", "Helper: the row's position on this sheet.",
                  lambda df, ctx: df["pos"], kind=DATA, width=8, hidden=True),
        ColumnDef("self", "Is its own keyword", "int", "Helper: 1 where the term is the exact keyword it came from.",
                  lambda df, ctx: df["self"], kind=DATA, width=8, hidden=True),
        ColumnDef("pid_like", "Looks like a product ID", "int",
                  "Helper: 1 where the term matches the product identifier pattern.",
                  lambda df, ctx: df["pid_like"], kind=DATA, width=8, hidden=True),
        ColumnDef("words", "Words", "int", "Helper: words in the normalised term.", lambda df, ctx: df["words"],
                  kind=DATA, width=8, hidden=True),
        ColumnDef("dest_campaign", "Destination campaign", "text", "Helper: where a promoted term goes.",
                  lambda df, ctx: df["dest_campaign"], kind=DATA, width=12, hidden=True),
        ColumnDef("dest_ad_group", "Destination ad group", "text", "Helper: where a promoted term goes.",
                  lambda df, ctx: df["dest_ad_group"], kind=DATA, width=12, hidden=True),
        blends_row_column(),
        fetch("p_low", "Low stock", "int", "Working: 1 where a product of the ad group is low on stock (not promoted)."),
        ColumnDef("live", "Campaign live", "int", "Helper: 1 where the term's campaign is enabled (in_campaigns).",
                  lambda df, ctx: df["live"], kind=DATA, width=8, hidden=True),
        ColumnDef("at_dest", "Keyword at destination", "int",
                  "Helper: 1 where the destination ad group already has the term as an exact keyword (in_targets).",
                  lambda df, ctx: df["at_dest"], kind=DATA, width=8, hidden=True),
        ColumnDef("moved", "Goes elsewhere", "int",
                  "Helper: 1 where the destination is another ad group than the source.",
                  lambda df, ctx: df["moved"], kind=DATA, width=8, hidden=True),
        ColumnDef("adds", "Adds a keyword", "int",
                  "Working: 1 where the term is promoted to a destination, new for its product.", _adds,
                  '=IF(AND({c:final}="promote",{c:new_kw}=3),1,0)',
                  width=8, hidden=True),
        ColumnDef("cfirst", "Clash first row", "int", "Helper: first of the term's rows on Clashes.",
                  lambda df, ctx: df["cfirst"], kind=DATA, width=8, hidden=True),
        ColumnDef("clast", "Clash last row", "int", "Helper: last of the term's rows on Clashes.",
                  lambda df, ctx: df["clast"], kind=DATA, width=8, hidden=True),
        ColumnDef("clash", "Would block another term", "int",
                  "Working: how many keywords the list adds, or terms that sell, this term's negative would block.",
                  _clash,
                  '=IF(OR({c:cfirst}="",AND({c:final}<>"block",{c:adds}=0)),0,%s)'
                  % block_sum("{rng:clashes.hit}", "{c:cfirst}", "{c:clast}"),
                  width=8, hidden=True),
        ColumnDef("src_neg", "Negative in source", "text",
                  "Working: negative exact where a promoted term goes to another ad group of a live campaign, its "
                  "source is broad, phrase or automatic, and no negative there blocks it yet.", _src_neg,
                  '=IF(AND({c:adds}=1,source_negative="yes",{c:src_fits}=1,{c:clash}=0),"negative exact","")',
                  width=8, hidden=True),
        *running_key("p", "Promoted terms", 'AND({c:final}="promote",{c:new_kw}>=2)', _promoted),
        *running_key("b", "Blocked terms", 'AND({c:final}="block",{c:live}=1,{c:negated}="",{c:clash}=0)', _blocked),
        # What the long formulas above test of the exported figures alone, once per row (plain values).
        ColumnDef("new_kw", "New keyword", "int",
                  "Working (value): 0 where the term is already an exact keyword for its product or is the exact "
                  "keyword it came from; 1 where it is new for its product but its destination ad group already has "
                  "it as an exact keyword; 2 where it is new there too but has no destination; 3 where promoting it "
                  "adds a keyword at its destination.", _new_kw,
                  '=IF(OR({c:targeted}<>"",{c:self}=1),0,IF({c:at_dest}=1,1,IF({c:dest_campaign}="",2,3)))',
                  width=8, hidden=True),
        ColumnDef("src_fits", "Source negative fits", "int",
                  "Working (value): 1 where a negative exact in the term's source would fit a promotion: the source "
                  "is broad, phrase or automatic, the destination is another ad group, the campaign is live and no "
                  "negative there blocks the term yet.", _src_fits,
                  '=IF(AND(OR({c:from_match}="broad",{c:from_match}="phrase",{c:from_match}="auto"),{c:moved}=1,'
                  '{c:live}=1,{c:negated}=""),1,0)', width=8, hidden=True),
    ]


def _new_kw(df: pd.DataFrame, ctx: TermsContext) -> pd.Series:
    fresh = (df["targeted"] == "") & (df["self"] == 0)
    code = np.where(~fresh, 0.0, np.where(df["at_dest"] == 1, 1.0, np.where(df["dest_campaign"] == "", 2.0, 3.0)))
    return pd.Series(code, index=df.index, dtype=float)


def _src_fits(df: pd.DataFrame, ctx: TermsContext) -> pd.Series:
    ok = (df["from_match"].isin(["broad", "phrase", "auto"]) & (df["moved"] == 1) & (df["live"] == 1)
          & (df["negated"] == ""))
    return ok.astype(float)


def _promoted(df: pd.DataFrame) -> pd.Series:
    """Rows the Harvest list shows: promoted, and not a keyword the product already has."""
    return (df["final"] == "promote") & (df["targeted"] == "") & (df["self"] == 0) & (df["at_dest"] == 0)


def _blocked(df: pd.DataFrame) -> pd.Series:
    """Rows the Negatives list shows: blocked in a live campaign, not yet negated, blocking no added keyword."""
    return (df["final"] == "block") & (df["live"] == 1) & (df["negated"] == "") & (df["clash"] == 0)


def _adds(df: pd.DataFrame, ctx: TermsContext) -> pd.Series:
    return (_promoted(df) & (df["dest_campaign"] != "")).astype(float)


def _clash(df: pd.DataFrame, ctx: TermsContext) -> pd.Series:
    hits = clash_hits(ctx.clashes, df, ctx.settings)
    per_row = pd.Series(hits, dtype=float).groupby(ctx.clashes["i"].to_numpy()).sum() if len(hits) else pd.Series(
        dtype=float)
    out = df["pos"].map(per_row).fillna(0.0).astype(float)
    return out.where((df["final"] == "block") | (df["adds"] == 1), 0.0)


def _src_neg(df: pd.DataFrame, ctx: TermsContext) -> pd.Series:
    ok = (df["adds"] == 1) & (ctx.settings.source_negative == "yes") & (df["src_fits"] == 1) & (df["clash"] == 0)
    return pd.Series(np.where(ok, "negative exact", ""), index=df.index, dtype=object)


def clash_hits(pairs: pd.DataFrame, terms: pd.DataFrame, settings: Settings) -> list[float]:
    """Per Clashes row, 1 where the negative term i would propose blocks term j.

    Term i blocked: its negative (in its ad group, or the whole campaign; exact, or phrase
    below phrase_below_words words) blocks the keyword j adds there, or j where it sells.
    Term i promoted: its source negative (exact, in its own ad group) blocks the keyword j adds there.
    """
    if not len(pairs):
        return []
    final, adds, nwords, orders = (terms[k].to_numpy() for k in ("final", "adds", "words", "orders"))
    wide = settings.negative_level == "campaign"
    out = []
    for p in pairs.itertuples():
        i, j = int(p.i) - 1, int(p.j) - 1
        if final[i] == "block":
            matches = p.same_term == 1 or nwords[i] < settings.phrase_below_words
            keyword = adds[j] == 1 and p.kw_in == 1 and (wide or p.kw_group == 1)
            sold = orders[j] > 0 and p.src_in == 1 and (wide or p.src_group == 1)
            out.append(1.0 if matches and (keyword or sold) else 0.0)
        else:
            out.append(1.0 if final[i] == "promote" and adds[j] == 1 and p.kw_group == 1 and p.same_term == 1 else 0.0)
    return out


def _norm_or_blank(value: Any, fold: bool) -> str:
    return normalise(value, fold) if isinstance(value, str) else ""


def existing_keys(targets: pd.DataFrame | None, negatives: pd.DataFrame | None, groups: pd.DataFrame,
                  settings: Settings) -> dict[tuple, str]:
    """{key: what it says} of every existing exact keyword (per product it advertises) and negative."""
    fold = settings.fold_plurals
    entries: dict[tuple, str] = {}
    if targets is not None and len(targets):
        products = groups.groupby(["campaign", "ad_group"])["product_id"].apply(list).to_dict() if len(groups) else {}
        for campaign, group, target, match, state in zip(*(targets[k] for k in ("campaign", "ad_group", "target",
                                                                                "match_type", "state"))):
            if match != "exact" or state == "archived":
                continue
            norm = _norm_or_blank(target, fold)  # once per keyword, not once per product its ad group advertises
            for product in products.get((campaign, group), []):
                entries.setdefault(("T", product, norm), f"{campaign} / {group}")
    if negatives is not None and len(negatives):
        for n in negatives.itertuples():
            level = "ad group" if n.ad_group else "campaign"
            kind = "NP" if n.match_type == "negative phrase" else "N"
            text = f"{n.match_type}, {level}" + (f": {n.term}" if kind == "NP" else "")
            entries.setdefault((kind, n.campaign, n.ad_group or "", _norm_or_blank(n.term, fold)), text)
    return entries


def _negative_key(campaign: str, group: str, term_key: str, phrases: dict, exact: set) -> tuple:
    """The key of the negative that blocks the term in its ad group, else its ad-group exact key."""
    for key in (("N", campaign, group, term_key), ("N", campaign, "", term_key)):
        if key in exact:
            return key
    for scope in ((campaign, group), (campaign, "")):
        for phrase in phrases.get(scope, ()):
            if contains_phrase(term_key, phrase):
                return ("NP", scope[0], scope[1], phrase)
    return ("N", campaign, group, term_key)


DEFS: list[ColumnDef] = exports_only(_all_defs(), EXPORTS) + [notes_column()]  # the Terms columns, the user's notes last

# What a user types on Terms and the keys that find its row again (carry, changes and the tests read these).
EDITABLE_COLUMNS = editable(DEFS, "Terms", SHEET, "sb_terms", ("campaign", "ad_group", "term"), "decision",
                            ("search_terms",), ("campaign", "ad_group", "search_term"), normalised=("term",),
                            words=DECISIONS, notes=NOTES)


def term_frame(layout: InputSheet, groups: pd.DataFrame, campaigns: pd.DataFrame | None,
               negatives: pd.DataFrame | None, settings: Settings) -> pd.DataFrame:
    """One row per (campaign, ad group, normalised term), with its block on in_search_terms."""
    st = layout.frame
    if not len(st):
        return pd.DataFrame(columns=["campaign", "ad_group", "term_key"])
    pos = pd.Series(np.arange(1, len(st) + 1, dtype=float), index=st.index)
    work = st.assign(_pos=pos)
    g = work.groupby(["campaign", "ad_group", "_term_key"], sort=False)
    top = work.loc[g["clicks"].idxmax()]  # the row with most clicks (first on ties) names the source
    frame = pd.DataFrame({
        "campaign": top["campaign"].to_numpy(), "ad_group": top["ad_group"].to_numpy(),
        "term_key": top["_term_key"].to_numpy(), "from_target": top["target"].to_numpy(),
        "from_match": top["match_type"].to_numpy(),
        "term": g["search_term"].first().to_numpy(), "first": g["_pos"].min().to_numpy(),
        "last": g["_pos"].max().to_numpy(),
        **{k: g[k].sum().to_numpy() for k in ("impressions", "clicks", "spend", "ad_sales", "orders")},
    })
    for c in ("campaign", "ad_group", "term_key", "from_target", "from_match", "term"):
        frame[c] = frame[c].astype(object)
    # Largest spend first (to the cent, stable), so the lists and Actions show the most money at stake first.
    frame = frame.assign(_money=-frame["spend"].round(2)).sort_values("_money", kind="stable").drop(
        columns="_money").reset_index(drop=True)
    frame = attach_groups(frame, groups)
    fold = settings.fold_plurals
    frame["pos"] = np.arange(1, len(frame) + 1, dtype=float)
    frame["n_plus"] = float(len(frame) + 1)
    frame["self"] = [1.0 if m == "exact" and _norm_or_blank(t, fold) == k else 0.0
                     for m, t, k in zip(frame["from_match"], frame["from_target"], frame["term_key"])]
    frame["pid_like"] = [1.0 if looks_like_product_id(t, settings.product_id_pattern) else 0.0 for t in frame["term"]]
    frame["words"] = [float(words(t)) for t in frame["term"]]
    automatic, paused = set(), set()
    if campaigns is not None and len(campaigns):
        automatic = set(campaigns.loc[campaigns["targeting"] == "automatic", "campaign"])
        states = campaigns.drop_duplicates("campaign").set_index("campaign")["state"]
        paused = set(states.index[states != "enabled"])
    dest_c, dest_g = [], []
    for products, campaign, group, from_match in zip(frame["products"], frame["campaign"], frame["ad_group"],
                                                     frame["from_match"]):
        product = products[0] if products else None
        if product in settings.destinations:
            c, a = settings.destinations[product]
        elif campaign in automatic or from_match == "auto":
            c, a = "", ""
        else:
            c, a = campaign, group
        if c in paused:  # nothing is added to a paused or archived campaign: choose a live one
            c, a = "", ""
        dest_c.append(c)
        dest_g.append(a)
    frame["dest_campaign"], frame["dest_ad_group"] = dest_c, dest_g
    frame["live"] = [0.0 if c in paused else 1.0 for c in frame["campaign"]]
    frame["moved"] = [1.0 if dc != "" and (dc, dg) != (c, g) else 0.0 for c, g, dc, dg in
                      zip(frame["campaign"], frame["ad_group"], frame["dest_campaign"], frame["dest_ad_group"])]
    frame["tkey_t"] = [("T", p[0], k) if p else None for p, k in zip(frame["products"], frame["term_key"])]
    phrases: dict = {}
    exact: set = set()
    if negatives is not None and len(negatives):
        for n in negatives.itertuples():
            norm = _norm_or_blank(n.term, fold)
            if n.match_type == "negative phrase":
                phrases.setdefault((n.campaign, n.ad_group or ""), []).append(norm)
            else:
                exact.add(("N", n.campaign, n.ad_group or "", norm))
    frame["nkey_t"] = [_negative_key(c, g, k, phrases, exact)
                       for c, g, k in zip(frame["campaign"], frame["ad_group"], frame["term_key"])]
    frame["decision"] = None
    frame["cfirst"], frame["clast"] = np.nan, np.nan
    return frame


def clash_pairs(frame: pd.DataFrame) -> pd.DataFrame:
    """Every (i, j) where a negative from term i could block term j: the keyword j adds, or j where it sells.

    i's words appear in j's, in order (so an exact or phrase negative of i, at ad-group or
    campaign level, might block j), and either j's destination is in i's campaign, or j is
    in i's campaign and sold in the period. Whether it does block is decided live on the
    Clashes sheet. Sorted by i, so each term's pairs are one block; candidates come from a
    word index, never term x term.
    """
    columns = ["i", "j", "kw_in", "kw_group", "src_in", "src_group", "same_term"]
    if not len(frame):
        return pd.DataFrame(columns=columns, dtype=float)
    index: dict[tuple, set] = defaultdict(set)  # {(campaign, word): the terms j holding it there}
    for j, c, dc, key, orders in zip(frame["pos"], frame["campaign"], frame["dest_campaign"], frame["term_key"],
                                     frame["orders"]):
        j, held = int(j), set(key.split(" "))
        for campaign in (dc, c) if orders > 0 and c != dc else (dc,):  # its destination, and its own campaign if sold
            if campaign != "":
                for w in held:
                    index[(campaign, w)].add(j)
    c_, g_, dc_, dg_, k_, o_ = (frame[k].to_numpy() for k in ("campaign", "ad_group", "dest_campaign",
                                                              "dest_ad_group", "term_key", "orders"))
    rows = []
    for i, (c, g, key) in enumerate(zip(c_, g_, k_)):
        for j in sorted(_holding_every_word(index, c, key)):
            j -= 1
            if j != i and contains_phrase(k_[j], key):
                kw_in = dc_[j] == c
                rows.append((i + 1.0, j + 1.0, float(kw_in), float(kw_in and dg_[j] == g),
                             float(c_[j] == c and o_[j] > 0), float(c_[j] == c and g_[j] == g), float(k_[j] == key)))
    return pd.DataFrame(rows, columns=columns, dtype=float)


def _holding_every_word(index: dict[tuple, set], campaign: str, key: str) -> set:
    """The terms in campaign whose words include every word of key: the rarest word's set, narrowed by the others.

    A phrase can only be in a term that holds each of its words, so the candidates grow with
    the matches, not with the terms that share a common leading word.
    """
    sets = sorted((index.get((campaign, w), set()) for w in set(key.split(" "))), key=len)
    found = set(sets[0])
    for other in sets[1:]:
        if not found:
            break
        found &= other
    return found


def plan_terms(layout: InputSheet, groups: PlannedTable, profit: PlannedTable, targets: pd.DataFrame | None,
               campaigns: pd.DataFrame | None, negatives: pd.DataFrame | None, settings: Settings,
               ranges: dict[str, str], decide=None, blends: PlannedTable | None = None
               ) -> tuple[Sheet, PlannedTable, Sheet, dict[tuple, str]]:
    """The Terms sheet, its reference frame, the Keys sheet of its clashes, and the existing keys its Already
    targeted and Already negated found (blends: Groups' blends)."""
    base = term_frame(layout, groups.frame, campaigns, negatives, settings)
    if decide is not None and len(base):
        base["decision"] = decide("Terms", list(zip(base["campaign"], base["ad_group"], base["term"])))
    keys = existing_keys(targets, negatives, groups.frame, settings)
    existing = set()
    if targets is not None and len(targets):
        live = targets.loc[(targets["match_type"] == "exact") & (targets["state"] != "archived")]
        existing = {(c, g, _norm_or_blank(t, settings.fold_plurals))
                    for c, g, t in zip(live["campaign"], live["ad_group"], live["target"])}
    base["at_dest"] = [1.0 if (c, g, k) in existing else 0.0
                       for c, g, k in zip(base["dest_campaign"], base["dest_ad_group"], base["term_key"])]
    pairs = clash_pairs(base)
    if len(pairs):
        block = pd.DataFrame({"i": pairs["i"], "at": np.arange(1, len(pairs) + 1, dtype=float)}).groupby("i")["at"]
        base["cfirst"], base["clast"] = base["pos"].map(block.min()), base["pos"].map(block.max())
    key_ranges = {"clashes.hit": range_ref(KEYS_SHEET, [d.key for d in CLASH_DEFS].index("hit"), CLASH_FIRST + 1,
                                           CLASH_FIRST + len(pairs))}
    ctx = TermsContext(settings, blends.frame, keys, pairs)
    base = with_blended(base, blends.frame, BLENDED)
    planned = plan_table(stock_as_values(DEFS, {"p_low"}, ranges), base, ctx, HEADER_ROW + 1, {**ranges, **key_ranges},
                         with_totals=False)
    for key, compute in LIST_WORKING:  # computed live on the list rows that show them, not on every term
        planned.frame[key] = compute(planned.frame, ctx)
    clashes = plan_table(CLASH_DEFS, pairs, ClashContext(planned.frame, settings), CLASH_FIRST + 1,
                         planned.ranges(SHEET, "terms"), with_totals=False)
    keys_sheet = plan_keys(Table(CLASH_FIRST, clashes.columns, autofilter=False, title=CLASH_TITLE))
    keys_list = [d.key for d in DEFS]
    n = len(base)
    first = HEADER_ROW + 1
    validations = []
    if n:
        validations.append(decision_validation(
            EDITABLE_COLUMNS, first, keys_list.index("decision"), n,
            "Leave blank to follow the verdict, or choose " + ", ".join(DECISIONS) + ".", "Blank = follow the verdict."))
    col = keys_list.index("verdict")
    highlights = [Highlight(col, "promote", "Ocean"), Highlight(col, "block", "Plum"), Highlight(col, "watch", "Stone"),
                  Highlight(col, LOW_STOCK, "Stone")]
    col = keys_list.index("final")
    highlights += [Highlight(col, "promote", "Ocean"), Highlight(col, "block", "Plum")]
    above = [[Cell("Customer search terms: what to promote, what to block", style="title")],
             [Cell("Decision aid only: review before changing a live ad account. Type a Decision to override a "
                   "verdict; the Harvest and Negatives lists follow the Final column. Grey figures are summed from the "
                   "term's rows on in_search_terms (Term first row to Term last row); black ones follow your inputs.",
                   style="note")]]
    sheet = Sheet(SHEET, above=above, table=Table(HEADER_ROW, planned.columns, highlights=highlights),
                  freeze=(HEADER_ROW + 1, 5), validations=validations, tab_color="#3A2A78", sortable=True)
    return sheet, planned, keys_sheet, keys


@dataclass
class ClashContext:
    """What the Clashes columns read: the planned Terms frame and the settings."""

    terms: pd.DataFrame
    settings: Settings
    totals: dict[str, Any] = field(default_factory=dict)


CLASH_FIRST = 2  # the Clashes table's header row on the Keys sheet (0-based), under its title
CLASH_TITLE = ("Clashes: where a negative from one term (left) could block the keyword another term adds, or "
               "another term where it sells; Blocks = 1 keeps that negative off the lists")
# Terms rows i and j, checked against Terms' Position column (a user may sort Terms): computed once per clash
# in the i_at and j_at helper columns, which every lookup of the rows reads.
_AT_I = "{c:i_at}"
_AT_J = "{c:j_at}"
_FINAL_I = "INDEX({rng:terms.final},%s)" % _AT_I
_ADDS_J = "INDEX({rng:terms.adds},%s)" % _AT_J
CLASH_DEFS: list[ColumnDef] = [
    ColumnDef("i", "Negative from term", "int", "The Terms position of the term whose negative could block.",
              lambda df, ctx: df["i"], kind=DATA, width=10),
    ColumnDef("j", "Blocked term", "int", "The Terms position of the term it could block.",
              lambda df, ctx: df["j"], kind=DATA, width=10),
    *[ColumnDef(k, h, "int", text, (lambda key: lambda df, ctx: df[key])(k), kind=DATA, width=8) for k, h, text in (
        ("kw_in", "Keyword in its campaign", "1 where the keyword j adds goes to i's campaign."),
        ("kw_group", "Keyword in its ad group", "1 where the keyword j adds goes to i's ad group."),
        ("src_in", "Sells in its campaign", "1 where j is in i's campaign and sold in the period."),
        ("src_group", "In its ad group", "1 where j is in i's campaign and ad group."),
        ("same_term", "Same term", "1 where both terms are the same after normalisation."))],
    ColumnDef("hit", "Blocks", "int", "1 where, with today's Finals and settings, the negative blocks j.",
              lambda df, ctx: pd.Series(clash_hits(df, ctx.terms, ctx.settings), index=df.index, dtype=float),
              '=IF(%s="block",IF(AND(OR({c:same_term}=1,INDEX({rng:terms.words},%s)<phrase_below_words),'
              'OR(AND(%s=1,{c:kw_in}=1,OR(negative_level="campaign",{c:kw_group}=1)),AND(INDEX({rng:terms.orders},'
              '%s)>0,{c:src_in}=1,OR(negative_level="campaign",{c:src_group}=1)))),1,0),IF(AND(%s="promote",'
              '%s=1,{c:kw_group}=1,{c:same_term}=1),1,0))' % (_FINAL_I, _AT_I, _ADDS_J, _AT_J, _FINAL_I, _ADDS_J),
              width=8),
    *[ColumnDef(f"{k}_at", f"{h} row now", "int", f"Helper: the Terms row of {h.lower()}, checked against Terms' "
                "Position column (found again when Terms was sorted).", (lambda key: lambda df, ctx: df[key])(k),
                "=" + keyed_row("{rng:terms.pos}", "{c:%s}" % k), width=8, hidden=True)
      for k, h in (("i", "Negative from term"), ("j", "Blocked term"))],
]


def plan_keys(clashes: Table) -> Sheet:
    """The Keys sheet: the Clashes table, whose Blocks column keeps a negative off the lists."""
    return Sheet(KEYS_SHEET, above=[[Cell("Clashes between the lists: negatives that could block a keyword added "
                                          "or a term that sells", style="title")]],
                 table=clashes, freeze=(CLASH_FIRST + 1, 0), tab_color="#8C8C8C")
