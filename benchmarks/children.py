"""The benchmark's measurements that run in a fresh interpreter each (so peak memory is each step's own).

    python -m benchmarks.children KIND ARGS...   (prints one JSON object; bench.py calls it)
"""
from __future__ import annotations

import datetime as dt
import json
import resource
import sys
import tempfile
import time
from pathlib import Path

BUILT_ON = dt.date(2026, 12, 2)


def peak_mb() -> float:
    """This process's own peak memory in MB: Linux's VmHWM, which starts afresh at exec. ru_maxrss does not: a child
    reports at least its parent's peak at the fork (a child of a 700 MB process read 713 MB, its VmHWM 13 MB)."""
    try:
        with open("/proc/self/status") as f:
            return next(int(line.split()[1]) for line in f if line.startswith("VmHWM:")) / 1024  # kB
    except (OSError, StopIteration):
        return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024  # KB on Linux


def child_build(folder: Path, out: Path) -> dict:
    """Time sheetbuilder.build (reading included) and, inside it, the render alone."""
    import importlib
    build_mod = importlib.import_module("sheetbuilder.pipeline")
    real_render, spent = build_mod.render, {}

    def timed_render(*args, **kwargs):
        t = time.perf_counter()
        real_render(*args, **kwargs)
        spent["render"] = time.perf_counter() - t

    build_mod.render = timed_render
    t, cpu = time.perf_counter(), time.process_time()
    build_mod.build(folder, out, force=True, built_on=BUILT_ON)
    return {"build_s": time.perf_counter() - t, "build_cpu_s": time.process_time() - cpu, "render_s": spent["render"],
            "peak_mb": peak_mb(), "file_mb": out.stat().st_size / 2 ** 20}


def child_previous(folder: Path, old: Path) -> dict:
    """Time a build with --previous (the old workbook read, its edits matched and carried)."""
    from sheetbuilder.pipeline import build
    out = old.with_name(old.stem + "_next.xlsx")
    t, cpu = time.perf_counter(), time.process_time()
    result = build(folder, out, force=True, built_on=BUILT_ON, previous=old)
    followup = result.plan.tables.get("Follow-up")
    return {"previous_s": time.perf_counter() - t, "previous_cpu_s": time.process_time() - cpu,
            "previous_peak_mb": peak_mb(), "previous_followup_rows": len(followup.frame) if followup else 0}


def child_changes(workbook: Path, csv_out: Path, label: str = "changes") -> dict:
    """Time the changes command on a workbook: wall and CPU seconds, and this process's peak memory."""
    from sheetbuilder.weekly.changes import export_changes
    t, cpu = time.perf_counter(), time.process_time()
    export_changes(workbook, csv_out, force=True)
    return {f"{label}_s": time.perf_counter() - t, f"{label}_cpu_s": time.process_time() - cpu,
            f"{label}_peak_mb": peak_mb()}


def child_no_values(workbook: Path, bare: Path) -> dict:
    """The workbook saved again without formula values (openpyxl stores none), for changes to read."""
    import openpyxl
    openpyxl.load_workbook(workbook).save(bare)
    return {}


def child_changes_no_values(bare: Path, csv_out: Path) -> dict:
    """Time the changes command on a workbook saved without formula values."""
    return child_changes(bare, csv_out, "changes_no_values")


def _value_writer(ws, formats):
    from sheetbuilder.workbook.render import _cached, put_value

    def write(row: int, col: int, value, style: str, formula) -> None:
        fmt = formats[style]
        if formula is None:
            put_value(ws, row, col, value, fmt)
            return
        v = _cached(value)
        if isinstance(v, str):
            ws.write_string(row, col, v, fmt) if v else ws.write_blank(row, col, None, fmt)
        else:
            ws.write_number(row, col, v, fmt)
    return write


def child_plain(folder: Path, out: Path) -> dict:
    """Write the planned cells as plain values (no formulas); time only the writing."""
    import xlsxwriter
    from sheetbuilder.pipeline import load, plan_workbook
    from sheetbuilder.workbook.palette import STYLES, style_properties
    from sheetbuilder.workbook.spec import FORMULA
    inputs, settings, problems = load(folder)
    plan = plan_workbook(inputs, settings, BUILT_ON)
    spec = plan.spec
    n_formulas = 0
    by_sheet: dict[str, int] = {}
    t = time.perf_counter()
    wb = xlsxwriter.Workbook(str(out), {"constant_memory": True, "strings_to_formulas": False,
                                        "strings_to_numbers": False, "strings_to_urls": False})
    formats = {key: wb.add_format(style_properties(key, spec.currency_symbol)) for key in STYLES}
    for sheet in spec.sheets:
        ws = wb.add_worksheet(sheet.name)
        write = _value_writer(ws, formats)
        before = n_formulas
        table = sheet.table
        if table:
            for i, column in enumerate(table.columns):
                ws.set_column(i, i, column.width)

        def rows(first: int, cells_rows) -> int:
            nonlocal n_formulas
            for i, cells in enumerate(cells_rows):
                for col, cell in enumerate(cells):
                    if cell is not None:
                        n_formulas += cell.formula is not None
                        write(first + i, col, cell.value, cell.style, cell.formula)
            return first + len(cells_rows)
        row = rows(0, sheet.above)
        if table:
            row = max(row, table.first_row)
            for col, column in enumerate(table.columns):
                ws.write_string(row, col, column.header, formats["header"])
            row += 1
            cols = [(col, c.style, c.formula if c.kind == FORMULA else None, c.values)
                    for col, c in enumerate(table.columns)]
            n_formulas += sum(1 for c in cols if c[2]) * table.n_rows
            for i in range(table.n_rows):
                for col, style, formula, values in cols:
                    write(row + i, col, values[i], style, formula)
            row += table.n_rows
            if table.totals:
                row = rows(row, [table.totals])
        rows(row, sheet.below)
        by_sheet[sheet.name] = n_formulas - before
    wb.close()
    return {"plain_s": time.perf_counter() - t, "formula_cells": n_formulas,
            "plain_mb": out.stat().st_size / 2 ** 20, "plain_peak_mb": peak_mb(),
            "formulas_by_sheet": {k: v for k, v in by_sheet.items() if v}, **_terms_stats(inputs, plan, settings)}


