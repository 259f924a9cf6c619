"""Reading tables back out of a built workbook, and comparing values as the tests need."""
from __future__ import annotations

import datetime as dt
import math

import openpyxl

REL = 1e-9


def _day_number(value):
    """A date or datetime as a spreadsheet's day number (days since 1899-12-30); anything else as it is."""
    if isinstance(value, dt.datetime):
        return (value - dt.datetime(1899, 12, 30)).total_seconds() / 86400
    if isinstance(value, dt.date):
        return (value - dt.date(1899, 12, 30)).days
    return value


def same(expected, actual, rel: float = REL) -> bool:
    """Equal as spreadsheet values: blanks alike, numbers within rel, text exactly."""
    def blank(v):
        return v is None or v == "" or (isinstance(v, float) and math.isnan(v))
    if blank(expected) and blank(actual):
        return True
    if isinstance(expected, bool) or isinstance(actual, bool):
        return expected == actual
    # A date-formatted cell is read back as a date; an engine gives its day number (1900 date system).
    expected, actual = (_day_number(v) for v in (expected, actual))
    if isinstance(expected, (int, float)) and isinstance(actual, (int, float)):
        return math.isclose(expected, actual, rel_tol=rel, abs_tol=1e-9)
    return expected == actual


def open_values(path):
    """The workbook's stored values (the cached results for formula cells)."""
    return openpyxl.load_workbook(path, data_only=True)


def read_table(ws, header_row: int, key: str, stop: str | None = "Total"):
    """({key value: {header: value}}, totals {header: value}, {key value: {header: coordinate}}).

    header_row is 1-based. Reading stops at the row whose first cell is stop.
    """
    headers = [c.value for c in ws[header_row]]
    rows, coords, totals = {}, {}, {}
    for r in range(header_row + 1, ws.max_row + 1):
        cells = ws[r]
        first = cells[0].value
        if first is None:
            break
        record = {h: c.value for h, c in zip(headers, cells) if h}
        where = {h: c.coordinate for h, c in zip(headers, cells) if h}
        if stop is not None and first == stop:
            totals = record
            coords["__total__"] = where
            break
        rows[record[key]] = record
        coords[record[key]] = where
    return rows, totals, coords


def mismatches(expected: dict, actual: dict, headers, label: str):
    """Lines describing every (row, header) whose values differ, or that the reference does not compute."""
    out = []
    for key, exp_row in expected.items():
        act_row = actual.get(key)
        if act_row is None:
            out.append(f"{label}: row {key} missing")
            continue
        for h in headers:
            if h not in exp_row:
                out.append(f"{label}: {key} / {h}: the reference has no value for this column")
            elif not same(exp_row[h], act_row.get(h)):
                out.append(f"{label}: {key} / {h}: expected {exp_row[h]!r}, got {act_row.get(h)!r}")
    return out


def formula_cells(path) -> set[tuple[str, str]]:
    """{(SHEET upper-case, 'A1')} of every cell holding a formula."""
    wb = openpyxl.load_workbook(path)
    return {(ws.title.upper(), c.coordinate) for ws in wb.worksheets for row in ws.iter_rows() for c in row
            if isinstance(c.value, str) and c.value.startswith("=")}


def engine_disagreements(path, recalculated: dict) -> tuple[list[str], int]:
    """Formula cells whose cached value differs from a recalculated one; and how many were compared."""
    wb = open_values(path)
    sheets = {ws.title.upper(): ws for ws in wb.worksheets}
    out, checked = [], 0
    for key in sorted(formula_cells(path)):
        sheet, coord = key
        value = recalculated.get(key, "<not computed>")
        cached = sheets[sheet][coord].value
        checked += 1
        if not same(cached, value):
            out.append(f"{sheet}!{coord}: cached {cached!r}, recalculated {value!r}")
    return out, checked


def styled(ws, row: int, col: int):
    """The cell at (row, col) as a spreadsheet shows it: itself when written, else its column's format.

    A blank of a plain style is not written (workbook/render.py): the column's format (ECMA-376 18.3.1.13, the
    col element's style) is what such a cell is formatted and protected by. openpyxl gives an unwritten cell the
    default style, so read the column's instead."""
    cell = ws.cell(row, col)
    if cell.has_style or cell.value is not None:
        return cell
    for dim in list(ws.column_dimensions.values()):
        if dim.min is not None and dim.min <= col <= dim.max:
            return dim
    return cell
