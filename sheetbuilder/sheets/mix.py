"""The Mix sheet: where the ad money goes, by ad type and by product and match type, with charts.

- By ad type: spend, sales and rates per ad type against a benchmark share of spend
  (settings; default product 85%, brand 10%, display 5%: the trade's rule of thumb, common
  practice with no source). The sums are SUMIFS over a numeric ad-type code, a few
  formulas each linear in rows; no ad type's text is used as a criterion.
- By product and match type: each product's targets form one sorted block per match type
  on in_targets; a match type whose ACoS is above the product's other match types' by more
  than the margin reads trim, one below by that margin reads expand.
- By match type, and the top products' spend share against their sales share, for charts.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pandas as pd

from sheetbuilder.reading import contract as c
from sheetbuilder.workbook.columns import ColumnDef, PlannedTable, blank_div, plan_table
from sheetbuilder.workbook.formula import block_sum, col_letter, keyed_row, quote_sheet
from sheetbuilder.reading.normalise import normalise
from sheetbuilder.workbook.palette import STATES
from sheetbuilder.sheets.inputs import InputSheet, ad_type_codes
from sheetbuilder.reading.settings import Settings
from sheetbuilder.workbook.spec import DATA, INPUT, Cell, Chart, Highlight, Series, Sheet, Table, stacked_pages

SHEET = "Mix"
CHART_ROWS = 18  # rows kept free at the top for the charts
TOP_PRODUCTS = 8


@dataclass
class MixContext:
    """What the Mix columns' references read besides the frame."""

    settings: Settings
    profit: pd.DataFrame
    totals: dict[str, Any] = field(default_factory=dict)


def _sumifs(table: str, column: str, code: str) -> str:
    return "SUMIFS({rng:%s.%s},{rng:%s.%s},%s)" % (table, column, table, "ad_type_code", code)


def _metric_sum(key: str):
    return lambda df, ctx: df[key]


def _rates(prefix: str) -> list[ColumnDef]:
    """ACoS, CPC and CVR of a row's spend, sales, clicks and orders."""
    return [
        ColumnDef(f"{prefix}acos", "ACoS", "percent", "Spend / ad sales.",
                  lambda df, ctx: blank_div(df["spend"], df["ad_sales"]),
                  '=IF({c:ad_sales}=0,"",{c:spend}/{c:ad_sales})', width=8,
                  total='=IF({t:ad_sales}=0,"",{t:spend}/{t:ad_sales})',
                  total_reference=lambda df, ctx: blank_div(float(df["spend"].sum()), float(df["ad_sales"].sum()))),
        ColumnDef(f"{prefix}cpc", "CPC", "money", "Spend / clicks.", lambda df, ctx: blank_div(df["spend"], df["clicks"]),
                  '=IF({c:clicks}=0,"",{c:spend}/{c:clicks})', width=8),
        ColumnDef(f"{prefix}cvr", "CVR", "percent", "Orders / clicks.",
                  lambda df, ctx: blank_div(df["orders"], df["clicks"]), '=IF({c:clicks}=0,"",{c:orders}/{c:clicks})',
                  width=8),
    ]


def _sums(formula) -> list[ColumnDef]:
    """Spend, ad sales, orders and clicks, each from formula(column)."""
    out = []
    for key, header, style in (("spend", "Spend", "money"), ("ad_sales", "Ad sales", "money"),
                               ("orders", "Orders", "int"), ("clicks", "Clicks", "int")):
        out.append(ColumnDef(key, header, style, f"{header} in the period.", _metric_sum(key), formula(key), width=11,
                             total="={sum:%s}" % key, total_reference=(lambda k: lambda df, ctx: float(df[k].sum()))(key)))
    return out


