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
CARRIED_NAME = "sb_carried"  # defined names <this>_<column> over the Carried edits table (its first-typed dates)


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


class SavedBook:
    """A saved workbook opened by :func:`open_workbook`, with each sheet's rows read once."""

    def __init__(self, path: Path):
        self.path = Path(path)
        self.wb = open_workbook(self.path)
        self._rows: dict[str, list[list[Any]]] = {}

    def rows(self, sheet: str) -> list[list[Any]]:
        """Every row of sheet as a list of values (padded to one width); none when the sheet is absent."""
        if sheet not in self._rows:
            out: list[list[Any]] = []
            if sheet in self.wb.sheetnames:
                ws = self.wb[sheet]
                try:
                    ws.reset_dimensions()  # some programs store a wrong dimension; read every row
                except AttributeError:  # pragma: no cover - not a read-only sheet
                    pass
                out = [list(r) for r in ws.iter_rows(values_only=True)]
                width = max((len(r) for r in out), default=0)
                out = [r + [None] * (width - len(r)) for r in out]
            self._rows[sheet] = out
        return self._rows[sheet]

    def named_value(self, name: str) -> Any:
        """The value of the single cell a defined name points at, or None."""
        area = named_area(self.wb, name)
        if area is None:
            return None
        rows = self.rows(area.sheet)
        if area.first_row >= len(rows) or area.first_col >= len(rows[area.first_row]):
            return None
        return rows[area.first_row][area.first_col]

    def close(self) -> None:
        """Close the file."""
        self.wb.close()

    def __enter__(self) -> "SavedBook":
        return self

    def __exit__(self, *exc: Any) -> None:
        self.close()


def saved_inputs(book: SavedBook) -> tuple[dict[str, Any], list]:
    """The input tables as the workbook's in_ sheets hold them (corrections included), in export order.

    Returns:
        ({table: frame or None}, problems): a Problem for every cell of a number column
        that does not hold a number (a correction typed as text).
    """
    import math

    import pandas as pd

    from . import contract as c
    from .errors import Problem
    from .plan_inputs import sheet_name

    tables: dict[str, Any] = {}
    problems: list = []
    for rule in c.TABLES:
        sheet = sheet_name(rule.name)
        rows = book.rows(sheet)
        if sheet not in book.wb.sheetnames or not rows:
            tables[rule.name] = None
            continue
        header = ["" if v is None else str(v) for v in rows[0]]
        at = {h: i for i, h in enumerate(header) if h}
        body = [r for r in rows[1:] if any(v is not None and v != "" for v in r)]
        data: dict[str, list] = {"_row": [int(r[at["source_row"]]) for r in body]}
        for col in rule.columns:
            i = at.get(col.name)
            values = [None if i is None else r[i] for r in body]
            if col.kind in c.NUMERIC_KINDS:
                blank = 0.0 if col.kind in (c.COUNT, c.MONEY) else math.nan
                out = []
                for n, v in enumerate(values):
                    if v is None or v == "":
                        out.append(blank)
                    elif isinstance(v, (int, float)) and not isinstance(v, bool):
                        out.append(float(v))
                    else:
                        problems.append(Problem(sheet, n + 2, col.name, f"holds {v!r}; expected a number"))
                        out.append(math.nan)
                data[col.name] = out
            else:
                data[col.name] = ["" if v is None else (v if isinstance(v, str) else _as_text(v)) for v in values]
        frame = pd.DataFrame(data).sort_values("_row", kind="stable").reset_index(drop=True)
        for col in rule.columns:
            frame[col.name] = frame[col.name].astype(float if col.kind in c.NUMERIC_KINDS else object)
        tables[rule.name] = frame
    return tables, problems


def _as_text(value: Any) -> str:
    """A number a spreadsheet program stored in a text column, as text (12.0 as '12')."""
    if isinstance(value, float) and value.is_integer():
        return str(int(value))
    return str(value)


def saved_settings(book: SavedBook):
    """(Settings, built_on, problems): every setting as the Settings sheet holds it (typed values included)."""
    import datetime as dt

    from .settings import SETTINGS, Settings, _coerce

    values: dict[str, Any] = {}
    problems: list = []
    for spec in SETTINGS:
        raw = book.named_value(spec.key)
        if spec.kind == "bool" and isinstance(raw, str):
            raw = {"yes": True, "no": False}.get(raw.strip().lower(), raw)
        if raw is None and spec.kind == "date":
            values[spec.key] = None
            continue
        if raw is None:
            continue
        value, problem = _coerce(spec, raw, "Settings")
        if problem is not None:
            problems.append(problem)
            continue
        values[spec.key] = value
    built = book.named_value("built_on")
    built_on = built.date() if isinstance(built, dt.datetime) else (built if isinstance(built, dt.date) else
                                                                    dt.date.today())
    return Settings().replace(**values), built_on, problems
