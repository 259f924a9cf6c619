"""The dashboard at the top of the Guide: the handful of live figures a seller reads first."""
from __future__ import annotations

from dataclasses import dataclass

from .columns import PlannedTable, count_formula, count_of


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
    if "Bids" in tables:
        out.append(Figure("Proposed bid changes", f"=SUM({ranges['bids.moves']})",
                          float(tables["Bids"].frame["moves"].sum()), "int"))
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