TYPE_DEFS: list[ColumnDef] = [
    ColumnDef("ad_type", "Ad type", "text", "Your label for the ad type.", lambda df, ctx: df["ad_type"], kind=DATA,
              width=22, total="Total"),
    *_sums(lambda k: '=%s' % _sumifs("ad_products", k, "{row:code}")),
    *_rates("t_"),
    ColumnDef("share", "Share of spend", "percent", "The ad type's part of all ad spend.",
              lambda df, ctx: blank_div(df["spend"], float(df["spend"].sum())),
              '=IF({tot:spend}=0,"",{c:spend}/{tot:spend})', width=9, total="={sum:share}",
              total_reference=lambda df, ctx: float(df["share"].sum())),
    ColumnDef("benchmark", "Benchmark share", "percent_input",
              "Input: the share of spend you aim at (the trade's rule of thumb: product 85%, brand 10%, display 5%).",
              lambda df, ctx: df["benchmark"], kind=INPUT, width=10, total="={sum:benchmark}",
              total_reference=lambda df, ctx: float(df["benchmark"].sum())),
    ColumnDef("gap", "Gap", "percent", "Share of spend minus the benchmark.",
              lambda df, ctx: (df["share"] - df["benchmark"]),
              '=IF(OR({c:share}="",{c:benchmark}=""),"",{c:share}-{c:benchmark})', width=8),
    ColumnDef("note", "Note", "label", "'not running' where the account spends nothing on the ad type.",
              lambda df, ctx: pd.Series(np.where(df["spend"] == 0, "not running", ""), index=df.index, dtype=object),
              '=IF({c:spend}=0,"not running","")', width=14),
]


def _signal(df: pd.DataFrame, ctx: MixContext) -> pd.Series:
    m = ctx.settings.mix_margin
    out = []
    for acos, others, spend in zip(df["m_acos"], df["others"], df["spend"]):
        if pd.isna(others):
            out.append("hold")
        elif pd.isna(acos):
            out.append("trim" if spend > 0 else "hold")
        elif acos > others + m:
            out.append("trim")
        elif acos < others - m:
            out.append("expand")
        else:
            out.append("hold")
    return pd.Series(out, index=df.index, dtype=object)


def _product_sum(key: str):
    def compute(df: pd.DataFrame, ctx: MixContext) -> pd.Series:
        return df.groupby("product_id")[key].transform("sum")
    return compute


def _block(key: str) -> str:
    return "=" + block_sum("{rng:targets.%s}" % key, "{c:first}", "{c:last}")


def _self_block(key: str) -> str:
    return block_sum("{rng:self.%s}" % key, "{c:pfirst}", "{c:plast}")


MATCH_DEFS: list[ColumnDef] = [
    ColumnDef("product_id", "Product ID", "text", "The product (the first its ad group advertises).",
              lambda df, ctx: df["product_id"], kind=DATA, width=22),
    ColumnDef("match_type", "Match type", "text", "exact, phrase, broad, product or auto.",
              lambda df, ctx: df["match_type"], kind=DATA, width=11),
    ColumnDef("live", "Targets (enabled)", "int", "Enabled targets in enabled campaigns.",
              lambda df, ctx: df["live"], _block("live"), width=9),
    *_sums(_block),
    *_rates("m_"),
    ColumnDef("p_share", "Share of product spend", "percent", "The match type's part of the product's target spend.",
              lambda df, ctx: blank_div(df["spend"], df["p_spend"]), '=IF({c:p_spend}=0,"",{c:spend}/{c:p_spend})',
              width=10),
    ColumnDef("others", "Others' ACoS", "percent", "The ACoS of the product's other match types together.",
              lambda df, ctx: blank_div(df["p_spend"] - df["spend"], df["p_sales"] - df["ad_sales"]),
              '=IF({c:p_sales}-{c:ad_sales}=0,"",({c:p_spend}-{c:spend})/({c:p_sales}-{c:ad_sales}))', width=9),
    ColumnDef("signal", "Signal", "label",
              "trim: ACoS above the others' by more than the margin (lower bids, add negatives for broad and "
              "phrase); expand: below by that margin (raise bids, add keywords); else hold.", _signal,
              '=IF({c:others}="","hold",IF({c:m_acos}="",IF({c:spend}>0,"trim","hold"),'
              'IF({c:m_acos}>{c:others}+mix_margin,"trim",IF({c:m_acos}<{c:others}-mix_margin,"expand","hold"))))',
              width=9),
    ColumnDef("to_add", "Keywords to add", "int",
              "For expand rows: keywords of the product that run in this match type but in no other keyword match "
              "type.", lambda df, ctx: df["only_here"].where(df["signal"] == "expand"),
              '=IF(AND({c:signal}="expand",{c:only_here}<>""),{c:only_here},"")', width=9),
    ColumnDef("p_spend", "Product spend", "money", "Working: the product's spend over its match types.",
              _product_sum("spend"), "=" + _self_block("spend"), width=10, hidden=True),
    ColumnDef("p_sales", "Product sales", "money", "Working: the product's ad sales over its match types.",
              _product_sum("ad_sales"), "=" + _self_block("ad_sales"), width=10, hidden=True),
    ColumnDef("only_here", "Keywords only here", "int", "Helper: keywords running in this match type only.",
              lambda df, ctx: df["only_here"], kind=DATA, width=8, hidden=True),
    ColumnDef("first", "First target row", "int", "Helper: first of the block's rows on in_targets.",
              lambda df, ctx: df["first"], kind=DATA, width=8, hidden=True),
    ColumnDef("last", "Last target row", "int", "Helper: last of the block's rows on in_targets.",
              lambda df, ctx: df["last"], kind=DATA, width=8, hidden=True),
    ColumnDef("pfirst", "Product first row", "int", "Helper: the product's first row in this table.",
              lambda df, ctx: df["pfirst"], kind=DATA, width=8, hidden=True),
    ColumnDef("plast", "Product last row", "int", "Helper: the product's last row in this table.",
              lambda df, ctx: df["plast"], kind=DATA, width=8, hidden=True),
]

