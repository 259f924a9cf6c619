"""The user's own notes: each table's Notes column and the columns a user adds to its right.

Notes are plain typed cells (no formula reads them, none is written in them), carried to next
week's workbook by the row's key (:mod:`sheetbuilder.weekly.carry` reads them back); a column
the user adds right of Notes, with its header, comes back in the same place with its values by
key. Neither is a Decision: the change list, Actions and Follow-up never read them.
"""
from __future__ import annotations

import datetime as dt
from dataclasses import replace
from typing import Any

from sheetbuilder.sheets.decisions import OWN_COLUMNS_CAP, EditableColumns
from sheetbuilder.sheets.typed import EDITABLE_TABLES, CarryResult, OwnColumn, key_text, keyed_column
from sheetbuilder.workbook.columns import PlannedTable
from sheetbuilder.workbook.spec import INPUT, Column, Sheet

OWN_WIDTH = 16


def own_header(header: Any) -> str:
    """An own column's header as the next workbook writes it (text; a number as it reads, 12.0 as '12')."""
    if isinstance(header, (dt.date, dt.datetime)):
        return header.isoformat()
    return key_text(header) if not isinstance(header, str) else header


def _own_style(value: Any) -> str | None:
    """The style of one carried cell of an own column: text stays text, a date a date, a number as typed."""
    if isinstance(value, str):
        return "freetext_input"
    if isinstance(value, (dt.date, dt.datetime)):
        return "date_input"
    return None


def own_columns(own: list[OwnColumn], values: list[list[Any]]) -> list[Column]:
    """The user's own columns in their places right of Notes (a skipped place stays an empty column)."""
    by_offset = {o.offset: (o, v) for o, v in zip(own, values)}
    out = []
    for offset in range(1, max(by_offset, default=0) + 1):
        column, cells = by_offset.get(offset, (None, []))
        if column is None:
            out.append(Column("", "text_input", INPUT, [], width=OWN_WIDTH))  # filled to the table's rows below
            continue
        styles = {i: s for i, v in enumerate(cells) if (s := _own_style(v)) is not None}
        out.append(Column(own_header(column.header), "text_input", INPUT, cells, width=OWN_WIDTH,
                          cell_styles=styles))
    return out


def _with_notes(decl: EditableColumns, planned: PlannedTable, carry: CarryResult | None
                ) -> tuple[Column, Column, list[Column]]:
    """(the planned Notes column, its filled copy, the own columns) of one table."""
    old = planned.columns[list(planned.letters).index(decl.notes)]
    if carry is None:
        return old, old, []
    rows = list(planned.frame[list(decl.keys)].itertuples(index=False, name=None))
    new = replace(old, values=keyed_column(carry, decl.label, carry.notes.get(decl.label, {}), rows))
    own = carry.own_columns.get(decl.label, [])
    cells = [keyed_column(carry, decl.label, o.values, rows) for o in own]
    extra = own_columns(own, cells)
    n = len(rows)
    return old, new, [c if len(c.values) == n else replace(c, values=[None] * n) for c in extra]


def place_notes(sheets: dict[str, list[Sheet]], tables: dict[str, PlannedTable], carry: CarryResult | None) -> None:
    """Fill every Notes column with the notes carried by key, add the user's own columns to its right, and
    leave the columns beyond unlocked (up to OWN_COLUMNS_CAP in all); sheets and tables are updated in place."""
    for decl in EDITABLE_TABLES:
        if not decl.notes or decl.table not in tables:
            continue
        planned = tables[decl.table]
        old, new, extra = _with_notes(decl, planned, carry)
        columns = [new if c is old else c for c in planned.columns] + extra  # one list: the sheet's and the table's
        tables[decl.table] = replace(planned, columns=columns)
        for where, placed in sheets.items():
            sheets[where] = [_placed(s, planned.columns, columns, len(extra)) for s in placed]


def _placed(sheet: Sheet, planned: list[Column], columns: list[Column], own: int) -> Sheet:
    """sheet with its main table's columns replaced (Notes filled, own columns added), when it holds that table."""
    table = sheet.table
    if table is None or table.columns is not planned:
        return sheet
    return replace(sheet, table=replace(table, columns=columns), open_columns=max(OWN_COLUMNS_CAP - own, 0))

