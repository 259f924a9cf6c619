"""The in_ sheets: the imported rows, sorted so that each product's rows form one block.

Catalog money and percent cells are inputs (the user may correct a cost); everything
else is the export as read, locked. Each sheet ends with the row number it came from.
"""
from __future__ import annotations

from dataclasses import dataclass

import pandas as pd

from . import contract as c
from .formula import range_ref
from .normalise import normalise
from .readers import Inputs
from .spec import DATA, INPUT, Column, Sheet, Table

HEADER_ROW = 0  # in_ sheets: the header in row 1, data from row 2
EDITABLE = {"catalog": {"price", "unit_cost", "fees_per_unit", "target_acos", "margin"}}
SORT_KEYS = {
    "catalog": ["product_id"],
    "store_sales": ["product_id", "_row"],
    "ad_products": ["product_id", "campaign", "ad_group", "_row"],
    "search_terms": ["campaign", "ad_group", "_term_key", "_row"],
}
_STYLE = {c.TEXT: "text", c.COUNT: "int", c.MONEY: "money", c.PERCENT: "percent", c.AMOUNT: "money"}
_WIDTH = {c.TEXT: 18, c.COUNT: 11, c.MONEY: 12, c.PERCENT: 11, c.AMOUNT: 11}


@dataclass
class InputSheet:
    """One in_ sheet as planned: its name, its rows in sheet order, and its column ranges."""

    table: str
    name: str
    frame: pd.DataFrame
    ranges: dict[str, str]

    def first_last(self) -> pd.DataFrame:
        """Per product_id, the 1-based first and last position of its block of rows."""
        pos = pd.Series(range(1, len(self.frame) + 1), index=self.frame.index)
        g = pos.groupby(self.frame["product_id"].to_numpy())
        return pd.DataFrame({"first": g.min(), "last": g.max()})


def sheet_name(table: str) -> str:
    """The sheet that holds an imported table."""
    return "in_" + table


def sorted_rows(table: str, frame: pd.DataFrame) -> pd.DataFrame:
    """The table's rows in the order its sheet holds them."""
    keys = SORT_KEYS.get(table, ["_row"])
    return frame.sort_values(keys, kind="stable").reset_index(drop=True)


def plan_input_sheets(inputs: Inputs, fold_plurals: bool = False) -> tuple[list[Sheet], dict[str, InputSheet]]:
    """The in_ sheets for every table that was given, and their layouts for formulas.

    Search terms are sorted by campaign, ad group and normalised term, so that each term's
    rows in an ad group form one block (kept in the layout frame as _term_key).
    """
    sheets: list[Sheet] = []
    layouts: dict[str, InputSheet] = {}
    for rule in c.TABLES:
        frame = inputs.get(rule.name)
        if frame is None:
            continue
        if rule.name == "search_terms":
            frame = frame.assign(_term_key=[normalise(t, fold_plurals) for t in frame["search_term"]])
        frame = sorted_rows(rule.name, frame)
        name = sheet_name(rule.name)
        editable = EDITABLE.get(rule.name, set())
        columns = []
        ranges = {}
        for i, col in enumerate(rule.columns):
            style = _STYLE.get(col.kind, "text")
            kind = DATA
            if col.name in editable:
                style, kind = style + "_input", INPUT
            values = frame[col.name].tolist()
            columns.append(Column(col.name, style, kind, values, width=_WIDTH.get(col.kind, 14)))
            ranges[col.name] = range_ref(name, i, HEADER_ROW + 1, HEADER_ROW + len(frame))
        columns.append(Column("source_row", "int", DATA, frame["_row"].tolist(), width=10))
        sheets.append(Sheet(name, table=Table(HEADER_ROW, columns), freeze=(1, 0), tab_color="#8C8C8C"))
        layouts[rule.name] = InputSheet(rule.name, name, frame, ranges)
    return sheets, layouts