BY_MATCH_DEFS: list[ColumnDef] = [
    ColumnDef("match_type", "Match type", "text", "The match type.", lambda df, ctx: df["match_type"], kind=DATA,
              width=11),
    *[ColumnDef(k, h, st, f"{h} over all targets of the match type.", _metric_sum(k),
                '=SUMIFS({rng:targets.%s},{rng:targets.match_type},{c:match_type})' % k, width=11)
      for k, h, st in (("spend", "Spend", "money"), ("ad_sales", "Ad sales", "money"))],
    ColumnDef("acos", "ACoS", "percent", "Spend / ad sales.", lambda df, ctx: blank_div(df["spend"], df["ad_sales"]),
              '=IF({c:ad_sales}=0,"",{c:spend}/{c:ad_sales})', width=8),
]

def _top_share(key: str, header: str, total: str) -> ColumnDef:
    """A top product's share from Profit; the totals row holds all other products' share."""
    def compute(df: pd.DataFrame, ctx: MixContext) -> pd.Series:
        values = ctx.profit[key].to_numpy(dtype=float)
        return pd.Series(values[df["prow"].to_numpy(dtype=int) - 1] if len(df) else [], index=df.index, dtype=float)

    def others(df: pd.DataFrame, ctx: MixContext) -> float:
        return np.nan if ctx.profit[total].sum() == 0 else 1 - float(df[key].sum())
    return ColumnDef(key, header, "percent", "From Profit.", compute, "=INDEX({rng:profit.%s},%s)" % (key, keyed_row("{rng:profit.pos}", "{row:prow}")),
                     width=10, total='=IF({rng:profit_total.%s}=0,"",1-{sum:%s})' % (total, key),
                     total_reference=others)


TOP_DEFS: list[ColumnDef] = [
    ColumnDef("product_id", "Product", "text", "The products with the most ad spend, the rest grouped.",
              lambda df, ctx: df["product_id"], kind=DATA, width=14, total="All others"),
    _top_share("spend_share", "Spend share", "ad_spend"),
    _top_share("sales_share", "Sales share", "revenue"),
]


