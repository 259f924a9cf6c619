"""A saved sheet's cells read the same in every spelling ECMA-376 Part 1 allows.

Source: ECMA-376 Part 1, 18.3.1.4 (c: r is optional, the cell then follows the previous one),
18.3.1.73 (row: r optional likewise), 18.18.11 (ST_CellType: b, d, e, inlineStr, n, s, str),
18.4.8 (rPh: phonetic runs, not part of the text), and XML 1.0 (attribute order and quoting are
free; a namespace prefix is any name bound to the namespace).
"""
from __future__ import annotations

import datetime as dt
import io
import random

import pytest
from hypothesis import given, settings as hsettings, strategies as st

from sheetbuilder.weekly.sheet_xml import CellReader, DamagedSheet, read_cells, read_keeping_rows, stream_cells

NS = "http://schemas.openxmlformats.org/spreadsheetml/2006/main"
MISSING = object()
SHARED = ["alpha", "=HYPERLINK(\"x\")", "  spaced  "]
EPOCH = dt.datetime(1899, 12, 30)


def _reader():
    return CellReader(SHARED, {7}, lambda n: EPOCH + dt.timedelta(days=n), MISSING)


def _read(xml: str, **kw):
    return read_cells(io.BytesIO(xml.encode("utf-8")), _reader(), **kw)


def _sheet(rows: str, prefix: str = "") -> str:
    p = f"{prefix}:" if prefix else ""
    decl = f'xmlns:{prefix}="{NS}"' if prefix else f'xmlns="{NS}"'
    return f'<?xml version="1.0"?><{p}worksheet {decl}><{p}sheetData>{rows}</{p}sheetData></{p}worksheet>'


CANONICAL = _sheet(
    '<row r="1"><c r="A1" t="s"><v>0</v></c><c r="B1"><v>0.55</v></c><c r="C1" t="b"><v>1</v></c></row>'
    '<row r="2"><c r="A2" t="inlineStr"><is><t>plain</t></is></c><c r="B2" t="e"><v>#N/A</v></c>'
    '<c r="C2" s="7"><v>46000</v></c></row>'
    '<row r="3"><c r="A3" t="str"><f>A1&amp;"!"</f><v>alpha!</v></c><c r="B3"><f>B1*2</f></c>'
    '<c r="C3" t="d"><v>2026-11-30T00:00:00</v></c></row>')
EXPECTED = [["alpha", 0.55, True],
            ["plain", "#N/A", EPOCH + dt.timedelta(days=46000)],
            ["alpha!", None, dt.datetime(2026, 11, 30)]]


def test_the_usual_spelling_reads_every_kind_of_cell():
    assert EXPECTED == _read(CANONICAL)


def test_a_formula_without_a_saved_value_is_marked_when_formulas_are_asked_for():
    assert MISSING == _read(CANONICAL, formulas=True)[2][1]


@pytest.mark.parametrize("spelling", [
    # attributes in another order, single quotes, a space before '>'
    _sheet("<row r='1' ><c t='s' r='A1' ><v>0</v></c><c s='0' r='B1'><v>0.55</v></c><c t='b' r='C1'><v>1</v></c></row>"
           "<row r='2'><c t='inlineStr' r='A2'><is><t xml:space='preserve'>plain</t></is></c><c t='e' r='B2'><v>#N/A</v></c>"
           "<c s='7' r='C2'><v>46000</v></c></row>"
           "<row r='3'><c t='str' r='A3'><f>A1&amp;\"!\"</f><v>alpha!</v></c><c r='B3'><f>B1*2</f></c>"
           "<c t='d' r='C3'><v>2026-11-30T00:00:00</v></c></row>"),
    # a namespace prefix on every element
    _sheet('<x:row r="1"><x:c r="A1" t="s"><x:v>0</x:v></x:c><x:c r="B1"><x:v>0.55</x:v></x:c>'
           '<x:c r="C1" t="b"><x:v>true</x:v></x:c></x:row>'
           '<x:row r="2"><x:c r="A2" t="inlineStr"><x:is><x:r><x:t>pl</x:t></x:r><x:r><x:t>ain</x:t></x:r>'
           '<x:rPh sb="0" eb="1"><x:t>phonetic</x:t></x:rPh></x:is></x:c><x:c r="B2" t="e"><x:v>#N/A</x:v></x:c>'
           '<x:c r="C2" s="7"><x:v>46000</x:v></x:c></x:row>'
           '<x:row r="3"><x:c r="A3" t="str"><x:f>A1&amp;"!"</x:f><x:v>alpha!</x:v></x:c><x:c r="B3"><x:f>B1*2</x:f>'
           '</x:c><x:c r="C3" t="d"><x:v>2026-11-30T00:00:00Z</x:v></x:c></x:row>', prefix="x"),
    # no r on rows or cells
    _sheet('<row><c t="s"><v>0</v></c><c><v>0.55</v></c><c t="b"><v>1</v></c></row>'
           '<row><c t="inlineStr"><is><t>plain</t></is></c><c t="e"><v>#N/A</v></c><c s="7"><v>46000</v></c></row>'
           '<row><c t="str"><f>A1&amp;"!"</f><v>alpha!</v></c><c><f>B1*2</f></c>'
           '<c t="d"><v>2026-11-30</v></c></row>'),
])
def test_every_allowed_spelling_reads_the_same(spelling):
    assert EXPECTED == _read(spelling)


def _streamed(xml: str) -> list:
    rows = []
    stream_cells(io.BytesIO(xml.encode("utf-8")), _reader(), lambda r, cells: rows.append((r, dict(cells))) and None)
    return rows


