"""Carrying a user's edits from last week's workbook into this week's.

Two steps, kept apart so that the second is pure:

1. :func:`read_edits` opens the OLD workbook read-only (it is never written) and
   collects every cell a user types: the live settings (by their defined names), the
   catalog's input cells on ``in_catalog``, Profit's "Your target ACoS", and the
   "Decision" column of every sheet listed in :data:`DECISION_SHEETS`.
2. :func:`apply_edits` matches them against the NEW inputs: an edit whose row still
   exists is carried, one whose product, target or term is gone is *unmatched*, and an
   edit that is not a valid value (text in a cost, a setting out of bounds) is
   unmatched too, with the reason.

Header rows are found by scanning the first rows of each sheet for the expected
headers, so a layout that gains a title line still reads. Adding a sheet with a
"Decision" column is one :class:`EditSheet` entry in :data:`DECISION_SHEETS`.
"""
from __future__ import annotations

import math
import numbers
import zipfile
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Callable, Iterable, Mapping, Sequence

import pandas as pd
from openpyxl.utils.cell import coordinate_to_tuple

from .errors import SheetbuilderError
from .guard import guard_saved_workbook
from .normalise import normalise
from .plan_inputs import EDITABLE
from .settings import SETTINGS, Settings, _coerce

SCAN_ROWS = 10  # header rows are looked for in the first rows of a sheet
SETTINGS_SHEET = "Settings"
CATALOG_SHEET = "in_catalog"
CATALOG_COLUMNS = tuple(sorted(EDITABLE["catalog"]))
MONEY_COLUMNS = ("price", "unit_cost", "fees_per_unit")  # blank money is read as 0
PERCENT_COLUMNS = ("target_acos", "margin")  # blank means "not given"
TARGET_BOUNDS = (0.0, 5.0)  # as default_target_acos


class PreviousWorkbookUnreadable(SheetbuilderError):
    """The previous workbook is missing or is not an .xlsx file openpyxl can read."""


def _text(value: Any, fold_plurals: bool = False) -> str:
    """A key part compared as text: trimmed, None as blank, 12.0 as '12'."""
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return ""
    if isinstance(value, float) and value.is_integer():
        value = int(value)
    return str(value).strip()


def _term(value: Any, fold_plurals: bool = False) -> str:
    """A search term compared as the Terms sheet compares it (:func:`normalise`)."""
    return normalise(_text(value), fold_plurals)


@dataclass(frozen=True)
class Key:
    """One key column of an edit sheet: its header there, its input column, how it is compared."""

    header: str
    column: str
    norm: Callable[[Any, bool], str] = _text


@dataclass(frozen=True)
class EditSheet:
    """A sheet (or a block of one) whose typed column is carried, keyed by some of its columns.

    Args:
        sheet: the sheet's name.
        keys: the key columns, in key order.
        tables: the input tables whose rows make a key exist in the new build (any of them).
        value_header: the typed column (the one nearest right of the last key column).
        scan_rows: how many top rows to scan for the header row.
    """

    sheet: str
    keys: tuple[Key, ...]
    tables: tuple[str, ...]
    value_header: str = "Decision"
    scan_rows: int = SCAN_ROWS
    block: str = ""  # names a second block of the same sheet, e.g. "campaigns"

    @property
    def label(self) -> str:
        """The name edits of this block are kept under: the sheet, and the block if any."""
        return f"{self.sheet} {self.block}" if self.block else self.sheet

    def key_of(self, parts: Sequence[Any], fold_plurals: bool) -> tuple[str, ...]:
        """The compared key of raw key values (in key order)."""
        return tuple(k.norm(v, fold_plurals) for k, v in zip(self.keys, parts))


_CAMPAIGN, _GROUP = Key("Campaign", "campaign"), Key("Ad group", "ad_group")
_PRODUCT = Key("Product ID", "product_id")

