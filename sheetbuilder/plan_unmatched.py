"""The Unmatched edits sheet: what was typed last week but has no row in this week's exports.

Nothing a user typed is dropped silently: every edit that could not be carried is listed
here with the reason, as plain text.
"""
from __future__ import annotations

from pathlib import Path

from .carry import CarryResult, unmatched_sheet_rows
from .spec import DATA, Cell, Column, Sheet, Table

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
