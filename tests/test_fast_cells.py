"""The regular-expression cell reader gives every cell the expat reader gives, or leaves the part to it.

The expected values are the expat reader's (:mod:`sheetbuilder.weekly.sheet_xml`'s streaming parser, whose
spellings test_sheet_xml.py checks against ECMA-376 Part 1), read from the same bytes with the regular-expression
reader switched off. XML 1.0 (Fifth Edition) is the outside source for the hostile texts: 2.11 (a raw CR LF or
CR reads as LF), 4.1 and 4.6 (character references and the five predefined entities), 2.2 (characters XML
forbids), 2.4 (']]>' not allowed in text), 2.7 (CDATA sections), 2.10 (xml:space does not change what a parser
hands over).
"""
from __future__ import annotations

import datetime as dt
import io
from contextlib import contextmanager
from pathlib import Path

import openpyxl
import pytest

from sheetbuilder.reading.guard import UnsafeWorkbook
from sheetbuilder.values import is_blank
from sheetbuilder.weekly import fast_cells, sheet_xml
from sheetbuilder.weekly.sheet_xml import CellReader, DamagedSheet, read_cells, read_keeping_rows, stream_cells
from sheetbuilder.weekly.xlsx import XlsxFile

NS = "http://schemas.openxmlformats.org/spreadsheetml/2006/main"
MISSING = object()
EPOCH = dt.datetime(1899, 12, 30)
SHARED = ["alpha", "=SUM(A1)", "  spaced  ", "line\nend"]
HOSTILE = ["=SUM(A1:A3)", "+1", "-2", "@cmd", "=HYPERLINK(\"http://example.invalid\")", "a & b <c> \"d\" 'e'",
           "&amp; &lt; as typed", "emoji \U0001F600 \U0001F389 and \u00e9\u00e8", "line1\r\nline2", "cr\ronly",
           "lf\nonly", "\ttabbed", "  leading", "trailing  ", " ", "]]> in text", "\u2028 separators \u2029"]


@contextmanager
def expat_only():
    """The regular-expression reader switched off: every part is read by the expat reader."""
    real = fast_cells.scan

    def refuse(*args, **kwargs):
        raise fast_cells.NotFast("switched off in this test")
        yield  # a generator, as scan is
    fast_cells.scan = refuse
    try:
        yield
    finally:
        fast_cells.scan = real


def _reader() -> CellReader:
    return CellReader(SHARED, {7}, lambda n: EPOCH + dt.timedelta(days=n), MISSING)


def _outcome(read):
    """What a read gives: its value, or the kind and text of what it raised."""
    try:
        return read()
    except (DamagedSheet, UnsafeWorkbook) as exc:
        return (type(exc).__name__, str(exc))


def _reads(data: bytes) -> dict:
    """Every way the readers read a part: whole, some columns, with formulas marked, kept, streamed."""
    out = {}
    for columns in (None, frozenset({0}), frozenset({1, 2})):
        for formulas in (False, True):
            out[("read", columns, formulas)] = _outcome(
                lambda: read_cells(io.BytesIO(data), _reader(), columns, formulas))
        if columns is None:  # (a read keeping its rows by expat reads every cell; by regular expression, those asked)
            out[("keep", columns)] = _outcome(lambda: read_keeping_rows(io.BytesIO(data), _reader(), None, True)[0])
        rows: list = []
        out[("stream", columns)] = (_outcome(lambda: stream_cells(
            io.BytesIO(data), _reader(), lambda r, cells: rows.append((r, dict(cells))) and None,
            None if columns is None else set(columns))), rows)
    return out


def _fast(data: bytes) -> bool:
    """Whether the regular-expression reader reads the whole part (rather than leaving it to the expat reader)."""
    try:
        for _ in fast_cells.scan(io.BytesIO(data), sheet_xml._Letters(), None):
            pass
    except fast_cells.NotFast:
        return False
    return True


def _same_both_ways(data: bytes) -> bool:
    fast = _reads(data)
    with expat_only():
        slow = _reads(data)
    assert slow == fast
    return _fast(data)


