"""The in_ sheets: the imported rows, sorted so that each product's rows form one block.

Catalog money and percent cells are inputs (the user may correct a cost); everything
else is the export as read, locked. Each sheet ends with the row number it came from.
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import pandas as pd

from sheetbuilder.reading import contract as c
from sheetbuilder.workbook.formula import range_ref
from sheetbuilder.reading.normalise import normalise
from sheetbuilder.reading.readers import Inputs
from sheetbuilder.workbook.spec import DATA, INPUT, Column, Highlight, Sheet, Table

HEADER_ROW = 0  # in_ sheets: the header in row 1, data from row 2
CATALOG_NAME = "sb_catalog"  # defined names <this>_<column> over product_id, each editable column and its exported_ twin
EXPORTED = "exported_"  # prefix of the hidden columns holding an editable column as exported
EDITABLE = {"catalog": {"price", "unit_cost", "fees_per_unit", "target_acos", "margin"},
            "inventory": {"units_available"}}  # a what-if for this week: next week's export replaces it, not carried
OPEN_CATALOG_ROWS = 200  # unlocked rows below in_catalog's table: products a user adds (kept week after week)
CARRIED = ("catalog",)  # the tables whose edits are carried by --previous (their exported_ twins tell edits apart)
SORT_KEYS = {
    "catalog": ["product_id"],
    "store_sales": ["product_id", "_row"],
    "ad_products": ["product_id", "campaign", "ad_group", "_row"],
    "inventory": ["product_id", "_row"],
    "search_terms": ["campaign", "ad_group", "_term_key", "_row"],
    "targets": ["_product", "_match_order", "campaign", "ad_group", "_row"],
}
MATCH_ORDER = {m: i for i, m in enumerate(c.MATCH_TYPES)}
# Derived columns written after the imported ones: (table, column, header, what it holds).
DERIVED = {
    "catalog": [("_pos", "position", "Helper: the row's place as built; Profit finds each product's row by it "
                                     "after in_catalog is sorted.")],
    "ad_products": [("_type_code", "ad_type_code", "Helper: a number per ad type, for the Mix sheet's sums.")],
    "targets": [("_live", "live", "Helper: 1 where the target and its campaign are enabled."),
                ("_product", "product", "Helper: the first product its ad group advertises.")],
}


TO_FILL = "Lavender"  # the state of a blank unit cost on in_catalog: a product whose cost is still to be typed


def with_missing_products(catalog: pd.DataFrame | None, tables: dict) -> pd.DataFrame | None:
    """The catalog with one row for every product the sales or ad exports name but the catalog lacks.

    Such a row holds the product ID and nothing else (no name, no source row): its price, unit cost and
    fees are left blank for the user to type on in_catalog, where a blank unit cost is highlighted, and
    Profit reads them live like any catalog row. Without a catalog nothing is added.
    """
    if catalog is None:
        return None
    known = set(catalog["product_id"])
    missing = sorted({p for name in ("store_sales", "ad_products") if tables.get(name) is not None
                      for p in tables[name]["product_id"] if p != "" and p not in known})
    return with_catalog_rows(catalog, missing) if missing else catalog


def with_catalog_rows(catalog: pd.DataFrame, ids: list[str], names: list[str] | None = None) -> pd.DataFrame:
    """The catalog with a row appended for each product ID in ids: its name from names (else blank), every
    other cell blank (text "" and numbers NaN) for the user to type, and no source row."""
    added = pd.DataFrame({col: [math.nan] * len(ids) for col in catalog.columns})
    for col in next(t for t in c.TABLES if t.name == "catalog").columns:
        if col.kind not in c.NUMERIC_KINDS:
            added[col.name] = ""
    added["product_id"] = list(ids)
    if names is not None and "product_name" in added.columns:
        added["product_name"] = list(names)
    out = pd.concat([catalog, added.astype({k: v for k, v in catalog.dtypes.items() if k != "_row"})],
                    ignore_index=True)
    out.attrs = dict(catalog.attrs)
    return out


def ad_type_codes(ad_products: pd.DataFrame | None) -> dict[str, int]:
    """A number per ad type label (folded for case and spacing), in label order."""
    if ad_products is None:
        return {}
    labels = sorted({c.header_key(t) for t in ad_products["ad_type"]})
    return {label: i for i, label in enumerate(labels, start=1)}


def _derive(name: str, frame: pd.DataFrame, inputs: Inputs, fold_plurals: bool) -> pd.DataFrame:
    """The frame with the helper columns its sheet and the planners need."""
    if name == "search_terms":
        return frame.assign(_term_key=[normalise(t, fold_plurals) for t in frame["search_term"]])
    if name == "ad_products":
        codes = ad_type_codes(frame)
        return frame.assign(_type_code=[float(codes[c.header_key(t)]) for t in frame["ad_type"]])
    if name == "targets":
        ads = inputs.get("ad_products")
        first: dict = {}
        if ads is not None and len(ads):
            first = ads.groupby(["campaign", "ad_group"])["product_id"].min().to_dict()
        live = frame["state"] == "enabled"
        campaigns = inputs.get("campaigns")
        if campaigns is not None and len(campaigns):
            state = campaigns.drop_duplicates("campaign").set_index("campaign")["state"]
            live &= frame["campaign"].map(state).fillna("enabled") == "enabled"
        return frame.assign(
            _product=[first.get((a, b), "") for a, b in zip(frame["campaign"], frame["ad_group"])],
            _match_order=frame["match_type"].map(MATCH_ORDER), _live=live.astype(float))
    return frame
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


def plan_input_sheets(inputs: Inputs, fold_plurals: bool = False,
                      exported: dict[str, pd.DataFrame] | None = None) -> tuple[list[Sheet], dict[str, InputSheet]]:
    """The in_ sheets for every table that was given, and their layouts for formulas.

    Search terms are sorted by campaign, ad group and normalised term, so that each term's
    rows in an ad group form one block (kept in the layout frame as _term_key). exported
    gives a table's frame as the export held it, when the inputs carry last week's edits:
    its editable values fill the hidden exported_ columns, so a correction is told apart
    from the export in every later week.
    """
    sheets: list[Sheet] = []
    layouts: dict[str, InputSheet] = {}
    for rule in c.TABLES:
        frame = inputs.get(rule.name)
        if frame is None:
            continue
        frame = sorted_rows(rule.name, _derive(rule.name, frame, inputs, fold_plurals))
        if rule.name == "catalog":
            frame = frame.assign(_pos=[float(i) for i in range(1, len(frame) + 1)])
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
        if editable and rule.name in CARRIED:  # the values as exported, so next week's build carries only real edits
            source = frame
            if exported and exported.get(rule.name) is not None:
                source = sorted_rows(rule.name, exported[rule.name])
                if len(source) != len(frame):  # rows kept from last week that the export lacks: nothing exported
                    by_id = source.drop_duplicates("product_id").set_index("product_id")
                    source = pd.DataFrame({c: frame["product_id"].map(by_id[c]).tolist() for c in editable})
            for col in rule.columns:
                if col.name in editable:
                    ranges[EXPORTED + col.name] = range_ref(name, len(columns), HEADER_ROW + 1, HEADER_ROW + len(frame))
                    columns.append(Column(EXPORTED + col.name, _STYLE.get(col.kind, "text"), DATA,
                                          source[col.name].tolist(), width=8, hidden=True))
        for column, header, _ in DERIVED.get(rule.name, []):
            ranges[header] = range_ref(name, len(columns), HEADER_ROW + 1, HEADER_ROW + len(frame))
            style = "text" if frame[column].dtype == object else "int"
            columns.append(Column(header, style, DATA, frame[column].tolist(), width=10))
        columns.append(Column("source_row", "int", DATA, frame["_row"].tolist(), width=10))
        highlights = [Highlight(i, "", TO_FILL) for i, col in enumerate(columns) if col.header == "unit_cost"]
        sheets.append(Sheet(name, table=Table(HEADER_ROW, columns, highlights=highlights), freeze=(1, 0),
                            tab_color="#8C8C8C", sortable=rule.name == "catalog",  # Profit finds each row by key
                            open_rows=OPEN_CATALOG_ROWS if rule.name == "catalog" else 0))
        layouts[rule.name] = InputSheet(rule.name, name, frame, ranges)
    return sheets, layouts


def catalog_names(layouts: dict[str, InputSheet]) -> list[tuple[str, str]]:
    """The defined names over in_catalog's product_id, editable and exported_ columns (none without a catalog)."""
    layout = layouts.get("catalog")
    if layout is None:
        return []
    wanted = ["product_id", *sorted(EDITABLE["catalog"]), *(EXPORTED + c for c in sorted(EDITABLE["catalog"]))]
    return [(f"{CATALOG_NAME}_{c}", "=" + layout.ranges[c]) for c in wanted if c in layout.ranges]
