"""Where LibreOffice's time goes: per sheet and per formula idiom, from partial twins of the workbook.

A partial twin keeps one part's formulas (one sheet's, or one idiom's across the workbook,
benchmarks/twin.py) and holds every other formula cell as its cached value. For each part
LibreOffice loads the partial twin (formulas parsed and linked; cached values trusted) and
recalculates it fully; the part's load cost is its load time minus the all-values twin's,
and its recalculation cost is the full recalculation of the partial twin (the other cells
are constants). The parts' costs need not add up to the whole workbook's: a shared range
is linked once, and LibreOffice's caches differ between files.
"""
from __future__ import annotations

from pathlib import Path

from .libreoffice import uno_times
from .twin import idiom, make_twin


def attribute(book: Path, folder: Path, counts: dict, twin_load_s: float) -> dict:
    """{"sheets": {name: figures}, "idioms": {name: figures}} for the workbook book."""
    folder.mkdir(parents=True, exist_ok=True)
    jobs, parts = [], {}
    for sheet in counts["formulas_by_sheet"]:
        path = folder / f"sheet_{len(jobs)}.xlsx"
        make_twin(book, path, keep=lambda s, f, sheet=sheet: s == sheet)
        jobs.append({"path": str(path), "label": f"sheet:{sheet}"})
        parts[f"sheet:{sheet}"] = ("sheets", sheet, counts["formulas_by_sheet"][sheet])
    for name, n in counts["formulas_by_idiom"].items():
        path = folder / f"idiom_{len(jobs)}.xlsx"
        make_twin(book, path, keep=lambda s, f, name=name: idiom(f) == name)
        jobs.append({"path": str(path), "label": f"idiom:{name}"})
        parts[f"idiom:{name}"] = ("idioms", name, n)
    all_values = folder / "all_values.xlsx"
    make_twin(book, all_values)
    times = uno_times([{"path": str(all_values), "label": "warm-up"}, {"path": str(all_values), "label": "twin"},
                       *jobs])
    base = times["twin"]["load_s"]
    out: dict = {"sheets": {}, "idioms": {}, "twin_load_s": base}
    for label, (kind, name, n) in parts.items():
        t = times[label]
        out[kind][name] = {"formula_cells": n, "load_extra_s": t["load_s"] - base, "calc_s": t["calc_s"]}
    for kind in ("sheets", "idioms"):
        total_calc = sum(v["calc_s"] for v in out[kind].values()) or 1.0
        total_load = sum(max(v["load_extra_s"], 0.0) for v in out[kind].values()) or 1.0
        for v in out[kind].values():
            v["calc_share"] = v["calc_s"] / total_calc
            v["load_share"] = max(v["load_extra_s"], 0.0) / total_load
            v["calc_us_per_cell"] = 1e6 * v["calc_s"] / v["formula_cells"] if v["formula_cells"] else None
    return out


def report_attribution(size: int, result: dict) -> None:
    """Print the per-sheet and per-idiom tables of one size."""
    for kind in ("sheets", "idioms"):
        print(f"size {size}: where LibreOffice's time goes, by {kind[:-1]} "
              f"(all-values twin loads in {result['twin_load_s']:.2f} s)")
        rows = sorted(result[kind].items(), key=lambda kv: -kv[1]["calc_s"])
        lines = [[kind[:-1], "formula cells", "load extra s", "load share", "recalc s", "recalc share",
                  "recalc us/cell"]]
        for name, v in rows:
            lines.append([name, str(v["formula_cells"]), f"{v['load_extra_s']:.2f}", f"{v['load_share']:.0%}",
                          f"{v['calc_s']:.3f}", f"{v['calc_share']:.0%}",
                          "-" if v["calc_us_per_cell"] is None else f"{v['calc_us_per_cell']:.1f}"])
        widths = [max(len(line[i]) for line in lines) for i in range(len(lines[0]))]
        for line in lines:
            print("  " + "  ".join(c.ljust(w) if i == 0 else c.rjust(w) for i, (c, w) in enumerate(zip(line, widths))))
