"""The shared strings of a saved .xlsx read by one regular expression give what openpyxl's reader gives, or are left
to it.

The expected values are openpyxl's own reader's (:func:`openpyxl.reader.strings.read_string_table`, which reads the
part with an XML parser), from the same bytes. XML 1.0 (Fifth Edition) is the outside source for the hostile texts:
2.11 (a raw CR LF or CR reads as LF), 4.1 and 4.6 (character references and the predefined entities), 2.2
(characters XML forbids), 2.4 (']]>' not allowed in text); ECMA-376 Part 1, 18.4.8 (si: plain text, rich-text runs,
phonetic runs) for the shapes left to openpyxl.
"""
from __future__ import annotations

import io
import zipfile
from pathlib import Path

import pytest
from openpyxl.reader.strings import read_string_table

from sheetbuilder.weekly import xlsx
from sheetbuilder.weekly.saved import SavedBook

NS = "http://schemas.openxmlformats.org/spreadsheetml/2006/main"
ROOT = Path(__file__).resolve().parent.parent


def _part(body: str, head: str = '<?xml version="1.0" encoding="UTF-8" standalone="yes"?>\n') -> bytes:
    return (head + f'<sst xmlns="{NS}" count="9" uniqueCount="9">' + body + "</sst>").encode()


PLAIN = [
    '<si><t>a</t></si><si><t xml:space="preserve"> b </t></si><si><t/></si>',
    "<si><t>a &amp; b &lt;c&gt; &quot;d&quot; &apos;e&apos; &#13;x&#10;y\r\nz\rw _x005F_x0001_ &#x1F600; ></t></si>",
    "<si><t>=SUM(A1:A3)</t></si><si><t>\u00e9\u00e8 \u2028</t></si>",
    "",
]


@pytest.mark.parametrize("body", PLAIN)
def test_plain_strings_read_as_openpyxl_reads_them(body):
    data = _part(body)
    assert read_string_table(io.BytesIO(data)) == xlsx.plain_strings(io.BytesIO(data))


@pytest.mark.parametrize("body", [
    "<si><r><t>rich</t></r><r><t> text</t></r></si>",  # runs: left to openpyxl
    '<si><t>a</t><rPh sb="0" eb="1"><t>x</t></rPh></si>',  # phonetic text: left to openpyxl
    "<si> <t>spaced element</t></si>",
    '<si><t xml:space="default">other space</t></si>',
])
def test_other_shapes_are_left_to_openpyxl(body):
    assert xlsx.plain_strings(io.BytesIO(_part(body))) is None


@pytest.mark.parametrize("body", ["<si><t>&bogus;</t></si>", "<si><t>a]]>b</t></si>", "<si><t>&#0;</t></si>",
                                  "<si><t>open</si>"])
def test_a_part_that_is_not_well_formed_is_left_to_openpyxl_which_refuses_it(body):
    data = _part(body)
    assert xlsx.plain_strings(io.BytesIO(data)) is None
    with pytest.raises(Exception):
        read_string_table(io.BytesIO(data))


def test_another_encoding_or_root_is_left_to_openpyxl():
    utf16 = _part("<si><t>a</t></si>", '<?xml version="1.0" encoding="UTF-16"?>\n').decode().encode("utf-16")
    assert xlsx.plain_strings(io.BytesIO(utf16)) is None
    latin = _part("<si><t>a</t></si>", '<?xml version="1.0" encoding="ISO-8859-1"?>\n')
    assert xlsx.plain_strings(io.BytesIO(latin)) is None
    prefixed = f'<x:sst xmlns:x="{NS}"><x:si><x:t>a</x:t></x:si></x:sst>'.encode()
    assert xlsx.plain_strings(io.BytesIO(prefixed)) is None


def test_the_demo_workbooks_strings_are_read_fast_and_as_openpyxl_reads_them(monkeypatch):
    demo = ROOT / "output_samples" / "demo.xlsx"
    with zipfile.ZipFile(demo) as archive:
        expected = read_string_table(io.BytesIO(archive.read("xl/sharedStrings.xml")))
    fell_back: list = []
    monkeypatch.setattr(xlsx, "read_string_table", lambda src: fell_back.append(src) or read_string_table(src))
    with SavedBook(demo) as book:
        assert expected == list(book.file.wb[book.sheetnames[0]]._shared_strings)  # what the cell reader reads
    assert [] == fell_back  # xlsxwriter writes plain strings alone: the fast reader read them
