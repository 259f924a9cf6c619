"""Reading a workbook of ours after a user saved it: one opener, and our tables found by name.

Every table that ``--previous`` (:mod:`sheetbuilder.carry`) and ``changes``
(:mod:`sheetbuilder.changes`) read back is covered by workbook-level defined names written
at build time: each typed column and its key columns (declared once, as ``EDITABLE_COLUMNS``,
by the module that plans the sheet), the editable catalog cells, the settings, and the
Actions list. Spreadsheet programs keep a defined name on its cells when a user renames a
header, inserts a column or sorts the rows, so the names find the cells where header text
would not. Header text is the fallback for a workbook without the names.
"""
from __future__ import annotations

import zipfile
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from openpyxl.utils.cell import range_boundaries

from .columns import EditableColumns
from .errors import SheetbuilderError
from .plan_bids import EDITABLE_COLUMNS as BIDS
from .plan_budget import CAMPAIGN_EDITABLE_COLUMNS as BUDGET_CAMPAIGNS, EDITABLE_COLUMNS as BUDGET
from .plan_profit import EDITABLE_COLUMNS as PROFIT
from .plan_terms import EDITABLE_COLUMNS as TERMS

# Every table with a typed column, in the order edits are read and listed.
DECISION_TABLES: tuple[EditableColumns, ...] = (BIDS, TERMS, BUDGET, BUDGET_CAMPAIGNS)
EDITABLE_TABLES: tuple[EditableColumns, ...] = (*DECISION_TABLES, PROFIT)
ACTIONS_NAME = "sb_actions"  # the defined name over the Actions list's body


class SavedWorkbookUnreadable(SheetbuilderError):
    """The workbook is missing or is not an .xlsx file that can be read."""


class WorkbookNotFound(SavedWorkbookUnreadable):
    """The workbook to read does not exist."""


class NotAWorkbook(SavedWorkbookUnreadable):
    """The file is not an .xlsx workbook that can be read."""


def open_workbook(path: Path, data_only: bool = True):
    """The workbook at path opened read-only (never written), or WorkbookNotFound / NotAWorkbook saying why not.

    The one place a saved workbook of ours is opened: ``carry`` and ``changes`` both call it.
    """
    import openpyxl
    from openpyxl.utils.exceptions import InvalidFileException
    path = Path(path)
    if not path.is_file():
        raise WorkbookNotFound(f"the workbook {path} does not exist")
    try:
        return openpyxl.load_workbook(path, read_only=True, data_only=data_only)
    except (zipfile.BadZipFile, InvalidFileException, KeyError, OSError, ValueError) as exc:
        raise NotAWorkbook(f"{path} is not an .xlsx workbook that can be read: {exc}") from None


@dataclass(frozen=True)
class Area:
    """Where a defined name points: a sheet and 0-based, inclusive column and row bounds."""

    sheet: str
    first_col: int
    last_col: int
    first_row: int
    last_row: int


def named_area(wb: Any, name: str) -> Area | None:
    """The area a workbook-level defined name covers, or None when it is missing, broken or off-sheet."""
    try:
        if name not in wb.defined_names:
            return None
        destinations = list(wb.defined_names[name].destinations)
    except (KeyError, ValueError, TypeError, AttributeError):
        return None
    for sheet, ref in destinations:
        if sheet not in wb.sheetnames:
            continue
        try:
            min_col, min_row, max_col, max_row = range_boundaries(ref.replace("$", ""))
        except (ValueError, TypeError):
            return None
        if None in (min_col, min_row, max_col, max_row):
            return None
        return Area(sheet, min_col - 1, max_col - 1, min_row - 1, max_row - 1)
    return None


def named_columns(wb: Any, names: dict[str, str]) -> dict[str, Area] | None:
    """{key: area} for every key's defined name, when all exist as single columns over the same rows of one sheet."""
    areas = {key: named_area(wb, name) for key, name in names.items()}
    if any(a is None or a.first_col != a.last_col for a in areas.values()):
        return None
    bounds = {(a.sheet, a.first_row, a.last_row) for a in areas.values()}
    return areas if len(bounds) == 1 else None
