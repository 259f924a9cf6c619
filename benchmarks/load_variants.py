"""What LibreOffice pays for when it loads a built workbook: variants of one file that differ in one thing each.

    python -m benchmarks.load_variants BOOK.xlsx [--rounds 2] [--only name,name] [--keep-dir DIR]

Each variant is the workbook with one feature removed or changed by rewriting its package (the values
stay): every formula kept on one sheet only (a partial twin, benchmarks/twin.py), no conditional formats,
no data validations, no autofilters (and their hidden _FilterDatabase names), no cached values for formula
cells, shared formula groups written out cell by cell. All are loaded through UNO in one soffice session
(benchmarks/lo_uno.py, the load alone), the values-only twin between every two of them, in `--rounds`
rounds; each variant's figure is its load minus the mean of the twin loads beside it, the median of the
rounds, in wall seconds and in soffice's CPU seconds (which other work on a shared machine stretches less).
Read differences within one run.
"""
from __future__ import annotations

import argparse
import os
import re
import statistics
import tempfile
import zipfile
from pathlib import Path
from typing import Callable

from .libreoffice import uno_times
from .twin import count_cells, formula_texts, make_twin, sheet_parts

Rewrite = Callable[[str, str], str]  # (sheet name, sheet XML) -> sheet XML

_CF = re.compile(r"<conditionalFormatting\b.*?</conditionalFormatting>", re.S)
_DV = re.compile(r"<dataValidations\b.*?</dataValidations>", re.S)
_AUTOFILTER = re.compile(r"<autoFilter\b[^>]*/>|<autoFilter\b.*?</autoFilter>", re.S)
_FILTER_NAME = re.compile(r'<definedName name="_xlnm._FilterDatabase"[^>]*>[^<]*</definedName>')
_FORMULA_VALUE = re.compile(r"(</f>|<f [^>]*/>)<v>[^<]*</v>")


def rewrite(src: Path, dst: Path, sheets: Rewrite | None = None, book: Callable[[str], str] | None = None) -> None:
    """dst: src with each sheet's XML passed through sheets and workbook.xml through book."""
    with zipfile.ZipFile(src) as zin, zipfile.ZipFile(dst, "w", zipfile.ZIP_DEFLATED) as zout:
        by_part = {part: name for name, part in sheet_parts(zin).items()}
        for info in zin.infolist():
            data = zin.read(info.filename)
            if info.filename in by_part and sheets is not None:
                data = sheets(by_part[info.filename], data.decode("utf-8")).encode("utf-8")
            elif info.filename == "xl/workbook.xml" and book is not None:
                data = book(data.decode("utf-8")).encode("utf-8")
            zout.writestr(info, data, compress_type=zipfile.ZIP_DEFLATED)


def feature_variants(book: Path, folder: Path) -> dict[str, Path]:
    """{variant name: its file}: the workbook with one feature removed each."""
    out = {}

    def made(name: str, **kwargs) -> None:
        out[name] = folder / f"{name}.xlsx"
        rewrite(book, out[name], **kwargs)

    made("no conditional formats", sheets=lambda s, x: _CF.sub("", x))
    made("no data validations", sheets=lambda s, x: _DV.sub("", x))
    made("no autofilters", sheets=lambda s, x: _AUTOFILTER.sub("", x), book=lambda x: _FILTER_NAME.sub("", x))
    made("no cached formula values", sheets=lambda s, x: _FORMULA_VALUE.sub(r"\1", x))
    # every formula's text 0 (a shared group stays one group): the cost of formula cells as such, without their
    # tokens, references and listeners
    made("every formula 0", sheets=lambda s, x: _FORMULA_TEXT.sub(r"\g<1>0\3", x))
    return out


_NAME = re.compile(r'<definedName name="([A-Za-z_][A-Za-z0-9_.]*)">([^<]*)</definedName>')
_QUOTED_XML = re.compile(r"(&quot;.*?&quot;|\"[^\"]*\")")
_FORMULA_TEXT = re.compile(r"(<f\b[^>]*>)([^<]+)(</f>)")


def names_as_references(book: Path, folder: Path) -> dict[str, Path]:
    """{"names as references": the workbook with every defined name a formula uses written as its range}."""
    with zipfile.ZipFile(book) as z:
        names = dict(_NAME.findall(z.read("xl/workbook.xml").decode("utf-8")))
    names = {k: v for k, v in names.items() if not k.startswith("_xlnm")}
    word = re.compile(r"(?<![A-Za-z0-9_.!$])(" + "|".join(sorted(map(re.escape, names), key=len, reverse=True))
                      + r")(?![A-Za-z0-9_.(!])")

    def one(m: re.Match) -> str:
        parts = _QUOTED_XML.split(m.group(2))
        text = "".join(p if i % 2 else word.sub(lambda n: names[n.group(1)].replace("'", "&apos;"), p)
                       for i, p in enumerate(parts))
        return m.group(1) + text + m.group(3)

    out = {"names as references": folder / "names_refs.xlsx"}
    rewrite(book, out["names as references"], sheets=lambda s, x: _FORMULA_TEXT.sub(one, x))
    return out


