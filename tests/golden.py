"""The golden comparison of a built workbook with a saved sample, after a documented normalisation.

`snapshot(path)` reads a workbook with openpyxl into plain data, per sheet: each non-empty
cell's formula (or constant) and cached value, each cell's number format, the column widths
and hidden columns, the merged ranges, the data validations (type, ranges, formula, list),
the conditional formats, the freeze panes, print area and print titles, the sheet's state;
and the workbook's sheet order and defined names. Not compared: charts, cell styles other
than the number format, comments, protection. `normalise` then replaces what legitimately
changes between two builds of the same inputs with a fixed token, so that only an unintended
change in the output remains. Found by building the demo on different `built_on` dates
(2026-11-30, 2026-12-02, 2027-03-15) and with another `__version__`: only these differ.

- the Guide's build record: "Tool version" (`sheetbuilder X.Y.Z`) and "Built on" (the date);
- the Settings sheet's "Built on" cell (the named cell `built_on`, a date);
- the attribution warning's cached text on the Guide and on Profit (it depends on the build
  date against the period end; its formula is compared as it is).

Nothing else in the demo depends on the date or the version (the Follow-up and History
sheets do, but the demo has no previous workbook). The file's own metadata (docProps:
creation time, application) is not read at all.

`differences(expected, got)` lists every difference as one readable line ("Profit!M5
formula: expected '=...' got '=...'").
"""
from __future__ import annotations

import datetime as dt
from pathlib import Path

import openpyxl
from openpyxl.utils import get_column_letter

NORMALISED = "<normalised>"
VERSION_PREFIX = "sheetbuilder "


def _cells(ws, ws_values) -> dict[str, tuple]:
    """{coordinate: (formula or constant, cached value, number format)} for every cell with content or a format."""
    out = {}
    for row in ws.iter_rows():
        for cell in row:
            value = cell.value
            fmt = cell.number_format
            if value is None and fmt == "General":
                continue
            cached = ws_values[cell.coordinate].value
            if hasattr(value, "text"):  # an ArrayFormula or DataTableFormula object
                value = f"array {value.ref}: {value.text}"
            out[cell.coordinate] = (_plain(value), _plain(cached), fmt)
    return out


def _plain(value):
    """Dates as ISO text, floats rounded to 12 significant digits (a cached value written by Python's repr)."""
    if isinstance(value, (dt.date, dt.datetime)):
        return value.isoformat()
    if isinstance(value, float):
        return float(f"{value:.12g}")
    return value


def _validations(ws) -> list[tuple]:
    return sorted((str(v.sqref), v.type or "", v.operator or "", v.formula1 or "", v.formula2 or "",
                   bool(v.allow_blank), v.errorStyle or "", v.showErrorMessage or False)
                  for v in ws.data_validations.dataValidation)


def _conditional_formats(ws) -> list[tuple]:
    return sorted((str(cf.sqref), r.type or "", r.operator or "", tuple(r.formula or ()), r.priority or 0)
                  for cf in ws.conditional_formatting for r in cf.rules)


def _layout(ws) -> dict[str, str]:
    """Freeze panes, print area and print titles: what a reader sees first and what prints."""
    return {"freeze panes": str(ws.freeze_panes), "print area": str(ws.print_area),
            "print title rows": str(ws.print_title_rows), "print title columns": str(ws.print_title_cols)}


def _columns(ws) -> dict[str, tuple]:
    out = {}
    for key, dim in ws.column_dimensions.items():
        for col in range(dim.min or 0, (dim.max or 0) + 1):
            if col:
                out[get_column_letter(col)] = (dim.width, bool(dim.hidden))
    return out


def snapshot(path: Path) -> dict:
    """The comparable content of a workbook: {"sheets": [...], "names": {...}, sheet name: {...}}."""
    wb = openpyxl.load_workbook(path)
    wb_values = openpyxl.load_workbook(path, data_only=True)
    try:
        snap = {"sheets": list(wb.sheetnames),
                "names": {name: dn.attr_text for name, dn in wb.defined_names.items()}}
        for ws in wb.worksheets:
            for name, dn in ws.defined_names.items():
                snap["names"][f"{ws.title}!{name}"] = dn.attr_text
            snap[ws.title] = {
                "cells": _cells(ws, wb_values[ws.title]),
                "columns": _columns(ws),
                "merged": sorted(str(r) for r in ws.merged_cells.ranges),
                "validations": _validations(ws),
                "conditional formats": _conditional_formats(ws),
                "layout": _layout(ws),
                "state": ws.sheet_state,
            }
        return snap
    finally:
        wb.close()
        wb_values.close()


