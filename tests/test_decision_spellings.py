"""A typed Bids Decision is honoured in every spelling the standard allows the saved sheet to use.

ECMA-376 Part 1 (18.3.1.4 c, 18.3.1.73 row) and XML 1.0: attributes in any order and either quote,
whitespace before '>', any namespace prefix bound to the SpreadsheetML namespace, and cells written
without r (each then follows the previous one, so a writer omitting r writes every cell of a row).
Each variant below rewrites the Bids sheet of one saved workbook; `changes` and `--previous` must
read the same Decision from all of them.
"""
from __future__ import annotations

from minimal import TARGETS, write_account

import re
import zipfile

import openpyxl
import pytest
from openpyxl.utils.cell import column_index_from_string

from sheetbuilder.pipeline import build
from sheetbuilder.sheets.bids import EDITABLE_COLUMNS as BIDS
from sheetbuilder.weekly.carry import read_edits
from sheetbuilder.weekly.changes import export_changes
from sheetbuilder.weekly.saved import named_area

TYPED = 0.55


def _reordered(xml: str) -> str:
    """Every cell's attributes reversed, in single quotes, with a space before '>'."""
    def cell(m):
        attrs = re.findall(r'(\w+)="([^"]*)"', m.group(1))
        return "<c " + " ".join(f"{k}='{v}'" for k, v in reversed(attrs)) + " " + m.group(2)
    return re.sub(r"<c ((?:\w+=\"[^\"]*\" ?)+)(/?>)", cell, xml)


def _prefixed(xml: str) -> str:
    """Every SpreadsheetML element written with the prefix 'x:'."""
    xml = xml.replace('xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main"',
                      'xmlns:x="http://schemas.openxmlformats.org/spreadsheetml/2006/main"', 1)
    return re.sub(r"<(/?)([A-Za-z]\w*)(?=[\s/>])", r"<\1x:\2", xml)


def _without_references(xml: str) -> str:
    """No r on any cell: each row written cell by cell from column A, the gaps as empty cells."""
    def row(m):
        cells = re.findall(r'<c r="([A-Z]+)\d+"((?:[^>/]|/(?!>))*)(/>|>.*?</c>)', m.group(2), re.S)
        out, at = [], 1
        for letters, attrs, rest in cells:
            col = column_index_from_string(letters)
            out += ["<c/>"] * (col - at)
            out.append(f"<c{attrs}{rest}")
            at = col + 1
        return m.group(1) + "".join(out) + "</row>"
    return re.sub(r"(<row[^>]*>)(.*?)</row>", row, xml, flags=re.S)


SPELLINGS = {"as openpyxl writes it": lambda x: x, "attributes reordered in single quotes": _reordered,
             "a namespace prefix": _prefixed, "no cell references": _without_references}


@pytest.fixture(scope="module")
def typed(tmp_path_factory):
    """A small account's workbook with one Bids Decision typed (saved by openpyxl), and that keyword's key."""
    work = tmp_path_factory.mktemp("spell")
    folder = write_account(work / "shop", {"targets.csv": TARGETS})
    first = build(folder, work / "week1.xlsx")
    key = tuple(first.plan.tables["Bids"].frame.iloc[0][k] for k in BIDS.keys)
    wb = openpyxl.load_workbook(first.output)
    area = named_area(wb, BIDS.name_of(BIDS.value))
    wb[area.sheet].cell(area.first_row + 1, area.first_col + 1).value = TYPED
    wb.save(work / "typed.xlsx")
    return work, folder, key


def _variant(typed, name: str):
    work, _, _ = typed
    source = work / "typed.xlsx"
    with zipfile.ZipFile(source) as z:
        parts = {n: z.read(n) for n in z.namelist()}
        book = openpyxl.load_workbook(source, read_only=True)
        index = book.sheetnames.index("Bids") + 1
        book.close()
    part = f"xl/worksheets/sheet{index}.xml"
    parts[part] = SPELLINGS[name](parts[part].decode("utf-8")).encode("utf-8")
    out = work / f"{name.replace(' ', '_')}.xlsx"
    with zipfile.ZipFile(out, "w", zipfile.ZIP_DEFLATED) as z:
        for n, data in parts.items():
            z.writestr(n, data)
    return out


@pytest.mark.parametrize("name", list(SPELLINGS))
def test_a_bids_decision_in_each_spelling_is_exported_and_carried(typed, name, tmp_path):
    work, folder, key = typed
    variant = _variant(typed, name)
    assert {key: TYPED} == read_edits(variant).decisions["Bids"]
    result = export_changes(variant, tmp_path / "changes.csv")
    assert [TYPED] == [r[6] for r in result.rows if r[0] == "bid" and tuple(r[1:5]) == key]
    again = build(folder, tmp_path / "week2.xlsx", previous=variant)
    assert [] == again.carry.unmatched
    assert TYPED in [e.value for e in again.carry.carried if e.sheet == "Bids"]
