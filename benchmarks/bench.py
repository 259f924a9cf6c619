"""Benchmark (not a test): build, weight and LibreOffice recalculation of synthetic accounts.

    python -m benchmarks.bench [--sizes 1000,10000] [--terms-ratio 2] [--no-libreoffice]
                               [--attribution] [--large] [--large-terms 1000000] [--history-weeks 52]
                               [--next-week]

For each size N (ad rows, about as many keywords and product targets) it writes a synthetic
account (benchmarks/accounts.py), then in fresh subprocesses (so peak memory is each step's
own) times the real build, a plain write of the same cells as values, a rebuild with
--previous and the changes command. From the built file itself it makes the values-only twin
(every formula removed, cached values kept: benchmarks/twin.py) and counts formula cells
(per sheet and per idiom), stored and grid cells against the 10-million mark, and formula
cells per input row. LibreOffice then converts the workbook (recalculating on load) and the
twin, and through its UNO bridge (benchmarks/lo_uno.py, run by the system python3) times
loading each, a full recalculation (the least of three), and one unit-cost edit recalculated
and saved.

--history-weeks W (default 52; 0 skips it) then makes the account weekly with W - 1 past weekly
keyword exports (benchmarks/history.py), builds it with --history (W weeks recorded) and again
with --previous (W weeks carried), and reports both times, the file size and the ratio of the
carrying build to the plain --previous build above.
--next-week adds a real week: the account's next week's exports (figures drawn afresh, one bid in ten
moved, the period a week later: benchmarks/history.make_next_week) built plainly and with --previous of the
built workbook, whose change list is then followed up (the rebuild above is from the same exports: no Follow-up).
--attribution adds where recalculation time goes: partial twins that keep one sheet's
formulas, or one idiom's, each loaded and recalculated apart (benchmarks/attribution.py), and
the unit-cost edit's dependency fan-out read from the formulas (benchmarks/fanout.py).
--large builds one account of --large-terms search-term rows and reports its build time and
peak memory (no LibreOffice). Sizes of 100000 and --large take long; they are opt-in.
Figures are printed and written to bench_results.json.
"""
from __future__ import annotations

import argparse
import datetime as dt
import json
import subprocess
import sys
import tempfile
import time
from pathlib import Path

from .accounts import TERMS_RATIO, make_account
from .history import make_next_week, make_past_weeks
from .attribution import attribute, report_attribution
from .fanout import edit_fanout, print_summary
from .libreoffice import lo_convert_seconds, uno_available, uno_times
from .twin import count_cells, input_rows, make_twin

AIMS = ("aims: build <= 1.5x plain write; changes <= 5 s and <= 500 MB at 10k; --previous <= 1.2x a build; LO recalc <= 1.5x loading the values-only twin; <= 10 formula cells "
        "per input row; --previous carrying 52 weeks of keyword history < 2x --previous; < 10 million cells and "
        "< 100 MB at 100k keywords; 10x rows <= 11x time; one unit-cost edit <= 1 s at 10k; peak build memory "
        "<= 2 GB at 1 million search-term rows")
CELL_MARK = 10_000_000  # a spreadsheet over this many cells is refused by some programs (from memory, unverified)


def _child(args: list[str]) -> dict:
    """Run one measurement in a fresh interpreter; its JSON result."""
    done = subprocess.run([sys.executable, "-m", "benchmarks.children", *args], capture_output=True, text=True,
                          cwd=Path(__file__).resolve().parent.parent)
    if done.returncode:
        raise SystemExit(f"child {args[0]} failed:\n{done.stderr}")
    return json.loads(done.stdout.strip().splitlines()[-1])


def _ratio(a, b):
    return a / b if a is not None and b else None