def _label_right_of(cells: dict, label: str) -> list[str]:
    """Coordinates of the cells right of every cell whose constant is `label` (a build-record row)."""
    from openpyxl.utils.cell import coordinate_from_string
    found = []
    for coord, (value, _, _) in cells.items():
        if value == label:
            col, row = coordinate_from_string(coord)
            right = get_column_letter(openpyxl.utils.column_index_from_string(col) + 1) + str(row)
            found.append(right)
    return found


def normalise(snap: dict) -> dict:
    """Replace the build date, the version strings and the date-dependent warning's cached text (see module doc)."""
    for sheet in snap["sheets"]:
        cells = snap[sheet]["cells"]
        for label in ("Tool version", "Built on"):
            for coord in _label_right_of(cells, label):
                if coord in cells:
                    value, cached, fmt = cells[coord]
                    if isinstance(value, str) and not value.startswith("="):
                        value = NORMALISED
                    cached = NORMALISED
                    cells[coord] = (value, cached, fmt)
        for coord, (value, cached, fmt) in list(cells.items()):
            if isinstance(value, str) and value.startswith("=") and "built_on" in value:
                cells[coord] = (value, NORMALISED, fmt)  # its formula is compared; its cached value follows the date
            elif isinstance(value, str) and value.startswith(VERSION_PREFIX):
                cells[coord] = (NORMALISED, NORMALISED, fmt)
    return snap


def differences(expected: dict, got: dict) -> list[str]:
    """Every difference between two normalised snapshots, one readable line each, in sheet order."""
    out = []
    if expected["sheets"] != got["sheets"]:
        out.append(f"sheet order: expected {expected['sheets']} got {got['sheets']}")
    for name in sorted(set(expected["names"]) | set(got["names"])):
        a, b = expected["names"].get(name), got["names"].get(name)
        if a != b:
            out.append(f"defined name {name}: expected {a!r} got {b!r}")
    for sheet in [s for s in expected["sheets"] if s in got["sheets"]]:
        e, g = expected[sheet], got[sheet]
        if e["state"] != g["state"]:
            out.append(f"{sheet} state: expected {e['state']} got {g['state']}")
        for coord in _sorted_coords(set(e["cells"]) | set(g["cells"])):
            a = e["cells"].get(coord, (None, None, "General"))
            b = g["cells"].get(coord, (None, None, "General"))
            for part, x, y in zip(("formula or value", "cached value", "number format"), a, b):
                if x != y:
                    x, y = _around_first_difference(x, y)
                    out.append(f"{sheet}!{coord} {part}: expected {x} got {y}")
        for col in _sorted_coords(set(e["columns"]) | set(g["columns"])):
            a, b = e["columns"].get(col), g["columns"].get(col)
            if a != b:
                out.append(f"{sheet}!{col}:{col} column (width, hidden): expected {a} got {b}")
        if e["merged"] != g["merged"]:
            out.append(f"{sheet} merged ranges: expected {sorted(set(e['merged']) - set(g['merged']))} "
                       f"got {sorted(set(g['merged']) - set(e['merged']))} (only the differing ones)")
        for v in sorted(set(e["validations"]) ^ set(g["validations"])):
            side = "expected only" if v in e["validations"] else "got only"
            out.append(f"{sheet} data validation {side}: {v}")
        for v in sorted(set(e["conditional formats"]) ^ set(g["conditional formats"])):
            side = "expected only" if v in e["conditional formats"] else "got only"
            out.append(f"{sheet} conditional format {side}: {v}")
        for key in e["layout"]:
            if e["layout"][key] != g["layout"][key]:
                out.append(f"{sheet} {key}: expected {e['layout'][key]!r} got {g['layout'][key]!r}")
    return out


def _around_first_difference(x, y, width: int = 120) -> tuple[str, str]:
    """Both values as repr; two long texts cut to the part around their first differing character."""
    if not (isinstance(x, str) and isinstance(y, str)) or max(len(x), len(y)) <= width:
        return repr(x), repr(y)
    at = next((i for i, (a, b) in enumerate(zip(x, y)) if a != b), min(len(x), len(y)))
    start = max(0, at - 40)

    def cut(s: str) -> str:
        return ("..." if start else "") + repr(s[start:start + width])[1:-1] + ("..." if start + width < len(s) else "")
    return f"'{cut(x)}'", f"'{cut(y)}'"


def _sorted_coords(coords):
    """Coordinates in reading order (row, then column)."""
    from openpyxl.utils.cell import coordinate_from_string, column_index_from_string

    def key(c):
        if c.isalpha():
            return (0, column_index_from_string(c))
        col, row = coordinate_from_string(c)
        return (row, column_index_from_string(col))
    return sorted(coords, key=key)
