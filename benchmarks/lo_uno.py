"""LibreOffice timings through its Python UNO bridge (run with the system python3, not the venv).

    /usr/bin/python3 benchmarks/lo_uno.py jobs.json

Debian's python3-uno installs the bridge (uno.py) for the system interpreter only, so this
script imports nothing of sheetbuilder's and talks JSON: it reads a list of jobs
({"path", "label", "edit", "calc_repeat"}), starts one headless soffice listening on a pipe with a private
profile that never recalculates on load, and for each file times:

- load_s: opening the file (formulas parsed and linked, cached values trusted); load_cpu_s the CPU seconds
  soffice spent on it (every thread), which other work on a shared machine stretches less than wall time;
- calc_s: `calculateAll()` on the open document (every formula recalculated), the least of
  calc_repeat runs (default 1; 0 times the load alone), and calc_cpu_s its CPU seconds;
- with "edit": edit_s, one unit cost on in_catalog raised by 1 and `calculate()` (the dirty
  cells recalculated), with the Profit sheet's first dependent value read before and after;
  edit_set_s, the part of it that setting the value takes (LibreOffice marks every dependent
  formula dirty there, through each range that holds the cell, and computes nothing);
  save_s, the edited file saved as .xlsx.

It prints one JSON object {label: figures}. soffice is ended by its process id.
"""
from __future__ import annotations

import json
import os
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import uno  # noqa: F401  (python3-uno; sets up the bridge)
from com.sun.star.beans import PropertyValue
from com.sun.star.connection import NoConnectException

_PROFILE = """<?xml version="1.0" encoding="UTF-8"?>
<oor:items xmlns:oor="http://openoffice.org/2001/registry" xmlns:xs="http://www.w3.org/2001/XMLSchema" \
xmlns:xsi="http://www.w3.org/2001/XMLSchema-instance">
<item oor:path="/org.openoffice.Office.Calc/Formula/Load"><prop oor:name="OOXMLRecalcMode" oor:op="fuse">\
<value>1</value></prop></item>
<item oor:path="/org.openoffice.Office.Calc/Formula/Load"><prop oor:name="ODFRecalcMode" oor:op="fuse">\
<value>1</value></prop></item>
</oor:items>
"""


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


def _unit_cost_cell(doc):
    """The first product's unit cost on in_catalog (row 2), or None."""
    if not doc.Sheets.hasByName("in_catalog"):
        return None
    sheet = doc.Sheets.getByName("in_catalog")
    for col in range(40):
        if sheet.getCellByPosition(col, 0).getString() == "unit_cost":
            return sheet.getCellByPosition(col, 1)
    return None


def _profit_probe(doc):
    """A Profit formula cell that follows the first product's unit cost (its first formula number cell)."""
    if not doc.Sheets.hasByName("Profit"):
        return None
    sheet = doc.Sheets.getByName("Profit")
    for row in range(3, 12):
        for col in range(8, 14):
            cell = sheet.getCellByPosition(col, row)
            if cell.getFormula().startswith("="):
                return cell
    return None


_OFFICE_PIDS: list[int] = []  # soffice's processes (the launcher and what it starts), found once it listens


def _descendants(pid: int) -> list[int]:
    """pid and every process below it, read from /proc (Linux)."""
    children: dict[int, list[int]] = {}
    for entry in os.listdir("/proc"):
        if entry.isdigit():
            try:
                stat = Path(f"/proc/{entry}/stat").read_text()
            except OSError:
                continue
            ppid = int(stat.rsplit(")", 1)[1].split()[1])
            children.setdefault(ppid, []).append(int(entry))
    out, todo = [], [pid]
    while todo:
        p = todo.pop()
        out.append(p)
        todo += children.get(p, [])
    return out


