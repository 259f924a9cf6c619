"""Carrying a user's edits from last week's workbook into this week's.

Two steps, kept apart so that the second is pure:

1. :func:`read_edits` opens the OLD workbook read-only (it is never written) and
   collects every cell a user types: the live settings, the catalog's input cells on
   ``in_catalog``, Profit's "Your target ACoS", and the typed column of every table in
   :data:`sheetbuilder.sheets.typed.DECISION_TABLES`.
2. :func:`apply_edits` matches them against the NEW inputs: an edit whose row still
   exists is carried, one whose product, target or term is gone is *unmatched*, and an
   edit that is not a valid value (text in a cost, a setting out of bounds) is
   unmatched too, with the reason.

Every column is found by its workbook-level defined name (see :mod:`sheetbuilder.weekly.saved`),
so a renamed header, an inserted column or sorted rows still read. Without the names (an
older workbook), header rows are found by scanning the first rows of each sheet for the
headers the planners declare. A typed column found by neither is reported, never skipped.
Adding a sheet with a typed column is one ``EDITABLE_COLUMNS`` declaration in its planner
and one entry in :data:`sheetbuilder.sheets.typed.DECISION_TABLES`.
"""
from __future__ import annotations

import math
import datetime as dt
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Any, Iterable, Mapping, Sequence

import pandas as pd

from sheetbuilder.sheets.inputs import CATALOG_NAME, EDITABLE, EXPORTED, with_catalog_rows
from sheetbuilder.sheets.settings_sheet import (AS_BUILT, SHEET as SETTINGS_SHEET, not_valid_text, typed_name,
                                                typed_problem)
from sheetbuilder.sheets.decisions import NO_SAVED_VALUE, NOTES_HEADER, OWN_COLUMNS_CAP
from sheetbuilder.sheets.typed import (CARRIED_NAME, DECISION_SHEETS, EDITABLE_TABLES, PROFIT_TARGET, SCAN_ROWS,
                                       CarryRecord, CarryResult, EditSheet, OwnColumn, edit_sheet_of, key_text)
from sheetbuilder.errors import WARNING, Problem
from sheetbuilder.values import is_blank, is_number, same_value, shown
from sheetbuilder.weekly.saved import SavedBook, SavedWorkbookUnreadable, named_columns
from sheetbuilder.reading.settings import SETTINGS, Settings, coerce_setting

CATALOG_SHEET = "in_catalog"
CATALOG_COLUMNS = tuple(sorted(EDITABLE["catalog"]))
MONEY_COLUMNS = ("price", "fees_per_unit")  # blank money is read as 0, as the readers read it; a blank unit
# cost is missing, never 0 (the readers leave the product's margin blank and say so)
PERCENT_COLUMNS = ("target_acos", "margin")  # blank means "not given"
TARGET_BOUNDS = (0.0, 5.0)  # as default_target_acos
PreviousWorkbookUnreadable = SavedWorkbookUnreadable  # the previous workbook is missing or unreadable


@dataclass(frozen=True)
class Copied:
    """A copy of one of our sheets (a spreadsheet program's Copy sheet) whose typed cells differ from the original's.

    Attributes:
        built: the sheet as built ('Bids'); original: what its tab is called now; copy: the copy's tab.
        what: what was typed ('Decisions'); differ: {key: value on the copy} of every typed cell that differs
            (None where the copy is blank and the original is not).
    """

    built: str
    original: str
    copy: str
    what: str
    differ: dict

    def message(self) -> str:
        """What the reports say: the copy was not read, and where to type."""
        (key, value), n = next(iter(self.differ.items())), len(self.differ)
        return (f"{self.what} on a copy of {self.original} ('{self.copy}') were not read; type them on {self.original} "
                f"({n} cell{'' if n == 1 else 's'} differ{'s' if n == 1 else ''} from {self.original}, e.g. "
                f"{_key_text(_parts(key))}: {'blank' if value is None else shown(value)})")


def _parts(key: Any) -> tuple:
    return key if isinstance(key, tuple) else (key,)


def copy_problems(edits: Edits) -> list[Problem]:
    """One warning per copy of our sheets whose typed cells differ from the original's (see :class:`Copied`)."""
    return [Problem(c.copy, None, None, c.message(), WARNING) for c in edits.copied]