def _terms_stats(inputs, plan, settings) -> dict:
    """Rows of the search-terms input, the Terms sheet, the lists, and the verdict mix."""
    st = inputs.get("search_terms")
    out = {"st_rows": 0 if st is None else len(st), "list_cap": settings.list_cap}
    for name in ("Terms", "Harvest", "Negatives", "Bids", "Profit", "Groups"):
        if name in plan.tables:
            out[f"{name.lower()}_rows"] = len(plan.tables[name].frame)
    if "Terms" in plan.tables:
        frame = plan.tables["Terms"].frame
        out["terms_final"] = {k: int(v) for k, v in frame["final"].value_counts().items()}
        out["terms_targeted"] = int((frame["targeted"] != "").sum())
        out["terms_negated"] = int((frame["negated"] != "").sum())
        out["terms_with_orders"] = int((frame["orders"] > 0).sum())
    return out


def child_micro(n: int) -> dict:
    """Formula cells per second: the project's put_formula versus xlsxwriter's write_formula."""
    import xlsxwriter
    from sheetbuilder.workbook.render import put_formula, workbook_options
    templates = ['=IF(D{r}=0,"",E{r}/D{r})', '=IF(I{r}="","",D{r}*I{r}-E{r})',
                 '=IF(T{r}="",0,SUM(INDEX(in_store_sales!$C$2:$C$9999,T{r}):INDEX(in_store_sales!$C$2:$C$9999,U{r})))',
                 '=IF(D{r}=0,"no sales",IF(I{r}="","no margin",IF(L{r}<0,"loss",IF(L{r}<thin_margin,"thin",'
                 'IF(L{r}>=strong_margin,"strong","healthy")))))']
    per_row = len(templates)
    rates = {}
    with tempfile.TemporaryDirectory(prefix="sb-micro-") as tmp:
        for label in ("put_formula", "write_formula"):
            wb = xlsxwriter.Workbook(str(Path(tmp) / f"{label}.xlsx"), workbook_options())
            ws = wb.add_worksheet("Profit")
            t = time.perf_counter()
            for i in range(n // per_row):
                rs = str(i + 6)
                for col, tmpl in enumerate(templates):
                    if label == "put_formula":
                        put_formula(ws, i + 5, col, tmpl.replace("{r}", rs), None, 0.5)
                    else:
                        ws.write_formula(i + 5, col, tmpl.replace("{r}", rs), None, 0.5)
            rates[label] = (n // per_row) * per_row / (time.perf_counter() - t)
            wb.close()
    return rates




def child_keyword_history(folder: Path, out: Path, past: Path) -> dict:
    """Build with --history past (its weeks recorded), then with --previous (every week carried): times, size."""
    from sheetbuilder.pipeline import build
    t, cpu = time.perf_counter(), time.process_time()
    first = build(folder, out, force=True, built_on=BUILT_ON, history=past)
    history_s, history_cpu = time.perf_counter() - t, time.process_time() - cpu
    nxt = out.with_name(out.stem + "_next.xlsx")
    t, cpu = time.perf_counter(), time.process_time()
    build(folder, nxt, force=True, built_on=BUILT_ON, previous=out)
    previous_s, previous_cpu = time.perf_counter() - t, time.process_time() - cpu
    keywords = next(s for s in first.plan.spec.sheets if s.name == "Keyword history").table.n_rows
    return {"kh_history_build_s": history_s, "kh_previous_s": previous_s, "kh_history_build_cpu_s": history_cpu,
            "kh_previous_cpu_s": previous_cpu, "kh_peak_mb": peak_mb(),
            "kh_file_mb": nxt.stat().st_size / 2 ** 20, "kh_keywords": keywords}


def child_large(folder: Path, out: Path) -> dict:
    """Build a large account and nothing else: time, peak memory, file size."""
    return child_build(folder, out)


KINDS = {"build": child_build, "plain": child_plain, "previous": child_previous, "changes": child_changes,
         "no_values": child_no_values, "changes_no_values": child_changes_no_values, "large": child_large}


def _history_kind(rest: list[str]) -> dict:
    return child_keyword_history(Path(rest[0]), Path(rest[1]), Path(rest[2]))


def main(argv: list[str]) -> int:
    kind, rest = argv[0], argv[1:]
    if kind == "keyword_history":
        out = _history_kind(rest)
    else:
        out = child_micro(int(rest[0])) if kind == "micro" else KINDS[kind](Path(rest[0]), Path(rest[1]))
    print(json.dumps(out))
    return 0


if __name__ == "__main__":
    raise SystemExit(main(sys.argv[1:]))