def office_cpu_s() -> float:
    """CPU seconds (user + system, every thread) soffice's processes have used so far: unlike wall time, other
    work on a shared machine stretches it little."""
    total = 0
    for pid in _OFFICE_PIDS:
        try:
            fields = Path(f"/proc/{pid}/stat").read_text().rsplit(")", 1)[1].split()
        except OSError:
            continue
        total += int(fields[11]) + int(fields[12])  # utime, stime (fields 14 and 15 of proc(5))
    return total / os.sysconf("SC_CLK_TCK")


def time_file(desktop, job: dict, scratch: Path) -> dict:
    url = uno.systemPathToFileUrl(str(Path(job["path"]).resolve()))
    t, cpu = time.perf_counter(), office_cpu_s()
    doc = desktop.loadComponentFromURL(url, "_blank", 0, (_prop("Hidden", True),))
    out = {"load_s": time.perf_counter() - t, "load_cpu_s": office_cpu_s() - cpu}
    try:
        runs = []
        cpus = []
        for _ in range(int(job.get("calc_repeat", 1))):  # the least of a few: the machine is shared; 0: load only
            t, cpu = time.perf_counter(), office_cpu_s()
            doc.calculateAll()
            runs.append(time.perf_counter() - t)
            cpus.append(office_cpu_s() - cpu)
        out["calc_s"] = min(runs) if runs else None
        out["calc_cpu_s"] = min(cpus) if cpus else None
        if job.get("edit"):
            cell, probe = _unit_cost_cell(doc), _profit_probe(doc)
            if cell is not None:
                before = probe.getValue() if probe is not None else None
                t = time.perf_counter()
                cell.setValue(cell.getValue() + 1.0)
                marked = time.perf_counter()
                doc.calculate()
                out["edit_s"] = time.perf_counter() - t
                out["edit_set_s"] = marked - t  # the value set: every dependent marked dirty, nothing computed
                if probe is not None:
                    out["edit_probe"] = [probe.getFormula(), before, probe.getValue()]
                target = uno.systemPathToFileUrl(str(scratch / (Path(job["path"]).stem + "_edited.xlsx")))
                t = time.perf_counter()
                doc.storeToURL(target, (_prop("FilterName", "Calc MS Excel 2007 XML"),))
                out["save_s"] = time.perf_counter() - t
    finally:
        doc.close(True)
    return out


def run_jobs(jobs: list[dict], do_job, name: str = "sbbench") -> dict:
    """Start one headless soffice (private profile, ended by its process id) and run do_job(desktop, job,
    scratch folder) for each job; {job label: what do_job returned}. tests/uno_driver.py uses it too."""
    with tempfile.TemporaryDirectory(prefix="sb-uno-") as tmp:
        user = Path(tmp) / "profile" / "user"
        user.mkdir(parents=True)
        (user / "registrymodifications.xcu").write_text(_PROFILE, encoding="utf-8")
        pipe = f"{name}{os.getpid()}"
        exe = os.environ.get("SOFFICE", "soffice")
        proc = subprocess.Popen([exe, f"-env:UserInstallation=file://{Path(tmp) / 'profile'}", "--headless",
                                 "--invisible", "--norestore", "--nologo", "--nodefault",
                                 f"--accept=pipe,name={pipe};urp;StarOffice.ComponentContext"],
                                stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL, env={**os.environ, "HOME": tmp})
        results = {}
        try:
            desktop = _connect(pipe, proc)
            _OFFICE_PIDS[:] = _descendants(proc.pid)
            for job in jobs:
                results[job["label"]] = do_job(desktop, job, Path(tmp))
            try:
                desktop.terminate()
            except Exception:  # the bridge closes as soffice quits
                pass
            proc.wait(timeout=60)
        finally:
            if proc.poll() is None:
                proc.kill()
                proc.wait()
    return results


def main(argv: list[str]) -> int:
    jobs = json.loads(Path(argv[0]).read_text(encoding="utf-8"))
    print(json.dumps(run_jobs(jobs, time_file)))
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
