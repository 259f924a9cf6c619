"""The contributor guide's worked example, done in memory: adding a "Profit per unit" column to Profit.

DEVELOPERS.md, "Adding a computed column": the column's declaration (one ColumnDef in Profit's
DEFS), its reference and the golden file are all a new column touches. Here the declaration is
added to a copy of DEFS (the Guide's column section reads the same list), nothing else in the
package changes, and the checks that demand the other two name exactly this column.
"""
from __future__ import annotations

from pathlib import Path

import pytest

from conftest import BUILT_ON, DEMO
from golden import differences, normalise, snapshot
from oracle import BLANK
from profit_io import PROFIT_CHECKED, oracle_for
from reference_columns import COMPARED, UNCOVERED, formula_columns
from workbook_io import mismatches
from sheetbuilder import assemble
from sheetbuilder.pipeline import build, load, plan_workbook
from sheetbuilder.sheets import profit
from sheetbuilder.workbook.columns import ColumnDef, blank_div

SAMPLE = Path(__file__).resolve().parent.parent / "output_samples" / "demo.xlsx"  # the golden file
HEADER = "Profit per unit"
PER_UNIT = ColumnDef("profit_per_unit", HEADER, "money", "Net profit after ads per unit sold.",
                     lambda df, ctx: blank_div(df["net_profit"], df["units"]),
                     '=IF({c:units}=0,"",IF({c:net_profit}="","",{c:net_profit}/{c:units}))', width=10)


@pytest.fixture()
def declared(monkeypatch):
    """Step 1 only: the declaration, as one more ColumnDef at the end of Profit's DEFS."""
    defs = [*profit.DEFS, PER_UNIT]
    monkeypatch.setattr(profit, "DEFS", defs)
    monkeypatch.setattr(assemble, "PROFIT_DEFS", defs)  # the same list, imported by name for the Guide


@pytest.fixture()
def plan(declared):
    inputs, settings, _ = load(DEMO)
    return plan_workbook(inputs, settings, BUILT_ON)


def _per_unit_reference() -> dict:
    """The reference (step 2): the oracle's Profit rows, each with its net profit after ads per unit sold."""
    rows, _ = oracle_for(DEMO)
    for r in rows.values():
        net, units = r["Net profit after ads"], r["Units"]
        r[HEADER] = BLANK if net is BLANK or not units else net / units
    return rows


def test_the_declaration_alone_plans_the_column_with_its_formula_and_the_guide_describes_it(plan):
    table = plan.spec.sheet("Profit").table
    column = next(c for c in table.columns if c.header == HEADER)
    letters = plan.tables["Profit"].letters
    units, net = letters["units"], letters["net_profit"]
    assert f'=IF({units}{{r}}=0,"",IF({net}{{r}}="","",{net}{{r}}/{units}{{r}}))' == column.formula
    written = dict(zip(plan.tables["Profit"].frame["product_id"], column.values))
    assert [] == mismatches(_per_unit_reference(), {p: {HEADER: v} for p, v in written.items()}, [HEADER], "Profit")
    guide = plan.spec.sheet("Guide")
    assert any(c is not None and c.value == HEADER for row in guide.above + guide.below for c in row)


def test_until_its_reference_is_listed_the_coverage_check_names_this_column_and_no_other(plan):
    def unchecked(compared):
        return {(name, h) for name, headers in formula_columns(plan).items() for h in headers
                if h not in compared.get(name, ())} - set(UNCOVERED)

    assert {("Profit", HEADER)} == unchecked(COMPARED)
    assert set() == unchecked({**COMPARED, "Profit": [*PROFIT_CHECKED, HEADER]})
    written = {p: {HEADER: v} for p, v in zip(plan.tables["Profit"].frame["product_id"],
                                                next(c for c in plan.spec.sheet("Profit").table.columns
                                                     if c.header == HEADER).values)}
    without_reference, _ = oracle_for(DEMO)
    assert all("the reference has no value for this column" in m
               for m in mismatches(without_reference, written, [HEADER], "Profit"))
    assert len(without_reference) == len(mismatches(without_reference, written, [HEADER], "Profit"))


@pytest.mark.slow  # moved out of the fast lane, which must stay under two minutes
def test_the_golden_file_differs_only_on_profit_and_on_the_guides_column_section(declared, tmp_path):
    built = build(DEMO, tmp_path / "demo.xlsx", built_on=BUILT_ON)
    diffs = differences(normalise(snapshot(SAMPLE)), normalise(snapshot(built.output)))
    assert {"Profit", "Guide"} == {d.split("!")[0].split(" ")[0] for d in diffs}
    assert any(HEADER in d for d in diffs if d.startswith("Profit"))
