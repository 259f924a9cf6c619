"""Reading a workbook of ours after a user saved it (.xlsx or .ods): one opener, and our tables found by name.

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
from operator import itemgetter
from pathlib import Path
from types import MappingProxyType
from typing import Any, Callable

import pandas as pd

from sheetbuilder.reading import contract as c
from sheetbuilder.sheets.decisions import NO_SAVED_VALUE
from sheetbuilder.reading.guard import UnreadableWorkbook, UnsafeWorkbook, guard_saved_workbook
from sheetbuilder.errors import WARNING, Problem, SheetbuilderError
from sheetbuilder.sheets.inputs import sheet_name
from sheetbuilder.sheets.settings_sheet import (DESTINATIONS_NAME, not_valid_text, setting_text, typed_name,
                                               typed_problem)
from sheetbuilder.reading.settings import SETTINGS, Settings, coerce_setting
from sheetbuilder.sheets.history import (COLUMNS as HISTORY_COLUMNS, HEADER_ROW as HISTORY_HEADER_ROW,
                                         NAME as HISTORY_NAME, NUMBERS as HISTORY_NUMBERS, SHEET as HISTORY_SHEET)
from sheetbuilder.values import is_blank
from sheetbuilder.weekly.names import Area
from sheetbuilder.weekly.ods import OdsFile, is_ods
from sheetbuilder.weekly.sheet_xml import DamagedSheet
from sheetbuilder.weekly.tabs import Tabs, find_tabs
from sheetbuilder.weekly.xlsx import XlsxFile, named_area  # noqa: F401 (named_area re-exported for openpyxl workbooks)


class SavedWorkbookUnreadable(SheetbuilderError):
    """The workbook is missing or is not an .xlsx or .ods file that can be read."""


class WorkbookNotFound(SavedWorkbookUnreadable):
    """The workbook to read does not exist."""


class NotAWorkbook(SavedWorkbookUnreadable):
    """The file is not an .xlsx or .ods workbook that can be read."""


SAVE_AS = "save it as .xlsx or .ods from your spreadsheet program"


def _format(path: Path) -> str | None:
    """'ods' or 'xlsx' by the file's content (an OpenDocument mimetype part, a workbook part), else None."""
    try:
        with zipfile.ZipFile(path) as archive:
            if is_ods(archive):
                return "ods"
            return "xlsx" if "xl/workbook.xml" in archive.namelist() else None
    except (zipfile.BadZipFile, OSError, ValueError, EOFError, KeyError, NotImplementedError, RuntimeError):
        return None


def open_workbook(path: Path) -> XlsxFile | OdsFile:
    """The workbook at path opened read-only (never written), or WorkbookNotFound / NotAWorkbook saying why not.

    The one place a saved workbook of ours is opened. Its format is found by its content, not its
    name: an OpenDocument spreadsheet (.ods) or an .xlsx; each opens as an object offering
    ``sheetnames``, ``area(name)``, ``has_name(name)``, ``read(sheet, columns, formulas,
    no_saved_value)`` and ``close()`` (:class:`sheetbuilder.weekly.xlsx.XlsxFile`,
    :class:`sheetbuilder.weekly.ods.OdsFile`). Both pass the same guard first.
    """
    path = Path(path)
    if not path.exists():
        raise WorkbookNotFound(f"the workbook {path} does not exist")
    if not path.is_file():
        raise NotAWorkbook(f"{path} is not a workbook file (a folder, a pipe or a device); give the .xlsx or .ods "
                           "file itself")
    kind = _format(path)
    if kind is None:
        raise NotAWorkbook(f"{path} cannot be read: it is not an .xlsx or .ods workbook; {SAVE_AS}")
    guard_saved_workbook(path, NotAWorkbook)  # zip, XML and link limits before anything is inflated
    try:
        return OdsFile(path) if kind == "ods" else XlsxFile(path)
    except UnsafeWorkbook as exc:
        raise NotAWorkbook(f"{path}: {exc}") from None
    except DamagedSheet as exc:
        raise NotAWorkbook(f"{path} is not a workbook that can be read: {exc}; open it in your spreadsheet program "
                           f"and {SAVE_AS}") from None
    except (zipfile.BadZipFile, KeyError, OSError, ValueError, EOFError, TypeError) as exc:
        raise NotAWorkbook(f"{path} cannot be read as a workbook; open it in your spreadsheet program and "
                           f"{SAVE_AS}") from exc


