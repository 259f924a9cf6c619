"""The dependency fan-out of one edited cell, read from a built workbook's formulas (no spreadsheet program).

    python -m benchmarks.fanout BOOK.xlsx [--cell in_catalog!D2] [--edges 30]

LibreOffice (and Excel) track dependencies by the references written in a formula, not by the
values they pick: INDEX(Profit!$V$6:$V$505,L4) depends on all 500 cells of the range, so a change to
any of them marks the formula dirty, whichever row L4 names. This module follows those references
the same way, from the edited cell through every formula that reads it (as a single cell or inside a
range, the sheet's defined names included), breadth first, and reports the formula cells reached
per sheet and the edges that reached them ("Bids!N <- range401 Groups!F": a Bids column reached
through a 401-cell range of Groups' column F). It is a static count: the time each reached cell
costs is measured with LibreOffice (benchmarks/attribution.py).
"""
from __future__ import annotations

import argparse
import html
import re
import zipfile
from collections import Counter, defaultdict, deque
from pathlib import Path

from openpyxl.formula.translate import Translator

from benchmarks.twin import SHARED_ID, formula_texts
from sheetbuilder.workbook.formula import col_letter, col_number

Cell = tuple[str, int, int]  # (sheet, 0-based column, 1-based row)
Rect = tuple[str, int, int, int, int]  # (sheet, first column, first row, last column, last row)

_CELL_AT = re.compile(r'\br="([A-Z]+\d+)"')
_CELL_REF = re.compile(r"([A-Z]+)(\d+)$")
_DEFINED = re.compile(r'<definedName name="([^"]+)"(?: [^>]*)?>([^<]+)<')
_STRING = re.compile(r'"(?:[^"]|"")*"')
_SHEET = r"(?:'((?:[^']|'')+)'|([A-Za-z_][A-Za-z0-9_.]*))"
_REF = re.compile(r"(?<![A-Za-z0-9_.$'])(?:" + _SHEET + r"(!))?\$?([A-Z]{1,3})\$?(\d+)(?::\$?([A-Z]{1,3})\$?(\d+))?"
                  r"(?![A-Za-z0-9_(])")
_COLUMNS = re.compile(_SHEET + r"!\$?([A-Z]{1,3}):\$?([A-Z]{1,3})(?![0-9])")
_NAME = re.compile(r"(?<![A-Za-z0-9_.!'$])([A-Za-z_][A-Za-z0-9_.]*)(?![A-Za-z0-9_(!])")
WHOLE_COLUMN = 1_048_576
_ELEMENT = r"<%s\s([^>]*?)/?>"
_ATTR = re.compile(r'([\w:]+)="([^"]*)"')


def sheet_parts(z: zipfile.ZipFile) -> dict[str, str]:
    """{sheet name: its part in the package}, whatever order the writer put the attributes in."""
    rels = {}
    for attrs in re.findall(_ELEMENT % "Relationship", z.read("xl/_rels/workbook.xml.rels").decode("utf-8")):
        a = dict(_ATTR.findall(attrs))
        if a.get("Type", "").endswith("/worksheet"):
            target = a["Target"]
            rels[a["Id"]] = target.lstrip("/") if target.startswith("/") else "xl/" + target
    out = {}
    for attrs in re.findall(_ELEMENT % "sheet", z.read("xl/workbook.xml").decode("utf-8")):
        a = dict(_ATTR.findall(attrs))
        if a.get("r:id") in rels:
            out[html.unescape(a["name"])] = rels[a["r:id"]]
    return out


def read_formulas(path: Path) -> tuple[dict[Cell, str], dict[str, Rect]]:
    """Every formula cell's text, and the workbook's defined names that name a cell or range."""
    formulas: dict[Cell, str] = {}
    names: dict[str, Rect] = {}
    with zipfile.ZipFile(path) as z:
        for name, target in _DEFINED.findall(z.read("xl/workbook.xml").decode("utf-8")):
            rects = references("", html.unescape(target), {})
            if len(rects) == 1 and not name.startswith("_xlnm"):
                names[name] = rects[0]
        for sheet, part in sheet_parts(z).items():
            first: dict[str, tuple[str, str]] = {}  # a shared group's number: its first cell and formula
            for m, text in formula_texts(z.read(part).decode("utf-8")):
                at = _CELL_AT.search(m.group(1)).group(1)
                col, row = _CELL_REF.match(at).groups()
                si = SHARED_ID.search(m.group(2))
                if si is not None and m.group(3) is None:  # a later cell of a shared group: the first one's, moved
                    origin, base = first[si.group(1)]
                    text = Translator("=" + base, origin).translate_formula(at)[1:]
                elif si is not None:
                    first[si.group(1)] = (at, text)
                formulas[(sheet, col_number(col), int(row))] = text
    return formulas, names


def references(sheet: str, formula: str, names: dict[str, Rect]) -> list[Rect]:
    """The cells and ranges a formula reads (text in quotes ignored), each as a rectangle."""
    body = _STRING.sub('""', formula)
    out = [names[m.group(1)] for m in _NAME.finditer(body) if m.group(1) in names]
    for m in _REF.finditer(body):
        on = (m.group(1) or m.group(2) or "").replace("''", "'") if m.group(3) else sheet
        c1, r1 = col_number(m.group(4)), int(m.group(5))
        c2, r2 = (col_number(m.group(6)), int(m.group(7))) if m.group(6) else (c1, r1)
        out.append((on, c1, r1, c2, r2))
    for m in _COLUMNS.finditer(body):
        on = (m.group(1) or m.group(2)).replace("''", "'")
        out.append((on, col_number(m.group(3)), 1, col_number(m.group(4)), WHOLE_COLUMN))
    return out


