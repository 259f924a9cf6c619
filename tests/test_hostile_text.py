"""Hostile text arrives in the workbook as the same plain text, never as a formula.

Text cells of the exports (product names, campaigns, ad groups, targets, search terms)
may hold what a spreadsheet would run as a formula, control characters, text longer
than a cell holds, emoji or right-to-left scripts. Each must be stored as a text cell
(t="inlineStr" or t="s", no <f> element) holding exactly the text read.

openpyxl returns the stored text without decoding the _xHHHH_ escapes of ECMA-376
Part 1, 22.9.2.19 (ST_Xstring), which the file format uses for control characters
(and only half-decodes them in shared strings), so the exact text is read from the
package XML by :func:`read_xml_cells`, which decodes them as a spreadsheet program does.
"""
from __future__ import annotations

import csv
import datetime as dt
import re
import zipfile
import xml.etree.ElementTree as ET
from dataclasses import dataclass
from pathlib import Path

import openpyxl
import pytest
import xlsxwriter

from conftest import require_libreoffice
from sheetbuilder.pipeline import build
from tools.recalc import libreoffice_convert
from sheetbuilder.workbook.render import CELL_TEXT_LIMIT, TRUNCATION_MARK, put_value, workbook_options

BUILT_ON = dt.date(2026, 12, 2)
LONG = "raised bed " * 3_637 + "end"  # 40,010 characters, more than a cell holds
HOSTILE = {
    "hyperlink": '=HYPERLINK("http://x","y")',
    "plus": "+1+2",
    "minus": "-2+3",
    "at": "@SUM(A1)",
    "tab": "\tTAB leading",
    "newline": "two\nlines",
    "long": LONG,
    "emoji": "🌱 seed tray 🌼",
    "hebrew": "עציץ",
    "arabic": "وعاء",
    "wildcards": "pots * ? ~ mix",
    "rich_text_lookalike": "<r>pots & trays</r>",
}
# Control characters other than tab and line feed, and _xHHHH_ look-alikes, are refused on
# input (tests/test_hardened.py): programs read their escapes back differently.
NAMES = list(HOSTILE)
TEXT_COLUMNS = {  # sheet: columns that hold hostile text
    "in_catalog": ["product_name"],
    "in_ad_products": ["campaign", "ad_group"],
    "in_search_terms": ["campaign", "ad_group", "target", "search_term"],
}
STRIPPED = {"campaign", "ad_group"}  # the readers strip outer whitespace from these (and product_id) only


def _pid(i: int) -> str:
    return f"P{i:02d}"


def _write(path: Path, header: list[str], rows: list[list[object]]) -> None:
    with open(path, "w", encoding="utf-8", newline="") as fh:
        writer = csv.writer(fh)
        writer.writerow(header)
        writer.writerows(rows)


def write_hostile_account(folder: Path) -> dict[tuple[str, int, str], str]:
    """A valid account whose text cells hold the hostile texts.

    Returns:
        {(sheet, source row, column): the text the cell should hold}.
    """
    folder.mkdir(parents=True, exist_ok=True)
    n = len(NAMES)
    texts = [HOSTILE[k] for k in NAMES]
    _write(folder / "catalog.csv", ["product_id", "product_name", "price", "unit_cost", "fees_per_unit"],
           [[_pid(i), texts[i], "20.00", "8.00", "2.00"] for i in range(n)])
    _write(folder / "store_sales.csv", ["product_id", "units", "revenue"],
           [[_pid(i), 10, "200.00"] for i in range(n)])
    _write(folder / "ad_products.csv",
           ["campaign", "ad_group", "product_id", "ad_type", "impressions", "clicks", "spend", "ad_sales", "orders"],
           [[texts[i], texts[(i + 1) % n], _pid(i), "product ads", 1000, 50, "25.00", "100.00", 5] for i in range(n)])
    _write(folder / "search_terms.csv",
           ["campaign", "ad_group", "target", "match_type", "search_term", "impressions", "clicks", "spend",
            "ad_sales", "orders"],
           [[texts[i], texts[(i + 2) % n], texts[(i + 3) % n], "broad", texts[(i + 4) % n], 100, 5, "2.00",
             "10.00", 1] for i in range(n)])
    expected: dict[tuple[str, int, str], str] = {}
    for i in range(n):
        row = i + 2  # the header is row 1 of each file
        expected[("in_catalog", row, "product_name")] = texts[i]
        expected[("in_ad_products", row, "campaign")] = texts[i]
        expected[("in_ad_products", row, "ad_group")] = texts[(i + 1) % n]
        for col, j in (("campaign", i), ("ad_group", i + 2), ("target", i + 3), ("search_term", i + 4)):
            expected[("in_search_terms", row, col)] = texts[j % n]
    return {key: (text.strip() if key[2] in STRIPPED else text) for key, text in expected.items()}