# Sheets with a "Decision" column. A new one is one line, e.g.
#   EditSheet("Budget", (_PRODUCT,), ("catalog", "store_sales", "ad_products")),
#   EditSheet("Budget", (_CAMPAIGN,), ("campaigns", "ad_products")),   # its "Budget campaigns" block
DECISION_SHEETS: tuple[EditSheet, ...] = (
    EditSheet("Bids", (_CAMPAIGN, _GROUP, Key("Target", "target"), Key("Match type", "match_type")), ("targets",)),
    EditSheet("Terms", (_CAMPAIGN, _GROUP, Key("Search term", "search_term", _term)), ("search_terms",)),
    EditSheet("Budget", (_PRODUCT,), ("catalog", "store_sales", "ad_products"), value_header="Decision"),
    EditSheet("Budget", (_CAMPAIGN,), ("campaigns",), value_header="Decision", block="campaigns",
              scan_rows=100_000),
)
PROFIT_TARGET = EditSheet("Profit", (_PRODUCT,), ("catalog", "store_sales", "ad_products"),
                          value_header="Your target ACoS")
CATALOG = EditSheet(CATALOG_SHEET, (Key("product_id", "product_id"),), ("catalog",), value_header="price")


@dataclass(frozen=True)
class Edits:
    """What a user typed in a workbook, as plain values keyed as the sheets show them.

    Attributes:
        source: the workbook read.
        settings: {setting key: cell value} for every live setting found by its defined name.
        catalog: {(product_id, column): cell value} for every in_catalog input cell (blank as None).
        targets: {product_id: value} for every non-blank Profit "Your target ACoS".
        decisions: {sheet: {raw key tuple: value}} for every non-blank Decision, per
            :data:`DECISION_SHEETS` entry (sheet names as in the entries).
    """

    source: str
    settings: dict = field(default_factory=dict)
    catalog: dict = field(default_factory=dict)
    targets: dict = field(default_factory=dict)
    decisions: dict = field(default_factory=dict)


@dataclass(frozen=True)
class CarryRecord:
    """One edit carried or not: sheet, key as text, column, value, and why."""

    sheet: str
    key: str
    column: str
    value: Any
    why: str


@dataclass(frozen=True)
class CarryResult:
    """The edits matched against the new inputs.

    Attributes:
        settings: the new build's settings with the carried values in place.
        settings_changed: {key: (value from settings.toml or the default, carried value)}.
        catalog: {(product_id, column): value} where the old workbook's value differs from the export's.
        targets: {product_id: target ACoS} for Profit's "Your target ACoS".
        decisions: {sheet: {compared key: value}} (keys as :meth:`EditSheet.key_of` makes them).
        carried: every edit that changes something in the new build.
        unmatched: every edit that could not be carried, with why.
    """

    settings: Settings
    settings_changed: dict = field(default_factory=dict)
    catalog: dict = field(default_factory=dict)
    targets: dict = field(default_factory=dict)
    decisions: dict = field(default_factory=dict)
    carried: list = field(default_factory=list)
    unmatched: list = field(default_factory=list)


# ---------------------------------------------------------------------------------------------- reading

def _rows(ws) -> list[list[Any]]:
    """Every row of a read-only sheet as a list of values (padded to one width)."""
    try:
        ws.reset_dimensions()  # some programs store a wrong dimension; read every row
    except AttributeError:  # pragma: no cover - not a read-only sheet
        pass
    rows = [list(r) for r in ws.iter_rows(values_only=True)]
    width = max((len(r) for r in rows), default=0)
    return [r + [None] * (width - len(r)) for r in rows]


def _blank(value: Any) -> bool:
    return value is None or (isinstance(value, str) and value.strip() == "") or (
        isinstance(value, float) and math.isnan(value))


def _header_index(rows: list[list[Any]], wanted: Sequence[str], scan: int) -> int | None:
    """The 0-based index of the first row (of the first scan) holding every wanted header."""
    for i, row in enumerate(rows[:scan]):
        texts = {_text(v) for v in row}
        if all(w in texts for w in wanted):
            return i
    return None


def _value_column(header: list[Any], key_cols: list[int], value_header: str) -> int:
    """The value column: the first value_header right of the last key column, else the first one."""
    texts = [_text(v) for v in header]
    right = [i for i, t in enumerate(texts) if t == value_header and i > max(key_cols)]
    return right[0] if right else texts.index(value_header)


