"""The values-only twin of a built workbook, its partial twins, and cell counts read from the file.

The twin is the same .xlsx with every formula removed and its cached value kept, made by
rewriting the sheet XML (an <f> element dropped keeps the <v> beside it; a text result,
which the writer types t="str", becomes an inline string; an empty text result becomes a
blank cell with its style). A partial twin keeps the formulas a predicate chooses (one
sheet's, or one idiom's) and turns every other formula into its value, so the time
LibreOffice spends on the kept formulas can be measured apart.
"""
from __future__ import annotations

import html
import re
import zipfile
from collections import Counter
from pathlib import Path
from typing import Callable, Iterator

from sheetbuilder.workbook.formula import col_number

Keep = Callable[[str, str], bool]  # (sheet name, formula text) -> keep the formula

# A formula cell: its attributes, its <f> element's attributes, its formula text (none in a shared group's
# later cells), its cached value.
_CELL = re.compile(r'<c ([^>]*?)><f((?: [^>]*?)?)(?: ?/>|>([^<]*)</f>)(?:<v>([^<]*)</v>|<v ?/>)?</c>')
SHARED_ID = re.compile(r'\bsi="(\d+)"')
_TYPE = re.compile(r'\s+t="(\w+)"')
_ANY_CELL = re.compile(rb"<c ")
_FORMULA = re.compile(rb"<f[ >/]")
_DIMENSION = re.compile(rb'<dimension ref="([A-Z]+)(\d+)(?::([A-Z]+)(\d+))?"')
_SHEET = re.compile(r'<sheet name="([^"]*)" sheetId="\d+" r:id="(rId\d+)"')
_REL = re.compile(r'<Relationship Id="(rId\d+)" Type="[^"]*/worksheet" Target="([^"]+)"')
_FUNCTION = re.compile(r"([A-Z][A-Z0-9.]*)\(")

# Formula idioms, heaviest first: a formula belongs to the first whose test matches its text.
IDIOMS: tuple[tuple[str, Callable[[str], bool]], ...] = (
    ("MATCH", lambda f: "MATCH(" in f),
    ("SUMIFS/COUNTIFS", lambda f: "SUMIFS(" in f or "COUNTIFS(" in f),
    ("SUMPRODUCT", lambda f: "SUMPRODUCT(" in f),
    ("block SUM(INDEX:INDEX)", lambda f: re.search(r"SUM\(INDEX\([^()]*\):INDEX\(", f) is not None),
    ("INDEX", lambda f: "INDEX(" in f),
    ("SUM/COUNT", lambda f: re.search(r"\b(SUM|COUNT|COUNTA)\(", f) is not None),
    ("MIN/MAX/ROUND", lambda f: re.search(r"\b(MIN|MAX|ROUND|ROUNDUP|ROUNDDOWN|CEILING|FLOOR|INT|LN|EXP)\(", f)
     is not None),
    ("IF/arithmetic", lambda f: True),
)


def idiom(formula: str) -> str:
    """The idiom a formula's text belongs to (the first of IDIOMS that matches)."""
    for name, test in IDIOMS:
        if test(formula):
            return name
    return IDIOMS[-1][0]


def sheet_parts(z: zipfile.ZipFile) -> dict[str, str]:
    """{sheet name: its part name in the package}, in the workbook's order."""
    book = z.read("xl/workbook.xml").decode("utf-8")
    rels = dict(_REL.findall(z.read("xl/_rels/workbook.xml.rels").decode("utf-8")))
    out = {}
    for name, rid in _SHEET.findall(book):
        target = rels[rid]
        out[html.unescape(name)] = target.lstrip("/") if target.startswith("/") else "xl/" + target
    return out


def _as_value(attrs: str, value: str | None) -> str:
    """One formula cell's XML with the formula gone and its cached value kept."""
    kind = _TYPE.search(attrs)
    t = kind.group(1) if kind else "n"
    bare = _TYPE.sub("", attrs)
    if value is None or value == "":
        return f"<c {bare}/>"
    if t == "str":
        return f'<c {bare} t="inlineStr"><is><t xml:space="preserve">{value}</t></is></c>'
    return f"<c {attrs}><v>{value}</v></c>"