def measure_history(row: dict, base: Path, weeks: int) -> None:
    """The keyword history of weeks weeks on a weekly copy of the account: row gains its figures."""
    import shutil
    weekly = base / "weekly"
    shutil.copytree(base / "inputs", weekly)
    row["kh_weeks"] = weeks
    row["kh_past_rows"] = make_past_weeks(weekly, base / "past", weeks)
    row.update(_child(["keyword_history", str(weekly), str(base / "history.xlsx"), str(base / "past")]))
    row["kh_previous_ratio"] = _ratio(row["kh_previous_s"], row["previous_s"])
    row["kh_previous_cpu_ratio"] = _ratio(row["kh_previous_cpu_s"], row.get("previous_cpu_s"))


def measure_next_week(row: dict, base: Path, book: Path) -> None:
    """A real week: next week's exports (benchmarks/history.make_next_week) built plainly, then with --previous of
    this week's workbook (its edits carried, its change list followed up): row gains the figures prefixed next_."""
    make_next_week(base / "inputs", base / "next_week")
    row.update({"next_" + k: v for k, v in _child(["build", str(base / "next_week"), str(base / "next.xlsx")]).items()})
    row.update({"next_" + k: v for k, v in _child(["previous", str(base / "next_week"), str(book)]).items()})
    row["next_previous_build_cpu_ratio"] = _ratio(row.get("next_previous_cpu_s"), row.get("next_build_cpu_s"))


def measure_size(n: int, base: Path, libreoffice: bool, uno: bool, terms_ratio: float, attribution: bool,
                 history_weeks: int = 0, next_week: bool = False) -> dict:
    """Every figure of one account size."""
    t = time.perf_counter()
    make_account(base / "inputs", n, terms_ratio=terms_ratio)
    row: dict = {"size": n, "generate_s": time.perf_counter() - t}
    book, plain, twin = base / "formulas.xlsx", base / "values.xlsx", base / "twin.xlsx"
    row.update(_child(["build", str(base / "inputs"), str(book)]))
    row.update(_child(["plain", str(base / "inputs"), str(plain)]))
    row.update(_child(["previous", str(base / "inputs"), str(book)]))
    row.update(_child(["changes", str(book), str(base / "changes.csv")]))
    bare = base / "no_values.xlsx"
    _child(["no_values", str(book), str(bare)])
    row.update(_child(["changes_no_values", str(bare), str(base / "changes.csv")]))
    t = time.perf_counter()
    make_twin(book, twin)
    row["twin_s"] = time.perf_counter() - t
    row["twin_mb"] = twin.stat().st_size / 2 ** 20
    counts = count_cells(book)
    row.update({k: v for k, v in counts.items() if k != "formula_cells"})
    row["formula_cells"] = counts["formula_cells"]  # read from the file: what the package builds
    row["input_rows"] = input_rows(book)
    row["formulas_per_input_row"] = _ratio(row["formula_cells"], row["input_rows"])
    row["cells_vs_mark"] = row["grid_cells"] / CELL_MARK
    row["previous_build_ratio"] = _ratio(row["previous_s"], row["build_s"])
    row["previous_build_cpu_ratio"] = _ratio(row.get("previous_cpu_s"), row.get("build_cpu_s"))
    if next_week:
        measure_next_week(row, base, book)
    if history_weeks > 0:
        measure_history(row, base, history_weeks)
    row["build_plain_ratio"] = _ratio(row["build_s"], row["plain_s"])
    row["render_plain_ratio"] = _ratio(row["render_s"], row["plain_s"])
    if libreoffice:
        row["lo_recalc_s"] = lo_convert_seconds(book, base / "lo_formulas")
        row["lo_twin_s"] = lo_convert_seconds(twin, base / "lo_twin")
        row["recalc_twin_ratio"] = _ratio(row["lo_recalc_s"], row["lo_twin_s"])
    if uno:
        times = uno_times([{"path": str(twin), "label": "warm-up"}, {"path": str(twin), "label": "twin"},
                           {"path": str(book), "label": "book", "edit": True, "calc_repeat": 3}])
        row["uno_load_twin_s"] = times["twin"]["load_s"]
        row["uno_load_book_s"] = times["book"]["load_s"]
        row["uno_calc_s"] = times["book"]["calc_s"]
        row["uno_edit_s"] = times["book"].get("edit_s")
        row["uno_edit_set_s"] = times["book"].get("edit_set_s")
        row["uno_save_s"] = times["book"].get("save_s")
        row["uno_edit_probe"] = times["book"].get("edit_probe")
        row["uno_load_ratio"] = _ratio(row["uno_load_book_s"], row["uno_load_twin_s"])
        row["uno_open_recalc_ratio"] = _ratio(row["uno_load_book_s"] + row["uno_calc_s"], row["uno_load_twin_s"])
        # soffice's CPU seconds: other work on a shared machine stretches them less than wall seconds, but the
        # twin's load runs on several threads and the formulas' on one, so the CPU ratio is below the wall one
        cpu = (times["twin"].get("load_cpu_s"), times["book"].get("load_cpu_s"), times["book"].get("calc_cpu_s"))
        row["uno_load_twin_cpu_s"], row["uno_load_book_cpu_s"], row["uno_calc_cpu_s"] = cpu
        if None not in cpu:
            row["uno_open_recalc_cpu_ratio"] = _ratio(cpu[1] + cpu[2], cpu[0])
        if attribution:
            row["attribution"] = attribute(book, base / "parts", counts)
    if attribution:
        row["edit_fanout"] = edit_fanout(book)
    return row


