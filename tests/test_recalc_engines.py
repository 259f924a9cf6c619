"""Cached value = recalculated value for every formula cell of every sheet.

Outside references: the `formulas` library (1.3.4), a Python spreadsheet engine, and
LibreOffice Calc (headless, forced to recalculate on load by its profile's
OOXMLRecalcMode = 0). LibreOffice must agree within 1e-9 relative; so must `formulas`,
because the bid rounding adds a 1e-9 nudge that makes every engine round a half cent
the same way (see sheetbuilder.numbers.ROUNDING_NUDGE).
"""
from __future__ import annotations

import pytest

from workbook_io import engine_disagreements, open_values
from sheetbuilder.recalc import formulas_values


def _libreoffice_values(path):
    wb = open_values(path)
    return {(ws.title.upper(), c.coordinate): c.value for ws in wb.worksheets for row in ws.iter_rows() for c in row}


def test_demo_formulas_engine_equals_cached_values(demo_build):
    problems, checked = engine_disagreements(demo_build.output, formulas_values(demo_build.output))
    assert [] == problems
    assert checked > 2000


def test_generated_formulas_engine_equals_cached_values(generated):
    for i, (_, result) in enumerate(generated):
        problems, checked = engine_disagreements(result.output, formulas_values(result.output))
        assert [] == problems, f"generated account {i}"
        assert checked > 0


@pytest.mark.libreoffice
def test_demo_libreoffice_equals_cached_values(libreoffice, demo_build):
    problems, checked = engine_disagreements(demo_build.output, _libreoffice_values(libreoffice["demo"]))
    assert [] == problems
    assert checked > 2000


@pytest.mark.libreoffice
def test_generated_libreoffice_equals_cached_values(libreoffice, generated):
    for i, (_, result) in enumerate(generated):
        problems, _ = engine_disagreements(result.output, _libreoffice_values(libreoffice[result.output.stem]))
        assert [] == problems, f"generated account {i}"