def _sheet(rows: str, declaration: str = '<?xml version="1.0" encoding="UTF-8" standalone="yes"?>\n') -> bytes:
    return (f'{declaration}<worksheet xmlns="{NS}"><dimension ref="A1"/><sheetData>{rows}</sheetData>'
            '<pageMargins left="0.7" right="0.7" top="0.75" bottom="0.75" header="0.3" footer="0.3"/>'
            '</worksheet>').encode("utf-8")


def _inline(ref: str, escaped: str, preserve: bool = True) -> str:
    space = ' xml:space="preserve"' if preserve else ""
    return f'<c r="{ref}" s="1" t="inlineStr"><is><t{space}>{escaped}</t></is></c>'


# Parts the regular-expression reader reads itself: each cell shape xlsxwriter, LibreOffice and openpyxl write.
READ_FAST = {
    "every kind of cell": '<row r="1"><c r="A1" t="s"><v>0</v></c><c r="B1" s="3"><v>0.55</v></c>'
                          '<c r="C1" t="b"><v>1</v></c></row><row r="2" spans="1:3"><c r="A2" t="e"><v>#N/A</v></c>'
                          '<c r="B2" s="7"><v>46000</v></c><c r="C2" t="d"><v>2026-11-30T00:00:00</v></c></row>',
    "formulas with and without saved values": '<row r="1"><c r="A1" s="2"><f>B1*2</f><v>4</v></c>'
                                              '<c r="B1" t="str"><f>A1&amp;"!"</f><v>4!</v></c><c r="C1"><f>1/0</f><v></v></c>'
                                              '<c r="D1"><f>A1</f><v/></c><c r="E1" s="1"><f>A1</f><v /></c></row>',
    "LibreOffice's spelling": '<row r="1" customFormat="false" ht="12.8" hidden="false" customHeight="false" '
                              'outlineLevel="0" collapsed="false"><c r="A1" s="0" t="n"><f aca="false">B1+1</f>'
                              '<v>3</v></c><c r="B1" s="0" t="n"><v>2</v></c><c r="C1" s="0" t="s"><v>1</v></c>'
                              '<c r="D1" s="0" t="str"><f aca="false">C1</f><v>=SUM(A1)</v></c></row>',
    "shared formulas": '<row r="1"><c r="A1"><f t="shared" ref="A1:A2" si="0">B1</f><v>1</v></c></row>'
                       '<row r="2"><c r="A2"><f t="shared" si="0"/><v>2</v></c></row>',
    "entities and character references": '<row r="1">' + "".join(_inline(f"{c}1", t) for c, t in zip("ABCDEF", [
        "&lt;&gt;&amp;&quot;&apos;", "&#13;&#10;", "&#x1F600;&#233;", "=SUM(A1)&#9;", "&amp;amp;", "a&#13;\r\nb"])) +
                                          '</row>',
    "raw CR LF and CR": '<row r="1">' + _inline("A1", "one\r\ntwo") + _inline("B1", "one\rtwo\r") +
                        '<c r="C1" t="str"><f>A1</f><v>x\r\ny</v></c></row>',
    "empty and spaced texts": '<row r="1">' + _inline("A1", "") + '<c r="B1" t="inlineStr"><is><t/></is></c>' +
                              _inline("C1", "  both  ") + _inline("D1", " ", False) + '<c r="E1" s="4"/></row>'
                              '<row r="3"/><row r="4"></row>',
    "numbers in every spelling": '<row r="1"><c r="A1"><v>12</v></c><c r="B1"><v> 12 </v></c><c r="C1"><v>1e3</v></c>'
                                 '<c r="D1"><v>-0.0</v></c><c r="E1"><v>inf</v></c><c r="F1"><v>007</v></c>'
                                 '<c r="G1" s="007"><v>45000</v></c><c r="H1" t="s"><v>-1</v></c></row>',
    "a sheet without cells": "",
    "far columns": '<row r="1048576"><c r="XFD1048576"><v>1</v></c></row>',
}

