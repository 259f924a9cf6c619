"""A workbook sheetbuilder built, left in the exports folder, is named as ours and never read as an export."""
from __future__ import annotations

from minimal import write_account

import shutil

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
