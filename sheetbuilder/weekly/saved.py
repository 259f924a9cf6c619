"""Reading a workbook of ours after a user saved it: one opener, and our tables found by name.

Every table that ``--previous`` (:mod:`sheetbuilder.weekly.carry`) and ``changes``
(:mod:`sheetbuilder.weekly.changes`) read back is covered by workbook-level defined names written
at build time: each typed column and its key columns (declared once, as ``EDITABLE_COLUMNS``,
by the module that plans the sheet), the editable catalog cells, the settings, and the
Actions list. Spreadsheet programs keep a defined name on its cells when a user renames a
header, inserts a column or sorts the rows, so the names find the cells where header text
would not. Header text is the fallback for a workbook without the names.
"""
from __future__ import annotations

import datetime as dt
import math
import zipfile
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import pandas as pd
from openpyxl.utils.cell import range_boundaries
from openpyxl.utils.datetime import from_excel

from sheetbuilder.reading import contract as c
from sheetbuilder.sheets.decisions import NO_SAVED_VALUE
from sheetbuilder.reading.guard import UnreadableWorkbook, guard_saved_workbook
from sheetbuilder.errors import WARNING, Problem, SheetbuilderError
from sheetbuilder.sheets.inputs import sheet_name
from sheetbuilder.sheets.settings_sheet import not_valid_text, setting_text, typed_name, typed_problem
from sheetbuilder.reading.settings import SETTINGS, Settings, coerce_setting
from sheetbuilder.sheets.history import (COLUMNS as HISTORY_COLUMNS, HEADER_ROW as HISTORY_HEADER_ROW,
                                         NAME as HISTORY_NAME, NUMBERS as HISTORY_NUMBERS, SHEET as HISTORY_SHEET)
from sheetbuilder.values import is_blank
from sheetbuilder.weekly.sheet_xml import CellReader, DamagedSheet, read_cells

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
    if not path.exists():
        raise WorkbookNotFound(f"the workbook {path} does not exist")
    if not path.is_file():
        raise NotAWorkbook(f"{path} is not a workbook file (a folder, a pipe or a device); give the .xlsx file itself")
    guard_saved_workbook(path, NotAWorkbook)  # zip, XML and link limits before openpyxl inflates anything
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
    """A saved workbook opened by :func:`open_workbook`, each sheet's cells read once, fast.

    Cells are read by a streaming XML parser (:mod:`sheetbuilder.weekly.sheet_xml`: every spelling
    ECMA-376 allows; values as openpyxl gives them in read-only, values-only mode: shared, inline
    and formula strings, numbers, booleans, error text, dates by their number format or as ISO
    text), keeping only the columns a caller asks for, so a wide sheet costs what its wanted
    columns cost in memory. A formula cell with no saved value
    reads as :data:`sheetbuilder.sheets.decisions.NO_SAVED_VALUE` when ``formulas`` is asked for.
    """

    def __init__(self, path: Path):
        self.path = Path(path)
        self.wb = open_workbook(self.path)
        self._cache: dict[tuple, list[list[Any]]] = {}

    def rows(self, sheet: str, columns: frozenset[int] | None = None, formulas: bool = False) -> list[list[Any]]:
        """The rows of sheet as lists of values (padded to one width); only columns when given; none if absent."""
        key = (sheet, columns, formulas)
        if key not in self._cache:
            self._cache[key] = self._read(sheet, columns, formulas) if sheet in self.wb.sheetnames else []
        return self._cache[key]

    def _read(self, sheet: str, columns: frozenset[int] | None, formulas: bool) -> list[list[Any]]:
        ws = self.wb[sheet]
        reader = CellReader(ws._shared_strings, self.wb._date_formats, lambda n: from_excel(n, self.wb.epoch),
                            NO_SAVED_VALUE)
        try:  # a truncated or damaged sheet is refused whole, never read in part
            with self.wb._archive.open(ws._worksheet_path) as fh:  # openpyxl's own handle on the file
                return read_cells(fh, reader, columns, formulas)
        except DamagedSheet as exc:
            raise NotAWorkbook(f"{self.path} is not a workbook that can be read: its sheet '{sheet}' is damaged "
                               f"({exc}); open it in a spreadsheet program and save it again") from None

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
        data: dict[str, list] = {"_row": _source_rows(body, at.get("source_row"))}
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
        if rule.name == "catalog":  # one row per product: a row added for a product already listed is not read
            repeated = frame["product_id"].duplicated()
            problems += [Problem(sheet, None, "product_id", f"product {pid!r} is listed more than once; the first "
                                                             "row is read, delete the others")
                         for pid in dict.fromkeys(frame.loc[repeated, "product_id"])]
            frame = frame.loc[~repeated].reset_index(drop=True)
        tables[rule.name] = frame
    missing = [sheet_name(rule.name) for rule in c.TABLES if rule.required and tables[rule.name] is None]
    if missing:  # every workbook we build holds them: the file was damaged or edited beyond reading
        names = f"{' and '.join(missing)} sheet" + ("s are" if len(missing) > 1 else " is")
        raise UnreadableWorkbook(f"{book.path}: its {names} missing or empty, so the exports it was built from cannot be read; open it in the "
                                 "spreadsheet program and save it again, or build a new one")
    return tables, problems


