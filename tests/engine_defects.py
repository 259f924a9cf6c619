"""Known defects of the outside recalculation engines, pinned so that an allowance for them stays narrow.

Gnumeric 1.12.55 (Debian 12's gnumeric package) returns #REF! for INDEX over a one-cell
range, for example INDEX(in_catalog!$G$2:$G$2,1), where Excel (Microsoft's INDEX
documentation: a reference of one row or column needs only the other index) and LibreOffice
return the cell. Our formulas write such a range whenever an input table or a list has
exactly one row. tests/test_recalc_engines.py pins the defect with a three-cell workbook and
excuses a Gnumeric disagreement only where the cell is such an INDEX or depends on one
(through a reference or a defined name); every other cell is compared as for LibreOffice.
Any value there is excused, not only #REF!: the error becomes #VALUE! through CHOOSE, and
a COUNTIFS skips it and returns a plain, wrong count (the Guide's "Products losing money
after ads" read 0 for a one-product account whose product loses money). LibreOffice and
`formulas` still check those cells.
"""
from __future__ import annotations

import re

import openpyxl
from openpyxl.utils import column_index_from_string, get_column_letter

ONE_CELL_INDEX = re.compile(r"INDEX\((?:'?[\w ]+'?!)?\$?([A-Z]{1,3})\$?(\d+):\$?\1\$?\2[,)]")
_NAME = re.compile(r"[A-Za-z_][\w.]*")
_REFERENCE = re.compile(r"(?:'?([A-Za-z_][\w ]*)'?!)?\$?([A-Z]{1,3})\$?(\d+)(?::\$?([A-Z]{1,3})\$?(\d+))?")


def _cells(sheet: str, m: re.Match) -> set[tuple[str, str]]:
    """The (SHEET, 'A1') cells a matched reference covers."""
    where = (m.group(1) or sheet).upper()
    if not m.group(4):
        return {(where, f"{m.group(2)}{m.group(3)}")}
    c1, c2 = column_index_from_string(m.group(2)), column_index_from_string(m.group(4))
    return {(where, f"{get_column_letter(c)}{r}") for c in range(c1, c2 + 1)
            for r in range(int(m.group(3)), int(m.group(5)) + 1)}


def _named_cells(defined) -> set[tuple[str, str]]:
    """The (SHEET, 'A1') cells a workbook-level defined name stands for."""
    out: set[tuple[str, str]] = set()
    for sheet, ref in defined.destinations:
        if m := _REFERENCE.fullmatch(ref.replace("$", "")):
            out |= _cells(sheet, m)
    return out


def one_cell_index_cells(path) -> set[tuple[str, str]]:
    """{(SHEET, 'A1')} of every formula cell holding an INDEX over a one-cell range, or depending on one."""
    wb = openpyxl.load_workbook(path)
    formulas = {(ws.title.upper(), c.coordinate): c.value for ws in wb.worksheets for row in ws.iter_rows()
                for c in row if isinstance(c.value, str) and c.value.startswith("=")}
    tainted = {k for k, text in formulas.items() if ONE_CELL_INDEX.search(text)}
    if not tainted:
        return tainted
    names = {name.upper(): _named_cells(defined) for name, defined in wb.defined_names.items()}
    reads = {k: set().union(*(_cells(k[0], m) for m in _REFERENCE.finditer(text)),
                            *(names.get(w.upper(), set()) for w in _NAME.findall(text)))
             for k, text in formulas.items()}
    grew = True
    while grew:
        more = {k for k, cells in reads.items() if k not in tainted and cells & tainted}
        tainted |= more
        grew = bool(more)
    return tainted