@dataclass(frozen=True)
class Edits:
    """What a user typed in a workbook, as plain values keyed as the sheets show them.

    Attributes:
        source: the workbook read.
        settings: {setting key: cell value} for every live setting found by its defined name.
        catalog: {(product_id, column): cell value} for every in_catalog input cell (blank as None).
        catalog_names: {product_id: product name} of every in_catalog row (a row the user added keeps its name).
        targets: {product_id: value} for every non-blank Profit "Your target ACoS".
        decisions: {label: {raw key tuple: value}} for every non-blank typed cell, per
            :data:`DECISION_SHEETS` entry.
        lost: (label, why) of every typed column the workbook has the sheet of but that could
            not be found (neither its defined name nor its header).
        first_typed: {(sheet, key, column): date} from the workbook's Carried edits sheet.
        built_on: the workbook's build date (the week an edit not yet on Carried edits was typed).
        notes: {label: {raw key tuple: value}} of every non-blank Notes cell.
        own: {label: [OwnColumn]} the columns a user added right of a table's Notes (values by raw key).
        own_refused: CarryRecords of own columns that cannot be carried (no header, beyond the cap).
        copied: the copies of our sheets whose typed cells differ from the original's (never read as edits).
        catalog_names: {product_id: product name} of the in_catalog rows no export filled (added below the
            table by the user, or by the build for the user to fill): kept next week even if no export names them.
    """

    source: str
    settings: dict[str, Any] = field(default_factory=dict)
    catalog: dict[tuple[str, str], Any] = field(default_factory=dict)
    targets: dict[str, Any] = field(default_factory=dict)
    decisions: dict[str, dict[tuple, Any]] = field(default_factory=dict)
    lost: list[tuple[str, str]] = field(default_factory=list)
    first_typed: dict[tuple[str, str, str], Any] = field(default_factory=dict)
    built_on: Any = None
    notes: dict[str, dict[tuple, Any]] = field(default_factory=dict)
    own: dict[str, list[OwnColumn]] = field(default_factory=dict)
    own_refused: list[CarryRecord] = field(default_factory=list)
    copied: list[Copied] = field(default_factory=list)
    catalog_names: dict[str, Any] = field(default_factory=dict)


# ---------------------------------------------------------------------------------------------- reading

def _header_index(rows: list[list[Any]], wanted: Sequence[str], scan: int) -> int | None:
    """The 0-based index of the first row (of the first scan) holding every wanted header."""
    for i, row in enumerate(rows[:scan]):
        texts = {key_text(v) for v in row}
        if all(w in texts for w in wanted):
            return i
    return None


def _value_column(header: list[Any], key_cols: list[int], value_header: str) -> int:
    """The value column: the first value_header right of the last key column, else the first one."""
    texts = [key_text(v) for v in header]
    right = [i for i, t in enumerate(texts) if t == value_header and i > max(key_cols)]
    return right[0] if right else texts.index(value_header)


def _cell(row: list[Any], col: int) -> Any:
    return row[col] if col < len(row) else None


def _located(book: SavedBook, names: dict[str, str], headers: dict[str, str], sheet: str, scan: int,
             value_key: str, also: frozenset = frozenset()) -> tuple[list[list[Any]], dict[str, int]] | None:
    """(body rows, {key: column}) of a table: by its defined names, else by its header row; None when neither.

    also: more columns to read in the same pass (the Notes columns, read again from the cache by notes_in)."""
    areas = named_columns(book, names)
    if areas is not None:  # only these columns are read; a formula with no saved value is told from a blank
        area = next(iter(areas.values()))
        cols = {k: a.first_col for k, a in areas.items()}
        return book.rows(area.sheet, frozenset(cols.values()) | also, True)[area.first_row:area.last_row + 1], cols
    rows = book.rows(sheet)
    at = _header_index(rows, list(headers.values()), scan)
    if at is None:
        return None
    texts = [key_text(v) for v in rows[at]]
    cols = {k: texts.index(h) for k, h in headers.items() if k != value_key}
    if value_key in headers:
        cols[value_key] = _value_column(rows[at], list(cols.values()), headers[value_key])
    body = []
    for row in rows[at + 1:]:  # a block ends at its first row with blank keys
        if all(is_blank(_cell(row, c)) for k, c in cols.items() if k != value_key):
            break
        body.append(row)
    return body, cols


def _read_block(book: SavedBook, entry: EditSheet, sheet: str, by_name: bool = True,
                notes: bool = True) -> dict[tuple, Any] | None:
    """{raw key tuple: value} of every non-blank typed cell of a table (on sheet when not found by its defined
    names, or not by_name: a copy); None when the table was not found. notes: read its Notes and own columns in
    the same pass (for notes_in)."""
    decl = entry.decl
    wanted = (*decl.keys, decl.value)
    names = {k: decl.name_of(k) for k in wanted} if by_name else {}
    headers = {k: decl.headers[k] for k in wanted}
    found = _located(book, names, headers, sheet, entry.scan_rows, decl.value,
                     _notes_columns(book, decl) if by_name and notes else frozenset())
    if found is None:
        return None
    body, cols = found
    out: dict[tuple, Any] = {}
    for row in body:
        parts = tuple(_cell(row, cols[k]) for k in decl.keys)
        value = _cell(row, cols[decl.value])
        if all(is_blank(p) for p in parts) or is_blank(value):
            continue
        out[parts] = value
    return out


