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

from sheetbuilder.workbook.formula import col_letter, quote_sheet, resolve
from sheetbuilder.workbook.spec import DATA, FORMULA, Cell, Column

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


def as_cell_values(series: pd.Series) -> list:
    """A column's values as the renderer takes them (NaN stays NaN: a blank)."""
    return series.tolist()


_READS = re.compile(r"\{(?:c|tot|cp|at):(\w+)\}")


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
_AT = re.compile(r"\{at:(\w+)\}")  # the row's own cell of a column where the table has it, else its number


def _per_row(formula: str, frame: pd.DataFrame) -> str | list[str]:
    """One formula per row, each {row:key} replaced by that row's whole number from the frame; the one formula
    of every row when each such number is the same on every row (written once: the renderer may share it)."""
    for key in set(_ROW_VALUE.findall(formula)):
        values = frame[key].to_numpy()
        if len(values) and (values == values[0]).all():
            formula = formula.replace("{row:%s}" % key, str(int(values[0])))
    keys = _ROW_VALUE.findall(formula)
    if not keys:
        return formula
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
    kept: Any = None  # what its planner made beside the frame for later readers (Actions: its change list)

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
        template = _AT.sub(lambda m: ("{c:%s}" if m.group(1) in letters else "{row:%s}") % m.group(1), d.formula or "")
        formula = resolve(template, lookup) if template else None
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