def fan_out(formulas: dict[Cell, str], names: dict[str, Rect], edited: Cell) -> dict[Cell, tuple[str, str, int]]:
    """{formula cell reached from edited: (how, sheet, column) of the reference that reached it first}.

    how is "cell" for a single-cell reference, "rangeN" for a range of N cells.
    """
    single: dict[Cell, list[Cell]] = defaultdict(list)
    by_column: dict[tuple[str, int], list[Rect]] = defaultdict(list)
    readers: dict[Rect, list[Cell]] = defaultdict(list)
    for cell, text in formulas.items():
        for rect in references(cell[0], text, names):
            s, c1, r1, c2, r2 = rect
            if c1 == c2 and r1 == r2:
                single[(s, c1, r1)].append(cell)
                continue
            if rect not in readers:
                for c in range(c1, c2 + 1):
                    by_column[(s, c)].append(rect)
            readers[rect].append(cell)
    reached: dict[Cell, tuple[str, str, int]] = {}
    fired: set[Rect] = set()
    queue = deque([edited])
    while queue:
        s, c, r = queue.popleft()
        hits = [(cell, "cell") for cell in single.get((s, c, r), ())]
        for rect in by_column.get((s, c), ()):
            if rect not in fired and rect[2] <= r <= rect[4]:
                fired.add(rect)
                size = (rect[3] - rect[1] + 1) * (rect[4] - rect[2] + 1)
                hits += [(cell, f"range{size}") for cell in readers[rect]]
        for cell, how in hits:
            if cell not in reached:
                reached[cell] = (how, s, c)
                queue.append(cell)
    return reached


def summarise(formulas: dict[Cell, str], reached: dict[Cell, tuple[str, str, int]], edited: Cell,
              edges: int = 30) -> dict:
    """The cells reached per sheet (and of how many) and the commonest edges, as a JSON-ready dict."""
    per = Counter(cell[0] for cell in reached)
    total = Counter(cell[0] for cell in formulas)
    via = Counter((cell[0], col_letter(cell[1]), how, s, col_letter(c)) for cell, (how, s, c) in reached.items())
    return {"edited": f"{edited[0]}!{col_letter(edited[1])}{edited[2]}", "reached": len(reached),
            "formula_cells": len(formulas), "by_sheet": {s: [n, total[s]] for s, n in per.most_common()},
            "edges": [[f"{a}!{b} <- {h} {s}!{c}", n] for (a, b, h, s, c), n in via.most_common(edges)]}


def print_summary(summary: dict) -> None:
    """Print what :func:`summarise` returns."""
    print(f"a change to {summary['edited']} reaches {summary['reached']} of {summary['formula_cells']} formula "
          "cells (LibreOffice marks each dirty):")
    for sheet, (n, of) in summary["by_sheet"].items():
        print(f"  {sheet:16s} {n:8d} of {of:8d}")
    print("  reached through (cells, column <- reference):")
    for edge, n in summary["edges"]:
        print(f"  {n:8d}  {edge}")


def edit_fanout(book: Path, edges: int = 30) -> dict:
    """The summary for the benchmark's edit: the first product's unit cost."""
    formulas, names = read_formulas(book)
    edited = unit_cost_cell(book)
    return summarise(formulas, fan_out(formulas, names, edited), edited, edges)


def unit_cost_cell(path: Path) -> Cell:
    """The first product's unit cost on in_catalog (the cell the benchmark's edit changes)."""
    with zipfile.ZipFile(path) as z:
        data = z.read(sheet_parts(z)["in_catalog"]).decode("utf-8")
        strings = []
        if "xl/sharedStrings.xml" in z.namelist():
            strings = re.findall(r"<t[^>]*>([^<]*)</t>", z.read("xl/sharedStrings.xml").decode("utf-8"))
    for col, attrs, body in re.findall(r'<c r="([A-Z]+)1"([^>]*)>(.*?)</c>', data):
        text = re.search(r"<t[^>]*>([^<]*)</t>", body)
        value = text.group(1) if text else None
        if value is None and 't="s"' in attrs:
            value = strings[int(re.search(r"<v>(\d+)</v>", body).group(1))]
        if value == "unit_cost":
            return ("in_catalog", col_number(col), 2)
    raise SystemExit(f"{path}: no unit_cost header on in_catalog")


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(prog="python -m benchmarks.fanout", description=__doc__.splitlines()[0])
    ap.add_argument("book", type=Path)
    ap.add_argument("--cell", help="the edited cell as Sheet!A1 (default: the first product's unit cost)")
    ap.add_argument("--edges", type=int, default=30, help="how many edges to list (default %(default)d)")
    args = ap.parse_args(argv)
    formulas, names = read_formulas(args.book)
    if args.cell:
        sheet, ref = args.cell.rsplit("!", 1)
        m = re.fullmatch(r"\$?([A-Z]{1,3})\$?(\d+)", ref)
        if not m:
            raise SystemExit(f"--cell {args.cell}: give it as Sheet!A1")
        edited = (sheet.strip("'"), col_number(m.group(1)), int(m.group(2)))
    else:
        edited = unit_cost_cell(args.book)
    print_summary(summarise(formulas, fan_out(formulas, names, edited), edited, args.edges))
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