COLUMNS = [("search-term rows", "st_rows", "d"), ("Terms rows", "terms_rows", "d"),
           ("input rows (in_ sheets)", "input_rows", "d"), ("formula cells", "formula_cells", "d"),
           ("formula cells per input row", "formulas_per_input_row", ".1f"),
           ("stored cells", "stored_cells", "d"), ("grid cells (used ranges)", "grid_cells", "d"),
           ("grid cells / 10 million", "cells_vs_mark", ".3f"), ("workbook MB", "file_mb", ".2f"),
           ("values-only twin MB", "twin_mb", ".2f"), ("build s", "build_s", ".2f"), ("render s", "render_s", ".2f"),
           ("plain write s", "plain_s", ".2f"), ("build/plain", "build_plain_ratio", ".2f"),
           ("render/plain", "render_plain_ratio", ".2f"), ("build peak MB", "peak_mb", ".0f"),
           ("build CPU s", "build_cpu_s", ".2f"),
           ("--previous s", "previous_s", ".2f"), ("previous/build", "previous_build_ratio", ".2f"),
           ("--previous CPU s", "previous_cpu_s", ".2f"), ("previous/build CPU", "previous_build_cpu_ratio", ".2f"),
           ("--previous peak MB", "previous_peak_mb", ".0f"),
           ("next week: build CPU s", "next_build_cpu_s", ".2f"),
           ("next week: --previous CPU s (Follow-up made)", "next_previous_cpu_s", ".2f"),
           ("next week: previous/build CPU", "next_previous_build_cpu_ratio", ".2f"),
           ("next week: Follow-up rows", "next_previous_followup_rows", "d"),
           ("keyword history weeks", "kh_weeks", "d"),
           ("build --history s (weeks recorded)", "kh_history_build_s", ".2f"),
           ("--previous with the history s", "kh_previous_s", ".2f"),
           ("... / --previous", "kh_previous_ratio", ".2f"),
           ("... CPU s / --previous CPU s", "kh_previous_cpu_ratio", ".2f"),
           ("workbook with the history MB", "kh_file_mb", ".2f"),
           ("changes s", "changes_s", ".2f"), ("changes CPU s", "changes_cpu_s", ".2f"),
           ("changes peak MB", "changes_peak_mb", ".0f"),
           ("changes (no cached values) s", "changes_no_values_s", ".2f"),
           ("changes (no cached values) CPU s", "changes_no_values_cpu_s", ".2f"),
           ("changes (no cached values) peak MB", "changes_no_values_peak_mb", ".0f"),
           ("twin made s", "twin_s", ".2f"),
           ("LO convert with recalc s", "lo_recalc_s", ".2f"), ("LO convert twin s", "lo_twin_s", ".2f"),
           ("LO recalc/twin (convert)", "recalc_twin_ratio", ".2f"),
           ("UNO load twin s", "uno_load_twin_s", ".2f"), ("UNO load workbook s", "uno_load_book_s", ".2f"),
           ("UNO full recalc s", "uno_calc_s", ".2f"), ("UNO load/twin", "uno_load_ratio", ".2f"),
           ("UNO (load+recalc)/twin", "uno_open_recalc_ratio", ".2f"),
           ("UNO load twin CPU s", "uno_load_twin_cpu_s", ".2f"),
           ("UNO load workbook CPU s", "uno_load_book_cpu_s", ".2f"),
           ("UNO full recalc CPU s", "uno_calc_cpu_s", ".2f"),
           ("UNO (load+recalc)/twin in CPU s", "uno_open_recalc_cpu_ratio", ".2f"),
           ("UNO unit-cost edit + recalc s", "uno_edit_s", ".3f"),
           ("... of it setting the value (marking dependents) s", "uno_edit_set_s", ".3f"),
           ("UNO save after edit s", "uno_save_s", ".2f")]


