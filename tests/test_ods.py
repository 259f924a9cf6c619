"""A saved OpenDocument spreadsheet (.ods) reads as the same workbook saved as .xlsx reads.

Sources: OpenDocument 1.2 (OASIS), Part 3, 3.3 (the mimetype part); Part 1, 9.1.2 (table:table),
9.1.3 (table:table-row, table:number-rows-repeated), 9.1.4 (table:table-cell and
table:covered-table-cell, table:number-columns-repeated), 9.4.12 and 9.4.13 (table:named-range,
table:named-expression), 19.385 (office:value-type), 6.1.3 to 6.1.5 (text:s and its text:c count,
text:tab, text:line-break), 14.1 (office:annotation, a comment, is not the cell's text). White space
written as it is is read as LibreOffice 7.4 reads it back (kept), not collapsed as 6.1.2 would. LibreOffice writes a
formula's error as calcext:value-type="error" with the error's text (its own extension namespace,
read from files it saved). The workbooks here are written by hand, each holding only what a test needs.
"""
from __future__ import annotations

import datetime as dt
import io
import re
import zipfile
from pathlib import Path

import pytest

from sheetbuilder.reading import guard
from sheetbuilder.weekly.changes import NotAWorkbook, export_changes
from sheetbuilder.weekly.ods import MIMETYPE, OdsFile
from sheetbuilder.weekly.saved import SavedBook

NS = ('xmlns:office="urn:oasis:names:tc:opendocument:xmlns:office:1.0" '
      'xmlns:table="urn:oasis:names:tc:opendocument:xmlns:table:1.0" '
      'xmlns:text="urn:oasis:names:tc:opendocument:xmlns:text:1.0" '
      'xmlns:calcext="urn:org:documentfoundation:names:experimental:calc:xmlns:calcext:1.0" '
      'xmlns:xlink="http://www.w3.org/1999/xlink"')
MISSING = object()
TAIL = ('<table:table-row table:number-rows-repeated="1048570">'
        '<table:table-cell table:number-columns-repeated="16384"/></table:table-row>')  # what a program writes
MANIFEST = (b'<?xml version="1.0" encoding="UTF-8"?><manifest:manifest '
            b'xmlns:manifest="urn:oasis:names:tc:opendocument:xmlns:manifest:1.0" manifest:version="1.3">'
            b'<manifest:file-entry manifest:full-path="/" manifest:media-type="' + MIMETYPE.encode() + b'"/>'
            b'<manifest:file-entry manifest:full-path="content.xml" manifest:media-type="text/xml"/>'
            b'</manifest:manifest>')


def content(tables: str, names: str = "") -> bytes:
    """content.xml holding tables and the workbook-level names."""
    return (f'<?xml version="1.0" encoding="UTF-8"?><office:document-content {NS} office:version="1.3">'
            f'<office:body><office:spreadsheet>{tables}{names}</office:spreadsheet></office:body>'
            '</office:document-content>').encode("utf-8")


def ods_file(path: Path, tables: str, names: str = "", extra: dict[str, bytes] | None = None,
             mimetype: str = MIMETYPE) -> Path:
    """An .ods package: the mimetype part first and stored, as Part 3, 3.3 asks, then content.xml."""
    buffer = io.BytesIO()
    with zipfile.ZipFile(buffer, "w", zipfile.ZIP_DEFLATED) as z:
        z.writestr(zipfile.ZipInfo("mimetype"), mimetype.encode("ascii"), zipfile.ZIP_STORED)
        z.writestr("content.xml", content(tables, names))
        z.writestr("META-INF/manifest.xml", MANIFEST)
        for name, data in (extra or {}).items():
            z.writestr(name, data)
    path.write_bytes(buffer.getvalue())
    return path


def table(name: str, rows: str) -> str:
    return f'<table:table table:name="{name}"><table:table-column table:number-columns-repeated="16384"/>{rows}{TAIL}</table:table>'


def row(*cells: str, repeat: int = 1) -> str:
    count = f' table:number-rows-repeated="{repeat}"' if repeat > 1 else ""
    return f'<table:table-row{count}>{"".join(cells)}</table:table-row>'


def number(value: str, kind: str = "float", repeat: int = 1) -> str:
    count = f' table:number-columns-repeated="{repeat}"' if repeat > 1 else ""
    return f'<table:table-cell office:value-type="{kind}" office:value="{value}"{count}><text:p>{value}</text:p></table:table-cell>'


def text(*paragraphs: str) -> str:
    return ('<table:table-cell office:value-type="string">'
            + "".join(f"<text:p>{p}</text:p>" for p in paragraphs) + "</table:table-cell>")


EMPTY = "<table:table-cell/>"


