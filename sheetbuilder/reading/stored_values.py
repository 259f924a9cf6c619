"""What an .xlsx sheet's XML says that its cell values do not: formula cells saved without their value,
and hidden rows and columns.

A program that does not calculate (a script, some converters) stores a formula but no result, and a
reader sees a blank cell; such a file is refused naming the cells, never read as blanks or zeros
(ECMA-376 Part 1, 18.3.1.4: a cell's `v` element holds its value, `f` its formula). Hidden columns
and rows (18.3.1.13 `col`, 18.3.1.73 `row`, attribute hidden) are told to the reader, which prefers
visible ones."""
from __future__ import annotations

import re
import zipfile
from pathlib import Path, PurePosixPath

from defusedxml import ElementTree

_CELL = re.compile(rb"<c\b([^>]*?)(?<!/)>(.*?)</c>", re.S)
_EMPTY = re.compile(rb"<v\s*/>")  # an empty value element: what openpyxl writes for a formula it did not calculate
_REF = re.compile(rb'\br="([A-Z]+[0-9]+)"')
_MAIN = "{http://schemas.openxmlformats.org/spreadsheetml/2006/main}"
_REL = "{http://schemas.openxmlformats.org/officeDocument/2006/relationships}"


def _sheet_part(archive: zipfile.ZipFile, sheet: str) -> str | None:
    """The zip part holding the sheet named sheet (None when not found)."""
    book = ElementTree.fromstring(archive.read("xl/workbook.xml"))
    rels = ElementTree.fromstring(archive.read("xl/_rels/workbook.xml.rels"))
    targets = {r.get("Id"): r.get("Target") for r in rels}
    for s in book.iter(f"{_MAIN}sheet"):
        if s.get("name") == sheet:
            target = targets.get(s.get(f"{_REL}id"), "")
            return target.lstrip("/") if target.startswith("/") else str(PurePosixPath("xl") / target)
    return None


def formulas_without_values(path: Path, sheet: str) -> list[str]:
    """The cells (A1 form) of sheet in the .xlsx at path that hold a formula and no stored value."""
    try:
        with zipfile.ZipFile(path) as archive:
            part = _sheet_part(archive, sheet)
            data = archive.read(part) if part else b""
    except (KeyError, zipfile.BadZipFile, ElementTree.ParseError, OSError):
        return []  # not laid out as expected: calamine has read it; nothing more to say
    if b"<f" not in data:
        return []
    found = []
    for attrs, body in _CELL.findall(data):
        if b"<f" in body and (b"<v" not in body or (_EMPTY.search(body) and b't="str"' not in attrs)):
            ref = _REF.search(attrs)
            found.append(ref.group(1).decode() if ref else "?")
    return found


_COL = re.compile(rb"<col\b([^>]*)>")
_ROW = re.compile(rb"<row\b([^>]*)>")
_HIDDEN = re.compile(rb'\bhidden="(?:1|true)"')


def _attr(attrs: bytes, name: bytes) -> int:
    m = re.search(rb"\b" + name + rb'="(\d+)"', attrs)
    return int(m.group(1)) if m else 0


def hidden_parts(path: Path, sheet: str) -> tuple[set[int], set[int]]:
    """The hidden columns (0-based) and hidden rows (1-based, as the sheet numbers them) of sheet."""
    try:
        with zipfile.ZipFile(path) as archive:
            part = _sheet_part(archive, sheet)
            data = archive.read(part) if part else b""
    except (KeyError, zipfile.BadZipFile, ElementTree.ParseError, OSError):
        return set(), set()
    if b"hidden" not in data:
        return set(), set()
    columns = {j - 1 for attrs in _COL.findall(data) if _HIDDEN.search(attrs)
               for j in range(_attr(attrs, b"min"), _attr(attrs, b"max") + 1)}
    rows = {_attr(attrs, b"r") for attrs in _ROW.findall(data) if _HIDDEN.search(attrs)}
    return columns, rows
