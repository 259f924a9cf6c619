"""Doing what a person does in LibreOffice Calc, through its UNO bridge (run with the system python3).

    /usr/bin/python3 tests/uno_driver.py jobs.json

Debian's python3-uno installs the bridge for the system interpreter only, so this script imports
nothing of sheetbuilder's and talks JSON (as benchmarks/lo_uno.py does). It starts one headless
soffice for every job, and for each job {"label", "src", "dst", "steps"} opens a copy of src, runs
the steps in order, recalculates every formula (calculateAll) and saves the workbook to dst (as
OpenDocument when dst ends in .ods, else as .xlsx).
A step is one of
  {"op": "sort", "sheet", "range": [first col, first row, last col, last row] (0-based, the rows
   sorted, without the header), "by": column offset in the range, "ascending": bool}: Data > Sort;
  {"op": "set", "sheet", "cell": "D27", "value": a number or text}: typing into one cell;
  {"op": "delete_row", "sheet", "row": 0-based row}: Delete Rows on one row;
  {"op": "rename_sheet", "sheet", "to": new name}: renaming a tab (Sheet > Rename Sheet);
  {"op": "copy_sheet", "sheet", "to": the copy's name, "position": 0-based place among the tabs}: Sheet > Move or
   Copy Sheet with Copy ticked.
A sort or a typed value reaching a locked cell of a protected sheet is refused, as the program refuses
it to a person.
It prints one JSON object {label: {"error": text or None}} (the first refusal, if any). soffice is ended by its process id.
"""
from __future__ import annotations

import json
import shutil
import sys
from pathlib import Path

import uno
from com.sun.star.table import TableSortField

sys.path.insert(0, str(Path(__file__).resolve().parent.parent / "benchmarks"))
from lo_uno import _prop, run_jobs  # noqa: E402  (one soffice per run, as the benchmark starts it)


def _sort(sheet, step: dict) -> None:
    """Sort the rows of a range by one of its columns, as Data > Sort does (no header inside the range)."""
    c0, r0, c1, r1 = step["range"]
    rng = sheet.getCellRangeByPosition(c0, r0, c1, r1)
    field = TableSortField()
    field.Field = int(step["by"])
    field.IsAscending = bool(step.get("ascending", True))
    desc = list(rng.createSortDescriptor())
    for p in desc:
        if p.Name == "SortFields":
            p.Value = uno.Any("[]com.sun.star.table.TableSortField", (field,))
        elif p.Name == "ContainsHeader":
            p.Value = False
    uno.invoke(rng, "sort", (uno.Any("[]com.sun.star.beans.PropertyValue", tuple(desc)),))


def _locked(sheet, step: dict) -> bool:
    """Whether the step reaches a locked cell (refused on a protected sheet): each column's first and last
    cell of a sorted range (a column's cells share one style), or the typed cell."""
    if step["op"] == "set":
        cells = [sheet.getCellRangeByName(step["cell"])]
    else:
        c0, r0, c1, r1 = step["range"]
        cells = [sheet.getCellByPosition(c, r) for c in range(c0, c1 + 1) for r in (r0, r1)]
    return any(cell.CellProtection.IsLocked for cell in cells)


def _set(sheet, step: dict) -> None:
    cell = sheet.getCellRangeByName(step["cell"])
    if isinstance(step["value"], str):
        cell.setString(step["value"])
    else:
        cell.setValue(float(step["value"]))


FILTERS = {".ods": "calc8"}  # OpenDocument spreadsheet, as File > Save As writes it; else .xlsx


def _filter(dst: str) -> str:
    """The export filter for the destination's suffix."""
    return FILTERS.get(Path(dst).suffix.lower(), "Calc MS Excel 2007 XML")


def _rename(doc, sheet, step: dict) -> None:
    """Rename a tab, as a person does (LibreOffice rewrites the formulas and defined names that name it)."""
    sheet.setName(step["to"])


def _copy(doc, sheet, step: dict) -> None:
    """Copy a whole sheet to a new tab at a place among the tabs."""
    doc.Sheets.copyByName(step["sheet"], step["to"], int(step.get("position", doc.Sheets.getCount())))


TABS = {"rename_sheet": _rename, "copy_sheet": _copy}


def run_job(desktop, job: dict, scratch: Path) -> dict:
    copy = scratch / f"{job['label']}.xlsx"  # a private copy: no lock file beside the caller's workbook
    shutil.copyfile(job["src"], copy)
    doc = desktop.loadComponentFromURL(uno.systemPathToFileUrl(str(copy)), "_blank", 0, (_prop("Hidden", True),))
    if doc is None:
        return {"error": f"LibreOffice could not open {job['src']}"}
    try:
        for step in job["steps"]:
            sheet = doc.Sheets.getByName(step["sheet"])
            if step["op"] in TABS:
                TABS[step["op"]](doc, sheet, step)
                continue
            if step["op"] == "delete_row":  # LibreOffice itself refuses it on a protected sheet
                try:
                    sheet.Rows.removeByIndex(int(step["row"]), 1)
                except uno.getClass("com.sun.star.uno.RuntimeException") as exc:
                    return {"error": f"LibreOffice refused to delete row {step['row'] + 1} of {step['sheet']}: {exc}"}
                continue
            if sheet.isProtected() and _locked(sheet, step):
                return {"error": f"{step['sheet']} is protected: LibreOffice refuses to {step['op']} there"}
            {"sort": _sort, "set": _set}[step["op"]](sheet, step)
        doc.calculateAll()
        doc.storeToURL(uno.systemPathToFileUrl(str(Path(job["dst"]).resolve())),
                       (_prop("FilterName", _filter(job["dst"])),))
    finally:
        doc.close(True)
    return {"error": None}


def main(argv: list[str]) -> int:
    jobs = json.loads(Path(argv[0]).read_text(encoding="utf-8"))
    print(json.dumps(run_jobs(jobs, run_job, "sbtest")))
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
