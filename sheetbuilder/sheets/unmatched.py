"""The Unmatched edits and Carried edits sheets: what happened to each value typed last week.

Nothing a user typed is dropped silently: every edit that could not be carried is listed
on Unmatched edits with the reason, as plain text; every edit carried (or expired because
the export shows it applied) is listed on Carried edits with the value the export gives
and the week it was first typed, and each carried cell on its own sheet is shaded and noted.
"""
from __future__ import annotations

from dataclasses import replace
from pathlib import Path
from typing import Any

from sheetbuilder.sheets.typed import CARRIED_NAME, EDITABLE_TABLES, PROFIT, PROFIT_TARGET, CarryResult, entry_for
from sheetbuilder.workbook.columns import PlannedTable
from sheetbuilder.workbook.formula import range_ref
from sheetbuilder.workbook.spec import DATA, Cell, Column, Sheet, Table

SHEET = "Unmatched edits"


UNMATCHED_HEADERS = ["Sheet", "Key", "Column", "Value", "Why"]


def unmatched_sheet_rows(result: CarryResult) -> list[list[Any]]:
    """Header and rows of an "Unmatched edits" sheet: Sheet, Key, Column, Value, Why."""
    return [list(UNMATCHED_HEADERS)] + [[r.sheet, r.key, r.column, r.value, r.why] for r in result.unmatched]


def plan_unmatched(carry: CarryResult) -> Sheet:
    """The sheet listing the edits of the previous workbook that found no row."""
    header, *rows = unmatched_sheet_rows(carry)
    columns = [Column(h, "text", DATA, ["" if r[i] is None else (r[i] if isinstance(r[i], str) else str(r[i]))
                                         for r in rows], width=w)
               for i, (h, w) in enumerate(zip(header, (14, 40, 16, 14, 60)))]
    above = [[Cell("Edits from the previous workbook that could not be carried", style="title")],
             [Cell(f"From {carry_source(carry)}. Re-enter them where they still apply.", style="note")]]
    return Sheet(SHEET, above=above, table=Table(3, columns), freeze=(4, 0), tab_color="#7A3E00")


def carry_source(carry: CarryResult) -> str:
    """The previous workbook's file name, as the edits record it."""
    return Path(carry.source).name if carry.source else "the previous workbook"


CARRIED_SHEET = "Carried edits"
CARRIED_COLUMNS = (("sheet", "Sheet", "text", 16), ("key", "Key", "text", 44), ("column", "Column", "text", 16),
                   ("exported", "Export value", "text", 13), ("typed", "Typed value", "text", 13),
                   ("first_typed", "First typed", "date", 12), ("status", "Status", "text", 60))
_BODY = 4  # 0-based row of the first carried edit (title, note, blank, header)


def plan_carried(carry: CarryResult) -> tuple[Sheet, list[tuple[str, str]]]:
    """The Carried edits sheet (every value carried or expired this week) and the defined names over it.

    --previous reads the First typed dates back through the names, so the week an edit was
    first typed survives every rebuild.
    """
    records = [(r, "carried" if "not yet applied" not in r.why else "carried: " + r.why) for r in carry.carried]
    records += [(r, "expired: " + r.why + "; the cell is left blank") for r in carry.applied]
    values = {"sheet": [r.sheet for r, _ in records], "key": [r.key for r, _ in records],
              "column": [r.column for r, _ in records], "exported": [_plain(r.exported) for r, _ in records],
              "typed": [_plain(r.value) for r, _ in records], "first_typed": [r.first_typed for r, _ in records],
              "status": [status for _, status in records]}
    columns = [Column(header, style, DATA, values[key], width=width) for key, header, style, width in CARRIED_COLUMNS]
    above = [[Cell("Edits carried from the previous workbook", style="title")],
             [Cell(f"From {carry_source(carry)}. Words stay until you clear them; a typed number expires once the "
                   "export shows it applied. Carried cells are shaded and carry a note.", style="note")]]
    sheet = Sheet(CARRIED_SHEET, above=above, table=Table(_BODY - 1, columns), freeze=(_BODY, 0), tab_color="#B0641E")
    last = _BODY + max(len(records), 1) - 1
    names = [(f"{CARRIED_NAME}_{key}", "=" + range_ref(CARRIED_SHEET, i, _BODY, last))
             for i, (key, *_rest) in enumerate(CARRIED_COLUMNS) if key in ("sheet", "key", "column", "first_typed")]
    return sheet, names


def _plain(value):
    """A value as the sheet shows it: numbers and text as they are, anything else as text, blank as None."""
    if value is None or isinstance(value, (int, float, str)):
        return value
    return str(value)


def _note(record, source: str) -> str:
    """The note on a carried cell: where it came from and when it was first typed."""
    first = f"; first typed in the workbook built {record.first_typed}" if record.first_typed else ""
    return (f"Carried from {source}{first}. A word stays until you clear it; a typed number expires once "
            "the export shows it applied.")


def carried_marks(carry: CarryResult, tables: dict[str, PlannedTable], catalog: Sheet | None,
                  layouts: dict) -> dict[int, dict[int, str]]:
    """{id of a planned column: {row index: note}} of every carried cell (typed columns and in_catalog)."""
    source = carry_source(carry)
    records = {(r.sheet, r.compared): r for r in carry.carried if r.compared}
    fold = carry.settings.fold_plurals
    out: dict[int, dict[int, str]] = {}
    for decl in EDITABLE_TABLES:
        planned = tables.get(decl.table)
        if planned is None:
            continue
        column = planned.columns[list(planned.letters).index(decl.value)]
        entry = entry_for(decl.label) if decl.label != PROFIT.label else PROFIT_TARGET
        keys = planned.frame[list(decl.keys)].itertuples(index=False, name=None)
        for i, parts in enumerate(keys):
            record = records.get((decl.label, entry.export_key(parts, fold)))
            if record is not None:
                out.setdefault(id(column), {})[i] = _note(record, source)
    if catalog is None or "catalog" not in layouts:
        return out
    row_of = {str(p): i for i, p in enumerate(layouts["catalog"].frame["product_id"])}
    by_header = {c.header: c for c in catalog.table.columns}
    for r in carry.carried:
        if r.sheet == "in_catalog" and r.key in row_of and r.column in by_header:
            out.setdefault(id(by_header[r.column]), {})[row_of[r.key]] = _note(r, source)
    return out


def marked_column(column: Column, marks: dict[int, dict[int, str]]) -> Column:
    """column, or a copy whose carried cells have the carried style and their note."""
    notes = marks.get(id(column))
    if not notes:
        return column
    carried = column.style.split("_")[0] + "_carried"
    return replace(column, cell_styles={**column.cell_styles, **{i: carried for i in notes}},
                   notes={**column.notes, **notes})