def _as_built_column(rows: list[list[Any]]) -> int | None:
    """The 0-based column of the Settings header reading As built (None in a workbook without one)."""
    for r in rows[:SCAN_ROWS]:
        if AS_BUILT in r:
            return r.index(AS_BUILT)
    return None


def _settings_cells(book: SavedBook) -> dict[str, Any]:
    """{key: value} of every live setting typed apart from its As built value, read from its typed Value
    cell (its defined name; an older workbook's formulas read that cell under the setting's own name)."""
    out: dict[str, Any] = {}
    for spec in SETTINGS:
        area = (book.area(typed_name(spec.key)) or book.area(spec.key)) if spec.live else None
        if area is None:
            continue
        r, c = area.first_row, area.first_col
        rows = book.rows(area.sheet)
        value = rows[r][c] if r < len(rows) and c < len(rows[r]) else None
        at = _as_built_column(rows)
        built = rows[r][at] if at is not None and r < len(rows) and at < len(rows[r]) else None
        if at is not None and same_value(value, built):
            continue  # not typed by the user: this week's settings.toml decides
        out[spec.key] = value
    return out


def _catalog_cells(book: SavedBook, sheet: str, by_name: bool = True, names: dict | None = None
                   ) -> dict[tuple[str, str], Any]:
    """{(product_id, column): value} of every in_catalog input cell that differs from its exported_ twin
    (found by its defined names, else on sheet by its header; only by header when not by_name: a copy);
    names, when given, gets {product_id: product name} of every row no export filled (its exported_ twins
    all blank: a row the user added below the table, or one the build added for the user to fill)."""
    wanted = ("product_id", *CATALOG_COLUMNS, *(EXPORTED + c for c in CATALOG_COLUMNS))
    areas = named_columns(book, {c: f"{CATALOG_NAME}_{c}" for c in wanted}) if by_name else None
    if areas is not None:
        area = areas["product_id"]
        cols = {k: a.first_col for k, a in areas.items()}
        header = [key_text(v) for v in (book.head(area.sheet, area.first_row)[-1:] or [[]])[0]]
        if "product_name" in header:  # no defined name: found by its header, beside the named columns
            cols["product_name"] = header.index("product_name")
        body = book.rows(area.sheet, frozenset(cols.values()))[area.first_row:]  # and rows the user added below
    else:  # no names: by header text; an older layout without exported_ columns compares with the export
        rows = book.rows(sheet)
        at = _header_index(rows, ["product_id"], SCAN_ROWS)
        if at is None:
            return {}
        texts = [key_text(v) for v in rows[at]]
        cols = {c: texts.index(c) for c in (*wanted, "product_name") if c in texts}
        body = rows[at + 1:]
    out: dict[tuple[str, str], Any] = {}
    for row in body:
        pid = _cell(row, cols["product_id"])
        if is_blank(pid):
            if areas is None:
                break
            continue
        twins = [cols[EXPORTED + c] for c in CATALOG_COLUMNS if EXPORTED + c in cols]
        if names is not None and twins and all(is_blank(_cell(row, t)) for t in twins):  # not from an export
            names[key_text(pid)] = _cell(row, cols["product_name"]) if "product_name" in cols else None
        for column in CATALOG_COLUMNS:
            if column not in cols:
                continue
            value = _cell(row, cols[column])
            twin = cols.get(EXPORTED + column)
            if twin is not None and same_value(value, _cell(row, twin)):
                continue  # as exported: this week's export decides
            out[(key_text(pid), column)] = None if is_blank(value) else value
    return out


def read_edits(path: Path) -> Edits:
    """Everything a user types in the workbook at path; the file is only read.

    Raises:
        PreviousWorkbookUnreadable: path is missing or not a readable .xlsx or .ods file.
    """
    with SavedBook(path) as book:
        return edits_in(book)


def _was_built(book: SavedBook, entry: EditSheet, sheet: str) -> bool:
    """Whether a typed column that could not be found was in the workbook (its name exists but is broken,
    or a header row of sheet holds its key headers): a table the build did not write (no rows) is not lost."""
    if book.has_name(entry.decl.name_of(entry.decl.value)):
        return True
    if sheet not in book.sheetnames:
        return False
    return _header_index(book.rows(sheet), [k.header for k in entry.keys], entry.scan_rows) is not None


