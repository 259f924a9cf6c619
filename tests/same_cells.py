"""Comparing two built workbooks cell by cell: every computed (formula) cell and its cached value."""
from __future__ import annotations

from pathlib import Path

import openpyxl

from workbook_io import same


def computed_cells(path: Path) -> dict[tuple[str, str], tuple[str, object]]:
    """{(sheet, 'A1'): (formula text, cached value)} of every formula cell of a workbook."""
    formulas = openpyxl.load_workbook(path)
    values = openpyxl.load_workbook(path, data_only=True)
    out = {}
    for ws in formulas.worksheets:
        cached = values[ws.title]
        for row in ws.iter_rows():
            for cell in row:
                if isinstance(cell.value, str) and cell.value.startswith("="):
                    out[(ws.title, cell.coordinate)] = (cell.value, cached[cell.coordinate].value)
    return out


def computed_differences(expected: Path, actual: Path) -> list[str]:
    """Lines naming every formula cell whose formula or cached value differs between two workbooks."""
    want, got = computed_cells(expected), computed_cells(actual)
    out = [f"{k}: only in {expected.name}" for k in sorted(set(want) - set(got))]
    out += [f"{k}: only in {actual.name}" for k in sorted(set(got) - set(want))]
    for key in sorted(set(want) & set(got)):
        (f1, v1), (f2, v2) = want[key], got[key]
        if f1 != f2 or not same(v1, v2):
            out.append(f"{key}: expected {f1} = {v1!r}, got {f2} = {v2!r}")
    return out
