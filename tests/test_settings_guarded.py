"""A typed setting the formulas cannot use costs one flag, never a sheet of errors (issue 21).

Every live setting's formulas read its In use cell: the typed Value when valid, else the As built
value, with the row's Check saying why and a count on Settings and the Guide. The reference is
tests/oracle_settings.py, written from the README's rule.
"""
from __future__ import annotations

import datetime as dt

import openpyxl
import pytest

from oracle_settings import settings_oracle
from sheetbuilder.reading.settings import SETTINGS, Settings
from sheetbuilder.sheets.settings_sheet import BUILT, CHECK, USED, VALUE, plan_settings, typed_name, typed_problem
from sheetbuilder.weekly.carry import Edits, apply_edits

LIVE = [s for s in SETTINGS if s.live]
# What a paste can leave in a setting's cell: text, numbers in and out of range, fractions, dates, blanks.
TYPED = ["thirty percent", "0.25", "8%", "", None, 0, 0.5, 1, 1.5, 7, 30, -3, 1e9, "yes", "No", " yes", "exact",
         "Campaign", "ad group", dt.datetime(2026, 11, 29), dt.datetime(1990, 1, 1), True]


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