def edits_in(book: SavedBook, notes: bool = True) -> Edits:
    """Everything a user typed in an opened saved workbook (see :func:`read_edits`); notes: False leaves the Notes
    and own columns unread (``changes`` plans its change list from the typed values alone)."""
    settings = _settings_cells(book)
    catalog_sheet = book.sheet(CATALOG_SHEET) or CATALOG_SHEET
    catalog_names: dict[str, Any] = {}
    catalog = _catalog_cells(book, catalog_sheet, names=catalog_names)
    copied = _copied(book, CATALOG_SHEET, "costs and prices", catalog,
                     lambda copy: _catalog_cells(book, copy, by_name=False))
    lost: list[tuple[str, str]] = []
    decisions: dict[str, dict] = {}
    targets: dict[str, Any] = {}
    for entry in (*DECISION_SHEETS, PROFIT_TARGET):
        sheet = book.sheet(entry.sheet) or entry.sheet  # its tab may have been renamed
        found = _read_block(book, entry, sheet, notes=notes)
        copied += _copied(book, entry.sheet, "Decisions" if entry.value_header == "Decision" else
                          f"{entry.value_header!r} values", found or {},
                          lambda copy, entry=entry: _read_block(book, entry, copy, by_name=False) or {})
        if found is None:
            if _was_built(book, entry, sheet):
                lost.append((entry.label, f"its {entry.value_header!r} column was not found: the workbook "
                                          f"has no defined name {entry.decl.name_of(entry.decl.value)} and no "
                                          f"header row reading {', '.join(entry.decl.headers.values())}"))
            continue
        if entry is PROFIT_TARGET:
            targets = {key_text(k[0]): v for k, v in found.items()}
            targets.update({key_text(k[0]): v for k, v in typed_over_figure(book, entry, sheet).items()})
        elif found:
            decisions.setdefault(entry.label, {}).update(found)
    built = book.named_value("built_on")
    kept, own, own_refused = notes_in(book) if notes else ({}, {}, [])
    return Edits(str(book.path), settings, catalog, targets, decisions, lost, _first_typed(book),
                 built.date() if isinstance(built, dt.datetime) else built, kept, own, own_refused, copied,
                 catalog_names=catalog_names)


def _copied(book: SavedBook, built: str, what: str, original: Mapping, read: Callable[[str], Mapping]) -> list[Copied]:
    """A Copied record per copy of the sheet built as built whose typed cells differ from the original's."""
    out = []
    for copy in book.tabs.copies.get(built, []):
        typed = read(copy)
        differ = {k: v for k, v in typed.items() if k not in original or not same_value(original[k], v)}
        differ.update({k: None for k in original if k not in typed})  # cleared on the copy
        if differ:
            out.append(Copied(built, book.sheet(built) or built, copy, what, differ))
    return out


def typed_over_figure(book: SavedBook, entry: EditSheet, sheet: str) -> dict[tuple, Any]:
    """{raw key tuple: value} of every value typed over the formula column showing the same figure as the
    entry's typed column (Profit's "Target ACoS" beside "Your target ACoS"): the sheet computes with it."""
    decl = entry.decl
    if not decl.same_figure:
        return {}
    areas = named_columns(book, {k: decl.name_of(k) for k in decl.keys})
    if areas is not None:
        area = next(iter(areas.values()))
        sheet, header_at, last = area.sheet, area.first_row - 1, area.last_row
        keys = {k: a.first_col for k, a in areas.items()}
        header = book.head(sheet, header_at + 1)[header_at] if header_at >= 0 else []
    else:
        rows = book.head(sheet, entry.scan_rows)
        header_at = _header_index(rows, [decl.headers[k] for k in decl.keys], entry.scan_rows)
        if header_at is None:
            return {}
        header, last = rows[header_at], None
        keys = {k: [key_text(v) for v in header].index(decl.headers[k]) for k in decl.keys}
    texts = [key_text(v) for v in header]
    if decl.same_figure_header not in texts:
        return {}
    col = texts.index(decl.same_figure_header)
    out: dict[tuple, Any] = {}

    def keep(row: int, cells: dict[int, tuple[Any, bool]]) -> bool:
        value, formula = cells.get(col, (None, False))
        parts = tuple(cells.get(keys[k], (None, False))[0] for k in decl.keys)
        if row > header_at and not formula and not is_blank(value) and not all(is_blank(p) for p in parts):
            out[parts] = value
        return last is not None and row >= last
    book.stream(sheet, keep, {col, *keys.values()})
    return out


def _first_typed(book: SavedBook) -> dict[tuple[str, str, str], Any]:
    """{(sheet, key, column): date first typed} from the Carried edits sheet, found by its defined names."""
    keys = ("sheet", "key", "column", "first_typed")
    areas = named_columns(book, {k: f"{CARRIED_NAME}_{k}" for k in keys})
    if areas is None:
        return {}
    area = areas["sheet"]
    out = {}
    for row in book.rows(area.sheet)[area.first_row:area.last_row + 1]:
        sheet, key, column, first = (_cell(row, areas[k].first_col) for k in keys)
        if not is_blank(sheet):
            out[(key_text(sheet), key_text(key), key_text(column))] = first.date() if isinstance(first, dt.datetime) else first
    return out


# --------------------------------------------------------------------------------------------- applying

def _tables(inputs_tables: Any) -> Mapping[str, pd.DataFrame | None]:
    """inputs.tables, or an Inputs object."""
    return getattr(inputs_tables, "tables", inputs_tables)