_XSTRING = re.compile(r"_x([0-9A-Fa-f]{4})_")
_NS = "{http://schemas.openxmlformats.org/spreadsheetml/2006/main}"
_REL = "{http://schemas.openxmlformats.org/officeDocument/2006/relationships}id"


def xstring(text: str) -> str:
    """text with the ST_Xstring escapes (_xHHHH_, ECMA-376 Part 1, 22.9.2.19) decoded, left to right."""
    return _XSTRING.sub(lambda m: chr(int(m.group(1), 16)), text)


def _text_of(element) -> str:
    """The text of an <is> or <si> element: its <t> runs, phonetic runs left out."""
    parts = [element.find(_NS + "t")] if element.find(_NS + "t") is not None else []
    parts += [r.find(_NS + "t") for r in element.findall(_NS + "r")]
    return xstring("".join(t.text or "" for t in parts if t is not None))


@dataclass(frozen=True)
class XmlCell:
    """One <c> element as stored: its t attribute, whether it has an <f>, its decoded text."""

    type: str | None
    formula: bool
    text: str | None


def read_xml_cells(path: Path) -> dict[str, dict[str, XmlCell]]:
    """{sheet name: {cell reference: XmlCell}}, read from the package without openpyxl."""
    with zipfile.ZipFile(path) as z:
        rels = {r.get("Id"): r.get("Target") for r in ET.fromstring(z.read("xl/_rels/workbook.xml.rels"))}
        shared = []
        if "xl/sharedStrings.xml" in z.namelist():
            shared = [_text_of(si) for si in ET.fromstring(z.read("xl/sharedStrings.xml")).iter(_NS + "si")]
        out: dict[str, dict[str, XmlCell]] = {}
        for sheet in ET.fromstring(z.read("xl/workbook.xml")).iter(_NS + "sheet"):
            target = rels[sheet.get(_REL)].lstrip("/")
            root = ET.fromstring(z.read(target if target.startswith("xl/") else "xl/" + target))
            cells = {}
            for c in root.iter(_NS + "c"):
                kind, text = c.get("t"), None
                if kind == "inlineStr":
                    text = _text_of(c.find(_NS + "is"))
                elif kind == "s":
                    text = shared[int(c.find(_NS + "v").text)]
                cells[c.get("r")] = XmlCell(kind, c.find(_NS + "f") is not None, text)
            out[sheet.get("name")] = cells
    return out


def expected_in_cell(text: str) -> str:
    """What a cell holds for text: text itself, or cut with the mark if a cell cannot hold it."""
    return text if len(text.encode("utf-16-le")) // 2 <= CELL_TEXT_LIMIT else "<cut>"


def cells_by_source_row(ws) -> dict[tuple[int, str], object]:
    """{(source row, column header): openpyxl cell} for the text columns of an in_ sheet."""
    rows = list(ws.iter_rows())
    header = [c.value for c in rows[0]]
    source = header.index("source_row")
    wanted = [h for h in header if h in TEXT_COLUMNS[ws.title]]
    return {(int(r[source].value), h): r[header.index(h)] for r in rows[1:] for h in wanted
            if r[source].value is not None}  # not the open rows below in_catalog's table


def located(expected: dict, wb) -> list[tuple[str, str, str]]:
    """[(sheet, cell reference, expected text)] for every hostile cell of the in_ sheets."""
    cells = {sheet: cells_by_source_row(wb[sheet]) for sheet in TEXT_COLUMNS}
    return [(sheet, cells[sheet][(row, col)].coordinate, want) for (sheet, row, col), want in expected.items()]


def check_text(where, want: str, got) -> None:
    """got is want, or want cut to a cell's limit and ending with the truncation mark."""
    assert isinstance(got, str), f"{where}: expected text, got {got!r}"
    if expected_in_cell(want) == "<cut>":
        assert len(got.encode("utf-16-le")) // 2 <= CELL_TEXT_LIMIT, f"{where}: longer than a cell holds"
        assert got.endswith(TRUNCATION_MARK), f"{where}: the cut text lacks the truncation mark"
        assert want.startswith(got[:-len(TRUNCATION_MARK)]), f"{where}: the cut text is not a prefix"
    else:
        assert want == got, f"{where}"


_ESCAPED = re.compile(r"[\x00-\x08\x0b-\x1f]|_x[0-9A-Fa-f]{4}_")


def openpyxl_reads_plainly(text: str) -> bool:
    """openpyxl returns inline text undecoded, so compare its value only when nothing needs _xHHHH_."""
    return not _ESCAPED.search(text)


@pytest.fixture(scope="module")
def hostile(tmp_path_factory):
    """(expected texts, built workbook) for the hostile account."""
    tmp = tmp_path_factory.mktemp("hostile")
    expected = write_hostile_account(tmp / "in")
    result = build(tmp / "in", tmp / "hostile.xlsx", built_on=BUILT_ON)
    return expected, result.output