def read(tmp_path: Path, rows: str, names: str = "", **kw) -> list[list]:
    with OdsFile(ods_file(tmp_path / "book.ods", table("S", rows), names)) as book:
        return book.read("S", no_saved_value=MISSING, **kw)


def test_every_value_type_reads_as_the_xlsx_reader_gives_it(tmp_path):
    rows = row(number("3"), number("0.55"), number("0.08", "percentage"), number("12.5", "currency"),
               '<table:table-cell office:value-type="date" office:date-value="2026-11-29"><text:p>29/11/26</text:p>'
               '</table:table-cell>',
               '<table:table-cell office:value-type="date" office:date-value="2026-11-29T10:30:00"/>',
               '<table:table-cell office:value-type="time" office:time-value="PT10H30M15S"/>',
               '<table:table-cell office:value-type="boolean" office:boolean-value="true"><text:p>TRUE</text:p>'
               '</table:table-cell>',
               text("plain"),
               '<table:table-cell table:formula="of:=1/0" office:value-type="float" office:value="0" '
               'calcext:value-type="error"><text:p>#DIV/0!</text:p></table:table-cell>')
    # a number written without a point reads as int (as the .xlsx reader reads "<v>3</v>"); a date as a datetime
    assert [[3, 0.55, 0.08, 12.5, dt.datetime(2026, 11, 29), dt.datetime(2026, 11, 29, 10, 30),
             dt.time(10, 30, 15), True, "plain", "#DIV/0!"]] == read(tmp_path, rows)
    assert int is type(read(tmp_path, rows)[0][0])


@pytest.mark.parametrize("written, typed", [
    ("<text:s/>two leading<text:s/>", " two leading "),      # a space at the start is written as text:s
    ("a <text:s text:c=\"2\"/>b", "a   b"),                  # three spaces: one kept, two counted
    ("a<text:tab/>b", "a\tb"),
    ("line one<text:line-break/>line two", "line one\nline two"),
    ("=SUM(A1:A3)", "=SUM(A1:A3)"),                           # text that looks like a formula stays text
    # white space written as it is stays (LibreOffice 7.4 writes a cell of several lines so, and reads it back so:
    # measured by converting this hand-written cell to .xlsx with it; OpenDocument 6.1.2 would collapse it)
    ("  doubled  and\n  broken ", "  doubled  and\n  broken "),
    ("<text:span>in a </text:span><text:a xlink:href=\"https://example.org\">link</text:a>", "in a link"),
])
def test_a_string_comes_back_exactly_as_typed(tmp_path, written, typed):
    assert [[typed]] == read(tmp_path, row(text(written)))


def test_paragraphs_are_lines_and_a_comment_is_not_the_text(tmp_path):
    cell = ('<table:table-cell office:value-type="string"><office:annotation><text:p>a comment</text:p>'
            '</office:annotation><text:p>first</text:p><text:p/><text:p>third</text:p></table:table-cell>')
    assert [["first\n\nthird"]] == read(tmp_path, row(cell))


def test_a_string_value_attribute_is_the_text_when_given(tmp_path):
    cell = ('<table:table-cell table:formula="of:=A1" office:value-type="string" office:string-value="  as  is">'
            '<text:p>shown</text:p></table:table-cell>')
    assert [["  as  is"]] == read(tmp_path, row(cell))


def test_repeated_cells_and_rows_are_copies_and_the_repeats_to_the_sheet_end_cost_nothing(tmp_path):
    rows = (row(number("7", repeat=3), '<table:table-cell table:number-columns-repeated="16380"/>')
            + row(EMPTY, text("x"), repeat=2)
            + '<table:table-row table:number-rows-repeated="5"><table:table-cell table:number-columns-repeated="16384"/>'
              '</table:table-row>'
            + row('<table:table-cell table:number-columns-repeated="2"/>', number("1")))
    assert [[7, 7, 7], [None, "x", None], [None, "x", None], [None] * 3, [None] * 3, [None] * 3, [None] * 3,
            [None] * 3, [None, None, 1]] == read(tmp_path, rows)


def test_covered_cells_keep_every_cell_in_its_column(tmp_path):
    merged = ('<table:table-cell table:number-columns-spanned="2" office:value-type="string"><text:p>wide</text:p>'
              '</table:table-cell><table:covered-table-cell/>')
    assert [["wide", None, 5]] == read(tmp_path, row(merged, number("5")))


def test_only_the_wanted_columns_are_kept(tmp_path):
    rows = row(number("1"), number("2", repeat=3), number("3")) + row(text("a"), text("b"))
    assert [[None, 2, None, None, 3], [None, "b", None, None, None]] == read(
        tmp_path, rows, columns=frozenset({1, 4}))