def _existing(entry: EditSheet, tables: Mapping[str, pd.DataFrame | None], fold: bool) -> set[tuple] | None:
    """The compared keys that exist in the new inputs, or None when none of the entry's tables was given."""
    found: set[tuple] | None = None
    for name in entry.tables:
        frame = tables.get(name)
        if frame is None:
            continue
        found = found or set()
        columns = [k.column for k in entry.keys]
        if not all(c in frame.columns for c in columns):
            continue
        found.update(entry.export_key(parts, fold) for parts in frame[columns].itertuples(index=False, name=None))
    return found


def _key_text(parts: Iterable[Any]) -> str:
    return " / ".join(key_text(p) for p in parts)


def _carry_settings(edits: Edits, settings: Settings, carried: list, unmatched: list) -> tuple[Settings, dict]:
    values: dict[str, Any] = {}
    for spec in SETTINGS:
        if not spec.live or spec.key not in edits.settings:
            continue
        raw = edits.settings[spec.key]
        why = typed_problem(spec, raw)  # the Settings sheet's own rule: its formulas used the as-built value
        if why is not None:
            unmatched.append(CarryRecord(SETTINGS_SHEET, spec.key, "Value", raw,
                                         f"{not_valid_text(spec, raw, why)}; the as-built value was kept"))
            continue
        if spec.kind == "date" and is_blank(raw):
            value = None
        else:
            value, problem = coerce_setting(spec, raw, SETTINGS_SHEET)
            if problem:
                unmatched.append(CarryRecord(SETTINGS_SHEET, spec.key, "Value", raw, problem.message))
                continue
        if not same_value(value, settings.value(spec.key)):
            values[spec.key] = value
    for low, high in (("thin_margin", "strong_margin"), ("bid_floor", "bid_ceiling")):
        if low in values or high in values:
            lo, hi = values.get(low, settings.value(low)), values.get(high, settings.value(high))
            if lo > hi:
                for key in (low, high):
                    if key in values:
                        unmatched.append(CarryRecord(SETTINGS_SHEET, key, "Value", values.pop(key),
                                                     f"would put {low} ({lo:g}) above {high} ({hi:g})"))
    changed = {k: (settings.value(k), v) for k, v in values.items()}
    for key, (old, new) in changed.items():
        carried.append(CarryRecord(SETTINGS_SHEET, key, "Value", new,
                                   f"replaces {shown(old)} from settings.toml or the default", old))
    return settings.replace(**values), changed


def _carry_catalog(edits: Edits, tables, carried: list, unmatched: list) -> tuple[dict, dict]:
    """({(product_id, column): value} carried onto this week's catalog rows, {product_id: name} of the rows
    kept on in_catalog although this week's catalog lacks them).

    A row no export filled (edits.catalog_names: added below the table by the user, or by the build for
    the user to fill) whose product this week's catalog (the export, plus the rows the build adds for
    products the exports name) does not hold keeps its typed cells and name on in_catalog as a row of
    its own, listed on Carried edits, so a cost typed for a product that sells later is never lost; a
    row whose typed cells are all blank is not kept. A product the catalog export held last week and
    no longer does is listed on Unmatched edits with its cells (the product has left the catalog).
    """
    frame = tables.get("catalog")
    if frame is None:
        frame = pd.DataFrame(columns=["product_id"])
    by_id = {key_text(p): i for i, p in enumerate(frame["product_id"])}
    out: dict[tuple[str, str], Any] = {}
    kept: dict[str, dict[str, Any]] = {}
    gone: dict[str, dict[str, Any]] = {}
    for (pid, column), value in edits.catalog.items():
        if pid not in by_id:
            if not is_blank(value):
                (kept.setdefault(pid, {}) if pid in edits.catalog_names else gone.setdefault(pid, {}))[column] = value
            continue
        new = frame[column].iloc[by_id[pid]] if column in frame.columns else None
        if is_blank(value) and column in MONEY_COLUMNS:
            value = 0.0
        if same_value(value, new):
            continue
        if _catalog_refused(pid, column, value, unmatched):
            continue
        value = None if is_blank(value) else float(value)
        out[(pid, column)] = value
        carried.append(CarryRecord(CATALOG_SHEET, pid, column, value,
                                   f"differs from this export's {shown(new)}", exported=new))
    rows: dict[str, Any] = {}
    if tables.get("catalog") is None:  # no catalog this week: nothing to keep the rows on
        gone.update(kept)
        kept = {}
    for pid, cells in gone.items():  # one record per product: the old cells cannot tell typed from exported
        unmatched.append(CarryRecord(CATALOG_SHEET, pid, "catalog inputs", "; ".join(
            f"{c} {shown(v)}" for c, v in cells.items()), "the product is no longer in the catalog"))
    for pid, cells in kept.items():
        good = {c: float(v) for c, v in cells.items() if not _catalog_refused(pid, c, v, unmatched)}
        if not good:
            continue
        rows[pid] = edits.catalog_names.get(pid, "")
        for column, value in good.items():
            out[(pid, column)] = value
            carried.append(CarryRecord(CATALOG_SHEET, pid, column, value,
                                       "a row you added on in_catalog (this week's catalog lacks the product): "
                                       "kept as its own row"))
    return out, rows


