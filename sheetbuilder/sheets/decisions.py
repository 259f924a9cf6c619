"""Typed columns: their declaration (which columns a user types into and the keys that find them again),
and the Decision rules the sheets share: what a typed value may be, and the Final column it decides.

Each rule is written twice, side by side: the formula a Final column writes, and its pandas twin
that gives the cached value (the reference the tests compare).
"""
from __future__ import annotations

from dataclasses import dataclass, replace
from typing import Any

import pandas as pd

from sheetbuilder.values import ERROR_VALUES, is_empty, is_number
from sheetbuilder.workbook.columns import ColumnDef, PlannedTable
from sheetbuilder.workbook.spec import INPUT, Rule, Validation

@dataclass(frozen=True)
class EditableColumns:
    """A table's typed column and the key columns that identify its rows: declared once, by its planner.

    ``carry`` (--previous), ``changes`` and the tests read a saved workbook through this
    declaration: each column is found by the workbook-level defined name ``<name>_<key>``
    over its body (spreadsheet programs keep a name on its cells when a header is renamed,
    a column inserted or the rows sorted), and by its header text only when the name is gone.

    Args:
        label: what its edits are kept under (a sheet, or a sheet and its block).
        sheet: the sheet the table is on.
        table: the table's key in the plan's tables.
        name: prefix of the defined names over its columns.
        keys: the column keys identifying a row, in key order.
        value: the typed column's key.
        headers: {key: header text as built} for keys and value.
        inputs: the input tables whose rows make a key exist (any of them).
        input_columns: those tables' columns matching keys, in key order.
        normalised: keys compared as the sheet compares search terms (normalise()).
        numeric: what a typed number means ('bid', 'spend', 'budget', 'target'); '' when only words are valid.
        words: the valid typed words ('keep', 'skip', ...).
        current: the planned frame's column holding today's value a typed number replaces.
        input_current: the input tables' column holding that value (summed over a key's rows).
        result: the formula column showing what the typed value decides ('' when none); named too, so
            ``changes`` can report a result typed over by hand.
        applied_within: (share, currency units) when a typed number is an outcome the export can only come
            near (a product's spend): next week's value within the larger of share x the typed number and
            the units counts as applied. Empty: applied only when equal to the cent (a bid or budget is
            typed into the ad console as it is).
        notes: the key of the table's Notes column (:func:`notes_column`, '' when none): the user's own text,
            carried by key with the columns the user adds to its right, never read as a Decision.
        all_headers: every column's header as built (a workbook built before Notes columns: what lies right of
            the last of them is the user's own).
        same_figure: the formula column showing the same figure as the typed column when one is typed
            (Profit's Target ACoS beside Your target ACoS), '' when none: a value typed over it is read as
            typed in the typed column (the sheet computes with it) and reported with where to type.
    """

    label: str
    sheet: str
    table: str
    name: str
    keys: tuple[str, ...]
    value: str
    headers: dict
    inputs: tuple[str, ...]
    input_columns: tuple[str, ...]
    normalised: tuple[str, ...] = ()
    numeric: str = ""
    words: tuple[str, ...] = ()
    current: str = ""
    input_current: str = ""
    result: str = "final"
    result_header: str = ""
    applied_within: tuple[float, float] | tuple = ()

    def applied(self, typed: Any, current: Any) -> bool:
        """Whether this week's exported value shows a typed number applied (see applied_within)."""
        if current is None or not is_number(typed) or not is_number(current):
            return False
        if not self.applied_within:
            return round(float(typed) * 100) == round(float(current) * 100)
        share, units = self.applied_within
        return abs(float(current) - float(typed)) <= max(share * abs(float(typed)), units) + 1e-9
    notes: str = ""
    all_headers: tuple[str, ...] = ()
    same_figure: str = ""
    same_figure_header: str = ""

    def problem(self, value: Any) -> str | None:
        """Why a typed value is not valid here (None when it is, or is blank)."""
        return decision_problem(value, self.words, bool(self.numeric))

    def name_of(self, key: str) -> str:
        """The defined name over a column's body."""
        return f"{self.name}_{key}"

    def defined_names(self, planned: "PlannedTable") -> list[tuple[str, str]]:
        """(defined name, '=range') over each key column and the typed column of the planned table."""
        ranges = planned.ranges(self.sheet, self.name)
        named = (*self.keys, self.value, *((self.result,) if self.result else ()), *((self.notes,) if self.notes else ()))
        return [(self.name_of(k), "=" + ranges[f"{self.name}.{k}"]) for k in named]


def decision_validation(decl: EditableColumns, row: int, col: int, n: int, error_message: str,
                        input_message: str = "") -> Validation:
    """The data validation of a Decision column of n rows from row: the values decision_problem accepts."""
    rule = Rule("number or words", decl.words) if decl.numeric else Rule("one of", decl.words)
    return Validation(row, col, rule, last_row=row + n - 1, error_title="Not a decision", error_message=error_message,
                      input_title="Decision" if input_message else "", input_message=input_message)


