"""A typed setting the formulas cannot use costs one flag, never a sheet of errors (issue 21).

Every live setting's formulas read its In use cell: the typed Value when valid, else the As built
value, with the row's Check saying why and a count on Settings and the Guide. The reference is
tests/oracle_settings.py, written from the README's rule.
"""
from __future__ import annotations

import datetime as dt

import minimal
import openpyxl
import pytest

from conftest import BUILT_ON, edit_workbook
from oracle_settings import settings_oracle
from sheetbuilder.pipeline import build
from sheetbuilder.reading.settings import SETTINGS, SPEC_BY_KEY, Settings
from sheetbuilder.sheets.settings_sheet import BUILT, CHECK, USED, VALUE, plan_settings, typed_name, typed_problem
from sheetbuilder.values import ERROR_VALUES, same_value
from sheetbuilder.weekly.carry import Edits, apply_edits
from tools.recalc import formulas_values

LIVE = [s for s in SETTINGS if s.live]
# What a paste can leave in a setting's cell: text, numbers in and out of range, fractions, dates, blanks.
TYPED = ["thirty percent", "0.25", "8%", "", None, 0, 0.5, 1, 1.5, 7, 30, -3, 1e9, "yes", "No", " yes", "exact",
         "Campaign", "ad group", dt.datetime(2026, 11, 29), dt.datetime(1990, 1, 1), True]


def _serial(day: dt.date) -> int:
    """A date as a spreadsheet's day number (days since 1899-12-30, the 1900 date system as Excel counts it)."""
    return (day - dt.date(1899, 12, 30)).days


def _plain(v):
    return None if v == "" else v


@pytest.mark.parametrize("spec", LIVE, ids=[s.key for s in LIVE])
def test_the_python_twin_of_the_check_refuses_exactly_what_the_reference_refuses(spec):
    as_built = Settings().value(spec.key)
    refused = [t for t in TYPED if settings_oracle(spec, t, as_built)[1]]
    assert refused == [t for t in TYPED if typed_problem(spec, t) is not None]


def _cells(path):
    wb = openpyxl.load_workbook(path, data_only=True)
    ws = wb["Settings"]
    out = {}
    for spec in LIVE:
        coord = wb.defined_names[typed_name(spec.key)].attr_text.split("!")[1].replace("$", "")
        row = [c.value for c in ws[int(coord[1:])]]
        out[spec.key] = row
    return wb, out


def test_every_in_use_cell_holds_the_typed_value_and_every_check_is_blank_as_built(demo_build):
    wb, rows = _cells(demo_build.output)
    for spec in LIVE:
        row = rows[spec.key]
        want, flagged = settings_oracle(spec, row[VALUE], row[BUILT])
        assert (_plain(want), False) == (_plain(row[USED]), flagged), spec.key
        assert row[CHECK] in (None, ""), spec.key
    assert 0 == wb["Settings"]["B3"].value


def test_the_formulas_read_the_in_use_cell_and_commands_the_typed_value(demo_build):
    wb = openpyxl.load_workbook(demo_build.output)
    for spec in LIVE:
        used = wb.defined_names[spec.key].attr_text.split("!")[1].replace("$", "")
        typed = wb.defined_names[typed_name(spec.key)].attr_text.split("!")[1].replace("$", "")
        assert ("C", "B") == (used[0], typed[0]), spec.key
        assert wb["Settings"][used].value.startswith("="), spec.key


def test_a_typed_value_that_is_not_valid_is_listed_as_not_carried_never_dropped():
    edits = Edits("w1.xlsx", {"default_target_acos": "thirty percent", "min_clicks": 2.5, "negative_level": "group",
                              "max_bid_cut": 0.25})
    result = apply_edits(edits, {}, Settings())
    why = {r.key: r.why for r in result.unmatched}
    assert ("'thirty percent' typed for Default target ACoS is not a number; the as-built value was kept"
            == why["default_target_acos"])
    assert "2.5 typed for Minimum clicks is not a whole number; the as-built value was kept" == why["min_clicks"]
    assert ("'group' typed for Level of new negatives is not one of ad group, campaign; the as-built value was kept"
            == why["negative_level"])
    assert (0.30, 10, "ad group", 0.25) == (result.settings.default_target_acos, result.settings.min_clicks,
                                            result.settings.negative_level, result.settings.max_bid_cut)