@pytest.mark.parametrize("columns", [None, frozenset({1}), frozenset({0, 2})])
def test_a_read_that_keeps_its_rows_gives_the_read_and_the_stream_of_two_passes(columns):
    # Expected: the two separate passes it stands for (read_cells, stream_cells), on the canonical spelling
    # and a prefixed one without row numbers.
    for xml in (CANONICAL, _sheet('<x:row><x:c t="s"><x:v>0</x:v></x:c><x:c><x:f>B1*2</x:f></x:c></x:row>'
                                  '<x:row><x:c/><x:c r="B2"><x:v>3</x:v></x:c></x:row>', prefix="x")):
        rows, kept = read_keeping_rows(io.BytesIO(xml.encode("utf-8")), _reader(), columns, True)
        assert _read(xml, columns=columns, formulas=True) == rows
        again = []
        if kept is None:  # the regular-expression reader keeps nothing: the part is streamed again
            stream_cells(io.BytesIO(xml.encode("utf-8")), _reader(), lambda r, cells: again.append((r, dict(cells))) and None)
        else:
            kept.stream(lambda r, cells: again.append((r, dict(cells))) and None)
        assert _streamed(xml) == again


def test_only_the_wanted_columns_are_kept():
    assert [[None, 0.55], [None, "#N/A"], [None, None]] == _read(CANONICAL, columns=frozenset({1}))


def test_a_truncated_sheet_is_damaged_not_read_in_part():
    with pytest.raises(DamagedSheet):
        _read(CANONICAL[: len(CANONICAL) // 2])


def test_a_shared_string_the_workbook_lacks_is_damaged():
    with pytest.raises(DamagedSheet):
        _read(_sheet('<row r="1"><c r="A1" t="s"><v>9</v></c></row>'))


# A grid of values, each cell written in a spelling drawn at random, reads back as the grid.
VALUES = st.one_of(st.none(), st.sampled_from(SHARED), st.booleans(),
                   st.integers(-10**12, 10**12), st.floats(-1e9, 1e9, allow_nan=False).map(lambda f: round(f, 6)),
                   st.text(st.characters(blacklist_categories=("Cs", "Cc")), max_size=12),
                   st.sampled_from(["#N/A", "#DIV/0!", "#REF!"]))


def _escape(text: str) -> str:
    return text.replace("&", "&amp;").replace("<", "&lt;").replace(">", "&gt;").replace('"', "&quot;")


def _cell(value, ref: str | None, rnd: random.Random, p: str) -> str:
    q = rnd.choice(['"', "'"])
    r = f" r={q}{ref}{q}" if ref else ""

    def attrs(t: str | None) -> str:
        parts = [r] + ([f" t={q}{t}{q}"] if t else [])
        rnd.shuffle(parts)
        return "".join(parts) + rnd.choice(["", " "])
    if value is None:
        return f"<{p}c{attrs(None)}/>"
    if isinstance(value, bool):
        return f"<{p}c{attrs('b')}><{p}v>{rnd.choice(['1', 'true']) if value else '0'}</{p}v></{p}c>"
    if isinstance(value, (int, float)):
        return f"<{p}c{attrs(rnd.choice([None, 'n']))}><{p}v>{value!r}</{p}v></{p}c>"
    if value in SHARED and rnd.random() < 0.5:
        return f"<{p}c{attrs('s')}><{p}v>{SHARED.index(value)}</{p}v></{p}c>"
    if value.startswith("#") and value.endswith(("A", "!")):
        return f"<{p}c{attrs('e')}><{p}v>{value}</{p}v></{p}c>"
    if value == "":
        return f"<{p}c{attrs('inlineStr')}><{p}is><{p}t/></{p}is></{p}c>"
    return f'<{p}c{attrs("inlineStr")}><{p}is><{p}t xml:space="preserve">{_escape(value)}</{p}t></{p}is></{p}c>'


@hsettings(max_examples=150, deadline=None)
@given(st.lists(st.lists(VALUES, min_size=3, max_size=3), min_size=1, max_size=5), st.randoms(use_true_random=False),
       st.sampled_from(["", "s"]), st.sampled_from([None, frozenset({0}), frozenset({1, 2}), frozenset({2})]))
def test_a_grid_written_in_random_spellings_reads_back_as_the_grid(grid, rnd, prefix, columns):
    p = f"{prefix}:" if prefix else ""
    rows = []
    for i, row in enumerate(grid):
        with_refs = rnd.random() < 0.5
        cells = "".join(_cell(v, f"{'ABC'[j]}{i + 1}" if with_refs else None, rnd, p) for j, v in enumerate(row))
        rows.append(f'<{p}row r="{i + 1}">{cells}</{p}row>' if rnd.random() < 0.5 else f"<{p}row>{cells}</{p}row>")
    expected = [[v if columns is None or j in columns else None for j, v in enumerate(row)] for row in grid]
    got = _read(_sheet("".join(rows), prefix), columns=columns)
    assert [[v if v is not None else None for v in row] for row in expected] == [
        (row + [None] * 3)[:3] for row in got] + [[None] * 3] * (len(expected) - len(got))


def test_a_cell_far_from_the_rest_is_refused_rather_than_read_into_millions_of_empty_cells(monkeypatch):
    from sheetbuilder.reading import guard
    monkeypatch.setattr(guard, "MAX_SAVED_CELLS", 10_000)
    far = _sheet('<row r="1"><c r="A1"><v>1</v></c></row><row r="5002"><c r="CV5002"><v>2</v></c></row>')
    with pytest.raises(guard.UnsafeWorkbook, match="more than 10,000 cells"):
        _read(far)  # 5,002 rows of 100 columns
