"""The overview of a batch: one row per account, the accounts that need attention first, with a chart.

Each built account's figures are its workbook's values as built, taken from the build's plan
(Profit's totals row, Profit's Status column, the Actions list), never read back from a file.
TACoS and ACoS are live formulas over the row's figures. A refused account has a row with its
first problem and blank figures; no workbook is written for it.

Order (what needs attention first): refused accounts, then built accounts whose net profit after
ads is blank (no margin known), then by net profit after ads, lowest first; ties by account name.
"""
from __future__ import annotations

import datetime as dt
import math
import re
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pandas as pd

from sheetbuilder.errors import Problem
from sheetbuilder.sheets.profit import CAUTION
from sheetbuilder.workbook.columns import ColumnDef, blank_div, plan_table
from sheetbuilder.workbook.formula import col_number, quote_sheet
from sheetbuilder.workbook.palette import STATES
from sheetbuilder.workbook.spec import (DATA, Cell, Chart, Highlight, PageSetup, PrintArea, Series, Sheet, Table,
                                       WorkbookSpec)

SHEET = "Overview"
HEADER_ROW = 4  # 0-based: title, caution, order note, counts, then the header
BUILT, WARNINGS, REFUSED = "built", "warnings", "refused"
STATUS_STATES = {REFUSED: "Plum", WARNINGS: "Lavender", BUILT: "Mist"}
FIGURES = ("revenue", "ad_spend", "ad_sales", "net_profit", "losing", "changes", "at_stake")


@dataclass(frozen=True)
class AccountSummary:
    """What the overview shows of one account: small enough to send back from a worker process.

    The figures are None for a refused account.
    """

    account: str
    status: str
    message: str = ""      # the first problem (refused), or the warnings' count and the first one
    period: str = ""
    currency: str = ""
    revenue: float | None = None
    ad_spend: float | None = None
    ad_sales: float | None = None
    net_profit: float | None = None
    losing: int | None = None
    changes: int | None = None
    at_stake: float | None = None
    seconds: float = 0.0


def problem_text(p: Problem) -> str:
    """One problem on one line: file, row, column, message."""
    where = ", ".join(x for x in (p.file, "" if p.row is None else f"row {p.row}", p.column or "") if x)
    return f"{where}: {p.message}" if where else p.message


def refused(account: str, message: str, seconds: float = 0.0) -> AccountSummary:
    """The summary of an account that was not built."""
    return AccountSummary(account, REFUSED, message, seconds=seconds)


_NAME = re.compile(r"^=(?:'((?:[^']|'')+)'|([^!']+))!\$([A-Z]+)\$(\d+)$")


def named_value(spec: WorkbookSpec, name: str) -> Any:
    """The value a planned workbook holds in the single cell a defined name points to (None when absent)."""
    ref = dict(spec.names).get(name)
    m = _NAME.match(ref or "")
    if m is None:
        return None
    sheet_name = (m.group(1) or "").replace("''", "'") or m.group(2)
    sheet = next((s for s in spec.sheets if s.name == sheet_name), None)
    row, col = int(m.group(4)) - 1, col_number(m.group(3))
    if sheet is None or row >= len(sheet.above) or col >= len(sheet.above[row]):
        return None
    cell = sheet.above[row][col]
    return None if cell is None else cell.value


def period_text(end: Any, days: Any) -> str:
    """The period as 'first day to last day' (or its length when no date says where it ends)."""
    if not isinstance(days, (int, float)) or days <= 0:
        return ""
    if isinstance(end, dt.datetime):
        end = end.date()
    if isinstance(end, dt.date):
        return f"{end - dt.timedelta(days=int(days) - 1)} to {end}"
    return f"{int(days)} days"


def summarise(account: str, plan, warnings: list[Problem], seconds: float = 0.0) -> AccountSummary:
    """An account's overview row from its build's plan (the workbook's values as built).

    Args:
        account: the account's name.
        plan: the build's :class:`~sheetbuilder.assemble.Plan`.
        warnings: the build's warnings.
        seconds: how long the build took.
    """
    profit = plan.tables["Profit"]
    t = profit.totals_values
    changes, at_stake = 0, 0.0
    if "Actions" in plan.tables:
        a = plan.tables["Actions"].frame
        listed = a.loc[a["seg"] > 0]
        changes = len(listed)
        at_stake = float(sum(v for v in listed["money"] if isinstance(v, (int, float)) and not np.isnan(v)))
    status, message = BUILT, ""
    if warnings:
        status = WARNINGS
        message = f"{len(warnings)} warning(s); the first: {problem_text(warnings[0])}"
    period = period_text(named_value(plan.spec, "period_end"), named_value(plan.spec, "period_days"))
    return AccountSummary(account, status, message, period, plan.spec.currency_symbol,
                          float(t["revenue"]), float(t["ad_spend"]), float(t["ad_sales"]), float(t["net_profit"]),
                          int((profit.frame["status"] == "loss").sum()), changes, round(at_stake, 2), seconds)


def attention_order(rows: list[AccountSummary]) -> list[AccountSummary]:
    """Refused accounts first (by name), then any whose net profit after ads is blank (no margin known), then
    by net profit after ads, lowest first (ties by name)."""
    def key(r: AccountSummary):
        unknown = r.net_profit is None or math.isnan(r.net_profit)
        return r.status != REFUSED, not unknown, 0.0 if unknown else r.net_profit, r.account
    return sorted(rows, key=key)


def _value(key: str):
    return lambda df, ctx: df[key]


@dataclass
class OverviewContext:
    """What the overview's references read besides the frame (nothing but the totals plan_table fills)."""

    totals: dict[str, Any] = field(default_factory=dict)