def _read_block(rows: list[list[Any]], entry: EditSheet, keep_blank: bool = False) -> dict[tuple, Any]:
    """{raw key tuple: value} of one block: from its header row down to the first row with a blank key."""
    wanted = [k.header for k in entry.keys] + [entry.value_header]
    at = _header_index(rows, wanted, entry.scan_rows)
    if at is None:
        return {}
    texts = [_text(v) for v in rows[at]]
    key_cols = [texts.index(k.header) for k in entry.keys]
    value_col = _value_column(rows[at], key_cols, entry.value_header)
    out: dict[tuple, Any] = {}
    for row in rows[at + 1:]:
        parts = tuple(row[c] for c in key_cols)
        if all(_blank(p) for p in parts):
            break
        value = row[value_col]
        if keep_blank or not _blank(value):
            out[parts] = value
    return out


EXPORTED = "exported_"  # in_catalog keeps each editable value as exported, in a hidden column
AS_BUILT_COLUMN = 4    # Settings keeps each value as built in its fifth column, headed "As built"


def _has_as_built(rows: list[list[Any]]) -> bool:
    return any(len(r) > AS_BUILT_COLUMN and r[AS_BUILT_COLUMN] == "As built" for r in rows[:SCAN_ROWS])


def _settings_cells(wb, rows_of: Callable[[str], list[list[Any]]]) -> dict[str, Any]:
    """{key: value} of every live setting whose defined name points at a cell."""
    out: dict[str, Any] = {}
    for spec in SETTINGS:
        if not spec.live or spec.key not in wb.defined_names:
            continue
        for sheet, coord in wb.defined_names[spec.key].destinations:
            if sheet not in wb.sheetnames:
                continue
            r, c = coordinate_to_tuple(coord.replace("$", ""))
            rows = rows_of(sheet)
            value = rows[r - 1][c - 1] if r <= len(rows) and c <= len(rows[r - 1]) else None
            built = rows[r - 1][AS_BUILT_COLUMN] if r <= len(rows) and AS_BUILT_COLUMN < len(rows[r - 1]) else None
            if _has_as_built(rows) and _same(value, built):
                break  # not typed by the user: this week's settings.toml decides
            out[spec.key] = value
            break
    return out


def open_workbook(path: Path, data_only: bool = True):
    """The workbook at path opened read-only, or PreviousWorkbookUnreadable saying why not."""
    import openpyxl
    from openpyxl.utils.exceptions import InvalidFileException
    path = Path(path)
    if not path.is_file():
        raise PreviousWorkbookUnreadable(f"the workbook {path} does not exist")
    guard_saved_workbook(path, PreviousWorkbookUnreadable)
    try:
        return openpyxl.load_workbook(path, read_only=True, data_only=data_only)
    except (zipfile.BadZipFile, InvalidFileException, KeyError, OSError, ValueError) as exc:
        raise PreviousWorkbookUnreadable(f"{path} is not an .xlsx workbook that can be read: {exc}") from None


def read_edits(path: Path) -> Edits:
    """Everything a user types in the workbook at path; the file is only read.

    Raises:
        PreviousWorkbookUnreadable: path is missing or not a readable .xlsx file.
    """
    wb = open_workbook(path)
    try:
        cache: dict[str, list[list[Any]]] = {}

        def rows_of(sheet: str) -> list[list[Any]]:
            if sheet not in cache:
                cache[sheet] = _rows(wb[sheet]) if sheet in wb.sheetnames else []
            return cache[sheet]

        settings = _settings_cells(wb, rows_of)
        catalog: dict[tuple[str, str], Any] = {}
        rows = rows_of(CATALOG_SHEET)
        at = _header_index(rows, ["product_id"], SCAN_ROWS)
        if at is not None:
            texts = [_text(v) for v in rows[at]]
            cols = {c: texts.index(c) for c in CATALOG_COLUMNS if c in texts}
            exported = {c: texts.index(EXPORTED + c) for c in CATALOG_COLUMNS if EXPORTED + c in texts}
            pid = texts.index("product_id")
            for row in rows[at + 1:]:
                if _blank(row[pid]):
                    break
                for column, i in cols.items():
                    if column in exported and _same(row[i], row[exported[column]]):
                        continue  # as exported: this week's export decides
                    catalog[(_text(row[pid]), column)] = None if _blank(row[i]) else row[i]
        targets = {_text(k[0]): v for k, v in _read_block(rows_of(PROFIT_TARGET.sheet), PROFIT_TARGET).items()}
        decisions: dict[str, dict] = {}
        for entry in DECISION_SHEETS:
            found = _read_block(rows_of(entry.sheet), entry)
            if found:
                decisions.setdefault(entry.label, {}).update(found)
        return Edits(str(path), settings, catalog, targets, decisions)
    finally:
        wb.close()