def named_columns(book: "SavedBook", names: dict[str, str]) -> dict[str, Area] | None:
    """{key: area} for every key's defined name, when all exist as single columns over the same rows of one sheet."""
    areas = {key: book.area(name) for key, name in names.items()}
    if any(a is None or a.first_col != a.last_col for a in areas.values()):
        return None
    bounds = {(a.sheet, a.first_row, a.last_row) for a in areas.values()}
    return areas if len(bounds) == 1 else None


class SavedBook:
    """A saved workbook opened by :func:`open_workbook` (.xlsx or .ods), each sheet's cells read once, fast.

    Cells are read by a streaming XML parser (:mod:`sheetbuilder.weekly.sheet_xml` for .xlsx: every
    spelling ECMA-376 allows; :mod:`sheetbuilder.weekly.ods` for .ods; values as openpyxl gives them
    in read-only, values-only mode: text, numbers, booleans, error text, dates as datetimes),
    keeping only the columns a caller asks for, so a wide sheet costs what its wanted columns cost
    in memory. A formula cell with no saved value reads as
    :data:`sheetbuilder.sheets.decisions.NO_SAVED_VALUE` when ``formulas`` is asked for.
    The first read of a sheet named in ``streamed_again`` (as built; an .xlsx) by the expat reader also keeps
    its rows as a stream hands them over, and a later :meth:`stream` of it replays them instead of parsing the
    part again (a part the regular-expression reader reads is read again, not checked again: it costs less).
    """

    def __init__(self, path: Path):
        self.path = Path(path)
        self.file = open_workbook(self.path)
        self.sheetnames: list[str] = list(self.file.sheetnames)
        self._cache: dict[tuple, list[list[Any]]] = {}
        self._tabs: Tabs | None = None
        self.streamed_again: set[str] = set()  # sheets (as built) whose first read keeps its rows for a later stream
        self._streamed: dict[str, Any] = {}  # {sheet: its rows kept by its first read (sheet_xml.KeptRows)}

    def area(self, name: str) -> Area | None:
        """The area a workbook-level defined name covers, or None when it is missing, broken or off-sheet."""
        return self.file.area(name)

    def has_name(self, name: str) -> bool:
        """Whether the workbook defines name, even if it no longer points at cells."""
        return self.file.has_name(name)

    def rows(self, sheet: str, columns: frozenset[int] | None = None, formulas: bool = False) -> list[list[Any]]:
        """The rows of sheet as lists of values (padded to one width); only columns when given; none if absent."""
        key = (sheet, columns, formulas)
        if key not in self._cache:
            self._cache[key] = self._read(sheet, columns, formulas) if sheet in self.sheetnames else []
        return self._cache[key]

    def stream(self, sheet: str, on_row: Callable[[int, dict[int, tuple[Any, bool]]], bool | None],
               columns: set[int] | None = None) -> None:
        """Hand each row of sheet to on_row as it is read, holding one row at a time (see
        :func:`sheetbuilder.weekly.sheet_xml.stream_cells`: (0-based row, {column: (value, holds a formula)}),
        only columns when given; on_row returns True to stop). Nothing when the sheet is absent."""
        if sheet in self._streamed:  # kept by the sheet's first read: not read again
            self._streamed[sheet].stream(on_row, columns)
        elif sheet in self.sheetnames:
            try:  # a damaged sheet is refused whole, as a read refuses it
                self.file.stream(sheet, on_row, columns, NO_SAVED_VALUE)
            except DamagedSheet as exc:
                raise NotAWorkbook(f"{self.path} is not a workbook that can be read: its sheet '{sheet}' is damaged "
                                   f"({exc}); open it in a spreadsheet program and save it again") from None

    def head(self, sheet: str, n: int) -> list[list[Any]]:
        """The first n rows of sheet (values, padded to one width), reading no further."""
        if (sheet, None, False) in self._cache:
            return self._cache[(sheet, None, False)][:n]
        found: dict[int, dict[int, Any]] = {}

        def keep(row: int, cells: dict[int, tuple[Any, bool]]) -> bool:
            if row < n:
                found[row] = {c: v for c, (v, _) in cells.items()}
            return row >= n - 1
        self.stream(sheet, keep)
        width = 1 + max((c for cells in found.values() for c in cells), default=-1)
        return [[found.get(r, {}).get(c) for c in range(width)] for r in range(max(found, default=-1) + 1)]

    def sheet(self, built: str) -> str | None:
        """The sheet that holds what the build wrote on the sheet called built, whatever it is called now
        (:mod:`sheetbuilder.weekly.tabs`: by our defined names, else its own name, else its header); None if gone."""
        return self.tabs.found.get(built)

    def _name_sheet(self, name: str) -> str | None:
        """The sheet a workbook-level defined name points at (any area), or None."""
        area = self.file.area(name)
        return area.sheet if area else None

    @property
    def tabs(self) -> Tabs:
        """Where each of our sheets is now, and the copies of our typed tables (found once)."""
        if self._tabs is None:
            self._tabs = find_tabs(list(self.sheetnames), self._name_sheet, self.head)
        return self._tabs

    def _read(self, sheet: str, columns: frozenset[int] | None, formulas: bool) -> list[list[Any]]:
        try:  # a truncated or damaged sheet is refused whole, never read in part
            if sheet not in self._streamed and hasattr(self.file, "read_keeping_rows") and sheet in {
                    self.sheet(s) for s in self.streamed_again}:
                rows, kept = self.file.read_keeping_rows(sheet, columns, formulas, NO_SAVED_VALUE)
                if kept is not None:  # None: the part is streamed again faster than its rows are kept
                    self._streamed[sheet] = kept
                return rows
            return self.file.read(sheet, columns, formulas, NO_SAVED_VALUE)
        except DamagedSheet as exc:
            raise NotAWorkbook(f"{self.path} is not a workbook that can be read: its sheet '{sheet}' is damaged "
                               f"({exc}); open it in a spreadsheet program and save it again") from None
        except UnsafeWorkbook as exc:
            raise NotAWorkbook(f"{self.path}: {exc}") from None

    def named_value(self, name: str) -> Any:
        """The value of the single cell a defined name points at, or None."""
        area = self.area(name)
        if area is None:
            return None
        rows = self.rows(area.sheet)
        if area.first_row >= len(rows) or area.first_col >= len(rows[area.first_row]):
            return None
        return rows[area.first_row][area.first_col]

    def close(self) -> None:
        """Close the file."""
        self.file.close()

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
        sheet = book.sheet(sheet_name(rule.name))  # its tab may have been renamed
        rows = book.rows(sheet) if sheet is not None else []
        if not rows:
            tables[rule.name] = None
            continue
        header = ["" if v is None else str(v) for v in rows[0]]
        at = {h: i for i, h in enumerate(header) if h}
        body = [r for r in rows[1:] if r.count(None) + r.count("") < len(r)]  # a row of blank cells is not read
        data: dict[str, list] = {"_row": _source_rows(body, at.get("source_row"))}
        for col in rule.columns:
            i = at.get(col.name)
            values = [None] * len(body) if i is None else list(map(itemgetter(i), body))
            kinds = set(map(type, values))  # a column of numbers, or of texts, is read at once
            if col.kind in c.NUMERIC_KINDS:
                blank = 0.0 if col.kind in (c.COUNT, c.MONEY) else math.nan
                if kinds <= _NUMBERS:
                    data[col.name] = [blank if v is None else float(v) for v in values]
                    continue
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
            elif kinds <= _TEXTS:
                data[col.name] = ["" if v is None else v for v in values]
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


