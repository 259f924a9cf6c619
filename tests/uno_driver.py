"""Doing what a person does in LibreOffice Calc, through its UNO bridge (run with the system python3).

    /usr/bin/python3 tests/uno_driver.py jobs.json

Debian's python3-uno installs the bridge for the system interpreter only, so this script imports
nothing of sheetbuilder's and talks JSON (as benchmarks/lo_uno.py does). It starts one headless
soffice for every job, and for each job {"label", "src", "dst", "steps"} opens a copy of src, runs
the steps in order, recalculates every formula (calculateAll) and saves the workbook as .xlsx to dst.
A step is one of
  {"op": "sort", "sheet", "range": [first col, first row, last col, last row] (0-based, the rows
   sorted, without the header), "by": column offset in the range, "ascending": bool}: Data > Sort;
  {"op": "set", "sheet", "cell": "D27", "value": a number or text}: typing into one cell.
A sort or a typed value on a protected sheet is refused, as the program refuses it to a person.
It prints one JSON object {label: {"error": text or None}}. soffice is ended by its process id.
"""
from __future__ import annotations

import json
import os
import shutil
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import uno
from com.sun.star.beans import PropertyValue
from com.sun.star.connection import NoConnectException
from com.sun.star.table import TableSortField


def _prop(name: str, value) -> PropertyValue:
    p = PropertyValue()
    p.Name, p.Value = name, value
    return p


def _connect(pipe: str, proc: subprocess.Popen, wait_s: float = 120):
    local = uno.getComponentContext()
    resolver = local.ServiceManager.createInstanceWithContext("com.sun.star.bridge.UnoUrlResolver", local)
    end = time.time() + wait_s
    while True:
        try:
            ctx = resolver.resolve(f"uno:pipe,name={pipe};urp;StarOffice.ComponentContext")
            return ctx.ServiceManager.createInstanceWithContext("com.sun.star.frame.Desktop", ctx)
        except NoConnectException:
            if proc.poll() is not None or time.time() > end:
                raise SystemExit(f"soffice did not start (exit {proc.poll()})")
            time.sleep(0.5)


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


def _set(sheet, step: dict) -> None:
    cell = sheet.getCellRangeByName(step["cell"])
    if isinstance(step["value"], str):
        cell.setString(step["value"])
    else:
        cell.setValue(float(step["value"]))


def run_job(desktop, job: dict, scratch: Path) -> dict:
    copy = scratch / f"{job['label']}.xlsx"  # a private copy: no lock file beside the caller's workbook
    shutil.copyfile(job["src"], copy)
    doc = desktop.loadComponentFromURL(uno.systemPathToFileUrl(str(copy)), "_blank", 0, (_prop("Hidden", True),))
    if doc is None:
        return {"error": f"LibreOffice could not open {job['src']}"}
    try:
        for step in job["steps"]:
            sheet = doc.Sheets.getByName(step["sheet"])
            if sheet.isProtected():
                return {"error": f"{step['sheet']} is protected: LibreOffice refuses to {step['op']} there"}
            {"sort": _sort, "set": _set}[step["op"]](sheet, step)
        doc.calculateAll()
        doc.storeToURL(uno.systemPathToFileUrl(str(Path(job["dst"]).resolve())),
                       (_prop("FilterName", "Calc MS Excel 2007 XML"),))
    finally:
        doc.close(True)
    return {"error": None}


def main(argv: list[str]) -> int:
    jobs = json.loads(Path(argv[0]).read_text(encoding="utf-8"))
    with tempfile.TemporaryDirectory(prefix="sb-uno-test-") as tmp:
        pipe = f"sbtest{os.getpid()}"
        exe = os.environ.get("SOFFICE", "soffice")
        proc = subprocess.Popen([exe, f"-env:UserInstallation=file://{Path(tmp) / 'profile'}", "--headless",
                                 "--invisible", "--norestore", "--nologo", "--nodefault",
                                 f"--accept=pipe,name={pipe};urp;StarOffice.ComponentContext"],
                                stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL, env={**os.environ, "HOME": tmp})
        results = {}
        try:
            desktop = _connect(pipe, proc)
            for job in jobs:
                results[job["label"]] = run_job(desktop, job, Path(tmp))
            try:
                desktop.terminate()
            except Exception:  # the bridge closes as soffice quits
                pass
            proc.wait(timeout=60)
        finally:
            if proc.poll() is None:
                proc.kill()
                proc.wait()
    print(json.dumps(results))
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
