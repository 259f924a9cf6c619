"""Benchmark (not a test): build time, memory and LibreOffice recalculation on synthetic accounts.

    python -m sheetbuilder.bench [--sizes 1000,10000,100000] [--terms-ratio 2] [--no-libreoffice]

For each size N (ad rows) it writes a synthetic account as CSV files (N ad rows, ~N targets,
terms-ratio x N search-term rows, a few negatives), then in fresh
subprocesses (so peak memory is each step's own) times the real build, and a baseline
that writes the same cells as plain values, a rebuild with --previous and the changes
command (on the file as built and saved without formula values); then LibreOffice's load-recalculate-save
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
        "10x rows <= 11x time; --previous <= 1.2x build; changes < 5 s at 10k")
BUILT_ON = dt.date(2026, 12, 2)
TERMS_RATIO = 2.0  # search-term rows per ad row: 200k at 100k ad rows
_MOD_BEFORE = np.array(["", "", "", "", "black", "large", "small", "wooden", "metal", "green", "heavy duty", "xl"],
                       dtype=object)
_MOD_AFTER = np.array(["", "", "", "", "for garden", "set of 2", "outdoor", "cheap", "free shipping", "with lid",
                       "kit", "replacement", "near me", "2 pack"], dtype=object)


def make_terms(rng, targets: pd.DataFrame, ids: np.ndarray, n_rows: int, metrics
               ) -> tuple[pd.DataFrame, pd.DataFrame, pd.DataFrame]:
    """Search-term rows, negatives and a few extra exact targets, all vectorised.

    About 60% of the rows are distinct (campaign, ad group, term); the rest repeat a term
    of the same ad group, through the same target or another target of that ad group, so
    rows aggregate. Each term comes through a target of targets (so its ad group advertises
    products). Keyword terms are the target's text with modifiers (exact targets' terms are
    often the keyword itself); product-target terms are product IDs. About 7% of rows have
    orders (~10% of terms), about 4% have no orders and a high spend. The negatives hit
    some terms (exact, ad group and campaign level; phrase on modifier words), and a few
    extra exact targets repeat a term's text in its own ad group (Already targeted).
    """
    n_rows = max(n_rows, 10)
    m = len(targets)
    t_campaign, t_group = targets["campaign"].to_numpy(), targets["ad_group"].to_numpy()
    t_text, t_match = targets["target"].to_numpy(dtype=object), targets["match_type"].to_numpy(dtype=object)
    n_slots = max(1, int(round(0.6 * n_rows)))  # the distinct terms
    slot_t = rng.integers(0, m, n_slots)
    match = t_match[slot_t]
    before = _MOD_BEFORE[rng.integers(0, len(_MOD_BEFORE), n_slots)]
    after = _MOD_AFTER[rng.integers(0, len(_MOD_AFTER), n_slots)]
    keyword_itself = (match == "exact") & (rng.random(n_slots) < 0.5)
    before, after = np.where(keyword_itself, "", before), np.where(keyword_itself, "", after)
    text = pd.Series(before) + " " + pd.Series(t_text[slot_t]) + " " + pd.Series(after)
    text = text.str.strip().str.replace("  ", " ", regex=False).to_numpy(dtype=object)
    product_term = np.char.lower(ids[rng.integers(0, len(ids), n_slots)].astype(str)).astype(object)
    slot_text = np.where(match == "product", product_term, text)
    # rows: every slot once, then repeats of random slots
    slot = np.concatenate([np.arange(n_slots), rng.integers(0, n_slots, n_rows - n_slots)])
    row_t = slot_t[slot]
    repeat = np.arange(n_rows) >= n_slots
    codes, _ = pd.factorize(pd.Series(t_campaign) + "\x1f" + pd.Series(t_group))
    order = np.argsort(codes, kind="stable")
    counts = np.bincount(codes)
    starts = np.concatenate([[0], np.cumsum(counts)[:-1]])
    g = codes[row_t]
    other = order[starts[g] + (rng.random(n_rows) * counts[g]).astype(int)]  # a target of the same ad group
    row_t = np.where(repeat & (rng.random(n_rows) < 0.5), other, row_t)
    u = rng.random(n_rows)
    sells, costly = u < 0.07, (u >= 0.07) & (u < 0.11)
    clicks = rng.geometric(0.25, n_rows) - 1
    orders = np.where(sells, 1 + rng.poisson(0.6, n_rows), 0)
    clicks = np.where(costly, rng.integers(30, 150, n_rows), np.maximum(clicks, orders))
    spend = np.round(clicks * np.where(costly, rng.uniform(0.8, 1.6, n_rows), rng.uniform(0.2, 1.5, n_rows)), 2)
    terms = pd.DataFrame({
        "campaign": t_campaign[row_t], "ad_group": t_group[row_t], "target": t_text[row_t],
        "match_type": t_match[row_t], "search_term": slot_text[slot],
        "impressions": clicks * rng.integers(20, 400, n_rows) + rng.integers(0, 50, n_rows), "clicks": clicks,
        "spend": spend, "ad_sales": np.round(orders * rng.uniform(8, 120, n_rows), 2), "orders": orders})
    terms = terms.iloc[rng.permutation(n_rows)].reset_index(drop=True)  # exports are not sorted by term
    s_campaign, s_group = t_campaign[slot_t], t_group[slot_t]
    k = max(3, n_slots // 300)
    exact = rng.choice(n_slots, k, replace=False)
    camp_exact = rng.choice(n_slots, max(2, k // 3), replace=False)
    campaigns = pd.unique(t_campaign)
    phrase_camps = rng.choice(campaigns, max(2, len(campaigns) // 5), replace=False)
    phrase_words = np.array(["cheap", "free shipping", "near me", "replacement"], dtype=object)
    phrase_slots = rng.choice(n_slots, max(2, k // 2), replace=False)  # ad-group level phrases
    negatives = pd.concat([
        pd.DataFrame({"campaign": s_campaign[exact], "ad_group": s_group[exact], "term": slot_text[exact],
                      "match_type": "negative exact"}),
        pd.DataFrame({"campaign": s_campaign[camp_exact], "ad_group": "", "term": slot_text[camp_exact],
                      "match_type": "negative exact"}),
        pd.DataFrame({"campaign": phrase_camps, "ad_group": "",
                      "term": phrase_words[rng.integers(0, len(phrase_words), len(phrase_camps))],
                      "match_type": "negative phrase"}),
        pd.DataFrame({"campaign": s_campaign[phrase_slots], "ad_group": s_group[phrase_slots],
                      "term": _MOD_AFTER[4:][rng.integers(0, len(_MOD_AFTER) - 4, len(phrase_slots))],
                      "match_type": "negative phrase"}),
    ], ignore_index=True)
    keyword_slots = np.flatnonzero((match != "product") & ~keyword_itself)
    few = rng.choice(keyword_slots, min(len(keyword_slots), max(2, m // 100)), replace=False)
    extra = pd.DataFrame({"campaign": s_campaign[few], "ad_group": s_group[few], "target": slot_text[few],
                          "match_type": "exact", "state": "enabled",
                          "bid": np.round(rng.uniform(0.2, 2, len(few)), 2), **metrics(len(few))})
    return terms, negatives, extra


def make_account(folder: Path, n: int, seed: int = 20261202, terms_ratio: float = TERMS_RATIO) -> None:
    """Write a synthetic account of n ad rows (~n/20 products, ~n targets, terms_ratio x n search-term rows)."""
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
    targets = pd.DataFrame({"campaign": campaign[pick], "ad_group": ad_group[pick],
                            "target": [f"{words[i % len(words)]} {i}" for i in range(m)],
                            "match_type": np.array(["exact", "phrase", "broad", "product"])[rng.integers(0, 4, m)],
                            "state": np.where(rng.random(m) < 0.9, "enabled", "paused"),
                            "bid": np.round(rng.uniform(0.2, 2, m), 2), **metrics(m)})
    terms, negatives, extra = make_terms(rng, targets, ids, int(round(terms_ratio * n)), metrics)
    pd.concat([targets, extra], ignore_index=True).to_csv(folder / "targets.csv", index=False)
    terms.to_csv(folder / "search_terms.csv", index=False)
    negatives.to_csv(folder / "negatives.csv", index=False)
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


def child_previous(folder: Path, old: Path) -> dict:
    """Time a build with --previous (the old workbook read, its edits matched and carried)."""
    from .pipeline import build
    out = old.with_name(old.stem + "_next.xlsx")
    t = time.perf_counter()
    build(folder, out, force=True, built_on=BUILT_ON, previous=old)
    return {"previous_s": time.perf_counter() - t}


def child_changes(workbook: Path, csv_out: Path) -> dict:
    """Time the changes command on a built workbook, and on the same file saved without formula values."""
    import openpyxl

    from .changes import export_changes
    t = time.perf_counter()
    export_changes(workbook, csv_out, force=True)
    cached = time.perf_counter() - t
    bare = workbook.with_name(workbook.stem + "_no_values.xlsx")
    openpyxl.load_workbook(workbook).save(bare)  # openpyxl stores no formula values
    t = time.perf_counter()
    export_changes(bare, csv_out, force=True)
    return {"changes_s": cached, "changes_no_values_s": time.perf_counter() - t}


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
            "plain_mb": out.stat().st_size / 2 ** 20, "plain_peak_mb": _peak_mb(),
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


def run(sizes: list[int], libreoffice: bool, terms_ratio: float = TERMS_RATIO) -> list[dict]:
    results = []
    with tempfile.TemporaryDirectory(prefix="sb-bench-") as tmp:
        for n in sizes:
            base = Path(tmp) / str(n)
            t = time.perf_counter()
            make_account(base / "inputs", n, terms_ratio=terms_ratio)
            row = {"size": n, "generate_s": time.perf_counter() - t}
            formula_xlsx, plain_xlsx = base / "formulas.xlsx", base / "values.xlsx"
            row.update(_child(["build", str(base / "inputs"), str(formula_xlsx)]))
            row.update(_child(["plain", str(base / "inputs"), str(plain_xlsx)]))
            row.update(_child(["previous", str(base / "inputs"), str(formula_xlsx)]))
            row.update(_child(["changes", str(formula_xlsx), str(base / "changes.csv")]))
            row["previous_build_ratio"] = _ratio(row["previous_s"], row["build_s"])
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


COLUMNS = [("size", "size", "d"), ("term rows", "st_rows", "d"), ("Terms rows", "terms_rows", "d"),
           ("formula cells", "formula_cells", "d"), ("build s", "build_s", ".2f"),
           ("render s", "render_s", ".2f"), ("plain write s", "plain_s", ".2f"),
           ("build/plain", "build_plain_ratio", ".2f"), ("render/plain", "render_plain_ratio", ".2f"),
           ("peak MB", "peak_mb", ".0f"), ("LO recalc s", "lo_recalc_s", ".2f"),
           ("LO values-only s", "lo_values_s", ".2f"), ("recalc/values", "recalc_values_ratio", ".2f"),
           ("file MB", "file_mb", ".2f"), ("--previous s", "previous_s", ".2f"),
           ("previous/build", "previous_build_ratio", ".2f"), ("changes s", "changes_s", ".2f"),
           ("changes no values s", "changes_no_values_s", ".2f")]


def report(results: list[dict], micro: dict | None) -> dict:
    """Print the table, the scaling ratios and the micro-benchmark; the JSON document."""
    table = [[h for h, _, _ in COLUMNS]] + [[_fmt(r.get(k), s) for _, k, s in COLUMNS] for r in results]
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
    sheets = list(dict.fromkeys(k for r in results for k in r.get("formulas_by_sheet", {})))
    if sheets:
        print("formula cells per sheet:")
        lines = [["size", *sheets]] + [[str(r["size"]), *(str(r["formulas_by_sheet"].get(k, 0)) for k in sheets)]
                                       for r in results]
        widths = [max(len(line[i]) for line in lines) for i in range(len(lines[0]))]
        for line in lines:
            print("  " + "  ".join(cell.rjust(w) for cell, w in zip(line, widths)))
    for r in results:
        if "terms_rows" in r:
            print(f"size {r['size']}: {r['st_rows']} search-term rows -> {r['terms_rows']} Terms rows "
                  f"({r['terms_rows'] / max(r['st_rows'], 1):.0%}); Harvest {r.get('harvest_rows')} and Negatives "
                  f"{r.get('negatives_rows')} rows (list_cap {r['list_cap']}); final {r['terms_final']}; "
                  f"with orders {r['terms_with_orders']}, targeted {r['terms_targeted']}, "
                  f"negated {r['terms_negated']}")
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
    ap.add_argument("--terms-ratio", type=float, default=TERMS_RATIO,
                    help="search-term rows per ad row (default %(default)g: 200k at 100k ad rows)")
    ap.add_argument("--no-libreoffice", action="store_true", help="skip the LibreOffice timings")
    ap.add_argument("--micro-cells", type=int, default=200_000, help="formulas in the write-rate micro-benchmark")
    ap.add_argument("--child", nargs="+", help=argparse.SUPPRESS)
    args = ap.parse_args(argv)
    if args.child:
        kind, rest = args.child[0], args.child[1:]
        if kind == "micro":
            out = child_micro(int(rest[0]))
        else:
            out = {"build": child_build, "plain": child_plain, "previous": child_previous,
                   "changes": child_changes}[kind](Path(rest[0]), Path(rest[1]))
        print(json.dumps(out))
        return 0
    sizes = sorted(int(s) for s in args.sizes.split(",") if s.strip())
    libreoffice = not args.no_libreoffice
    if libreoffice:
        from .recalc import soffice_path
        if soffice_path() is None:
            print("LibreOffice not found: skipping its timings", file=sys.stderr)
            libreoffice = False
    results = run(sizes, libreoffice, args.terms_ratio)
    micro = None
    if args.micro_cells > 0:
        micro = {"cells": args.micro_cells, **_child(["micro", str(args.micro_cells)])}
    doc = report(results, micro)
    Path("bench_results.json").write_text(json.dumps(doc, indent=2) + "\n", encoding="utf-8")
    print(f"figures written to {Path('bench_results.json').resolve()}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
