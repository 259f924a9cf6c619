"""The Settings sheet: one named, validated cell per setting, and defaults declared once."""
from __future__ import annotations

import openpyxl

from workbook_io import styled
from sheetbuilder.reading.settings import SETTINGS, Settings
from sheetbuilder.sheets.settings_sheet import typed_name


def test_every_declared_default_is_the_settings_default():
    defaults = Settings()
    assert {s.key: s.default for s in SETTINGS} == {s.key: defaults.value(s.key) for s in SETTINGS}


def test_every_setting_is_a_named_cell_holding_its_value(demo_build):
    wb = openpyxl.load_workbook(demo_build.output)
    for spec in SETTINGS:
        sheet, coord = wb.defined_names[spec.key].attr_text.split("!")
        assert "Settings" == sheet
        cell = wb[sheet][coord.replace("$", "")]
        label = wb[sheet].cell(cell.row, 1).value
        assert spec.label == label


def test_every_live_setting_cell_is_an_unlocked_validated_input(demo_build):
    wb = openpyxl.load_workbook(demo_build.output)
    ws = wb["Settings"]
    validated = set()
    for dv in ws.data_validations.dataValidation:
        for rng in dv.sqref.ranges:
            validated.add(rng.coord)
    for spec in SETTINGS:
        name = typed_name(spec.key) if spec.live else spec.key  # the formulas read the checked In use cell
        coord = wb.defined_names[name].attr_text.split("!")[1].replace("$", "")
        cell = ws[coord]
        if spec.live:
            assert cell.protection.locked is False, spec.key
            if spec.kind != "text":
                assert coord in validated, spec.key
        else:
            assert cell.protection.locked is not False, spec.key


# The sheets a user may sort (README, "Sorting"): LibreOffice and Excel both refuse to sort locked cells on a
# protected sheet whatever the protection allows, so their table cells are unlocked; every lookup into them
# finds its row by key. They stay protected, so no row can be deleted (a deleted row would cascade #REF!).
SORTABLE = ["Profit", "Bids", "Terms", "in_catalog"]


def test_sheets_are_protected_and_formula_cells_locked_except_on_the_sortable_tables(demo_build):
    wb = openpyxl.load_workbook(demo_build.output)
    for ws in wb.worksheets:
        assert ws.protection.sheet, ws.title
        assert ws.protection.deleteRows and ws.protection.insertRows, ws.title  # True: not allowed
        assert not ws.protection.sort and not ws.protection.autoFilter, ws.title  # False: allowed
    budget = wb["Budget"]
    assert budget["C6"].value.startswith("=") and budget["C6"].protection.locked is not False
    for name in SORTABLE:
        ws = wb[name]
        header = 1 if name == "in_catalog" else 5 if name == "Profit" else 4
        assert [False] * ws.max_column == [styled(ws, header + 1, c).protection.locked
                                           for c in range(1, ws.max_column + 1)], name
    assert wb["Profit"]["G6"].value.startswith("=")