def defs(money: str) -> list[ColumnDef]:
    """The overview's columns; money is the money columns' style ('money', or 'ratio' when currencies differ)."""
    def data(key, header, style, text, width=12):
        return ColumnDef(key, header, style, text, _value(key), kind=DATA, width=width)
    return [
        data("account", "Account", "text", "The account's folder name (its workbook is ACCOUNT.xlsx).", 22),
        data("status", "Status", "label", "built; warnings (built, with warnings listed on its Guide); refused "
             "(no workbook written: see Problem).", 10),
        data("period", "Period", "text", "The period the account's exports cover.", 24),
        data("currency", "Currency", "text", "The account's currency symbol (settings.toml).", 9),
        data("revenue", "Revenue", money, "All sales in the period (the account's Profit total)."),
        data("ad_spend", "Ad spend", money, "Ad spend in the period (Profit total)."),
        data("ad_sales", "Ad sales", money, "Sales credited to ads (Profit total)."),
        ColumnDef("tacos", "TACoS", "percent", "Ad spend / revenue.",
                  lambda df, ctx: blank_div(df["ad_spend"], df["revenue"]),
                  '=IF({c:revenue}=0,"",{c:ad_spend}/{c:revenue})', width=9),
        ColumnDef("acos", "ACoS", "percent", "Ad spend / ad sales.",
                  lambda df, ctx: blank_div(df["ad_spend"], df["ad_sales"]),
                  '=IF({c:ad_sales}=0,"",{c:ad_spend}/{c:ad_sales})', width=9),
        data("net_profit", "Net profit after ads", money, "Profit's total: revenue x margin before ads, minus "
             "ad spend.", 13),
        data("losing", "Products losing money", "int", "Products whose Status on Profit is loss.", 11),
        data("changes", "Changes proposed", "int", "Rows on the account's Actions list.", 11),
        data("at_stake", "Money at stake", money, "The Actions list's money at stake, summed.", 12),
        data("message", "Problem or warning", "text", "Refused: the first problem. Warnings: how many, and the "
             "first (the last column: its text runs on to the right on screen; printed, it ends at the column).", 60),
    ]


def _frame(rows: list[AccountSummary]) -> pd.DataFrame:
    cols: dict[str, list] = {k: [] for k in ("account", "status", "message", "period", "currency", *FIGURES)}
    for r in rows:
        for k in cols:
            v = getattr(r, k)
            cols[k].append(np.nan if v is None else (float(v) if k in FIGURES else v))
    return pd.DataFrame({k: pd.Series(v, dtype=float if k in FIGURES else object) for k, v in cols.items()})


def plan_overview(rows: list[AccountSummary], built_on: dt.date) -> WorkbookSpec:
    """The overview workbook: one sheet, one row per account in attention order, a chart of net profit after ads.

    Money columns carry the accounts' currency symbol when they all share one; otherwise they are
    plain numbers and the Currency column says which currency each row is in (never summed across).
    """
    rows = attention_order(rows)
    symbols = {r.currency for r in rows if r.status != REFUSED}
    money = "money" if len(symbols) <= 1 else "ratio"
    columns = defs(money)
    planned = plan_table(columns, _frame(rows), OverviewContext(), HEADER_ROW + 1, {}, with_totals=False)
    keys = [d.key for d in columns]
    highlights = [Highlight(keys.index("status"), word, state) for word, state in STATUS_STATES.items()]
    counts = {s: sum(r.status == s for r in rows) for s in (BUILT, WARNINGS, REFUSED)}
    mixed = "" if money == "money" else " Money columns are in each account's own currency (see Currency)."
    above = [
        [Cell("Accounts overview: which account needs attention first", style="title")],
        [Cell(CAUTION, style="note")],
        [Cell("Order: refused accounts first, then any whose net profit after ads is blank, then by net profit "
              "after ads, lowest first. Figures are each account workbook's values as built; TACoS and ACoS are "
              "formulas." + mixed, style="note")],
        [Cell(f"{len(rows)} account(s): {counts[BUILT]} built, {counts[WARNINGS]} built with warnings, "
              f"{counts[REFUSED]} refused. Built on {built_on}.", style="alert" if counts[REFUSED] else "note")],
    ]
    charts = []
    built = [i for i, r in enumerate(rows) if r.status != REFUSED]
    if built:
        first, last = HEADER_ROW + 2 + built[0], HEADER_ROW + 2 + built[-1]  # built rows are contiguous, after refused

        def rng(key: str) -> str:
            letter = planned.letters[key]
            return f"{quote_sheet(SHEET)}!${letter}${first}:${letter}${last}"
        charts.append(Chart("bar", "Net profit after ads per account", (
            Series("Net profit after ads", rng("account"), rng("net_profit"), STATES["Ocean"].font),),
            (HEADER_ROW + 2 + len(rows), 0), x_title="Net profit after ads", y_title="Account", percent=False,
            size=(640, min(1200, max(240, 120 + 30 * len(built))))))
    table = Table(HEADER_ROW, planned.columns, None, highlights)
    # Blank rows under the table for the chart to sit on, so that the print area (which ends at the last
    # row written) holds it; default rows are 20 pixels high.
    below: list[list[Cell | None]] = [[None] for _ in range(charts[0].size[1] // 20 + 2)] if charts else []
    page = PageSetup(PrintArea(0, table.last_row + len(below), 0, len(columns) - 1), (HEADER_ROW, HEADER_ROW))
    sheet = Sheet(SHEET, above=above, table=table, below=below, charts=charts, freeze=(HEADER_ROW + 1, 1),
                  page=page, tab_color="#0B5C8A")
    return WorkbookSpec([sheet], currency_symbol=next(iter(symbols)) if len(symbols) == 1 else "$",
                        properties={"title": "Accounts overview"})
