"""A saved workbook is read once per command: `build --previous` and `changes` each open it one time.

Both commands read everything they need (inputs, settings, typed edits, saved values, History,
the Follow-up's rows) into one record under the reading guard, then compute from the record
with the file closed (DEVELOPERS.md, Architecture; the weekly round in README.md).
"""
from __future__ import annotations

import datetime as dt
from pathlib import Path

import pytest
from openpyxl.reader.excel import ExcelReader

from sheetbuilder.pipeline import build
from sheetbuilder.weekly import saved
from sheetbuilder.weekly.changes import export_changes
from sheetbuilder.weekly.record import read_saved_workbook

ROOT = Path(__file__).resolve().parent.parent
BUILT_ON = dt.date(2026, 12, 2)


@pytest.fixture()
def opened(monkeypatch) -> dict[str, list[str]]:
    """The file names passed to the package's one opener, and read by openpyxl's workbook reader by anyone
    (``ExcelReader.read``, which ``openpyxl.load_workbook`` calls, and so does the opener's own reader)."""
    calls: dict[str, list[str]] = {"opener": [], "openpyxl": []}
    opener, read = saved.open_workbook, ExcelReader.read

    def counted_opener(path, *args, **kwargs):
        calls["opener"].append(Path(path).name)
        return opener(path, *args, **kwargs)

    def counted_read(reader, *args, **kwargs):
        calls["openpyxl"].append(Path(reader.archive.filename).name)  # a path or an open file
        return read(reader, *args, **kwargs)

    monkeypatch.setattr(saved, "open_workbook", counted_opener)
    monkeypatch.setattr(ExcelReader, "read", counted_read)
    return calls


@pytest.mark.slow  # moved out of the fast lane, which must stay under two minutes
def test_build_with_previous_and_changes_each_open_the_saved_workbook_once(demo_build, tmp_path, opened):
    week1 = demo_build.output  # the demo, built from exports: no workbook opened
    opened["opener"].clear()
    opened["openpyxl"].clear()
    week2 = build(ROOT / "demo_inputs_week2", tmp_path / "week2.xlsx", built_on=BUILT_ON + dt.timedelta(days=7),
                  previous=week1)
    names = [s.name for s in week2.plan.spec.sheets]
    assert "Follow-up" in names and "History" in names  # the build read the edits, the change list and History
    assert {"opener": [week1.name], "openpyxl": [week1.name]} == opened
    opened["opener"].clear()
    opened["openpyxl"].clear()
    result = export_changes(week2.output, tmp_path / "changes.csv", include_unapplied=True)
    assert result.computed and result.written > 0
    assert {"opener": ["week2.xlsx"], "openpyxl": ["week2.xlsx"]} == opened


def test_the_record_holds_what_both_commands_read(demo_build):
    week1 = demo_build
    record = read_saved_workbook(week1.output, for_changes=True, followup=True)
    assert record.holds_inputs
    assert BUILT_ON == record.built_on
    assert set(week1.plan.tables["Actions"].frame["kind"]) - {""} == {v[0] for _, v in record.actions} - {None, ""}
    assert [] == record.followup  # the first week has no Follow-up sheet


def test_changes_checks_each_part_it_reads_twice_once(demo_build, monkeypatch):
    # Bids, Terms and Actions are read for their typed columns and list, then checked for cells typed over
    # a formula: the part is checked (its XML, every cell's shape) by the first read only; the second, of the
    # same bytes, only finds the cells it asks for.
    from sheetbuilder.weekly import fast_cells, xlsx
    checked: list[str] = []
    reading: list[str] = []
    real_parse, real_head = xlsx.XlsxFile._parse, fast_cells._head
    monkeypatch.setattr(xlsx.XlsxFile, "_parse", lambda self, sheet, *a: reading.append(sheet) or real_parse(self, sheet, *a))
    monkeypatch.setattr(fast_cells, "_head", lambda data: checked.append(reading[-1]) or real_head(data))
    read_saved_workbook(demo_build.output, for_changes=True)
    assert [2, 2, 2] == [reading.count(s) for s in ("Bids", "Terms", "Actions")]
    assert [1, 1, 1] == [checked.count(s) for s in ("Bids", "Terms", "Actions")]


@pytest.mark.parametrize("columns", [None, {0, 5, 9}])
def test_a_stream_replayed_from_the_first_read_hands_over_what_the_file_does(demo_build, columns):
    # Expected: the rows a stream of the file itself hands over (the same sheets, a book that keeps nothing).
    def streamed(book, sheet):
        rows = []
        book.stream(sheet, lambda r, cells: rows.append((r, cells)) and None, None if columns is None else set(columns))
        return rows
    with saved.SavedBook(demo_build.output) as plain:
        expected = {s: streamed(plain, s) for s in ("Bids", "Terms", "Actions")}
    with saved.SavedBook(demo_build.output) as book:
        book.streamed_again = {"Bids", "Terms", "Actions"}
        for s in expected:
            book.rows(s, frozenset({1}))
        assert expected == {s: streamed(book, s) for s in expected}