# --------------------------------------------------------------------------------------------- applying

def _is_number(value: Any) -> bool:
    return isinstance(value, numbers.Real) and not isinstance(value, bool) and not (
        isinstance(value, float) and math.isnan(value))


def _same(a: Any, b: Any) -> bool:
    """Whether two cell values are the same (blank = NaN = None; numbers within rounding)."""
    if _blank(a) and _blank(b):
        return True
    if _is_number(a) and _is_number(b):
        return math.isclose(float(a), float(b), rel_tol=1e-12, abs_tol=1e-9)
    return a == b


def _shown(value: Any) -> str:
    return "blank" if _blank(value) else f"{value:g}" if _is_number(value) else repr(value)


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
        found.update(entry.key_of(parts, fold) for parts in frame[columns].itertuples(index=False, name=None))
    return found


def _key_text(parts: Iterable[Any]) -> str:
    return " / ".join(_text(p) for p in parts)


def _carry_settings(edits: Edits, settings: Settings, carried: list, unmatched: list) -> tuple[Settings, dict]:
    values: dict[str, Any] = {}
    for spec in SETTINGS:
        if not spec.live or spec.key not in edits.settings:
            continue
        raw = edits.settings[spec.key]
        if spec.kind == "date" and _blank(raw):
            value = None
        else:
            value, problem = _coerce(spec, raw, SETTINGS_SHEET)
            if problem:
                unmatched.append(CarryRecord(SETTINGS_SHEET, spec.key, "Value", raw, problem.message))
                continue
        if not _same(value, settings.value(spec.key)):
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
                                   f"replaces {_shown(old)} from settings.toml or the default"))
    return settings.replace(**values), changed


def _carry_catalog(edits: Edits, tables, carried: list, unmatched: list) -> dict:
    frame = tables.get("catalog")
    if frame is None:
        frame = pd.DataFrame(columns=["product_id"])
    by_id = {_text(p): i for i, p in enumerate(frame["product_id"])}
    out: dict[tuple[str, str], Any] = {}
    gone: dict[str, list[str]] = {}
    for (pid, column), value in edits.catalog.items():
        if pid not in by_id:
            if not _blank(value):
                gone.setdefault(pid, []).append(f"{column} {_shown(value)}")
            continue
        new = frame[column].iloc[by_id[pid]] if column in frame.columns else None
        if _blank(value) and column in MONEY_COLUMNS:
            value = 0.0
        if _same(value, new):
            continue
        if not _blank(value) and not _is_number(value):
            unmatched.append(CarryRecord(CATALOG_SHEET, pid, column, value, "not a number"))
            continue
        if _is_number(value) and value < 0 and column != "margin":
            unmatched.append(CarryRecord(CATALOG_SHEET, pid, column, value, "negative; only a margin may be"))
            continue
        value = None if _blank(value) else float(value)
        out[(pid, column)] = value
        carried.append(CarryRecord(CATALOG_SHEET, pid, column, value,
                                   f"differs from this export's {_shown(new)}"))
    for pid, cells in gone.items():  # one record per product: the old cells cannot tell typed from exported
        unmatched.append(CarryRecord(CATALOG_SHEET, pid, "catalog inputs", "; ".join(cells),
                                     "the product is no longer in the catalog"))
    return out


def _carry_targets(edits: Edits, tables, fold: bool, carried: list, unmatched: list) -> dict:
    existing = _existing(PROFIT_TARGET, tables, fold) or set()
    out: dict[str, float] = {}
    low, high = TARGET_BOUNDS
    for pid, value in edits.targets.items():
        column = PROFIT_TARGET.value_header
        if (pid,) not in existing:
            unmatched.append(CarryRecord(PROFIT_TARGET.sheet, pid, column, value, "the product is no longer in the exports"))
        elif not _is_number(value) or not low <= value <= high:
            unmatched.append(CarryRecord(PROFIT_TARGET.sheet, pid, column, value,
                                         f"expected a target ACoS from {low:.0%} to {high:.0%}"))
        else:
            out[pid] = float(value)
            carried.append(CarryRecord(PROFIT_TARGET.sheet, pid, column, float(value), "typed last time"))
    return out