def editable(defs: list["ColumnDef"], label: str, sheet: str, name: str, keys: tuple[str, ...], value: str,
             inputs: tuple[str, ...], input_columns: tuple[str, ...] | None = None, table: str | None = None,
             **options: Any) -> EditableColumns:
    """The EditableColumns of a table planned from defs (headers taken from the defs)."""
    headers = {d.key: d.header for d in defs if d.key in (*keys, value)}  # the typed column and its keys
    results = {d.key: d.header for d in defs if d.key == options.get("result", "final")}
    decl = EditableColumns(label, sheet, table or label, name, tuple(keys), value, headers, tuple(inputs),
                           tuple(input_columns or keys), **options)
    same = {d.key: d.header for d in defs if d.key == options.get("same_figure")}
    return replace(decl, result_header=results.get(decl.result, ""), all_headers=tuple(d.header for d in defs),
                   same_figure_header=same.get(decl.same_figure, ""))


NOTES = "notes"  # the key of every Notes column
NOTES_HEADER = "Notes"
OWN_COLUMNS_CAP = 20  # columns a user may add right of a table's Notes column, carried by key (more are listed, not carried)


def notes_column() -> ColumnDef:
    """The Notes column at the right end of a table: plain typed text (no formula), carried by the row's key.

    Formatted as text, so a note typed as =... or +... stays the text typed; read back and written again
    exactly as it was (leading and trailing spaces kept).
    """
    return ColumnDef(NOTES, NOTES_HEADER, "freetext_input",
                     "Input: your own notes on the row. Carried to next week's workbook by the row's key (with any "
                     "column you add to its right, up to %d); never a Decision." % OWN_COLUMNS_CAP,
                     lambda df, ctx: df[NOTES] if NOTES in df.columns else [None] * len(df), kind=INPUT, width=30)


INVALID = "invalid"  # what a Final column shows for a Decision that is not a valid word or number


class NoSavedValue:
    """A typed cell holding a formula whose value the file does not store (saved by a program that drops them)."""

    def __repr__(self) -> str:
        return "a formula with no saved value"


NO_SAVED_VALUE = NoSavedValue()


def decision_problem(value: Any, words: tuple[str, ...], numeric: bool) -> str | None:
    """Why a typed Decision is not valid (None when it is, or is blank).

    Valid: one of words (case ignored, as spreadsheet comparison ignores it), or any number
    when numeric. Never valid: a formula error, a formula with no saved value, other text.
    """
    if is_empty(value):
        return None
    if value is NO_SAVED_VALUE:
        return "the cell holds a formula with no saved value; type the value itself"
    if isinstance(value, str) and value.strip() in ERROR_VALUES:
        return f"the cell holds a formula error ({value.strip()}); type the value itself"
    if is_number(value):
        return None if numeric else f"a number is not a decision here; expected one of {', '.join(words)}"
    if isinstance(value, str) and value.lower() in words:
        return None
    expected = ("a number or " if numeric else "") + " or ".join(repr(w) for w in words)
    return f"{str(value)!r} is not a valid decision; expected {expected}"


def apply_decision(df: pd.DataFrame, proposed: str, current: str) -> pd.Series:
    """Reference of a Final column: blank Decision follows proposed, a number is used, 'keep' keeps current.

    Anything else (other text, a formula error) is shown as 'invalid', never as the proposal.
    The formula it mirrors: see :func:`decision_formula`.
    """
    out = []
    for d, p, c in zip(df["decision"], df[proposed], df[current]):
        if is_empty(d):
            out.append(float(p))
        elif decision_problem(d, ("keep",), True) is not None:
            out.append(INVALID)
        elif is_number(d):
            out.append(float(d))
        else:
            out.append(float(c))
    return pd.Series(out, index=df.index, dtype=object if INVALID in out else float)


# LEN of an error value is an error, so IFERROR(LEN(d),-1)=-1 is true exactly when the Decision holds one.
_ERROR_TEST = "IFERROR(LEN({c:decision}),-1)=-1"


def decision_formula(proposed: str, current: str) -> str:
    """The formula of a Final column (see apply_decision)."""
    return ('=IF(%s,"%s",IF({c:decision}="",{c:%s},IF(ISNUMBER({c:decision}),{c:decision},'
            'IF({c:decision}="keep",{c:%s},"%s"))))' % (_ERROR_TEST, INVALID, proposed, current, INVALID))


def apply_word_decision(df: pd.DataFrame, fallback: str, words: tuple[str, ...]) -> pd.Series:
    """Reference of a Final column of words: blank Decision follows fallback, a valid word is used (lower case).

    Anything else shows 'invalid'. The formula it mirrors: :func:`word_decision_formula`.
    """
    out = []
    for d, f in zip(df["decision"], df[fallback]):
        if is_empty(d):
            out.append(f)
        elif decision_problem(d, words, False) is not None:
            out.append(INVALID)
        else:
            out.append(str(d).lower())
    return pd.Series(out, index=df.index, dtype=object)


def word_decision_formula(fallback: str, words: tuple[str, ...]) -> str:
    """The formula of a Final column of words (see apply_word_decision)."""
    valid = ",".join('{c:decision}="%s"' % w for w in words)
    return ('=IF(%s,"%s",IF({c:decision}="",{c:%s},IF(ISNUMBER({c:decision}),"%s",IF(OR(%s),LOWER({c:decision}),'
            '"%s"))))' % (_ERROR_TEST, INVALID, fallback, INVALID, valid, INVALID))
