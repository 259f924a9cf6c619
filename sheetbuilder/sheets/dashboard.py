"""The dashboard at the top of the Guide: the handful of live figures a seller reads first, and the first
look: the products losing the most after ads and the biggest changes, each linked to its row."""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from sheetbuilder.sheets.lists import count_formula, count_of
from sheetbuilder.workbook.columns import PlannedTable
from sheetbuilder.workbook.formula import quote_sheet
from sheetbuilder.sheets.actions import SHEET as ACTIONS
from sheetbuilder.sheets.profit import SHEET as PROFIT
from sheetbuilder.workbook.spec import Cell


@dataclass(frozen=True)
class Figure:
    """One dashboard line: a label, its live formula, its cached value and its style."""

    label: str
    formula: str
    value: object
    style: str


def dashboard(tables: dict[str, PlannedTable], ranges: dict[str, str], budget_shift: tuple[str, float] | None
              ) -> list[Figure]:
    """The dashboard's figures for the sheets this workbook has."""
    profit = tables["Profit"]
    t = profit.totals_values
    status = ranges["profit.status"]
    out = [
        Figure("Revenue", "=" + ranges["profit_total.revenue"], t["revenue"], "money"),
        Figure("Ad spend", "=" + ranges["profit_total.ad_spend"], t["ad_spend"], "money"),
        Figure("TACoS", "=" + ranges["profit_total.tacos"], t["tacos"], "percent"),
        Figure("Net profit after ads", "=" + ranges["profit_total.net_profit"], t["net_profit"], "money"),
        Figure("Products losing money after ads", f'=COUNTIFS({status},"loss")',
               float((profit.frame["status"] == "loss").sum()), "int"),
        Figure("Products with a thin margin", f'=COUNTIFS({status},"thin")',
               float((profit.frame["status"] == "thin").sum()), "int"),
    ]
    if "inventory.units_available" in ranges:  # an inventory export: the products never told to grow
        out.append(Figure("Products low on stock",
                          f"=SUM({ranges['profit.low']})", float(profit.frame["low"].sum()), "int"))
    if "Bids" in tables:
        bids = tables["Bids"].frame  # one comparison over the two columns: no working column per row
        out.append(Figure("Proposed bid changes", f"=SUMPRODUCT(({ranges['bids.proposed']}<>{ranges['bids.bid']})*1)",
                          float((bids["proposed"] != bids["bid"]).sum()), "int"))
    if "Terms" in tables:
        frame = tables["Terms"].frame
        out.append(Figure("Search terms to promote", "=" + count_formula(ranges, "terms", "p"),
                          count_of(frame, "p"), "int"))
        out.append(Figure("Search terms to block", "=" + count_formula(ranges, "terms", "b"),
                          count_of(frame, "b"), "int"))
    if budget_shift:
        out.append(Figure("Ad spend shifted from cut to grow products", "=" + budget_shift[0], budget_shift[1],
                          "money"))
    return out


LOOK = 5  # lines in each first-look list


@dataclass(frozen=True)
class Ranked:
    """One first-look list: the k-th smallest (or largest) of a column, the row holding it, and its description.

    The k-th value is SMALL (LARGE) over the column; its row is the first MATCH of that value, or, when it
    equals the line above's value, the next MATCH after the line above's row (ties in sheet order). Each
    line costs two passes over the column: no per-row helper, no rows x rows formula.
    """

    title: str
    note: str
    headers: tuple[str, str, str]
    sheet: str
    values: str        # the absolute range ranked
    first_row: int     # the 1-based sheet row of its first cell
    n: int             # its rows
    count: str         # formula text: how many rows qualify
    pick: str          # SMALL or LARGE
    describe: str      # formula text of the description, '{p}' standing for the position in the range
    cached: tuple      # ((value, position, description) ...) as built, best first
    style: str = "money"  # the ranked values' style

    def rows(self, at: int) -> list[list[Cell | None]]:
        """The list's rows when its title is the Guide's 0-based row at: title, header, LOOK lines."""
        # (a link is a place, not a formula: it goes to the row as built, the row number beside it is live)
        out: list[list[Cell | None]] = [
            [Cell(self.title, style="subtitle")],
            [Cell(self.headers[0], style="header_num"), Cell(f"{self.headers[1]}: {self.note}", style="header"),
             Cell(self.headers[2], style="header_num")]]
        h = self.first_row - 1
        for k in range(1, LOOK + 1):
            r = at + 2 + k  # the 1-based Guide row of line k
            v, row = f"A{r}", f"C{r}"
            value = f'=IF({self.count}<{k},"",{self.pick}({self.values},{k}))'
            first = f"{h}+MATCH({v},{self.values},0)"
            if k == 1:
                where = f'=IF({v}="","",{first})'
            else:
                after = f"C{r - 1}+MATCH({v},INDEX({self.values},C{r - 1}-{h}+1):INDEX({self.values},{self.n}),0)"
                where = f'=IF({v}="","",IF({v}=A{r - 1},{after},{first}))'
            text = '=IF({row}="","",{d})'.format(row=row, d=self.describe.replace("{p}", f"{row}-{h}"))
            cached = self.cached[k - 1] if k <= len(self.cached) else ("", "", "")
            link = f"{quote_sheet(self.sheet)}!A{cached[1] + h}" if cached[1] != "" else None
            out.append([Cell(cached[0], value, self.style), Cell(cached[2], text, "text", link=link),
                        Cell(float(cached[1] + h) if cached[1] != "" else "", where, "int")])
        return out


