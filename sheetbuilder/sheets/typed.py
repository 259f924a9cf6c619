"""The typed columns: which tables hold one, how their rows' keys compare, and what was carried into them.

Each planner declares its typed column once (``EDITABLE_COLUMNS``); this module lists them for
the build (the defined names over them, the carried cells) and for the weekly round
(:mod:`sheetbuilder.weekly`), which reads them back from a saved workbook. The records of what
was carried (:class:`CarryResult`) are what the planners take from last week's edits.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any, Callable, Iterable, Sequence

from sheetbuilder.reading.ours import MARK
from sheetbuilder.reading.normalise import normalise
from sheetbuilder.reading.settings import Settings
from sheetbuilder.sheets.bids import EDITABLE_COLUMNS as BIDS
from sheetbuilder.sheets.budget import CAMPAIGN_EDITABLE_COLUMNS as BUDGET_CAMPAIGNS, EDITABLE_COLUMNS as BUDGET
from sheetbuilder.sheets.profit import EDITABLE_COLUMNS as PROFIT
from sheetbuilder.sheets.terms import EDITABLE_COLUMNS as TERMS
from sheetbuilder.sheets.decisions import EditableColumns
from sheetbuilder.workbook.render import stored_text

# Every table with a typed column, in the order edits are read and listed.
DECISION_TABLES: tuple[EditableColumns, ...] = (BIDS, TERMS, BUDGET, BUDGET_CAMPAIGNS)
EDITABLE_TABLES: tuple[EditableColumns, ...] = (*DECISION_TABLES, PROFIT)
ACTIONS_NAME = MARK  # the defined name over the Actions list's body (reading.ours recognises our workbooks by it)
CARRIED_NAME = "sb_carried"  # defined names <this>_<column> over the Carried edits table (its first-typed dates)
SCAN_ROWS = 10  # header rows are looked for in the first rows of a sheet


def key_text(value: Any, fold_plurals: bool = False) -> str:
    """A key part compared as text: trimmed, None as blank, 12.0 as '12'."""
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return ""
    if isinstance(value, float) and value.is_integer():
        value = int(value)
    return str(value).strip()


def _term(value: Any, fold_plurals: bool = False) -> str:
    """A search term compared as the Terms sheet compares it (:func:`normalise`)."""
    return normalise(key_text(value), fold_plurals)


@dataclass(frozen=True)
class Key:
    """One key column of an edit sheet: its header there, its input column, how it is compared."""

    header: str
    column: str
    norm: Callable[[Any, bool], str] = key_text


@dataclass(frozen=True)
class EditSheet:
    """A table whose typed column is carried, as its planner declares it, with how its keys compare.

    Args:
        decl: the planner's declaration (label, sheet, names, keys, typed column, input tables).
        keys: the key columns, in key order.
        scan_rows: how many top rows to scan for the header row when the defined names are gone.
    """

    decl: EditableColumns
    keys: tuple[Key, ...]
    scan_rows: int = SCAN_ROWS

    @property
    def label(self) -> str:
        """The name edits of this table are kept under."""
        return self.decl.label

    @property
    def sheet(self) -> str:
        """The sheet it is on."""
        return self.decl.sheet

    @property
    def tables(self) -> tuple[str, ...]:
        """The input tables whose rows make a key exist."""
        return self.decl.inputs

    @property
    def value_header(self) -> str:
        """The typed column's header as built."""
        return self.decl.headers[self.decl.value]

    def key_of(self, parts: Sequence[Any], fold_plurals: bool) -> tuple[str, ...]:
        """The compared key of key values as a saved workbook gives them back (in key order)."""
        return tuple(k.norm(v, fold_plurals) for k, v in zip(self.keys, parts))

    def export_key(self, parts: Sequence[Any], fold_plurals: bool) -> tuple[str, ...]:
        """The compared key of key values as an export gives them: first put in the form a cell stores
        (cut to 32,767 characters with a mark, control characters escaped), as the workbook held them."""
        return self.key_of([stored_text(v) if isinstance(v, str) else v for v in parts], fold_plurals)


