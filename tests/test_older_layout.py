"""A workbook built before Bids and Terms kept their shared working columns is read back as before.

tests/data/demo_before_working_columns.xlsx is the demo as main at 43b3dfd wrote it (output_samples/demo.xlsx then):
its Bids table lacks Order value, Prior a in use, Prior b in use and Step bid, its Terms table New keyword and Source
negative fits, so each Notes column stands where those columns are now planned. `changes` and `build --previous` find
every column by its header and defined name: the same change list, Decisions and notes carried, and nothing reported
as typed over a formula (a user's own column right of Notes included).
"""
from __future__ import annotations

from pathlib import Path

import openpyxl
import pytest

from conftest import BUILT_ON, DEMO
from sheetbuilder.pipeline import build
from sheetbuilder.weekly.changes import export_changes

OLDER = Path(__file__).parent / "data" / "demo_before_working_columns.xlsx"
NEW_BIDS = ("Order value", "Prior a in use", "Prior b in use", "Step bid")
NEW_TERMS = ("New keyword", "Source negative fits")


def _header(ws) -> tuple[int, list]:
    for row in ws.iter_rows(min_row=1, max_row=8):
        if row[0].value == "Campaign":
            return row[0].row, [c.value for c in row]
    raise AssertionError(ws.title)


def test_the_older_workbook_has_the_older_layout():
    wb = openpyxl.load_workbook(OLDER, read_only=True)
    _, bids = _header(wb["Bids"])
    _, terms = _header(wb["Terms"])
    assert ([], []) == ([h for h in NEW_BIDS if h in bids], [h for h in NEW_TERMS if h in terms])
    assert ("Rule", "Notes") == tuple(bids[bids.index("Notes") - 1:bids.index("Notes") + 1])


def test_changes_reads_an_older_workbook_as_todays_build_of_the_same_exports(tmp_path, demo_build):
    older = export_changes(OLDER, tmp_path / "older.csv")
    today = export_changes(demo_build.output, tmp_path / "today.csv")
    assert (today.rows, today.problems, []) == (older.rows, older.problems, older.overwritten)


@pytest.fixture(scope="module")
def carried(tmp_path_factory):
    """(the older workbook with a Bids and a Terms Decision, a note on each and an own column right of Bids' Notes
    typed with openpyxl, next week built with --previous from the same exports)."""
    folder = tmp_path_factory.mktemp("older")
    wb = openpyxl.load_workbook(OLDER)
    for sheet, decision, note in (("Bids", "keep", "seasonal"), ("Terms", "skip", "ask the supplier")):
        ws = wb[sheet]
        top, headers = _header(ws)
        at = {h: headers.index(h) + 1 for h in ("Decision", "Notes")}
        ws.cell(top + 1, at["Decision"]).value = decision
        ws.cell(top + 2, at["Notes"]).value = note
        if sheet == "Bids":
            ws.cell(top, at["Notes"] + 1).value = "Checked on"
            ws.cell(top + 3, at["Notes"] + 1).value = 17.25
    path = folder / "older_typed.xlsx"
    wb.save(path)
    return path, build(DEMO, folder / "next.xlsx", built_on=BUILT_ON, previous=path)


def test_previous_carries_an_older_workbooks_decisions_notes_and_own_column(carried):
    _, second = carried
    assert [] == list(second.carry.unmatched)
    assert {"Bids": ["keep"], "Terms": ["skip"]} == {s: list(v.values()) for s, v in second.carry.decisions.items()}
    wb = openpyxl.load_workbook(second.output, read_only=True)
    found = {}
    for sheet in ("Bids", "Terms"):
        rows = list(wb[sheet].iter_rows(values_only=True))
        top = next(i for i, r in enumerate(rows) if r and r[0] == "Campaign")
        headers = list(rows[top])
        found[sheet] = {h: [r[headers.index(h)] for r in rows[top + 1:] if r[headers.index(h)] not in (None, "")]
                        for h in ("Decision", "Notes")}
    assert {"Bids": {"Decision": ["keep"], "Notes": ["seasonal"]},
            "Terms": {"Decision": ["skip"], "Notes": ["ask the supplier"]}} == found


def test_changes_of_an_older_workbook_with_an_own_column_reports_nothing_typed_over(carried, tmp_path):
    path, _ = carried
    result = export_changes(path, tmp_path / "typed.csv")
    assert [] == result.overwritten