# Parts it leaves to the expat reader: what it does not read, and what is not well-formed.
LEFT_TO_EXPAT = {
    "rich text": '<row r="1"><c r="A1" t="inlineStr"><is><r><t>pl</t></r><r><t>ain</t></r></is></c></row>',
    "phonetic runs": '<row r="1"><c r="A1" t="inlineStr"><is><t>x</t><rPh sb="0" eb="1"><t>y</t></rPh></is></c></row>',
    "CDATA": '<row r="1"><c r="A1" t="str"><f>A2</f><v><![CDATA[<b>]]></v></c></row>',
    "a comment": '<row r="1"><!-- a note --><c r="A1"><v>1</v></c></row>',
    "attributes in another order": '<row r="1"><c t="s" r="A1"><v>0</v></c></row>',
    "single quotes": "<row r='1'><c r='A1'><v>1</v></c></row>",
    "no references": '<row><c><v>1</v></c><c t="s"><v>0</v></c></row>',
    "a cell of another row": '<row r="1"><c r="A2"><v>1</v></c></row>',
    "rows out of order": '<row r="2"><c r="A2"><v>1</v></c></row><row r="1"><c r="A1"><v>2</v></c></row>'
                         '<row r="3"><c r="A3"><v>3</v></c></row><row r="2"><c r="A2"><v>4</v></c></row>',
    "whitespace between elements": '<row r="1">\n  <c r="A1">\n    <v>1</v>\n  </c>\n</row>',
    "a cell written twice": '<row r="1"><c r="A1" t="s"><v>9</v></c><c r="A1"><v>1</v></c></row>',
    "a raw '>' in text": '<row r="1">' + _inline("A1", "a > b") + '</row>',
    "']]>' in text": '<row r="1">' + _inline("A1", "a ]]> b") + '</row>',
    "a character XML forbids": '<row r="1">' + _inline("A1", "bell \x07") + '</row>',
    "a reference to a character XML forbids": '<row r="1">' + _inline("A1", "nul &#0;") + '</row>',
    "an entity that is not declared": '<row r="1">' + _inline("A1", "&nbsp;") + '</row>',
    "an attribute written twice": '<row r="1" ht="1" ht="2"><c r="A1"><v>1</v></c></row>',
    "a prefix nobody declared": '<row r="1" x14ac:dyDescent="0.25"><c r="A1"><v>1</v></c></row>',
    "a truncated part": '<row r="1"><c r="A1"><v>1</v></c></row><row r="2"><c r="A2"><v>',
    "a shared string the workbook lacks, then rich text": '<row r="1"><c r="A1" t="s"><v>99</v></c></row>'
                                                          '<row r="2"><c r="A2" t="inlineStr"><is><r><t>x</t></r></is></c></row>',
    "a comment around sheetData": '</sheetData><!-- <sheetData><row r="1"><c r="A1"><v>5</v></c></row></sheetData> -->'
                                  '<sheetData>',
    "a number cell holding text, then a comment": '<row r="1"><c r="A1"><v>infinity</v></c></row><!-- x -->',
}


@pytest.mark.parametrize("name", sorted(READ_FAST))
def test_a_part_of_the_shapes_writers_write_is_read_fast_to_the_same_values(name):
    assert _same_both_ways(_sheet(READ_FAST[name]))


@pytest.mark.parametrize("name", sorted(LEFT_TO_EXPAT))
def test_a_part_the_fast_reader_does_not_read_is_read_by_expat_alone(name):
    assert not _same_both_ways(_sheet(LEFT_TO_EXPAT[name]))


def test_a_truncated_part_is_damaged_not_read_in_part():
    with pytest.raises(DamagedSheet):
        read_cells(io.BytesIO(_sheet(LEFT_TO_EXPAT["a truncated part"])[:-40]), _reader())


