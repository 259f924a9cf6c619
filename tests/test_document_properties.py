"""The workbook says which program made it: its Application property names sheetbuilder and its version.

The property is the Application element of the package's extended properties part,
docProps/app.xml (ECMA-376 Part 1, "Extended Properties"); spreadsheet programs show it
as the program that created the file. The writer library puts its own default there.
"""
from __future__ import annotations

import re
import zipfile

from sheetbuilder.version import __version__
from sheetbuilder.workbook.render import render, render_rows
from sheetbuilder.workbook.spec import DATA, Column, Sheet, Table, WorkbookSpec


def _application(path) -> list[str]:
    with zipfile.ZipFile(path) as z:
        return re.findall(r"<Application>(.*?)</Application>", z.read("docProps/app.xml").decode("utf-8"))


def test_a_built_workbook_names_sheetbuilder_and_its_version_as_its_application(demo_build):
    assert [f"sheetbuilder/{__version__}"] == _application(demo_build.output)


def test_the_changes_workbook_names_sheetbuilder_too(tmp_path):
    render_rows(tmp_path / "changes.xlsx", "changes", ["kind"], [["bid"]])
    assert [f"sheetbuilder/{__version__}"] == _application(tmp_path / "changes.xlsx")


def test_a_workbook_written_in_memory_mode_is_named_the_same(tmp_path, monkeypatch):
    import sheetbuilder.workbook.render as render_module
    monkeypatch.setattr(render_module, "workbook_options", lambda tmpdir=None: {"in_memory": True})
    sheet = Sheet("S", table=Table(0, [Column("Value", "money", DATA, [1.0])]))
    render(WorkbookSpec([sheet]), tmp_path / "memory.xlsx")
    assert [f"sheetbuilder/{__version__}"] == _application(tmp_path / "memory.xlsx")