def test_a_formula_without_a_saved_value_is_marked_when_formulas_are_asked_for(tmp_path):
    rows = row('<table:table-cell table:formula="of:=1+1"/>',
               '<table:table-cell table:formula="of:=&quot;&quot;" office:value-type="string" office:string-value=""/>',
               number("4"))
    assert [[None, None, 4]] == read(tmp_path, rows)
    assert [[MISSING, MISSING, 4]] == read(tmp_path, rows, formulas=True)  # as the .xlsx reader reads <v></v>


@pytest.mark.parametrize("columns", [None, frozenset({1, 4})])
def test_a_read_that_keeps_its_rows_gives_the_read_and_the_stream_of_two_passes(tmp_path, columns):
    # Expected: the two separate passes it stands for (read, then stream), on repeats, formulas and text.
    rows = (row(number("1"), number("2", repeat=3), '<table:table-cell table:formula="of:=1+1"/>')
            + row(text("a"), EMPTY, text("b"), repeat=2)
            + row('<table:table-cell table:number-columns-repeated="3"/>',
                  '<table:table-cell table:formula="of:=2" office:value-type="float" office:value="2"/>', number("5")))
    with OdsFile(ods_file(tmp_path / "book.ods", table("S", rows))) as book:
        streamed = []
        book.stream("S", lambda r, cells: streamed.append((r, dict(cells))) and None, None, MISSING)
        expected = book.read("S", columns, True, MISSING), streamed
        got, kept = book.read_keeping_rows("S", columns, True, MISSING)
    again = []
    kept.stream(lambda r, cells: again.append((r, dict(cells))) and None)
    assert expected == (got, again)


NAMES = ('<table:named-expressions>'
         '<table:named-range table:name="costs" table:base-cell-address="$Profit.$A$1" '
         'table:cell-range-address="$Profit.$A$6:.$A$31"/>'
         '<table:named-range table:name="one" table:base-cell-address="$Profit.$A$1" '
         'table:cell-range-address="$\'Bob\'\'s sheet\'.$B$2"/>'
         '<table:named-range table:name="rows" table:base-cell-address="$Profit.$A$1" '
         'table:cell-range-address="$Profit.$4:.$4"/>'
         '<table:named-range table:name="elsewhere" table:base-cell-address="$Profit.$A$1" '
         'table:cell-range-address="$Gone.$A$1"/>'
         '<table:named-expression table:name="target" table:base-cell-address="$Profit.$A$1" '
         'table:expression="of:[$Profit.$C$1]"/>'
         '<table:named-expression table:name="rate" table:base-cell-address="$Profit.$A$1" '
         'table:expression="of:=0.3"/>'
         '</table:named-expressions>')


def test_named_ranges_and_named_references_give_their_cells(tmp_path):
    local = ('<table:table table:name="Profit">' + row(text("head"), EMPTY, number("0.25", "percentage"))
             + '<table:named-expressions><table:named-range table:name="local" table:base-cell-address="$Profit.$A$1" '
               'table:cell-range-address="$Profit.$A$1"/></table:named-expressions></table:table>')
    other = table("Bob's sheet", row(EMPTY) + row(EMPTY, text("typed")))
    path = ods_file(tmp_path / "names.ods", local + other, NAMES)
    with SavedBook(path) as book:
        assert ["Profit", "Bob's sheet"] == book.sheetnames
        area = book.area("costs")
        assert ("Profit", 0, 0, 5, 30) == (area.sheet, area.first_col, area.last_col, area.first_row, area.last_row)
        assert "typed" == book.named_value("one")
        assert 0.25 == book.named_value("target")
        # a whole row, another sheet, a constant and a sheet's own name are no area of a workbook-level name
        assert [None, None, None, None] == [book.area(n) for n in ("rows", "elsewhere", "rate", "local")]
        assert (True, False) == (book.has_name("rate"), book.has_name("local"))


def test_repeats_that_would_make_far_more_cells_than_written_are_refused(tmp_path, monkeypatch):
    monkeypatch.setattr(guard, "MAX_REPEATED_CELLS", 3000)
    bomb = row(number("1", repeat=16384), repeat=1000)  # a few hundred bytes asking for sixteen million cells
    path = ods_file(tmp_path / "bomb.ods", table("S", bomb))
    with SavedBook(path) as book, pytest.raises(NotAWorkbook, match="repeats its cells into more than"):
        book.rows("S")
    with SavedBook(path) as book:  # the wanted columns alone are within the limit
        assert [[1, 1]] * 1000 == [r[:2] for r in book.rows("S", frozenset({0, 1}))]


def test_a_sheet_linked_to_another_file_is_refused(tmp_path):
    linked = ('<table:table table:name="S"><table:table-source xlink:href="file:///C:/other.ods" '
              'table:table-name="Sheet1"/>' + row(number("1")) + '</table:table>')
    with pytest.raises(NotAWorkbook, match="links to another file"):
        SavedBook(ods_file(tmp_path / "linked.ods", linked))