def _type_frame(ads: pd.DataFrame | None, settings: Settings) -> pd.DataFrame:
    codes = ad_type_codes(ads)
    labels: dict[str, str] = {}
    if ads is not None:
        for t in ads["ad_type"]:
            labels.setdefault(c.header_key(t), t)
    bench = {c.header_key(k): (k, v) for k, v in settings.ad_type_benchmarks.items()}
    rows = []
    for key, code in codes.items():
        b = bench.get(key)
        rows.append({"ad_type": labels[key], "code": float(code), "benchmark": b[1] if b else np.nan})
    for key, (label, share) in bench.items():
        if key not in codes:
            rows.append({"ad_type": label, "code": 0.0, "benchmark": share})
    frame = pd.DataFrame(rows, columns=["ad_type", "code", "benchmark"])
    if ads is None or not len(ads):
        for k in ("spend", "ad_sales", "orders", "clicks"):
            frame[k] = 0.0
        return frame
    by_code = ads.assign(_code=[float(codes[c.header_key(t)]) for t in ads["ad_type"]]).groupby("_code")
    for k in ("spend", "ad_sales", "orders", "clicks"):
        frame[k] = frame["code"].map(by_code[k].sum()).fillna(0.0).astype(float)
    return frame


def _match_frame(targets: InputSheet) -> pd.DataFrame:
    t = targets.frame
    pos = pd.Series(np.arange(1, len(t) + 1, dtype=float), index=t.index)
    work = t.assign(_pos=pos).loc[t["_product"] != ""]
    if not len(work):
        return pd.DataFrame(columns=["product_id", "match_type", "first", "last", "live", "spend", "ad_sales",
                                     "orders", "clicks", "only_here", "pfirst", "plast"])
    g = work.groupby(["_product", "_match_order"], sort=False)
    frame = pd.DataFrame({
        "product_id": g["_product"].first().to_numpy(), "match_type": g["match_type"].first().to_numpy(),
        "first": g["_pos"].min().to_numpy(), "last": g["_pos"].max().to_numpy(),
        **{k: g[k].sum().to_numpy() for k in ("_live", "spend", "ad_sales", "orders", "clicks")}})
    frame = frame.rename(columns={"_live": "live"})
    keywords: dict = {}
    for p, m, text in zip(work["_product"], work["match_type"], work["target"]):
        if m in ("exact", "phrase", "broad"):
            keywords.setdefault((p, m), set()).add(normalise(text))
    only = []
    for p, m in zip(frame["product_id"], frame["match_type"]):
        mine = keywords.get((p, m), set())
        others = set().union(*[keywords.get((p, o), set()) for o in ("exact", "phrase", "broad") if o != m])
        only.append(float(len(mine - others)) if m in ("exact", "phrase", "broad") else np.nan)
    frame["only_here"] = only
    rows = pd.Series(np.arange(1, len(frame) + 1, dtype=float))
    frame["pfirst"] = rows.groupby(frame["product_id"]).transform("min").to_numpy()
    frame["plast"] = rows.groupby(frame["product_id"]).transform("max").to_numpy()
    for col in ("product_id", "match_type"):
        frame[col] = frame[col].astype(object)
    return frame


def _self_ranges(defs: list[ColumnDef], first_body_row: int, n: int) -> dict[str, str]:
    """Absolute ranges of a table's own columns on the Mix sheet (for product blocks)."""
    last = first_body_row + max(n, 1)
    return {f"self.{d.key}": f"{quote_sheet(SHEET)}!${col_letter(i)}${first_body_row + 1}:${col_letter(i)}${last}"
            for i, d in enumerate(defs)}