def _catalog_refused(pid: str, column: str, value: Any, unmatched: list) -> bool:
    """Whether a typed catalog value cannot be carried (listed on unmatched with why)."""
    if not is_blank(value) and not is_number(value):
        unmatched.append(CarryRecord(CATALOG_SHEET, pid, column, value, "not a number"))
        return True
    if is_number(value) and value < 0 and column != "margin":
        unmatched.append(CarryRecord(CATALOG_SHEET, pid, column, value, "negative; only a margin may be"))
        return True
    return False


def _carry_targets(edits: Edits, tables, fold: bool, carried: list, unmatched: list) -> dict:
    existing = _existing(PROFIT_TARGET, tables, fold) or set()
    out: dict[str, float] = {}
    low, high = TARGET_BOUNDS
    for pid, value in edits.targets.items():
        column = PROFIT_TARGET.value_header
        if (pid,) not in existing:
            unmatched.append(CarryRecord(PROFIT_TARGET.sheet, pid, column, value, "the product is no longer in the exports"))
        elif not is_number(value) or not low <= value <= high:
            unmatched.append(CarryRecord(PROFIT_TARGET.sheet, pid, column, value,
                                         f"expected a target ACoS from {low:.0%} to {high:.0%}"))
        else:
            out[pid] = float(value)
            carried.append(CarryRecord(PROFIT_TARGET.sheet, pid, column, float(value), "typed last time",
                                       compared=(pid,)))
    return out


def _current_values(entry: EditSheet, tables, fold: bool) -> dict[tuple, float]:
    """{compared key: today's value a typed number replaces (summed over the key's rows)} from the new inputs."""
    column = entry.decl.input_current
    columns = [k.column for k in entry.keys]
    for name in entry.tables:
        frame = tables.get(name)
        if not column or frame is None or column not in frame.columns or not all(c in frame.columns for c in columns):
            continue
        out: dict[tuple, float] = {}
        for *parts, value in frame[[*columns, column]].itertuples(index=False, name=None):
            key = entry.export_key(parts, fold)
            out[key] = out.get(key, 0.0) + (0.0 if is_blank(value) else float(value))
        return out
    return {}


def _carry_decisions(edits: Edits, tables, fold: bool, carried: list, unmatched: list, applied: list) -> dict:
    out: dict[str, dict] = {}
    for entry in DECISION_SHEETS:
        typed = edits.decisions.get(entry.label)
        if not typed:
            continue
        existing = _existing(entry, tables, fold)
        current = _current_values(entry, tables, fold)
        for parts, value in typed.items():
            if len(parts) != len(entry.keys):
                continue  # another block of the same sheet
            key = entry.key_of(parts, fold)
            text = _key_text(parts)
            problem = entry.decl.problem(value)
            if problem is not None:
                why = problem
            elif existing is None:
                why = f"the new exports have no {' or '.join(entry.tables)} table"
            elif key not in existing:
                why = f"no longer in the {' or '.join(entry.tables)} export"
            elif is_number(value) and entry.decl.applied(value, current.get(key)):
                near = entry.decl.applied_within
                applied.append(CarryRecord(entry.label, text, entry.value_header, value,
                                           f"applied: this export's {entry.decl.numeric} is {shown(current[key])}"
                                           + (f", within {near[0]:.0%} or {near[1]:g} of it" if near else ""),
                                           current[key], compared=key))
                continue
            else:
                out.setdefault(entry.label, {})[key] = value
                why = ("typed last time; not yet applied (this export's {} is {})".format(
                    entry.decl.numeric, shown(current[key])) if is_number(value) and key in current
                       else "typed last time")
                carried.append(CarryRecord(entry.label, text, entry.value_header, value, why,
                                           current.get(key), compared=key))
                continue
            unmatched.append(CarryRecord(entry.label, text, entry.value_header, value, why))
    return out