def test_the_format_is_found_by_content_not_by_the_name(tmp_path):
    path = ods_file(tmp_path / "named_like.xlsx", table("S", row(text("read"))))
    with SavedBook(path) as book:
        assert [["read"]] == book.rows("S")
    import openpyxl
    wb = openpyxl.Workbook()
    wb.active.title = "S"
    wb.active["A1"] = "read too"
    wb.save(tmp_path / "book.xlsx")
    (tmp_path / "book.xlsx").rename(tmp_path / "named_like.ods")
    with SavedBook(tmp_path / "named_like.ods") as book:
        assert [["read too"]] == book.rows("S")


PRODUCTS = ("openpyxl", "calamine", "excel", "libreoffice", "gnumeric", "expat", "zipfile")


@pytest.mark.parametrize("case", ["not_a_zip", "a_text_document", "flat_xml"])
def test_a_file_that_is_no_workbook_is_refused_naming_it_and_saying_what_to_do(tmp_path, case):
    path = tmp_path / "week.ods"
    if case == "not_a_zip":
        path.write_bytes(b"PK\x03\x04 cut short")
    elif case == "a_text_document":
        ods_file(path, table("S", row(text("x"))), mimetype="application/vnd.oasis.opendocument.text")
    else:
        path.write_bytes(content(table("S", row(text("x")))))
    with pytest.raises(NotAWorkbook) as refused:
        export_changes(path, tmp_path / "c.csv")
    message = str(refused.value)
    assert str(path) in message and "save it as .xlsx or .ods from your spreadsheet program" in message
    assert [] == [p for p in PRODUCTS if p in message.lower()]
    assert not (tmp_path / "c.csv").exists()


def test_the_same_guard_limits_refuse_an_ods(tmp_path, monkeypatch):
    # the limits of an .xlsx saved workbook (reading.guard.saved_limits), made small so that small files reach them
    monkeypatch.setattr(guard, "RATIO_ENTRY_MIN", 1024)
    ratio = ods_file(tmp_path / "ratio.ods", table("S", row(text("x"))), extra={"Pictures/p.bin": b"\0" * 200_000})
    monkeypatch.setattr(guard, "MAX_ZIP_ENTRIES", 5)
    parts = ods_file(tmp_path / "parts.ods", table("S", row(text("x"))), extra={f"p{i}.xml": b"<p/>" for i in range(5)})
    dtd = tmp_path / "dtd.ods"
    ods_file(dtd, "")
    with zipfile.ZipFile(dtd, "a") as z:
        z.writestr("styles.xml", b'<?xml version="1.0"?><!DOCTYPE x [<!ENTITY a "b">]><x>&a;</x>')
    for path, words in ((ratio, "times larger than it is stored"), (parts, "more than 5"),
                        (dtd, "declares a document type (DTD)")):
        with pytest.raises(NotAWorkbook, match=re.escape(words)) as refused:
            SavedBook(path)
        assert str(path) in str(refused.value)


def test_a_cell_far_from_the_rest_is_refused_rather_than_read_into_millions_of_empty_cells(tmp_path, monkeypatch):
    monkeypatch.setattr(guard, "MAX_SAVED_CELLS", 10_000)
    far = (row(number("1")) + row(EMPTY, repeat=5000)
           + row('<table:table-cell table:number-columns-repeated="99"/>', number("2")))  # 5,002 rows of 100
    with SavedBook(ods_file(tmp_path / "far.ods", table("S", far))) as book, \
            pytest.raises(NotAWorkbook, match="more than 10,000 cells"):
        book.rows("S")


@pytest.mark.parametrize("address, area", [
    ("$Profit.$A$6:.$A$31", ("Profit", 0, 0, 5, 30)),
    ("Profit.A6:Profit.B7", ("Profit", 0, 1, 5, 6)),               # relative, the sheet named twice
    ("$'a:b ''c'.$C$3", ("a:b 'c", 2, 2, 2, 2)),                   # quoted: a colon, a space, a doubled quote
    ("$S.$A$1:.$A$2 $S.$B$1:.$B$2", ("S", 0, 0, 0, 1)),            # a list of ranges: the first
    ("$S.$A$1:$T.$B$2", None),                                     # over two sheets
    ("$S.$A:.$A", None),                                           # a whole column
    ("A1", None),                                                  # no sheet
])
def test_an_opendocument_range_address_reads_as_its_area(address, area):
    from sheetbuilder.weekly.names import odf_area
    got = odf_area(address)
    assert area == (None if got is None else (got.sheet, got.first_col, got.last_col, got.first_row, got.last_row))