def _fmt(value, spec: str) -> str:
    return "-" if value is None else format(value, spec)


def _print_table(lines: list[list[str]]) -> None:
    widths = [max(len(line[i]) for line in lines) for i in range(len(lines[0]))]
    for line in lines:
        print("  " + "  ".join(cell.ljust(w) if i == 0 else cell.rjust(w)
                               for i, (cell, w) in enumerate(zip(line, widths))))


def report(results: list[dict], large: dict | None, micro: dict | None) -> dict:
    """Print the figures (one column per size), the per-sheet counts and the scaling; the JSON document."""
    if results:
        _print_table([["keywords (ad rows)", *(str(r["size"]) for r in results)]] +
                     [[h, *(_fmt(r.get(k), s) for r in results)] for h, k, s in COLUMNS])
        sheets = list(dict.fromkeys(k for r in results for k in r.get("formulas_by_sheet", {})))
        print("formula cells per sheet (read from the workbook):")
        _print_table([["sheet", *(str(r["size"]) for r in results)]] +
                     [[s, *(str(r["formulas_by_sheet"].get(s, 0)) for r in results)] for s in sheets])
        idioms = list(dict.fromkeys(k for r in results for k in r.get("formulas_by_idiom", {})))
        print("formula cells per idiom:")
        _print_table([["idiom", *(str(r["size"]) for r in results)]] +
                     [[s, *(str(r["formulas_by_idiom"].get(s, 0)) for r in results)] for s in idioms])
    scaling = []
    by_size = {r["size"]: r for r in results}
    for r in results:
        big = by_size.get(r["size"] * 10)
        if big:
            s = {"from": r["size"], "to": big["size"], "build": _ratio(big["build_s"], r["build_s"]),
                 "recalc": _ratio(big.get("lo_recalc_s"), r.get("lo_recalc_s"))}
            scaling.append(s)
            print(f"time({big['size']})/time({r['size']}): build {_fmt(s['build'], '.2f')}x, "
                  f"LO recalc {_fmt(s['recalc'], '.2f')}x")
    for r in results:
        if r.get("uno_edit_probe"):
            print(f"size {r['size']}: the edit reached Profit: {r['uno_edit_probe'][1]} -> {r['uno_edit_probe'][2]}")
        if r.get("attribution"):
            report_attribution(r["size"], r["attribution"])
        if r.get("edit_fanout"):
            print(f"size {r['size']}: ", end="")
            print_summary(r["edit_fanout"])
    if large:
        print(f"large account: {large['size']} ad rows, {large['st_rows_written']} search-term rows: build "
              f"{large['build_s']:.1f} s, peak {large['peak_mb']:.0f} MB, workbook {large['file_mb']:.1f} MB")
    print(AIMS)
    if micro:
        print(f"formula cells/s at {micro['cells']}: put_formula {micro['put_formula']:,.0f}, "
              f"write_formula {micro['write_formula']:,.0f} ({micro['put_formula'] / micro['write_formula']:.2f}x)")
    return {"generated": dt.datetime.now().isoformat(timespec="seconds"), "aims": AIMS, "results": results,
            "large": large, "scaling": scaling, "formula_write_rate": micro}


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(prog="python -m benchmarks.bench", description=__doc__.splitlines()[0])
    ap.add_argument("--sizes", default="1000,10000", help="ad-row counts, comma separated (100000 is slow)")
    ap.add_argument("--terms-ratio", type=float, default=TERMS_RATIO,
                    help="search-term rows per ad row (default %(default)g: 200k at 100k ad rows)")
    ap.add_argument("--no-libreoffice", action="store_true", help="skip every LibreOffice timing")
    ap.add_argument("--attribution", action="store_true",
                    help="time each sheet's and each idiom's formulas apart (one LibreOffice load per part)")
    ap.add_argument("--large", action="store_true", help="also build the large account (slow)")
    ap.add_argument("--large-terms", type=int, default=1_000_000, help="its search-term rows (default %(default)d)")
    ap.add_argument("--large-size", type=int, default=100_000, help="its ad rows (default %(default)d)")
    ap.add_argument("--micro-cells", type=int, default=200_000, help="formulas in the write-rate micro-benchmark")
    ap.add_argument("--history-weeks", type=int, default=52,
                    help="weeks of keyword history built with --history and carried with --previous (0: skip)")
    ap.add_argument("--next-week", action="store_true",
                    help="also build next week's exports (figures drawn afresh, a few bids moved, a week later) plainly "
                         "and with --previous of this week's workbook: a real week, its Follow-up made")
    ap.add_argument("--out", default="bench_results.json", help="where the figures go (JSON)")
    args = ap.parse_args(argv)
    sizes = sorted(int(s) for s in args.sizes.split(",") if s.strip())
    libreoffice = not args.no_libreoffice
    if libreoffice:
        from tools.recalc import soffice_path
        if soffice_path() is None:
            print("LibreOffice not found: skipping its timings", file=sys.stderr)
            libreoffice = False
    uno = libreoffice and uno_available()
    if libreoffice and not uno:
        print("python3-uno not found for /usr/bin/python3: skipping the UNO timings", file=sys.stderr)
    results, large = [], None
    with tempfile.TemporaryDirectory(prefix="sb-bench-") as tmp:
        if libreoffice and sizes:  # warm-up: the first soffice start reads its install from a cold cache
            make_account(Path(tmp) / "warm", 100)
            _child(["build", str(Path(tmp) / "warm"), str(Path(tmp) / "warm.xlsx")])
            lo_convert_seconds(Path(tmp) / "warm.xlsx", Path(tmp) / "lo_warm")
        for n in sizes:
            results.append(measure_size(n, Path(tmp) / str(n), libreoffice, uno, args.terms_ratio, args.attribution,
                                        args.history_weeks, args.next_week))
            Path(args.out).write_text(json.dumps({"partial": True, "results": results}, indent=2) + "\n",
                                      encoding="utf-8")  # kept if a later size fails
            print(f"  size {n}: done", file=sys.stderr, flush=True)
        if args.large:
            base = Path(tmp) / "large"
            make_account(base / "inputs", args.large_size, terms_ratio=args.large_terms / args.large_size)
            large = {"size": args.large_size, **_child(["large", str(base / "inputs"), str(base / "large.xlsx")])}
            large["st_rows_written"] = int(round(args.large_terms))
    micro = {"cells": args.micro_cells, **_child(["micro", str(args.micro_cells)])} if args.micro_cells > 0 else None
    doc = report(results, large, micro)
    Path(args.out).write_text(json.dumps(doc, indent=2) + "\n", encoding="utf-8")
    print(f"figures written to {Path(args.out).resolve()}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