def apply_edits(edits: Edits, inputs_tables: Any, settings: Settings) -> CarryResult:
    """Match edits against the new inputs: pure, reads and writes nothing.

    Args:
        edits: what :func:`read_edits` found in the old workbook.
        inputs_tables: the new inputs' frames (``inputs.tables``, or the Inputs itself).
        settings: the new build's settings (from settings.toml and the defaults).

    Returns:
        The carried settings, catalog overrides, targets and decisions, and the records
        of what was carried and what was not.
    """
    tables = _tables(inputs_tables)
    carried: list[CarryRecord] = []
    unmatched: list[CarryRecord] = []
    new_settings, changed = _carry_settings(edits, settings, carried, unmatched)
    fold = new_settings.fold_plurals
    catalog, catalog_rows = _carry_catalog(edits, tables, carried, unmatched)
    targets = _carry_targets(edits, tables, fold, carried, unmatched)
    applied: list[CarryRecord] = []
    decisions = _carry_decisions(edits, tables, fold, carried, unmatched, applied)
    for label, why in edits.lost:
        unmatched.append(CarryRecord(label, "(the whole column)", "", None, why))
    notes, own = carry_notes(edits, tables, fold, carried, unmatched)
    for copied in edits.copied:  # typed on a copy of the sheet: listed, never carried
        unmatched += [CarryRecord(copied.copy, _key_text(_parts(key)), copied.what, value,
                                  f"typed on a copy of {copied.original}, not read; type it on {copied.original}")
                      for key, value in copied.differ.items()]
    def dated(records: list[CarryRecord]) -> list[CarryRecord]:
        return [replace(r, first_typed=edits.first_typed.get((r.sheet, r.key, r.column), edits.built_on))
                for r in records]
    return CarryResult(new_settings, changed, catalog, targets, decisions, dated(carried), unmatched, settings,
                       source=edits.source, applied=dated(applied), notes=notes, own_columns=own,
                       catalog_rows=catalog_rows)


# ------------------------------------------------------------------------------ notes and the user's own columns

OWN_SCAN = 2 * OWN_COLUMNS_CAP  # columns right of Notes looked at: those beyond the cap are listed, not carried


def _keyed_rows(rows: list[list[Any]], areas: dict, decl) -> list[tuple[tuple, list[Any]]]:
    """(raw key, row) of every body row of a table whose keys are not all blank."""
    body = []
    for row in rows[areas[decl.keys[0]].first_row:areas[decl.keys[0]].last_row + 1]:
        parts = tuple(_cell(row, areas[k].first_col) for k in decl.keys)
        if not all(is_blank(p) for p in parts):
            body.append((parts, row))
    return body


def _own_in(header: list[Any], body: list[tuple[tuple, list[Any]]], label: str, notes_col: int,
            after: str = NOTES_HEADER) -> tuple[list[OwnColumn], list[CarryRecord]]:
    """The user's columns right of Notes (or of after, the last column built) ({raw key: value} each), and those
    that cannot be carried."""
    own: list[OwnColumn] = []
    refused: list[CarryRecord] = []
    width = max((len(row) for _, row in body), default=0)  # a column no body row reaches holds no value
    for offset in range(1, OWN_SCAN + 1):
        col = notes_col + offset
        title = _cell(header, col)
        values = {parts: v for parts, row in body if not is_blank(v := _cell(row, col))} if col < width else {}
        if is_blank(title) and not values:
            continue
        where = f"column {offset} right of {after}"
        if offset > OWN_COLUMNS_CAP:
            refused.append(CarryRecord(label, f"({where})", key_text(title), f"{len(values)} value(s)",
                                       f"beyond the {OWN_COLUMNS_CAP} columns of your own carried right of "
                                       f"{after}; move it nearer"))
        elif is_blank(title):
            refused.append(CarryRecord(label, f"({where})", "", f"{len(values)} value(s)",
                                       "a column without a header is not carried; give it one"))
        else:
            own.append(OwnColumn(offset, title, values))
    return own, refused


def _notes_columns(book: SavedBook, decl) -> frozenset:
    """A table's Notes column and the OWN_SCAN columns right of it (none without its defined name), read in the
    same pass as its keys and typed column."""
    area = book.area(decl.name_of(decl.notes)) if decl.notes else None
    return frozenset() if area is None else frozenset(range(area.first_col, area.first_col + OWN_SCAN + 1))


def _notes_of(book: SavedBook, label: str, decl) -> tuple[dict, list[OwnColumn], list[CarryRecord]] | None:
    """(notes by raw key, own columns, refused columns) of one table, found by its defined names; None without."""
    areas = (named_columns(book, {k: decl.name_of(k) for k in (*decl.keys, decl.value, decl.notes)})
             or named_columns(book, {k: decl.name_of(k) for k in (*decl.keys, decl.notes)}))
    if areas is None:
        return _own_of_older(book, label, decl)
    area = areas[decl.notes]
    notes_col = area.first_col
    wanted = frozenset(a.first_col for k, a in areas.items() if k != decl.notes) | _notes_columns(book, decl)
    rows = book.rows(area.sheet, wanted, True)  # the pass that read the typed column (see _located)
    header = rows[area.first_row - 1] if 0 < area.first_row <= len(rows) else []
    body = _keyed_rows(rows, areas, decl)
    notes = {parts: v for parts, row in body if not is_blank(v := _cell(row, notes_col))}
    own, refused = _own_in(header, body, label, notes_col)
    return notes, own, refused