def column_twins(book: Path, folder: Path, sheet: str) -> dict[str, Path]:
    """{"<sheet> without <column>": the workbook with one of the sheet's shared formula columns as values}."""
    with zipfile.ZipFile(book) as z:
        xml = z.read(sheet_parts(z)[sheet]).decode("utf-8")
    firsts = {}
    for m, text in formula_texts(xml):
        if 'ref="' in m.group(2):
            firsts[re.sub(r"\d+", "", re.search(r'r="([A-Z]+)', m.group(1)).group(1))] = text
    out = {}
    for col, text in firsts.items():
        out[f"{sheet} without {col}"] = folder / f"col_{sheet}_{col}.xlsx"
        make_twin(book, out[f"{sheet} without {col}"], keep=lambda s, f, t=text: not (s == sheet and f == t))
    return out


def sheet_twins(book: Path, folder: Path, sheets: dict[str, int]) -> dict[str, Path]:
    """{"only <sheet>": a partial twin keeping that sheet's formulas} and, for a sheet of 10,000 formula cells
    or more, {"all but <sheet>": the others'}; sheets is {name: formula cells}."""
    out = {}
    for i, (sheet, n) in enumerate(sheets.items()):
        out[f"only {sheet}"] = folder / f"only_{i}.xlsx"
        make_twin(book, out[f"only {sheet}"], keep=lambda s, f, sheet=sheet: s == sheet)
        if n < 10_000:
            continue
        out[f"all but {sheet}"] = folder / f"but_{i}.xlsx"
        make_twin(book, out[f"all but {sheet}"], keep=lambda s, f, sheet=sheet: s != sheet)
    return out


def measure(book: Path, variants: dict[str, Path], twin: Path, rounds: int) -> dict[str, dict]:
    """{name: {"load_s", "extra_s"}} for the workbook ("workbook"), the twin and each variant."""
    files = {"workbook": book, **variants}
    jobs = [{"path": str(twin), "label": "warm-up", "calc_repeat": 0}]
    k = 0
    for r in range(rounds):
        for name, path in files.items():
            jobs.append({"path": str(twin), "label": f"twin {k}", "calc_repeat": 0})
            jobs.append({"path": str(path), "label": f"{name} #{r}", "calc_repeat": 0, "twin_before": k})
            k += 1
    jobs.append({"path": str(twin), "label": f"twin {k}", "calc_repeat": 0})
    times = uno_times(jobs)
    out: dict[str, dict] = {}
    for key in ("load_s", "load_cpu_s"):
        twins = [times[f"twin {i}"][key] for i in range(k + 1)]
        out.setdefault("twin", {})[key] = statistics.median(twins)
        out["twin"][key.replace("load", "extra")] = 0.0
        for name in files:
            loads, extras = [], []
            for job in jobs:
                if job["label"].startswith(name + " #"):
                    i = job["twin_before"]
                    loads.append(times[job["label"]][key])
                    extras.append(loads[-1] - (twins[i] + twins[i + 1]) / 2)
            row = out.setdefault(name, {})
            row[key], row[key.replace("load", "extra")] = statistics.median(loads), statistics.median(extras)
            row[key.replace("load", "extras")] = extras
    return out


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(prog="python -m benchmarks.load_variants", description=__doc__.splitlines()[0])
    ap.add_argument("book", type=Path)
    ap.add_argument("--rounds", type=int, default=2)
    ap.add_argument("--only", default="", help="comma-separated variant names (default: every variant)")
    ap.add_argument("--keep-dir", type=Path, help="keep the variant files here")
    ap.add_argument("--extra", action="append", default=[], type=Path,
                    help="another file to load beside the variants (the same workbook built another way)")
    ap.add_argument("--columns", default="", help="comma-separated sheets: one variant per shared formula column")
    args = ap.parse_args(argv)
    with tempfile.TemporaryDirectory(prefix="sb-variants-") as tmp:
        folder = args.keep_dir or Path(tmp)
        folder.mkdir(parents=True, exist_ok=True)
        twin = folder / "twin.xlsx"
        make_twin(args.book, twin)
        counts = count_cells(args.book)
        variants = {**feature_variants(args.book, folder), **sheet_twins(args.book, folder,
                                                                          counts["formulas_by_sheet"]),
                    **names_as_references(args.book, folder)}
        for sheet in filter(None, args.columns.split(",")):
            variants.update(column_twins(args.book, folder, sheet))
        if args.only:
            wanted = [w.strip() for w in args.only.split(",")]
            variants = {k: v for k, v in variants.items() if k in wanted or " without " in k}
        variants.update({f"file {p.name}": p for p in args.extra})
        print(f"load average before: {os.getloadavg()}", flush=True)
        result = measure(args.book, variants, twin, args.rounds)
    base, base_cpu = result["workbook"]["extra_s"], result["workbook"]["extra_cpu_s"]
    print(f"{'file':40s} {'load s':>7s} {'over twin':>9s} {'share':>6s} {'CPU s':>7s} {'over twin':>9s} "
          f"{'share':>6s}  CPU over twin, each round")
    for name, r in result.items():
        share = r["extra_s"] / base if base else 0.0
        share_cpu = r["extra_cpu_s"] / base_cpu if base_cpu else 0.0
        rounds = " ".join(f"{e:+.2f}" for e in r.get("extras_cpu_s", []))
        print(f"{name:40s} {r['load_s']:7.2f} {r['extra_s']:9.2f} {share:6.2f} {r['load_cpu_s']:7.2f} "
              f"{r['extra_cpu_s']:9.2f} {share_cpu:6.2f}  {rounds}")
    print(f"load average after: {os.getloadavg()}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