def test_a_check_formula_names_the_as_built_value_it_falls_back_to():
    sheet, _ = plan_settings(Settings(default_target_acos=0.3, bid_floor=0.1), dt.date(2026, 12, 2))
    formulas = {row[0].value: row[CHECK].formula for row in sheet.above[4:] if len(row) > CHECK and row[CHECK]}
    assert "not a number: using the as-built value 30%" in formulas["Default target ACoS"]
    assert "not a number: using the as-built value 0.10" in formulas["Bid floor"]
    assert "not one of yes, no: using the as-built value yes" in formulas["Cap target ACoS at break-even"]



# Pasted values of each kind the In use cell checks, with the words their Check starts with.
PASTED = {"default_target_acos": ("thirty percent", "not a number"), "min_clicks": (2.5, "not a whole number"),
          "bid_floor": ("0,10", "not a number"), "cap_target_at_break_even": ("maybe", "not one of yes, no"),
          "period_end": ("last Sunday", "not a date"), "max_bid_cut": (30, "outside 0% to 95%")}


@pytest.fixture(scope="module")
def pasted(tmp_path_factory):
    """A small account's workbook, and a copy with PASTED typed in (openpyxl: no validation), both recalculated
    by the `formulas` library."""
    folder = minimal.write_account(tmp_path_factory.mktemp("pasted"), {})
    built = build(folder, folder / "book.xlsx", built_on=BUILT_ON)
    wb = openpyxl.load_workbook(built.output)
    cells = {k: wb.defined_names[typed_name(k)].attr_text.split("!")[1].replace("$", "") for k in PASTED}
    edited = edit_workbook(built.output, folder / "pasted.xlsx", [("Settings", cells[k], v) for k, (v, _) in
                                                                   PASTED.items()])
    guide = wb["Guide"]
    return formulas_values(built.output), formulas_values(edited), cells, {
        guide.cell(r, 1).value: r for r in range(1, 40)}


@pytest.mark.slow
def test_values_pasted_into_settings_turn_no_formula_cell_into_an_error_in_the_formulas_engine(pasted):
    _, after, _, _ = pasted
    assert [] == [k for k, v in after.items() if isinstance(v, str) and v in ERROR_VALUES]


@pytest.mark.slow
def test_each_pasted_value_lights_its_flag_and_the_counts_and_in_use_holds_the_as_built_value(pasted):
    _, after, cells, guide_rows = pasted
    for key, (value, words) in PASTED.items():
        row = cells[key][1:]
        assert after[("SETTINGS", f"D{row}")].startswith(words + ": using the as-built value"), key
        used, flagged = settings_oracle(SPEC_BY_KEY[key], value, Settings().value(key))
        assert flagged, key
        assert _plain(after[("SETTINGS", f"C{row}")]) == (_serial(used) if key == "period_end" and used else used), key
    assert len(PASTED) == after[("SETTINGS", "B3")]
    assert after[("GUIDE", "B8")].startswith("A typed setting is not valid: its as-built value is in use instead")
    assert len(PASTED) == after[("GUIDE", f"B{guide_rows['Typed settings not valid (as-built value in use)']}")]


@pytest.mark.slow
def test_every_figure_outside_settings_and_the_guide_is_as_built_after_the_paste(pasted):
    before, after, _, _ = pasted
    # (defined names come back under the sheet "": the typed cells and the count are names too)
    differ = {k for k in before if k[0] not in ("SETTINGS", "GUIDE", "") and not same_value(before[k], after.get(k))}
    assert set() == differ
