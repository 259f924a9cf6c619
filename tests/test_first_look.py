"""The Guide's first look against independent references.

The products losing the most after ads come from tests/oracle.py (net profit after ads, the
most negative first, only products that lose money); the biggest changes come from
tests/oracle_actions.py (every change with a money at stake, the largest first). Equal values
are listed in sheet order. Each line's row number must hold that product or change on its
sheet. Cached values are checked here on the demo and the generated accounts; the
`formulas`, LibreOffice and Gnumeric recalculations of the same cells are compared with the
cached values in test_recalc_engines.py, and the LibreOffice values with the references below.
"""
from __future__ import annotations

import pytest

from conftest import DEMO
from oracle_actions import actions_oracle
from profit_io import HEADER_ROW as PROFIT_HEADER_ROW, oracle_for
from workbook_io import open_values, same
from sheetbuilder.pipeline import load

LOSSES = "Products losing the most after ads"
CHANGES = "Biggest changes by money at stake"
ACTIONS_HEADER_ROW = 4  # 1-based: title, counts, note, header


def _lines(ws, title: str) -> list[tuple]:
    """(value, description, row) of the five lines under a first-look title on the Guide."""
    start = next(r for r in range(1, 80) if ws.cell(r, 1).value == title)
    return [(ws.cell(r, 1).value, ws.cell(r, 2).value, ws.cell(r, 3).value) for r in range(start + 2, start + 7)]


def _blank(v) -> bool:
    return v is None or v == ""


def _column_rows(ws, header_row: int, header: str) -> dict[int, object]:
    """{sheet row: value} of a column under its header."""
    col = next(c.column for c in ws[header_row] if c.value == header)
    return {r: ws.cell(r, col).value for r in range(header_row + 1, ws.max_row + 1)}


def loss_mismatches(path, folder) -> list[str]:
    book = open_values(path)
    expected_rows, _ = oracle_for(folder)
    row_of = {v: r for r, v in _column_rows(book["Profit"], PROFIT_HEADER_ROW, "Product ID").items() if v}
    losing = sorted(((r["Net profit after ads"], row_of[pid], pid) for pid, r in expected_rows.items()
                     if isinstance(r["Net profit after ads"], float) and r["Net profit after ads"] < 0))[:5]
    out = []
    for k, (value, text, row) in enumerate(_lines(book["Guide"], LOSSES)):
        if k >= len(losing):
            if not (_blank(value) and _blank(text) and _blank(row)):
                out.append(f"line {k + 1}: expected blank, got {(value, text, row)}")
            continue
        net, want_row, pid = losing[k]
        want = (net, f"{pid}  {expected_rows[pid]['Product name']}", want_row)
        if not (same(net, value) and want[1] == text and want_row == row):
            out.append(f"line {k + 1}: expected {want}, got {(value, text, row)}")
    return out


def change_mismatches(path, folder) -> list[str]:
    book = open_values(path)
    inputs, settings, _ = load(folder)
    changes = [c for rows in actions_oracle(inputs.tables, settings).values() for c in rows if c[9] is not None]
    money = sorted((c[9] for c in changes), reverse=True)[:5]
    ws = book["Actions"]
    columns = {h: _column_rows(ws, ACTIONS_HEADER_ROW, h) for h in ("Kind", "Campaign", "Target or term",
                                                                      "Product ID", "Money at stake")}
    out, previous = [], None
    for k, (value, text, row) in enumerate(_lines(book["Guide"], CHANGES)):
        if k >= len(money):
            if not (_blank(value) and _blank(text) and _blank(row)):
                out.append(f"line {k + 1}: expected blank, got {(value, text, row)}")
            continue
        if not same(money[k], value):
            out.append(f"line {k + 1}: expected money {money[k]}, got {value}")
            continue
        kind, campaign, target, product, at_row = (columns[h][row] for h in columns)
        what, product = target or campaign or "", product or ""
        listed = [c for c in changes if c[0] == kind and (c[3] or c[1] or "") == what and (c[8] or "") == product
                  and same(c[9], value)]
        if not listed or not same(value, at_row):
            out.append(f"line {k + 1}: Actions row {row} ({kind}, {what}, {product}, {at_row}) is no change "
                       f"of money {value} in the reference")
        if text != f"{kind}: {what}  ({product})":
            out.append(f"line {k + 1}: description {text!r} does not describe Actions row {row}")
        if previous is not None and same(previous[0], value) and row <= previous[1]:
            out.append(f"line {k + 1}: equal money listed out of sheet order (row {row} after {previous[1]})")
        previous = (value, row)
    return out


def test_demo_first_look_lists_the_biggest_losses_as_the_reference_does(demo_build):
    assert [] == loss_mismatches(demo_build.output, DEMO)


def test_demo_first_look_lists_the_biggest_changes_as_the_reference_does(demo_build):
    assert [] == change_mismatches(demo_build.output, DEMO)


@pytest.mark.slow  # several seconds: the fast lane stays under two minutes
def test_generated_first_looks_equal_the_references(generated, work):
    for i, (_, result) in enumerate(generated):
        folder = work / f"gen{i}"
        assert [] == [f"generated {i}: {m}" for m in loss_mismatches(result.output, folder) +
                      change_mismatches(result.output, folder)]


def test_each_first_look_line_links_to_its_row_as_built(demo_build):
    import openpyxl
    ws = openpyxl.load_workbook(demo_build.output)["Guide"]
    links = {c.coordinate: c.hyperlink.location for row in ws.iter_rows(max_row=80) for c in row if c.hyperlink}
    values = open_values(demo_build.output)["Guide"]
    for title, sheet in ((LOSSES, "Profit"), (CHANGES, "Actions")):
        start = next(r for r in range(1, 80) if values.cell(r, 1).value == title)
        for r in range(start + 2, start + 7):
            row = values.cell(r, 3).value
            assert (f"{sheet}!A{int(row)}" if row else None) == links.get(f"B{r}")


@pytest.mark.libreoffice
def test_demo_first_look_recalculated_by_libreoffice_equals_the_references(libreoffice):
    assert [] == loss_mismatches(libreoffice["demo"], DEMO) + change_mismatches(libreoffice["demo"], DEMO)