def _ranked(values: pd.Series, largest: bool) -> list[int]:
    """The 1-based positions of the LOOK best numbers of values, ties in order of position."""
    numbers = [(float(v), i) for i, v in enumerate(values, start=1)
               if isinstance(v, (int, float, np.number)) and not isinstance(v, bool) and not np.isnan(v)]
    numbers.sort(key=lambda t: (-t[0] if largest else t[0], t[1]))
    return [i for _, i in numbers[:LOOK]]


LOW_LIST = "Low on stock: the fewest days of cover"  # the list's title (the count above reads Products low on stock)


def _products(profit: PlannedTable, title: str, what: str, header: str, key: str, count: str, picked: list[int],
              style: str = "money") -> Ranked:
    """A first-look list of Profit rows: the smallest values of column key among the picked positions."""
    f, p = profit.frame, profit.ranges(PROFIT, "p")
    return Ranked(
        title, f"live, {what}; each links to its row on Profit as built, the row number is live",
        (header, "Product", "Profit row"), PROFIT, p[f"p.{key}"], profit.first_body_row + 1, max(len(f), 1),
        count.format(**{k.replace(".", "_"): v for k, v in p.items()}), "SMALL",
        f'INDEX({p["p.product_id"]},{{p}})&"  "&INDEX({p["p.product_name"]},{{p}})',
        tuple((float(f[key].iloc[i - 1]), i, f'{f["product_id"].iloc[i - 1]}  {_text(f["product_name"].iloc[i - 1])}')
              for i in picked), style)


def first_look(tables: dict[str, PlannedTable], stock: bool = False) -> list[Ranked]:
    """The Guide's first look: the products low on stock (with an inventory export), the products losing the
    most after ads and the biggest changes by money."""
    out = []
    profit = tables["Profit"]
    f = profit.frame
    if stock:
        numbers = f["cover"].map(lambda v: v if isinstance(v, float) else np.nan)
        low = [i for i in _ranked(numbers, largest=False) if f["low"].iloc[i - 1] == 1]
        out.append(_products(profit, LOW_LIST, "fewest days of cover first (below the minimum on "
                             "Settings: never told to grow, spend held)", "Days of cover", "cover", "SUM({p_low})",
                             low, "int"))
    losing = [i for i in _ranked(f["net_profit"], largest=False) if f["net_profit"].iloc[i - 1] < 0]
    out.append(_products(profit, "Products losing the most after ads", "most negative net profit after ads first",
                         "Net profit", "net_profit", 'COUNTIFS({p_net_profit},"<0")', losing))
    if "Actions" in tables:
        actions = tables["Actions"]
        a = actions.ranges(ACTIONS, "a")
        f = actions.frame
        out.append(Ranked(
            "Biggest changes by money at stake", "live, from the Actions list; each links to its row there as "
            "built, the row number is live",
            ("Money at stake", "Change", "Actions row"), ACTIONS, a["a.money"], actions.first_body_row + 1,
            max(len(f), 1), f'COUNT({a["a.money"]})', "LARGE",
            f'INDEX({a["a.kind"]},{{p}})&": "&IF(INDEX({a["a.target"]},{{p}})="",INDEX({a["a.campaign"]},{{p}}),'
            f'INDEX({a["a.target"]},{{p}}))&"  ("&INDEX({a["a.product_id"]},{{p}})&")"',
            tuple((float(f["money"].iloc[i - 1]), i, _change(f.iloc[i - 1]))
                  for i in _ranked(f["money"], largest=True))))
    return out


def _text(value) -> str:
    """A text cell's value as a formula reads it (a blank is empty text)."""
    return "" if value is None or (isinstance(value, float) and np.isnan(value)) else str(value)


def _change(row: pd.Series) -> str:
    """An Actions row described as the Guide's formula describes it."""
    what = _text(row["target"]) or _text(row["campaign"])
    return f'{_text(row["kind"])}: {what}  ({_text(row["product_id"])})'
