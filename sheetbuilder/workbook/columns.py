"""One place per computed column: header, formula template, reference computation, format.

A planner lists ColumnDefs; :func:`plan_table` computes each reference column in
order with pandas (the cached values), resolves each formula template against the
sheet's layout, and returns spec Columns. Formula and reference sit side by side, so
they cannot drift apart unnoticed, and adding a column is one entry.
"""
from __future__ import annotations

import re
from dataclasses import dataclass, replace
from typing import Any, Callable

import numpy as np
import pandas as pd

from sheetbuilder.values import ERROR_VALUES, is_empty, is_number
from sheetbuilder.workbook.formula import col_letter, quote_sheet, resolve
from sheetbuilder.workbook.spec import DATA, FORMULA, Cell, Column, Rule, Validation

Reference = Callable[[pd.DataFrame, Any], Any]


@dataclass(frozen=True)
class ColumnDef:
    """A table column defined once.

    Args:
        key: the name formulas and the reference frame use for the column.
        header: the header text on the sheet.
        style: the body cells' style key.
        help: one line for the Guide: what the column means.
        formula: template with {c:key} (same-row cell), {rng:table.column} (a range of an
            in_ sheet), {tot:key} (this column's totals-row cell); None for a data column.
        reference: pandas computation of the column from the frame of earlier columns
            and the planner's context; for data columns, the values themselves.
        kind: DATA, INPUT or FORMULA.
        total: template of the totals-row cell: {sum:key} is the sum of a column's body,
            {t:key} another totals-row cell; None leaves it blank.
        total_reference: pandas computation of the totals-row value.
        export: the column's value is copied from the exports (or computed only from such copies), so no
            input cell can change it: it is written as a plain value in the grey export style and the
            formula stays here only as the method's statement (see :func:`exports_only`).
    """

    key: str
    header: str
    style: str
    help: str
    reference: Reference
    formula: str | None = None
    kind: str = FORMULA
    width: float = 12
    hidden: bool = False
    total: str | None = None
    total_reference: Reference | None = None
    export: bool = False


def exports_only(defs: list[ColumnDef], keys: tuple[str, ...] | list[str]) -> list[ColumnDef]:
    """defs with the columns named in keys marked export: values no input cell can change.

    The rule: a column is export-only when its reference reads nothing but exported figures copied
    one-to-one (or summed over a block of one key's rows) from an in_ sheet, or other export-only
    columns. A cost, price, fee, target, threshold, setting or Decision reaching it keeps it live.
    """
    unknown = set(keys) - {d.key for d in defs}
    if unknown:
        raise ValueError(f"exports_only names columns the table does not have: {sorted(unknown)}")
    return [replace(d, export=True) if d.key in keys else d for d in defs]


EXPORT_STYLE = "_export"  # the style suffix of export-only cells (palette: grey text)


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

    def problem(self, value: Any) -> str | None:
        """Why a typed value is not valid here (None when it is, or is blank)."""
        return decision_problem(value, self.words, bool(self.numeric))

    def name_of(self, key: str) -> str:
        """The defined name over a column's body."""
        return f"{self.name}_{key}"

    def defined_names(self, planned: "PlannedTable") -> list[tuple[str, str]]:
        """(defined name, '=range') over each key column and the typed column of the planned table."""
        ranges = planned.ranges(self.sheet, self.name)
        named = (*self.keys, self.value, *((self.result,) if self.result else ()))
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
    return replace(decl, result_header=results.get(decl.result, ""))