def plan_mix(ad_layout: InputSheet | None, targets: InputSheet | None, profit: PlannedTable, settings: Settings,
             ranges: dict[str, str]) -> tuple[Sheet, dict[str, PlannedTable]]:
    """The Mix sheet (its tables and charts) and each table's reference frame."""
    ctx = MixContext(settings, profit.frame)
    types_base = _type_frame(ad_layout.frame if ad_layout else None, settings)
    row = CHART_ROWS + 2
    types = plan_table(TYPE_DEFS, types_base, ctx, row + 1, ranges, with_totals=True)
    types_table = Table(row, types.columns, types.totals, title=None,
                        highlights=[Highlight(len(TYPE_DEFS) - 1, "not running", "Stone")])
    tables = {"Mix ad types": types}
    more: list[Table] = []
    row = row + 1 + len(types_base) + 1 + 3
    top_ids = profit.frame.assign(_p=np.arange(1, len(profit.frame) + 1, dtype=float))
    top_ids = top_ids.loc[top_ids["ad_spend"] > 0].sort_values(["ad_spend", "product_id"], ascending=[False, True])
    top_base = pd.DataFrame({"product_id": top_ids["product_id"].head(TOP_PRODUCTS).astype(object).to_numpy(),
                             "prow": top_ids["_p"].head(TOP_PRODUCTS).to_numpy()})
    top = plan_table(TOP_DEFS, top_base, ctx, row + 1, ranges, with_totals=True)
    more.append(Table(row, top.columns, top.totals, autofilter=False,
                      title="Top products by ad spend: their spend share against their sales share"))
    tables["Mix top products"] = top
    top_rows = (row + 1, row + 1 + len(top_base))  # body and the All others row
    row = top_rows[1] + 1 + 3
    charts: list[Chart] = []
    match_rows = None
    if targets is not None:
        by_match_base = pd.DataFrame({"match_type": list(c.MATCH_TYPES)}, dtype=object)
        t = targets.frame
        for k in ("spend", "ad_sales"):
            by_match_base[k] = by_match_base["match_type"].map(t.groupby("match_type")[k].sum()).fillna(0.0)
        by_match = plan_table(BY_MATCH_DEFS, by_match_base, ctx, row + 1, ranges, with_totals=False)
        more.append(Table(row, by_match.columns, autofilter=False, title="By match type, all products"))
        tables["Mix match types"] = by_match
        match_rows = (row + 1, row + len(by_match_base))
        row = match_rows[1] + 1 + 3
        match_base = _match_frame(targets)
        planned = plan_table(MATCH_DEFS, match_base, ctx, row + 1,
                             {**ranges, **_self_ranges(MATCH_DEFS, row + 1, len(match_base))}, with_totals=False)
        signal_col = [d.key for d in MATCH_DEFS].index("signal")
        more.append(Table(row, planned.columns, autofilter=False, title="By product and match type",
                          highlights=[Highlight(signal_col, "trim", "Plum"), Highlight(signal_col, "expand", "Ocean")]))
        tables["Mix products"] = planned
    sheet_ref = quote_sheet(SHEET)

    def rng(col: int, rows: tuple[int, int]) -> str:
        letter = col_letter(col)
        return f"={sheet_ref}!${letter}${rows[0] + 1}:${letter}${rows[1] + 1}"
    type_rows = (CHART_ROWS + 3, CHART_ROWS + 2 + max(len(types_base), 1))
    tkeys = [d.key for d in TYPE_DEFS]
    charts.append(Chart("column", "Ad-type share of spend against the benchmark", (
        Series("Share of spend", rng(0, type_rows), rng(tkeys.index("share"), type_rows), STATES["Ocean"].font),
        Series("Benchmark share", rng(0, type_rows), rng(tkeys.index("benchmark"), type_rows), "#B08A1E")),
        (2, 0), x_title="Ad type", y_title="Share of spend"))
    charts.append(Chart("column", "Spend share against sales share, top products", (
        Series("Spend share", rng(0, top_rows), rng(1, top_rows), STATES["Plum"].font),
        Series("Sales share", rng(0, top_rows), rng(2, top_rows), STATES["Ocean"].font)),
        (2, 5), x_title="Product", y_title="Share", size=(560, 300)))
    if match_rows:
        charts.append(Chart("column", "ACoS by match type", (
            Series("ACoS", rng(0, match_rows), rng(3, match_rows), STATES["Lavender"].font),),
            (2, 11), x_title="Match type", y_title="ACoS", size=(420, 300)))
    above = [[Cell("Where the money goes: ad types, match types and the top products", style="title")],
             [Cell("Decision aid only: review before changing a live ad account. Benchmark shares are inputs.",
                   style="note")]]
    # The charts and the three short summary tables share the first page; the long last table starts its own.
    sheet = Sheet(SHEET, above=above, table=types_table, more=more, charts=charts, tab_color="#B08A1E",
                  page=stacked_pages([types_table, *more], breaks_before=more[-1:]))
    return sheet, tables
