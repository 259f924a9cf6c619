"""Whatever build writes, changes and --previous read back: the benchmark's 10k-keyword account, as built
and as LibreOffice saves it (LibreOffice Calc headless, forced to recalculate on load).

A saved workbook is read by the streaming reader under its own limits (reading.guard.saved_limits):
the caps that keep an export small never refuse a workbook of ours. The 100k-keyword figures are
measured by hand and stated in the README; a hostile saved workbook is still refused (test_hardened).
"""
from __future__ import annotations

import csv

import pytest

from benchmarks.accounts import make_account
from sheetbuilder.pipeline import build
from sheetbuilder.reading import guard
from sheetbuilder.weekly.carry import PreviousWorkbookUnreadable
from sheetbuilder.weekly.changes import export_changes
from sheetbuilder.weekly.record import read_saved_workbook
from tools.recalc import libreoffice_convert


def _rows(path):
    with open(path, newline="", encoding="utf-8") as handle:
        return list(csv.reader(handle))


def test_a_saved_workbook_is_not_held_to_the_limits_of_an_export(demo_build, tmp_path, monkeypatch):
    monkeypatch.setattr(guard, "MAX_ZIP_TOTAL", 1024 * 1024)     # an export over 1 MiB unpacked would be refused
    monkeypatch.setattr(guard, "MAX_FILE_BYTES", 64 * 1024)
    result = export_changes(demo_build.output, tmp_path / "changes.csv")
    assert result.written > 0
    assert read_saved_workbook(demo_build.output, PreviousWorkbookUnreadable).holds_inputs


@pytest.mark.slow
@pytest.mark.libreoffice
def test_the_benchmarks_10k_account_reads_back_as_built_and_as_saved_by_libreoffice(tmp_path):
    make_account(tmp_path / "acct", 10_000)
    built = build(tmp_path / "acct", tmp_path / "week1.xlsx").output
    saved = libreoffice_convert([built], tmp_path / "lo")[0]
    lists = []
    for n, workbook in enumerate((built, saved)):
        result = export_changes(workbook, tmp_path / f"changes{n}.csv")
        assert ([], []) == (result.refused, result.overwritten)
        lists.append(_rows(tmp_path / f"changes{n}.csv"))
        record = read_saved_workbook(workbook, PreviousWorkbookUnreadable)
        assert len(record.tables["targets"]) > 5_000
        again = build(tmp_path / "acct", tmp_path / f"week2_{n}.xlsx", previous=workbook)
        assert [] == again.carry.unmatched
    assert lists[0] == lists[1]
    assert len(lists[0]) > 100
