"""Where LibreOffice's time goes: per sheet and per formula idiom, from partial twins of the workbook.

A partial twin keeps one part's formulas (one sheet's, or one idiom's across the workbook,
benchmarks/twin.py) and holds every other formula cell as its cached value. For each part
LibreOffice loads the partial twin (formulas parsed and linked; cached values trusted) and
recalculates it fully (the least of three runs); the part's load cost is its load time minus
the all-values twin's, loaded just before and after it,
and its recalculation cost is the full recalculation of the partial twin (the other cells
are constants). The parts' costs need not add up to the whole workbook's: a shared range
is linked once, and LibreOffice's caches differ between files.
"""
from __future__ import annotations

from pathlib import Path

from .libreoffice import uno_times
from .twin import idiom, make_twin


def attribute(book: Path, folder: Path, counts: dict) -> dict:
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
    # each part's load is set against the all-values twin loaded just before and just after it, so a
    # machine whose load drifts (it is shared) or a soffice that slows over many files skews no part
    twin = {"path": str(all_values)}
    interleaved = [{**twin, "label": "warm-up"}, {**twin, "label": "twin0"}]
    for i, job in enumerate(jobs, start=1):
        interleaved += [{**job, "calc_repeat": 3}, {**twin, "label": f"twin{i}"}]
    times = uno_times(interleaved)
    twins = [times[f"twin{i}"]["load_s"] for i in range(len(jobs) + 1)]
    out: dict = {"sheets": {}, "idioms": {}, "twin_load_s": min(twins)}
    for i, (label, (kind, name, n)) in enumerate(parts.items()):
        t, base = times[label], (twins[i] + twins[i + 1]) / 2
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


def main(argv: list[str] | None = None) -> int:
    """python -m benchmarks.attribution BOOK.xlsx [--out FILE.json]: the tables for one built workbook."""
    import argparse
    import json
    import tempfile

    from .twin import count_cells
    ap = argparse.ArgumentParser(prog="python -m benchmarks.attribution", description=main.__doc__)
    ap.add_argument("book", type=Path)
    ap.add_argument("--out", type=Path)
    args = ap.parse_args(argv)
    with tempfile.TemporaryDirectory(prefix="sb-attribution-") as tmp:
        result = attribute(args.book, Path(tmp), count_cells(args.book))
    report_attribution(0, result)
    if args.out:
        args.out.write_text(json.dumps(result, indent=2) + "\n", encoding="utf-8")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