def edit_sheet(decl: EditableColumns, scan_rows: int = SCAN_ROWS) -> EditSheet:
    """The EditSheet of a planner's declaration."""
    keys = tuple(Key(decl.headers[k], column, _term if k in decl.normalised else key_text)
                 for k, column in zip(decl.keys, decl.input_columns))
    return EditSheet(decl, keys, scan_rows)


DECISION_SHEETS: tuple[EditSheet, ...] = tuple(
    edit_sheet(d, 100_000 if d is BUDGET_CAMPAIGNS else SCAN_ROWS) for d in DECISION_TABLES)
PROFIT_TARGET = edit_sheet(PROFIT)


@dataclass(frozen=True)
class CarryRecord:
    """One edit carried or not: sheet, key as text, column, value, and why.

    Carried and applied edits also hold the value the export (or settings.toml) gives,
    the build date of the week it was first typed, and the compared key of its row.
    """

    sheet: str
    key: str
    column: str
    value: Any
    why: str
    exported: Any = None
    first_typed: Any = None
    compared: tuple = ()


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
        as_built: the settings from settings.toml and the defaults, before carrying.
        exported: {table: frame as the export held it} for tables whose values were carried over.
        source: the previous workbook's path.
        applied: every typed number this week's export shows applied (it expires: the cell is left blank).
        inputs_as_saved: the planned inputs were read back from a saved workbook (their text already in
            the form a cell stores), not from exports.
        notes: {label: {compared key: value}} of the Notes typed last week whose row still exists.
        own_columns: {label: [OwnColumn]} the columns a user added right of a table's Notes, values by key.
        catalog_rows: {product_id: name} of the rows a user added on in_catalog that this week's catalog
            lacks: kept on in_catalog as rows of their own (their typed cells are in catalog).
    """

    settings: Settings
    settings_changed: dict = field(default_factory=dict)
    catalog: dict = field(default_factory=dict)
    targets: dict = field(default_factory=dict)
    decisions: dict = field(default_factory=dict)
    carried: list = field(default_factory=list)
    unmatched: list = field(default_factory=list)
    as_built: Settings | None = None
    exported: dict = field(default_factory=dict)
    source: str = ""
    applied: list = field(default_factory=list)
    inputs_as_saved: bool = False
    notes: dict = field(default_factory=dict)
    own_columns: dict = field(default_factory=dict)
    catalog_rows: dict = field(default_factory=dict)


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
    return _looked_up(typed, entry.key_of if result.inputs_as_saved else entry.export_key, fold, rows)


def _looked_up(typed: dict, key_of: Callable[[Sequence[Any], bool], tuple], fold: bool,
               rows: Iterable[Sequence[Any]]) -> list[Any]:
    """typed's value of each row's compared key (None where none); a row's whole key is made only when its first
    part is one a value was typed for (most rows have none)."""
    if not typed:
        return [None for _ in rows]
    firsts = {key[0] for key in typed if key}
    return [typed.get(key_of(parts, fold)) if key_of(parts[:1], fold)[0] in firsts else None for parts in rows]


@dataclass(frozen=True)
class OwnColumn:
    """A column a user added right of a table's Notes column: its place (1 = just right of Notes), its header,
    and {compared key: value} of its cells whose row still exists."""

    offset: int
    header: Any
    values: dict = field(default_factory=dict)


def edit_sheet_of(label: str) -> EditSheet:
    """The EditSheet of any table with a typed column (Profit's included)."""
    return PROFIT_TARGET if label == PROFIT_TARGET.label else entry_for(label)


def keyed_column(result: CarryResult, label: str, typed: dict, rows: Iterable[Sequence[Any]]) -> list[Any]:
    """The carried value of each planned row of a table (None where none), from {compared key: value};
    rows as raw key tuples in key order (as :func:`decision_column` takes them)."""
    entry = edit_sheet_of(label)
    fold = result.settings.fold_plurals
    return _looked_up(typed, entry.key_of if result.inputs_as_saved else entry.export_key, fold, rows)