def _source_rows(body: list[list[Any]], at: int | None) -> list[int]:
    """Each row's source row number; a row without one (added by the build for a product the catalog lacked,
    or typed by the user below the table) numbered after every export row, in sheet order."""
    given = [r[at] if at is not None and at < len(r) else None for r in body]
    numbers = [int(v) if isinstance(v, (int, float)) and not isinstance(v, bool) and math.isfinite(v) else None
               for v in given]
    after = max([n for n in numbers if n is not None], default=1)
    out = []
    for n in numbers:
        if n is None:
            after += 1
            n = after
        out.append(n)
    return out


def _as_text(value: Any) -> str:
    """A number a spreadsheet program stored in a text column, as text (12.0 as '12')."""
    if isinstance(value, float) and value.is_integer():
        return str(int(value))
    return str(value)


def saved_settings(book: SavedBook):
    """(Settings, built_on, problems): every setting as the Settings sheet holds it (typed values included)."""
    values: dict[str, Any] = {}
    problems: list = []
    for spec in SETTINGS:
        typed = spec.live and named_area(book.wb, typed_name(spec.key)) is not None  # else an older layout
        raw = book.named_value(typed_name(spec.key) if typed else spec.key)
        if typed and (why := typed_problem(spec, raw)) is not None:
            used = book.named_value(spec.key)  # the In use cell: the as-built value the formulas used
            problems.append(Problem("Settings", None, spec.key, f"{not_valid_text(spec, raw, why)}; the workbook's "
                                                                f"formulas use the as-built value "
                                                                f"{setting_text(spec, used)}", WARNING))
            raw = used
        if raw == "" and spec.kind == "date":
            raw = None
        if spec.kind == "bool" and isinstance(raw, str):
            raw = {"yes": True, "no": False}.get(raw.strip().lower(), raw)
        if raw is None and spec.kind == "date":
            values[spec.key] = None
            continue
        if raw is None:
            continue
        value, problem = coerce_setting(spec, raw, "Settings")
        if problem is not None:
            problems.append(problem)
            continue
        values[spec.key] = value
    built = book.named_value("built_on")
    built_on = built.date() if isinstance(built, dt.datetime) else (built if isinstance(built, dt.date) else
                                                                    dt.date.today())
    return Settings().replace(**values), built_on, problems


def _history_value(key: str, v: Any) -> Any:
    """A History cell as the sheet is planned from it: numbers in From and To, ISO dates, text."""
    if is_blank(v):
        return None if key in HISTORY_NUMBERS else ""
    if key in HISTORY_NUMBERS:
        return float(v) if isinstance(v, (int, float)) and not isinstance(v, bool) else str(v)
    if isinstance(v, (dt.date, dt.datetime)):
        return (v.date() if isinstance(v, dt.datetime) else v).isoformat()
    return v if isinstance(v, str) else str(v)


def read_history(book: SavedBook) -> tuple[list[dict], list[Problem]]:
    """The History rows of an opened previous workbook (none when it has no History sheet), and problems."""
    area = named_area(book.wb, HISTORY_NAME)
    sheet = area.sheet if area else HISTORY_SHEET
    if sheet not in book.wb.sheetnames:
        return [], []
    rows = book.rows(sheet)
    first = area.first_row if area else HISTORY_HEADER_ROW + 1
    first_col = area.first_col if area else 0
    header = rows[first - 1][first_col:first_col + len(HISTORY_COLUMNS)] if first - 1 < len(rows) else []
    want = [h for _, h, _, _ in HISTORY_COLUMNS]
    if ["" if h is None else str(h).strip() for h in header] != want and area is None:
        return [], [Problem(book.path.name, first, HISTORY_SHEET,
                            f"the History sheet's header should read {', '.join(want)}; its rows could not be "
                            "carried. Copy them from the previous workbook by hand", WARNING)]
    last = area.last_row if area else len(rows) - 1
    out = []
    for r in range(first, min(last, len(rows) - 1) + 1):
        values = rows[r][first_col:first_col + len(HISTORY_COLUMNS)]
        if all(is_blank(v) for v in values):
            continue
        out.append({key: _history_value(key, v) for (key, _, _, _), v in zip(HISTORY_COLUMNS, values)})
    return out, []
