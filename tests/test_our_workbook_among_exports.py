"""A workbook sheetbuilder built, left in the exports folder, is named as ours and never read as an export.

Saved as OpenDocument, the mark is a named range in content.xml (OpenDocument 1.2 Part 1, 9.4.12, 9.4.13)
and the date meta.xml's meta:creation-date (4.3.2.1); those .ods files are written by hand here, and the
one LibreOffice saves is checked in tests/test_survives_real_hands.py.
"""
from __future__ import annotations

from minimal import write_account
from test_ods import number, ods_file, row, table, text

import shutil
import zipfile

import pytest

from sheetbuilder.errors import InputProblems
from sheetbuilder.pipeline import build, load
from sheetbuilder.reading.ours import MARK, built_by_us
from sheetbuilder.sheets.typed import ACTIONS_NAME


@pytest.fixture(scope="module")
def last_week(tmp_path_factory):
    folder = tmp_path_factory.mktemp("last")
    out = folder / "week 48.xlsx"
    build(write_account(folder / "in"), out)
    return out


def test_the_mark_is_the_defined_name_every_build_writes():
    assert ACTIONS_NAME == MARK


def test_a_workbook_of_ours_is_recognised_and_an_export_is_not(last_week, tmp_path):
    folder = write_account(tmp_path / "in")
    assert 10 == len(built_by_us(last_week))          # a date such as 2026-12-05
    assert None is built_by_us(folder / "catalog.csv")


def test_our_workbook_beside_the_exports_is_named_and_not_read(last_week, tmp_path):
    folder = write_account(tmp_path / "in")
    shutil.copy(last_week, folder / "week 48.xlsx")
    inputs, _, problems = load(folder)
    notes = [p for p in problems if p.file == "week 48.xlsx"]
    assert [("warning", True)] == [(p.severity, "pass it with --previous" in p.message) for p in notes]
    assert "sheetbuilder built" in notes[0].message


def test_our_workbook_named_as_an_export_is_refused(last_week, tmp_path):
    folder = write_account(tmp_path / "in", {"catalog.csv": None})
    shutil.copy(last_week, folder / "catalog.xlsx")
    with pytest.raises(InputProblems) as refused:
        build(folder, tmp_path / "book.xlsx")
    named = [p for p in refused.value.problems if p.file == "catalog.xlsx"]
    assert [("error", True)] == [(p.severity, "not an export" in p.message) for p in named]
    assert not (tmp_path / "book.xlsx").exists()


META = (b'<?xml version="1.0" encoding="UTF-8"?><office:document-meta '
        b'xmlns:office="urn:oasis:names:tc:opendocument:xmlns:office:1.0" '
        b'xmlns:meta="urn:oasis:names:tc:opendocument:xmlns:meta:1.0" office:version="1.3"><office:meta>'
        b'<meta:creation-date>2026-11-29T10:30:00</meta:creation-date></office:meta></office:document-meta>')


def ours_as_ods(path, name: str = MARK, kind: str = "named-range", meta: bool = True):
    """An .ods holding a small Actions sheet and the workbook-level name over it, as LibreOffice saves ours."""
    names = (f'<table:named-expressions><table:{kind} table:name="{name}" table:base-cell-address="$Actions.$A$1" '
             + ('table:cell-range-address="$Actions.$A$2:.$B$2"' if kind == "named-range"
                else 'table:expression="of:[$Actions.$A$2:.$B$2]"') + '/></table:named-expressions>')
    sheet = table("Actions", row(text("Change"), text("Value")) + row(text(MARK), number("0.55")))
    return ods_file(path, sheet, names, {"meta.xml": META} if meta else None)


@pytest.mark.parametrize("kind", ["named-range", "named-expression"])
def test_our_workbook_saved_as_ods_is_recognised_with_its_creation_date(tmp_path, kind):
    assert "2026-11-29" == built_by_us(ours_as_ods(tmp_path / "week 48.ods", kind=kind))
    assert "" == built_by_us(ours_as_ods(tmp_path / "undated.ods", meta=False))


def test_an_ods_without_the_name_is_not_ours_even_with_the_mark_as_text(tmp_path):
    assert None is built_by_us(ours_as_ods(tmp_path / "sales.ods", name="sb_other"))  # the mark is in a cell only
    assert None is built_by_us(ours_as_ods(tmp_path / "book.ods").rename(tmp_path / "book.zip"))


def test_an_ods_declaring_a_document_type_is_not_looked_into(tmp_path):
    path = ours_as_ods(tmp_path / "week 48.ods")
    with zipfile.ZipFile(path) as made:
        parts = {n: made.read(n) for n in made.namelist()}
    with zipfile.ZipFile(path, "w") as again:  # the same package, its content.xml behind a DTD with an entity
        for name, data in parts.items():
            again.writestr(name, data.replace(b"<office:document-content", b'<!DOCTYPE x [<!ENTITY a "b">]>'
                                              b"<office:document-content") if name == "content.xml" else data)
    assert None is built_by_us(path)


def test_our_workbook_saved_as_ods_beside_the_exports_gets_the_pass_it_with_previous_warning(tmp_path):
    folder = write_account(tmp_path / "in")
    ours_as_ods(folder / "week 48.ods")
    notes = [p for p in load(folder)[2] if p.file == "week 48.ods"]
    assert [("warning", True, True)] == [(p.severity, "pass it with --previous" in p.message,
                                          "(built 2026-11-29)" in p.message) for p in notes]
