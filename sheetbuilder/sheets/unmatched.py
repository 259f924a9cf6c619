"""The Unmatched edits and Carried edits sheets: what happened to each value typed last week.

Nothing a user typed is dropped silently: every edit that could not be carried is listed
on Unmatched edits with the reason, as plain text; every edit carried (or expired because
the export shows it applied) is listed on Carried edits with the value the export gives
and the week it was first typed.
"""
from __future__ import annotations

from pathlib import Path

from sheetbuilder.weekly.carry import CarryResult, unmatched_sheet_rows
from sheetbuilder.workbook.formula import range_ref
from sheetbuilder.weekly.saved import CARRIED_NAME
from sheetbuilder.workbook.spec import DATA, Cell, Column, Sheet, Table

SHEET = "Unmatched edits"


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