@pytest.mark.parametrize("declaration, encoding", [
    ('<?xml version="1.0" encoding="ISO-8859-1"?>', "latin-1"),
    ('<?xml version="1.0" encoding="UTF-16"?>', "utf-16"),
    ('<?xml version="1.0"?>', "utf-8"),
    ("", "utf-8"),
    ("\ufeff<?xml version='1.0' encoding='utf-8'?>", "utf-8")])
def test_a_part_in_another_encoding_reads_the_same(declaration, encoding):
    rows = '<row r="1">' + _inline("A1", "caf\u00e9 &amp; cr\u00e8me") + "</row>"
    data = (f'{declaration}<worksheet xmlns="{NS}"><sheetData>{rows}</sheetData></worksheet>').encode(encoding)
    assert _same_both_ways(data) == (encoding == "utf-8")


def test_a_stream_left_to_expat_half_way_hands_over_each_row_once():
    # The fast reader hands over rows 1 and 2, then meets a comment in row 3: the expat reader reads the part
    # again and hands over the rows after row 2 only.
    data = _sheet('<row r="1"><c r="A1"><v>1</v></c></row><row r="2"><c r="A2"><v>2</v></c></row>'
                  '<row r="3"><!-- x --><c r="A3"><v>3</v></c></row><row r="4"><c r="A4"><v>4</v></c></row>')
    rows: list = []
    stream_cells(io.BytesIO(data), _reader(), lambda r, cells: rows.append((r, dict(cells))) and None)
    assert [(0, {0: (1, False)}), (1, {0: (2, False)}), (2, {0: (3, False)}), (3, {0: (4, False)})] == rows


@pytest.mark.parametrize("first, then", [({0, 1, 2}, {1, 2}), ({0}, {0, 2}), (set(range(60)), {2})])
def test_a_stream_that_changes_its_columns_between_rows_reads_a_part_checked_before_the_same(first, then):
    # A part read to its end is not checked again: the second read finds the cells the columns ask for, row by
    # row, as the first did and as the expat reader does, the columns changing after the first row (row 2 holds
    # only a cell of column C).
    data = _sheet('<row r="1"><c r="A1"><v>1</v></c><c r="B1" t="str"><f>A1</f><v>x</v></c></row>'
                  '<row r="2"><c r="C2"><v>-2</v></c></row>' +
                  "".join(f'<row r="{r}"><c r="A{r}"><v>{r}</v></c><c r="B{r}" t="str"><f>A{r}</f><v>x</v></c>'
                          f'<c r="C{r}"><v>{-r}</v></c></row>' for r in range(3, 6)))

    def stream(checked: set | None) -> list:
        columns = set(first)
        rows: list = []

        def on_row(r, cells):
            rows.append((r, dict(cells)))
            if r == 0:
                columns.clear()
                columns.update(then)
        reader = _reader()
        reader.checked, reader.part = checked, "sheet"
        stream_cells(io.BytesIO(data), reader, on_row, columns)
        return rows
    checked: set = set()
    first_read = stream(checked)
    assert {"sheet"} == checked
    with expat_only():
        assert stream(None) == first_read
    assert first_read == stream(checked)
    assert (1, {2: (-2, False)}) in first_read


# Whole workbooks: every sheet, read both ways.


def _workbook_reads(path: Path) -> dict:
    book = XlsxFile(path)
    try:
        out = {}
        for sheet in book.sheetnames:
            out[(sheet, "all")] = book.read(sheet, None, True, MISSING)
            out[(sheet, "some")] = book.read(sheet, frozenset({0, 2, 5}), False, MISSING)
            rows: list = []
            book.stream(sheet, lambda r, cells: rows.append((r, dict(cells))) and None)
            out[(sheet, "stream")] = rows
        return out
    finally:
        book.close()


def _every_part_fast(path: Path) -> list[str]:
    """The sheets of the workbook the regular-expression reader leaves to expat."""
    book = XlsxFile(path)
    try:
        left = []
        for sheet in book.sheetnames:
            with book.wb._archive.open(book.wb[sheet]._worksheet_path) as fh:
                if not _fast(fh.read()):
                    left.append(sheet)
        return left
    finally:
        book.close()


