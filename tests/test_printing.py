"""Printing: the demo printed by LibreOffice has no empty page, and each page's repeated header
belongs to the table whose rows follow it; the page setup each sheet declares.

A page is empty when, past its footer (sheet name, page number), it holds nothing but header
words and bare row numbers (a live list's numbered rows that are not filled). The text of
each page comes from poppler's pdftotext.
"""
from __future__ import annotations

import re
import shutil
import subprocess

import pytest

from conftest import BUILT_ON, DEMO, require_libreoffice
from tools.recalc import libreoffice_convert
from sheetbuilder.workbook.render import _widths
from sheetbuilder.workbook.spec import Sheet, Table

FOOTER = re.compile(r"^(?P<sheet>\S.*?)\s+Page \d+ of \d+$")


def _words(text: str) -> list[str]:
    return re.findall(r"\S+", text)


def _shown(value) -> str:
    """A cached value as the page shows its start (whole numbers without decimals)."""
    if isinstance(value, float) and value.is_integer():
        return str(int(value))
    return "" if value is None else str(value)


def _tables(sheet: Sheet) -> list[Table]:
    return [t for t in [sheet.table, *sheet.more] if t is not None]


def _header_words(table: Table) -> set[str]:
    return {w for c in table.columns if not c.hidden for w in _words(c.header)}


def _first_column(table: Table) -> set[str]:
    """The texts a printed body row of the table starts with (its first visible column)."""
    column = next(c for c in table.columns if not c.hidden)
    return {_shown(v) for v in column.values if _shown(v)}


def _pages(pdf) -> list[list[str]]:
    """Each page's non-blank lines, spaces collapsed."""
    out = subprocess.run(["pdftotext", "-layout", str(pdf), "-"], capture_output=True, text=True, check=True).stdout
    return [[" ".join(_words(line)) for line in page.splitlines() if line.strip()] for page in out.split("\f")[:-1]]


@pytest.fixture(scope="module")
def printed(demo_build, work):
    require_libreoffice()
    if shutil.which("pdftotext") is None:
        pytest.skip("pdftotext (poppler-utils) is not installed")
    pdf = libreoffice_convert([demo_build.output], work / "printed", target="pdf")[0]
    sheets = {s.name: s for s in demo_build.plan.spec.sheets}
    pages = []
    for lines in _pages(pdf):
        footer = FOOTER.match(lines[-1]) if lines else None
        assert footer, f"a page without the sheet-name footer: {lines[-1:]}"
        pages.append((sheets[footer["sheet"]], lines[:-1]))
    return pages


def _is_header(line: str, sheet: Sheet) -> bool:
    words = set(_words(line))
    return any(words <= _header_words(t) for t in _tables(sheet))


@pytest.mark.libreoffice
def test_the_printed_demo_has_no_empty_page(printed):
    empty = []
    for i, (sheet, lines) in enumerate(printed, start=1):
        content = [line for line in lines if not _is_header(line, sheet) and not line.isdigit()]
        if not content:
            empty.append(f"page {i} ({sheet.name})")
    assert [] == empty


@pytest.mark.libreoffice
def test_each_printed_header_belongs_to_the_rows_under_it(printed):
    wrong = []
    for i, (sheet, lines) in enumerate(printed, start=1):
        header = []
        for line in lines:
            if not _is_header(line, sheet):
                break
            header.append(line)
        if not header or len(header) == len(lines):
            continue  # the page starts with a title or a row of its own table
        words = set(_words(" ".join(header)))
        first_row = lines[len(header)]
        owners = [t for t in _tables(sheet) if words <= _header_words(t)]
        # a long first cell is cut at its column's edge: its first 12 characters identify it
        if not any(any(first_row.startswith(v[:12]) for v in _first_column(t)) for t in owners):
            wrong.append(f"page {i} ({sheet.name}): header {header} over row {first_row!r}")
    assert [] == wrong


@pytest.mark.libreoffice
def test_the_printed_demo_keeps_every_sheet_and_fewer_pages_than_before(printed, demo_build):
    visible = [s.name for s in demo_build.plan.spec.sheets if not s.hidden]
    assert visible == list(dict.fromkeys(sheet.name for sheet, _ in printed))
    assert len(printed) < 54  # 54 pages before print areas and page breaks (December 2026), 18 of them empty


def test_no_sheet_writes_a_value_into_a_column_it_hides(demo_build):
    found = []
    for sheet in demo_build.plan.spec.sheets:
        _, hidden = _widths(sheet)
        for r, cells in enumerate([*sheet.above, *sheet.below]):
            for c, cell in enumerate(cells):
                if cell is not None and c in hidden and cell.value not in (None, ""):
                    found.append((sheet.name, r, c, cell.value))
    assert [] == found


def test_live_lists_print_the_rows_filled_when_built(demo_build):
    spec, tables = demo_build.plan.spec, demo_build.plan.tables
    for name in ("Harvest", "Negatives"):
        page = spec.sheet(name).page_setup()
        filled = int(tables[name].frame["pos"].notna().sum())
        assert spec.sheet(name).table.first_row + filled == page.area.last_row
    # Actions: through its last filled row (the room left below its bid changes lies between its two blocks).
    actions = spec.sheet("Actions")
    last_filled = int((tables["Actions"].frame["seg"] > 0).to_numpy().nonzero()[0].max()) + 1
    assert actions.table.first_row + last_filled == actions.page_setup().area.last_row


def test_stacked_tables_repeat_only_the_last_header_and_start_it_on_a_new_page(demo_build):
    for name in ("Mix", "Budget"):
        sheet = demo_build.plan.spec.sheet(name)
        page, last = sheet.page_setup(), _tables(sheet)[-1]
        assert (last.first_row, last.first_row) == page.repeat_rows
        assert last.first_row - 1 in page.breaks  # the title row above its header