def formula_texts(xml: str) -> Iterator[tuple[re.Match, str]]:
    """Each formula cell of a sheet's XML and its formula text as written (a shared group's later cells
    give the group's first formula: the same text, moved down, which is all a predicate on idioms reads)."""
    groups: dict[str, str] = {}
    for m in _CELL.finditer(xml):
        text = m.group(3)
        si = SHARED_ID.search(m.group(2))
        if si is not None:
            text = groups.setdefault(si.group(1), text or "")
        yield m, html.unescape(text or "")


_TOKEN = re.compile(r"[A-Za-z_][A-Za-z_0-9.!$]*|\d+\.?\d*|\"[^\"]*\"|[-+*/<>=&,()^:]")


def formula_tokens(path: Path) -> dict[str, tuple[int, int]]:
    """{sheet: (tokens, formula cells)}: the tokens of each formula cell's text (names and references, numbers,
    strings, operators; a range A1:B2 is three), a shared group's later cells counted with the group's text, which
    LibreOffice copies into each of them on load."""
    out = {}
    with zipfile.ZipFile(path) as z:
        for name, part in sheet_parts(z).items():
            counts = [len(_TOKEN.findall(text)) for _, text in formula_texts(z.read(part).decode("utf-8"))]
            if counts:
                out[name] = (sum(counts), len(counts))
    return out


def make_twin(src: Path, dst: Path, keep: Keep | None = None) -> None:
    """Write dst: src with every formula that keep does not choose turned into its cached value.

    A shared formula group is kept or turned into values whole (its cells share one text)."""
    with zipfile.ZipFile(src) as zin, zipfile.ZipFile(dst, "w", zipfile.ZIP_DEFLATED) as zout:
        by_part = {part: name for name, part in sheet_parts(zin).items()}
        for info in zin.infolist():
            data = zin.read(info.filename)
            sheet = by_part.get(info.filename)
            if sheet is not None:
                xml = data.decode("utf-8")
                out, at = [], 0
                for m, text in formula_texts(xml):
                    out.append(xml[at:m.start()])
                    kept = keep is not None and keep(sheet, text)
                    out.append(m.group(0) if kept else _as_value(m.group(1), m.group(4)))
                    at = m.end()
                out.append(xml[at:])
                data = "".join(out).encode("utf-8")
            zout.writestr(info, data, compress_type=zipfile.ZIP_DEFLATED)


def count_cells(path: Path) -> dict:
    """Cells read from the file: formula cells and stored cells per sheet, grid cells, idioms.

    Stored cells are the <c> elements (values, formulas and styled blanks); grid cells are
    each sheet's used range (its dimension, rows x columns), which is what a program that
    limits a spreadsheet's cells sizes a sheet to on import.
    """
    formulas: dict[str, int] = {}
    stored: dict[str, int] = {}
    grid = 0
    idioms: Counter = Counter()
    idioms_by_sheet: dict[str, Counter] = {}
    with zipfile.ZipFile(path) as z:
        for name, part in sheet_parts(z).items():
            data = z.read(part)
            formulas[name] = len(_FORMULA.findall(data))
            stored[name] = len(_ANY_CELL.findall(data))
            dim = _DIMENSION.search(data)
            if dim:
                c1, r1, c2, r2 = dim.groups()
                c2, r2 = (c2 or c1), (r2 or r1)
                grid += (int(r2) - int(r1) + 1) * (col_number(c2.decode()) - col_number(c1.decode()) + 1)
            counts = Counter(idiom(text) for _, text in formula_texts(data.decode("utf-8")))
            idioms.update(counts)
            idioms_by_sheet[name] = counts
    return {"formula_cells": sum(formulas.values()), "stored_cells": sum(stored.values()), "grid_cells": grid,
            "formulas_by_sheet": {k: v for k, v in formulas.items() if v},
            "stored_by_sheet": stored, "formulas_by_idiom": dict(idioms.most_common()),
            "idioms_by_sheet": {k: dict(v) for k, v in idioms_by_sheet.items() if v}}


def input_rows(path: Path) -> int:
    """Data rows of the workbook's in_ sheets (the exports it holds), read from the file."""
    total = 0
    with zipfile.ZipFile(path) as z:
        for name, part in sheet_parts(z).items():
            if name.startswith("in_"):
                rows = set(re.findall(rb'<row r="(\d+)"', z.read(part)))
                total += max(len(rows) - 1, 0)  # the header row
    return total