def _same_workbook_both_ways(path: Path) -> None:
    fast = _workbook_reads(path)
    with expat_only():
        slow = _workbook_reads(path)
    assert slow.keys() == fast.keys()
    for key in slow:
        assert slow[key] == fast[key], key


def _hostile_workbook(path: Path) -> Path:
    """A workbook saved by openpyxl (no saved formula values) holding hostile texts, numbers, dates and formulas."""
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "Hostile"
    for i, text in enumerate(HOSTILE, start=1):
        ws.cell(i, 1).value = text
        ws.cell(i, 1).data_type = "s"  # text, even when it looks like a formula
        ws.cell(i, 2).value = i * 1.25
        ws.cell(i, 3).value = f"=B{i}*2"
        ws.cell(i, 4).value = dt.datetime(2026, 12, i % 28 + 1)
        ws.cell(i, 5).value = i % 2 == 0
    wb.create_sheet("Empty")
    wb.save(path)
    return path


def test_our_build_reads_fast_to_the_same_values_on_every_sheet(demo_build):
    assert [] == _every_part_fast(demo_build.output)
    _same_workbook_both_ways(demo_build.output)


@pytest.mark.slow  # a few seconds: openpyxl loads and saves the demo
def test_an_openpyxl_saved_workbook_without_saved_values_reads_fast_to_the_same_values(demo_build, tmp_path):
    bare = tmp_path / "bare.xlsx"
    openpyxl.load_workbook(demo_build.output).save(bare)  # formulas kept, their values dropped
    assert [] == _every_part_fast(bare)
    _same_workbook_both_ways(bare)


def test_hostile_texts_read_fast_to_the_same_values(tmp_path):
    path = _hostile_workbook(tmp_path / "hostile.xlsx")
    assert [] == _every_part_fast(path)
    _same_workbook_both_ways(path)
    book = XlsxFile(path)
    try:
        texts = [row[0] for row in book.read("Hostile")]
    finally:
        book.close()
    # XML 1.0 2.11: openpyxl writes a CR raw, and a parser reads a raw CR LF or CR as LF
    assert [t.replace("\r\n", "\n").replace("\r", "\n") for t in HOSTILE] == texts


@pytest.mark.slow
def test_libreoffice_saved_workbooks_read_to_the_same_values(libreoffice):
    # the session's LibreOffice copies (one soffice run for them all): the demo and the live edits of it
    for path in libreoffice.values():
        assert [] == _every_part_fast(path), path.name
        _same_workbook_both_ways(path)


class _TypedOnly(set):
    typed_only = True


@pytest.mark.parametrize("name", sorted(READ_FAST))
def test_a_stream_asking_for_typed_cells_alone_hands_over_every_typed_value_the_full_stream_does(name):
    # Expected: the cells holding no formula and a value that are not blank, as the expat reader's full stream
    # hands them over. The typed-only stream (the typed-over check's, once its header rows are found) is read
    # fresh (checked) and again (a part checked before): each gives those cells, with the same values.
    data = _sheet(READ_FAST[name])

    def stream(columns, checked=None) -> dict:
        cells: dict = {}
        reader = _reader()
        reader.checked, reader.part = checked, "sheet"
        stream_cells(io.BytesIO(data), reader,
                     lambda r, found: cells.update({(r, c): v for c, v in found.items()}) and None, columns)
        return {at: value for at, (value, formula) in cells.items() if not formula and not is_blank(value)}
    wanted = set(range(16))
    with expat_only():
        expected = stream(set(wanted))
    checked: set = set()
    assert expected == stream(_TypedOnly(wanted), checked)
    assert expected == stream(_TypedOnly(wanted), checked)  # read again, not checked again
    assert {"sheet"} == checked