_NUMBERS = frozenset({int, float, type(None)})  # the cell types a number column reads without a word (a bool does not)
_TEXTS = frozenset({str, type(None)})


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
        typed = spec.live and book.area(typed_name(spec.key)) is not None  # else an older layout
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
    values["destinations"] = saved_destinations(book)
    built = book.named_value("built_on")
    built_on = built.date() if isinstance(built, dt.datetime) else (built if isinstance(built, dt.date) else
                                                                    dt.date.today())
    return Settings().replace(**values), built_on, problems


def saved_destinations(book: SavedBook) -> MappingProxyType:
    """{product: (campaign, ad group)}: the [destinations] of settings.toml the build used, as the Settings sheet
    records them (none in a workbook built without them, or before they were recorded)."""
    area = book.area(DESTINATIONS_NAME)
    out: dict[str, tuple[str, str]] = {}
    if area is not None:
        for row in book.rows(area.sheet)[area.first_row:area.last_row + 1]:
            product, campaign, group = (row[area.first_col:area.last_col + 1] + [None] * 3)[:3]
            if not is_blank(product):
                out[_as_text(product)] = ("" if is_blank(campaign) else _as_text(campaign),
                                          "" if is_blank(group) else _as_text(group))
    return MappingProxyType(out)


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
    area = book.area(HISTORY_NAME)
    sheet = area.sheet if area else book.sheet(HISTORY_SHEET)
    if sheet is None:
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