def test_the_hostile_account_builds_every_in_sheet(hostile):
    _, out = hostile
    names = openpyxl.load_workbook(out, read_only=True).sheetnames
    assert {"in_catalog", "in_store_sales", "in_ad_products", "in_search_terms"} <= set(names)


def test_openpyxl_sees_every_hostile_text_as_a_text_cell(hostile):
    expected, out = hostile
    wb = openpyxl.load_workbook(out)
    places = located(expected, wb)
    assert len(expected) == len(places)
    for sheet, ref, want in places:
        cell = wb[sheet][ref]
        assert "s" == cell.data_type, f"{sheet}!{ref}: stored as {cell.data_type!r}, not as text"
        if openpyxl_reads_plainly(want):
            check_text(f"{sheet}!{ref}", want, cell.value)


def test_every_hostile_text_is_stored_as_exactly_the_text_read_and_no_formula(hostile):
    expected, out = hostile
    xml = read_xml_cells(out)
    for sheet, ref, want in located(expected, openpyxl.load_workbook(out)):
        cell = xml[sheet][ref]
        assert not cell.formula, f"{sheet}!{ref} holds a formula"
        assert cell.type in ("inlineStr", "s"), f"{sheet}!{ref} has t={cell.type!r}, not text"
        check_text(f"{sheet}!{ref}", want, cell.text)


def test_the_long_text_is_cut_to_a_cell_and_marked(hostile):
    _, out = hostile
    ws = openpyxl.load_workbook(out)["in_catalog"]
    names = {r[0]: r[1] for r in ws.iter_rows(min_row=2, values_only=True)}
    long = names[_pid(NAMES.index("long"))]
    assert long.endswith(TRUNCATION_MARK)
    assert len(long.encode("utf-16-le")) // 2 <= CELL_TEXT_LIMIT
    assert LONG.startswith(long[:-len(TRUNCATION_MARK)])


def test_the_profit_sheet_shows_the_product_names_as_text(hostile):
    _, out = hostile
    ws = openpyxl.load_workbook(out)["Profit"]
    rows = list(ws.iter_rows())
    at = next(i for i, r in enumerate(rows) if "Product name" in [c.value for c in r])
    header = [c.value for c in rows[at]]
    pid, name = header.index("Product ID"), header.index("Product name")
    refs = {r[pid].value: r[name].coordinate for r in rows[at + 1:]}
    xml = read_xml_cells(out)["Profit"]
    for i, key in enumerate(NAMES):
        cell = xml[refs[_pid(i)]]
        assert not cell.formula and cell.type in ("inlineStr", "s"), f"Profit!{refs[_pid(i)]}: {cell}"
        check_text(f"Profit!{refs[_pid(i)]}", HOSTILE[key], cell.text)


@pytest.mark.libreoffice
def test_the_hostile_texts_survive_libreoffice_recalculation(hostile, tmp_path):
    require_libreoffice()
    expected, out = hostile
    places = located(expected, openpyxl.load_workbook(out))
    (lo,) = libreoffice_convert([out], tmp_path / "lo")
    wb = openpyxl.load_workbook(lo, data_only=True)
    xml = read_xml_cells(lo)
    for sheet, ref, want in places:
        assert "s" == wb[sheet][ref].data_type, f"LibreOffice {sheet}!{ref}: {wb[sheet][ref].data_type!r}"
        assert not xml[sheet][ref].formula, f"LibreOffice {sheet}!{ref} holds a formula"
        check_text(f"LibreOffice {sheet}!{ref}", want, xml[sheet][ref].text)


def test_every_part_of_the_hostile_workbook_is_well_formed_xml(hostile):
    _, out = hostile
    broken = []
    with zipfile.ZipFile(out) as z:
        for name in z.namelist():
            if name.endswith((".xml", ".rels")):
                try:
                    ET.fromstring(z.read(name))
                except ET.ParseError as exc:
                    broken.append(f"{name}: {exc}")
    assert [] == broken


@pytest.mark.parametrize("options", [{"constant_memory": True}, {"constant_memory": False}],
                         ids=["inline_strings", "shared_strings"])
def test_text_shaped_like_a_rich_text_run_is_written_as_that_text(tmp_path, options):
    # xlsxwriter passes a string that starts with "<r>" and ends with "</r>" into the XML unescaped.
    texts = ["<r>pots & trays</r>", "<r><t>injected</t></r>", "<r>_x0041_ \x07</r>", "<r>"]
    path = tmp_path / "runs.xlsx"
    wb = xlsxwriter.Workbook(str(path), {**workbook_options(), **options})
    ws = wb.add_worksheet("s")
    fmt = wb.add_format({})
    for i, text in enumerate(texts):
        put_value(ws, i, 0, text, fmt)
    wb.close()
    cells = read_xml_cells(path)["s"]
    assert texts == [cells[f"A{i + 1}"].text for i in range(len(texts))]