def blank_div(num: Any, den: Any) -> Any:
    """num / den, NaN (a blank cell) where den is 0, as the formulas write IF(den=0,"",num/den)."""
    if np.ndim(num) == 0 and np.ndim(den) == 0:
        return float("nan") if float(den) == 0 or np.isnan(float(den)) else float(num) / float(den)
    num_a = np.asarray(num, dtype=float)
    den_a = np.asarray(den, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        out = np.where(den_a != 0, num_a / np.where(den_a != 0, den_a, 1.0), np.nan)
    index = num.index if isinstance(num, pd.Series) else (den.index if isinstance(den, pd.Series) else None)
    return pd.Series(out, index=index)


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


def running_key(prefix: str, what: str, condition: str, qualifies: Callable[[pd.DataFrame], pd.Series],
                position: str = "pos") -> list[ColumnDef]:
    """The one hidden column of the macro-free live list: a strictly increasing key holding the running count.

    A qualifying row's key is its running count k exactly; any other row's key is its count plus
    position / (rows + 1), a fraction below 1 that grows with the row. So the running count is
    INT of the key (INT of the previous row's key, plus 1 on a qualifying row), and MATCH(k, key, 1),
    a binary search, lands on the k-th qualifying row. condition is the formula test of a qualifying
    row, qualifies its pandas twin; position names the frame column holding the row's 1-based
    position, and the frame's n_plus column holds rows + 1 (both written into the formula per row).
    The count of qualifying rows is INT of the last key (:func:`count_formula`, :func:`count_of`).
    """
    key = f"{prefix}_key"

    def helper(df: pd.DataFrame, ctx: Any) -> pd.Series:
        hit = qualifies(df)
        return hit.astype(float).cumsum() + (df[position] / (len(df) + 1)).where(~hit, 0.0)
    return [
        ColumnDef(key, f"{what} key", "ratio",
                  f"Working: running count of {what.lower()} (whole part); a strictly increasing key, so "
                  "MATCH(k) finds the k-th.", helper,
                  "=INT(SUM({cp:%s}))+IF(%s,1,{row:%s}/{row:n_plus})" % (key, condition, position), width=6,
                  hidden=True),
    ]


def count_of(frame: pd.DataFrame, prefix: str) -> float:
    """How many rows of a planned table qualify for its running key (0 for an empty table)."""
    return float(np.floor(frame[f"{prefix}_key"].iloc[-1])) if len(frame) else 0.0


def count_formula(ranges: dict[str, str], table: str, prefix: str) -> str:
    """Formula text (no '=') of that count: INT of the table's last key."""
    return f"INT({ranges[f'{table}_last.{prefix}_key']})"


def as_cell_values(series: pd.Series) -> list:
    """A column's values as the renderer takes them (NaN stays NaN: a blank)."""
    return series.tolist()


_READS = re.compile(r"\{(?:c|tot|cp):(\w+)\}")


def compute_order(defs: list[ColumnDef]) -> list[ColumnDef]:
    """The defs in an order where each comes after the columns its body formula reads (stable).

    Totals-row templates are not followed: a total is computed right after its column.
    """
    keys = {d.key for d in defs}
    needs = {d.key: {k for k in _READS.findall(d.formula or "") if k in keys and k != d.key}
             for d in defs}
    done: set[str] = set()
    order: list[ColumnDef] = []
    while len(order) < len(defs):
        ready = [d for d in defs if d.key not in done and needs[d.key] <= done]
        if not ready:
            stuck = sorted(k for k in keys if k not in done)
            raise ValueError(f"columns depend on each other in a circle: {stuck}")
        for d in ready:
            order.append(d)
            done.add(d.key)
    return order


_ROW_VALUE = re.compile(r"\{row:(\w+)\}")


def _per_row(formula: str, frame: pd.DataFrame) -> list[str]:
    """One formula per row, each {row:key} replaced by that row's whole number from the frame."""
    keys = _ROW_VALUE.findall(formula)
    columns = {k: frame[k].to_numpy() for k in keys}
    out = []
    for i in range(len(frame)):
        text = formula
        for k in keys:
            text = text.replace("{row:%s}" % k, str(int(columns[k][i])))
        out.append(text)
    return out


@dataclass
class PlannedTable:
    """The result of planning a table: spec columns, totals cells and the reference frame."""

    columns: list[Column]
    totals: list[Cell | None] | None
    frame: pd.DataFrame
    totals_values: dict[str, Any]
    letters: dict[str, str]
    first_body_row: int = 0

    def body_range(self, sheet: str) -> str:
        """The absolute range of the whole body, every column (one row when it has none)."""
        last = self.first_body_row + max(len(self.frame), 1)
        letters = list(self.letters.values())
        return f"{quote_sheet(sheet)}!${letters[0]}${self.first_body_row + 1}:${letters[-1]}${last}"

    def ranges(self, sheet: str, prefix: str) -> dict[str, str]:
        """{'prefix.key': absolute body range} and {'prefix_total.key': totals cell} for other sheets' formulas."""
        n = len(self.frame)
        last = self.first_body_row + max(n, 1)
        sheet_ref = quote_sheet(sheet)
        out = {f"{prefix}.{k}": f"{sheet_ref}!${v}${self.first_body_row + 1}:${v}${last}"
               for k, v in self.letters.items()}
        out.update({f"{prefix}_total.{k}": f"{sheet_ref}!${v}${self.first_body_row + n + 1}"
                    for k, v in self.letters.items()})
        out.update({f"{prefix}_last.{k}": f"{sheet_ref}!${v}${self.first_body_row + max(n, 1)}"
                    for k, v in self.letters.items()})
        return out


def plan_table(defs: list[ColumnDef], base: pd.DataFrame, ctx: Any, first_body_row: int,
               ranges: dict[str, str], with_totals: bool) -> PlannedTable:
    """Compute references and resolve formulas for a table whose body starts at first_body_row (0-based)."""
    frame = base.copy()
    letters = {d.key: col_letter(i) for i, d in enumerate(defs)}
    n = len(frame)
    totals_row = first_body_row + n
    lookup = {
        "c": {k: f"{v}{{r}}" for k, v in letters.items()},
        "rng": ranges,
        "tot": {k: f"${v}${totals_row + 1}" for k, v in letters.items()},
        "sum": {k: (f"SUM({v}{first_body_row + 1}:{v}{totals_row})" if n else "0") for k, v in letters.items()},
        "t": {k: f"{v}{totals_row + 1}" for k, v in letters.items()},
        "cp": {k: f"{v}{{p}}" for k, v in letters.items()},
    }
    totals_values: dict[str, Any] = {}
    ctx.totals = totals_values
    # Totals that shares depend on are computed from data columns before formula columns.
    columns: list[Column] = []
    for d in compute_order(defs):
        values = d.reference(frame, ctx)
        frame[d.key] = values if not np.isscalar(values) else [values] * n
        if d.total_reference is not None:
            totals_values[d.key] = d.total_reference(frame, ctx)
    for d in defs:
        if d.export:  # a value no input can change: written as data, in the export style
            columns.append(Column(d.header, d.style.split("_")[0] + EXPORT_STYLE, DATA, as_cell_values(frame[d.key]),
                                  None, d.width, d.hidden))
            continue
        formula = resolve(d.formula, lookup) if d.formula else None
        if formula and "{row:" in formula:  # per-row numbers written into the formula (a direct reference)
            formula = _per_row(formula, frame)
        columns.append(Column(d.header, d.style, d.kind if d.formula is None else FORMULA,
                              as_cell_values(frame[d.key]), formula, d.width, d.hidden))
    totals = None
    if with_totals:
        totals = []
        for d in defs:
            if d.total is None:
                totals.append(None)
            elif d.total.startswith("="):
                totals.append(Cell(totals_values.get(d.key), resolve(d.total, lookup), d.style.split("_")[0] + "_total"))
            else:
                totals.append(Cell(d.total, None, "text_total"))
    return PlannedTable(columns, totals, frame, totals_values, letters, first_body_row)