def _own_of_older(book: SavedBook, label: str, decl) -> tuple[dict, list[OwnColumn], list[CarryRecord]] | None:
    """A workbook built before Notes columns: the columns right of the last header the table was built with,
    found through its key and typed columns' defined names, are the user's own (no notes)."""
    areas = named_columns(book, {k: decl.name_of(k) for k in (*decl.keys, decl.value)})
    if areas is None or not decl.all_headers:
        return None
    area = areas[decl.value]
    rows = book.rows(area.sheet, None, True)  # every column: the table's width is unknown (once, an older workbook)
    header = rows[area.first_row - 1] if 0 < area.first_row <= len(rows) else []
    ours = {h for h in decl.all_headers if h != NOTES_HEADER}
    last = max((i for i, v in enumerate(header) if key_text(v) in ours), default=None)
    if last is None:
        return None
    own, refused = _own_in(header, _keyed_rows(rows, areas, decl), label, last, key_text(header[last]))
    return {}, own, refused


def notes_in(book: SavedBook) -> tuple[dict, dict, list[CarryRecord]]:
    """Every table's Notes ({label: {raw key: value}}), the user's own columns right of them, and the own
    columns that cannot be carried. A table built without a Notes column (an older workbook) gives none."""
    notes: dict[str, dict] = {}
    own: dict[str, list[OwnColumn]] = {}
    refused: list[CarryRecord] = []
    for decl in EDITABLE_TABLES:
        found = _notes_of(book, decl.label, decl) if decl.notes else None
        if found is None:
            continue
        if found[0]:
            notes[decl.label] = found[0]
        if found[1]:
            own[decl.label] = found[1]
        refused += found[2]
    return notes, own, refused


def _keyed(entry: EditSheet, typed: dict, existing: set | None, fold: bool, column: str, unmatched: list,
           gone: str) -> dict[tuple, Any]:
    """{compared key: value} of the typed cells whose row still exists; the others listed on unmatched."""
    out: dict[tuple, Any] = {}
    for parts, value in typed.items():
        key = entry.key_of(parts, fold)
        if value is NO_SAVED_VALUE:
            why = "the cell holds a formula with no saved value; type the text itself"
        elif existing is None or key not in existing:
            why = gone
        elif key in out and out[key] != value:
            why = f"another row with the same key already carries {shown(out[key])}"
        else:
            out[key] = value
            continue
        unmatched.append(CarryRecord(entry.label, _key_text(parts), column, value, why))
    return out


def carry_notes(edits: Edits, tables, fold: bool, carried: list, unmatched: list) -> tuple[dict, dict]:
    """Notes and own columns matched to the new rows by key: ({label: {key: note}}, {label: [OwnColumn]}).

    Each note carried is listed on carried (never a Decision: it carries no compared key, so no typed cell
    is marked by it); each own column once, with how many values it carries; a note or value whose row is
    gone, and a column that cannot be carried, on unmatched.
    """
    notes: dict[str, dict] = {}
    own: dict[str, list[OwnColumn]] = {}
    unmatched += edits.own_refused
    for label in dict.fromkeys([*edits.notes, *edits.own]):
        entry = edit_sheet_of(label)
        existing = _existing(entry, tables, fold)
        gone = (f"the new exports have no {' or '.join(entry.tables)} table" if existing is None
                else f"its row is no longer in the {' or '.join(entry.tables)} export")
        kept = _keyed(entry, edits.notes.get(label, {}), existing, fold, NOTES_HEADER, unmatched, gone)
        if kept:
            notes[label] = kept
        by_key = {entry.key_of(p, fold): p for p in edits.notes.get(label, {})}
        for key, value in kept.items():
            carried.append(CarryRecord(label, _key_text(by_key[key]), NOTES_HEADER, value, "your note, carried by key"))
        for column in edits.own.get(label, []):
            values = _keyed(entry, column.values, existing, fold, key_text(column.header), unmatched, gone)
            own.setdefault(label, []).append(replace(column, values=values))
            carried.append(CarryRecord(label, "(your own column)", key_text(column.header),
                                       f"{len(values)} value(s)", "your own column, carried by key"))
    return notes, own


# ------------------------------------------------------------------------------------ helpers for the build

def carried_catalog(frame: pd.DataFrame, result: CarryResult) -> pd.DataFrame:
    """A copy of the catalog frame with the carried overrides in place (blank as NaN), and the rows the user
    added on in_catalog last week (result.catalog_rows) appended below: their ID, name and typed cells."""
    out = frame.copy()
    if result.catalog_rows:
        out = with_catalog_rows(out, list(result.catalog_rows),
                                ["" if is_blank(n) else str(n) for n in result.catalog_rows.values()])
    if not result.catalog:
        return out
    index = {key_text(p): i for i, p in zip(out.index, out["product_id"])}
    for (pid, column), value in result.catalog.items():
        if pid in index and column in out.columns:
            out.loc[index[pid], column] = math.nan if value is None else value
    return out