def test_a_stream_asking_for_typed_cells_alone_leaves_formula_and_empty_cells_unread():
    # The point of asking: a row holding formulas and empty cells only is not handed over at all.
    data = _sheet('<row r="1"><c r="A1"><f>B1</f><v>2</v></c><c r="B1" s="3"/><c r="C1"><v>7</v></c></row>'
                  '<row r="2"><c r="A2"><f>B2</f><v>2</v></c><c r="B2" s="3"/></row>')
    rows: list = []
    stream_cells(io.BytesIO(data), _reader(), lambda r, cells: rows.append((r, dict(cells))) and None,
                 _TypedOnly({0, 1, 2}))
    assert [(0, {2: (7, False)})] == rows


SST = ('<?xml version="1.0" encoding="UTF-8" standalone="yes"?>\n'
       f'<sst xmlns="{NS}" count="{{n}}" uniqueCount="{{n}}">{{body}}</sst>')


def _sst(*items: str) -> bytes:
    return SST.format(n=len(items), body="".join(items)).encode("utf-8")


def _openpyxl_strings(data: bytes) -> list:
    from openpyxl.reader.strings import read_string_table
    return read_string_table(io.BytesIO(data))


def _escaped(text: str) -> str:
    """Text as a writer escapes it in a shared string: &, < and > as entities, a CR as a character reference (XML 1.0
    2.11 reads a raw CR as LF; 4.1 keeps a reference's CR)."""
    return text.replace("&", "&amp;").replace("<", "&lt;").replace(">", "&gt;").replace("\r", "&#13;")


def test_a_shared_string_table_of_the_plain_shape_reads_fast_to_openpyxls_strings(demo_build):
    # Expected: openpyxl's own reading of the same bytes (the reader the workbook part is otherwise read by).
    import zipfile
    built = zipfile.ZipFile(demo_build.output).read("xl/sharedStrings.xml")
    hostile = _sst(*(f'<si><t xml:space="preserve">{_escaped(t)}</t></si>' for t in HOSTILE),
                   "<si><t>raw CR LF\r\nand CR\ronly</t></si>", "<si><t>_x005F_x000D_ escaped</t></si>",
                   "<si><t>&#x1F600;&#233;&quot;&apos;</t></si>")
    for data in (built, hostile, _sst()):
        expected = _openpyxl_strings(data)
        assert expected == fast_cells.shared_strings(data)
    assert len(HOSTILE) + 3 == len(fast_cells.shared_strings(hostile))


@pytest.mark.parametrize("data", [
    _sst("<si><r><t>rich</t></r><r><t> text</t></r></si>"),  # runs (ECMA-376 18.4.12 r)
    _sst("<si><t/></si>"), _sst("<si><t>a</t></si>\n<si><t>b</t></si>"), _sst("<x:si><x:t>a</x:t></x:si>"),
    SST.replace(NS, "http://purl.oclc.org/ooxml/spreadsheetml/main").format(n=1, body="<si><t>a</t></si>").encode(),
    _sst("<si><t>a</t></si>") + b"<!-- after -->",
    _sst("<si><t>a&bogus;</t></si>"), _sst("<si><t>a]]>b</t></si>"), _sst("<si><t>a&#1;</t></si>"),
    _sst("<si><t>a</t>")[:-6], _sst("<si><t>\u00e9</t></si>").replace(b"UTF-8", b"ISO-8859-1"),
], ids=["runs", "empty_t", "whitespace_between", "prefixed", "strict_namespace", "comment_after", "entity",
        "cdata_end", "forbidden_reference", "truncated", "latin1"])
def test_a_shared_string_table_of_any_other_shape_is_left_to_openpyxl(data):
    # None: openpyxl reads the part (or refuses it, as before: XML 1.0 2.4, 4.1 and 4.6 make the last ones errors).
    assert None is fast_cells.shared_strings(data)


def test_an_opened_workbook_holds_the_shared_strings_openpyxl_reads(demo_build):
    wb = openpyxl.load_workbook(demo_build.output, read_only=True)
    try:
        expected = list(wb.worksheets[0]._shared_strings)
    finally:
        wb.close()
    book = XlsxFile(demo_build.output)
    try:
        assert expected == book.wb.worksheets[0]._shared_strings
        assert 1000 < len(expected)
    finally:
        book.close()