def _carry_decisions(edits: Edits, tables, fold: bool, carried: list, unmatched: list) -> dict:
    out: dict[str, dict] = {}
    for entry in DECISION_SHEETS:
        typed = edits.decisions.get(entry.label)
        if not typed:
            continue
        existing = _existing(entry, tables, fold)
        for parts, value in typed.items():
            if len(parts) != len(entry.keys):
                continue  # another block of the same sheet
            key = entry.key_of(parts, fold)
            text = _key_text(parts)
            if existing is None:
                why = f"the new exports have no {' or '.join(entry.tables)} table"
            elif key not in existing:
                why = f"no longer in the {' or '.join(entry.tables)} export"
            else:
                out.setdefault(entry.label, {})[key] = value
                carried.append(CarryRecord(entry.label, text, entry.value_header, value, "typed last time"))
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
    catalog = _carry_catalog(edits, tables, carried, unmatched)
    targets = _carry_targets(edits, tables, fold, carried, unmatched)
    decisions = _carry_decisions(edits, tables, fold, carried, unmatched)
    return CarryResult(new_settings, changed, catalog, targets, decisions, carried, unmatched)


# ------------------------------------------------------------------------------------ helpers for the build

def entry_for(sheet: str) -> EditSheet:
    """The DECISION_SHEETS entry of sheet."""
    for entry in DECISION_SHEETS:
        if entry.label == sheet:
            return entry
    raise KeyError(sheet)


def decision_column(result: CarryResult, sheet: str, rows: Iterable[Sequence[Any]]) -> list[Any]:
    """The carried Decision of each planned row (None where none), rows as raw key tuples in key order.

    E.g. for Bids: ``decision_column(result, "Bids", zip(f.campaign, f.ad_group, f.target, f.match_type))``.
    """
    entry = entry_for(sheet)
    typed = result.decisions.get(sheet, {})
    fold = result.settings.fold_plurals
    return [typed.get(entry.key_of(parts, fold)) for parts in rows]


def carried_catalog(frame: pd.DataFrame, result: CarryResult) -> pd.DataFrame:
    """A copy of the catalog frame with the carried overrides in place (blank as NaN)."""
    out = frame.copy()
    if not result.catalog:
        return out
    index = {_text(p): i for i, p in zip(out.index, out["product_id"])}
    for (pid, column), value in result.catalog.items():
        if pid in index and column in out.columns:
            out.loc[index[pid], column] = math.nan if value is None else value
    return out


UNMATCHED_HEADERS = ["Sheet", "Key", "Column", "Value", "Why"]


def unmatched_sheet_rows(result: CarryResult) -> list[list[Any]]:
    """Header and rows of an "Unmatched edits" sheet: Sheet, Key, Column, Value, Why."""
    return [list(UNMATCHED_HEADERS)] + [[r.sheet, r.key, r.column, r.value, r.why] for r in result.unmatched]


def carried_summary(result: CarryResult) -> str:
    """One paragraph for the command line: what was carried and what was not."""
    counts: dict[str, int] = {}
    for r in result.carried:
        counts[r.sheet] = counts.get(r.sheet, 0) + 1
    parts = [f"{n} on {sheet}" for sheet, n in counts.items()]
    text = f"Carried {len(result.carried)} edit(s) from the previous workbook"
    text += f" ({', '.join(parts)})." if parts else "."
    if result.settings_changed:
        text += " Settings that now differ from settings.toml: " + ", ".join(
            f"{k} {_shown(old)} -> {_shown(new)}" for k, (old, new) in result.settings_changed.items()) + "."
    if result.unmatched:
        text += (f" {len(result.unmatched)} edit(s) could not be carried (their product, target or term is gone, "
                 "or the value is not valid); they are listed on the Unmatched edits sheet.")
    return text
