"""Benchmark (not a test): build time, memory and LibreOffice recalculation on synthetic accounts.

    python -m sheetbuilder.bench [--sizes 1000,10000,100000] [--no-libreoffice]

For each size N (ad rows) it writes a synthetic account as CSV files, then in fresh
subprocesses (so peak memory is each step's own) times the real build, and a baseline
that writes the same cells as plain values; then LibreOffice's load-recalculate-save
of both files. Figures are printed as a table and written to bench_results.json.
"""
from __future__ import annotations

import argparse
import datetime as dt
import json
import resource
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
import pandas as pd

AIMS = ("aims: build <= 2.5x plain write; recalc <= 1.5x values-only load; "
        "10x rows <= 11x time")
BUILT_ON = dt.date(2026, 12, 2)


def make_account(folder: Path, n: int, seed: int = 20261202) -> None:
    """Write a synthetic account of n ad rows (and ~n/20 products) as CSV files into folder."""
    rng = np.random.default_rng(seed)
    folder.mkdir(parents=True, exist_ok=True)
    n_products = max(20, n // 20)
    ids = np.array([f"SKU-{i:06d}" for i in range(n_products)], dtype=object)
    price = np.round(rng.uniform(8, 120, n_products), 2)
    cost = np.round(price * rng.uniform(0.2, 0.55, n_products), 2)
    fees = np.round(price * rng.uniform(0.08, 0.2, n_products), 2)
    target = np.where(rng.random(n_products) < 0.3, np.round(rng.uniform(0.15, 0.4, n_products), 2), np.nan)
    margin = np.where(rng.random(n_products) < 0.1, np.round(rng.uniform(0.1, 0.5, n_products), 2), np.nan)
    catalog = pd.DataFrame({"product_id": ids, "product_name": [f"Product {i} garden item" for i in range(n_products)],
                            "price": price, "unit_cost": cost, "fees_per_unit": fees,
                            "target_acos": target, "margin": margin})
    catalog.to_csv(folder / "catalog.csv", index=False, float_format="%.2f")
    units = rng.integers(0, 400, n_products)
    pd.DataFrame({"product_id": ids, "units": units, "revenue": np.round(units * price, 2)}).to_csv(
        folder / "store_sales.csv", index=False, float_format="%.2f")

    def metrics(m: int) -> dict:
        impressions = rng.integers(0, 20_000, m)
        clicks = rng.binomial(impressions, 0.01)
        orders = rng.binomial(clicks, 0.1)
        spend = np.round(clicks * rng.uniform(0.2, 1.5, m), 2)
        return {"impressions": impressions, "clicks": clicks, "spend": spend,
                "ad_sales": np.round(orders * rng.uniform(8, 120, m), 2), "orders": orders}

    n_campaigns = max(5, n // 200)
    camp = rng.integers(0, n_campaigns, n)
    campaign = pd.Series(camp).map(lambda c: f"Campaign {c:04d} - Manual").to_numpy()
    ad_group = pd.Series(rng.integers(0, 8, n)).map(lambda g: f"Group {g}").to_numpy()
    pd.DataFrame({"campaign": campaign, "ad_group": ad_group, "product_id": ids[rng.integers(0, n_products, n)],
                  "ad_type": "product ads", **metrics(n)}).to_csv(folder / "ad_products.csv", index=False)
    m = n  # as many keyword and product targets as ad rows: 100k targets at the largest size
    words = np.array(["cedar bed", "raised planter", "hose reel", "garden gloves", "pruning shears", "seed tray"])
    pick = rng.integers(0, n, m)  # each target sits in an ad group that advertises products
    camp_m = campaign[pick]
    pd.DataFrame({"campaign": camp_m, "ad_group": ad_group[pick],
                  "target": [f"{words[i % len(words)]} {i}" for i in range(m)],
                  "match_type": np.array(["exact", "phrase", "broad", "product"])[rng.integers(0, 4, m)],
                  "state": np.where(rng.random(m) < 0.9, "enabled", "paused"),
                  "bid": np.round(rng.uniform(0.2, 2, m), 2), **metrics(m)}).to_csv(
        folder / "targets.csv", index=False)
    m = max(10, n // 20)
    pd.DataFrame({"campaign": campaign[rng.integers(0, n, m)], "ad_group": "Group 1", "target": words[rng.integers(0, len(words), m)],
                  "match_type": "broad", "search_term": [f"term {i}" for i in range(m)], **metrics(m)}).to_csv(
        folder / "search_terms.csv", index=False)
    (folder / "settings.toml").write_text('currency_symbol = "$"\nperiod_days = 30\nperiod_end = 2026-11-29\n')


def _peak_mb() -> float:
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
    t = time.perf_counter()
    build_mod.build(folder, out, force=True, built_on=BUILT_ON)
    return {"build_s": time.perf_counter() - t, "render_s": spent["render"], "peak_mb": _peak_mb(),
            "file_mb": out.stat().st_size / 2 ** 20}


def _value_writer(ws, formats):
    from .render import _cached, put_value

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
    from .pipeline import load, plan_workbook
    from .palette import STYLES, style_properties
    from .spec import FORMULA
    inputs, settings, problems = load(folder)
    spec = plan_workbook(inputs, settings, BUILT_ON).spec
    n_formulas = 0
    t = time.perf_counter()
    wb = xlsxwriter.Workbook(str(out), {"constant_memory": True, "strings_to_formulas": False,
                                        "strings_to_numbers": False, "strings_to_urls": False})
    formats = {key: wb.add_format(style_properties(key, spec.currency_symbol)) for key in STYLES}
    for sheet in spec.sheets:
        ws = wb.add_worksheet(sheet.name)
        write = _value_writer(ws, formats)
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
    wb.close()
    return {"plain_s": time.perf_counter() - t, "formula_cells": n_formulas,
            "plain_mb": out.stat().st_size / 2 ** 20, "plain_peak_mb": _peak_mb()}


def child_micro(n: int) -> dict:
    """Formula cells per second: the project's put_formula versus xlsxwriter's write_formula."""
    import xlsxwriter
    from .render import put_formula, workbook_options
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


def _child(args: list[str]) -> dict:
    """Run one measurement in a fresh interpreter; its JSON result."""
    done = subprocess.run([sys.executable, "-m", "sheetbuilder.bench", "--child", *args],
                          capture_output=True, text=True)
    if done.returncode:
        raise SystemExit(f"child {args[0]} failed:\n{done.stderr}")
    return json.loads(done.stdout.strip().splitlines()[-1])


def _lo_seconds(path: Path, outdir: Path) -> float:
    from .recalc import libreoffice_convert
    t = time.perf_counter()
    libreoffice_convert([path], outdir)
    return time.perf_counter() - t


def _ratio(a, b):
    return a / b if a is not None and b else None


def run(sizes: list[int], libreoffice: bool) -> list[dict]:
    results = []
    with tempfile.TemporaryDirectory(prefix="sb-bench-") as tmp:
        for n in sizes:
            base = Path(tmp) / str(n)
            t = time.perf_counter()
            make_account(base / "inputs", n)
            row = {"size": n, "generate_s": time.perf_counter() - t}
            formula_xlsx, plain_xlsx = base / "formulas.xlsx", base / "values.xlsx"
            row.update(_child(["build", str(base / "inputs"), str(formula_xlsx)]))
            row.update(_child(["plain", str(base / "inputs"), str(plain_xlsx)]))
            row["build_plain_ratio"] = _ratio(row["build_s"], row["plain_s"])
            row["render_plain_ratio"] = _ratio(row["render_s"], row["plain_s"])
            row["lo_recalc_s"] = row["lo_values_s"] = None
            if libreoffice:
                if n == sizes[0]:  # warm-up: the first soffice start reads its install from a cold cache
                    _lo_seconds(plain_xlsx, base / "lo_warmup")
                row["lo_recalc_s"] = _lo_seconds(formula_xlsx, base / "lo_formulas")
                row["lo_values_s"] = _lo_seconds(plain_xlsx, base / "lo_values")
            row["recalc_values_ratio"] = _ratio(row["lo_recalc_s"], row["lo_values_s"])
            results.append(row)
            print(f"  size {n}: done", file=sys.stderr, flush=True)
    return results


def _fmt(value, spec: str) -> str:
    return "-" if value is None else format(value, spec)


COLUMNS = [("size", "size", "d"), ("formula cells", "formula_cells", "d"), ("build s", "build_s", ".2f"),
           ("render s", "render_s", ".2f"), ("plain write s", "plain_s", ".2f"),
           ("build/plain", "build_plain_ratio", ".2f"), ("render/plain", "render_plain_ratio", ".2f"),
           ("peak MB", "peak_mb", ".0f"), ("LO recalc s", "lo_recalc_s", ".2f"),
           ("LO values-only s", "lo_values_s", ".2f"), ("recalc/values", "recalc_values_ratio", ".2f"),
           ("file MB", "file_mb", ".2f")]


def report(results: list[dict], micro: dict | None) -> dict:
    """Print the table, the scaling ratios and the micro-benchmark; the JSON document."""
    table = [[h for h, _, _ in COLUMNS]] + [[_fmt(r[k], s) for _, k, s in COLUMNS] for r in results]
    widths = [max(len(line[i]) for line in table) for i in range(len(COLUMNS))]
    for line in table:
        print("  ".join(cell.rjust(w) for cell, w in zip(line, widths)))
    scaling = []
    by_size = {r["size"]: r for r in results}
    for r in results:
        big = by_size.get(r["size"] * 10)
        if big:
            s = {"from": r["size"], "to": big["size"], "build": _ratio(big["build_s"], r["build_s"]),
                 "render": _ratio(big["render_s"], r["render_s"]),
                 "recalc": _ratio(big["lo_recalc_s"], r["lo_recalc_s"])}
            scaling.append(s)
            print(f"time({big['size']})/time({r['size']}): build {_fmt(s['build'], '.2f')}x, "
                  f"render {_fmt(s['render'], '.2f')}x, LO recalc {_fmt(s['recalc'], '.2f')}x")
    print(AIMS)
    if micro:
        print(f"formula cells/s at {micro['cells']}: put_formula {micro['put_formula']:,.0f}, "
              f"write_formula {micro['write_formula']:,.0f} "
              f"({micro['put_formula'] / micro['write_formula']:.2f}x)")
    return {"generated": dt.datetime.now().isoformat(timespec="seconds"), "aims": AIMS,
            "results": results, "scaling": scaling, "formula_write_rate": micro}


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(prog="python -m sheetbuilder.bench", description=__doc__.splitlines()[0])
    ap.add_argument("--sizes", default="1000,10000,100000", help="ad-row counts, comma separated")
    ap.add_argument("--no-libreoffice", action="store_true", help="skip the LibreOffice timings")
    ap.add_argument("--micro-cells", type=int, default=200_000, help="formulas in the write-rate micro-benchmark")
    ap.add_argument("--child", nargs="+", help=argparse.SUPPRESS)
    args = ap.parse_args(argv)
    if args.child:
        kind, rest = args.child[0], args.child[1:]
        if kind == "micro":
            out = child_micro(int(rest[0]))
        else:
            out = {"build": child_build, "plain": child_plain}[kind](Path(rest[0]), Path(rest[1]))
        print(json.dumps(out))
        return 0
    sizes = sorted(int(s) for s in args.sizes.split(",") if s.strip())
    libreoffice = not args.no_libreoffice
    if libreoffice:
        from .recalc import soffice_path
        if soffice_path() is None:
            print("LibreOffice not found: skipping its timings", file=sys.stderr)
            libreoffice = False
    results = run(sizes, libreoffice)
    micro = None
    if args.micro_cells > 0:
        micro = {"cells": args.micro_cells, **_child(["micro", str(args.micro_cells)])}
    doc = report(results, micro)
    Path("bench_results.json").write_text(json.dumps(doc, indent=2) + "\n", encoding="utf-8")
    print(f"figures written to {Path('bench_results.json').resolve()}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
