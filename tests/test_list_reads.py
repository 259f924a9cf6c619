"""How the Actions page and the term lists read their source rows: the short forms are used only where they give
the long form's value (tests/test_recalc_engines.py checks the forms themselves in each engine)."""
from __future__ import annotations

import re

from sheetbuilder.sheets.actions import DEFS, _field
from sheetbuilder.sheets.lists import HARVEST_DEFS, NEGATIVE_DEFS


def test_actions_reads_with_index_alone_only_formula_columns_of_the_lists():
    # INDEX alone on a blank cell is 0 in some engines; a list's formula columns hold a formula in every row, so the
    # rows Actions reads are never blank cells. A column turned into plain values would need the long form again.
    reads = set(re.findall(r"\{rng:(harvest|negative_list)\.(\w+)\}", " ".join(d.formula or "" for d in DEFS)))
    formula_columns = ({("harvest", d.key) for d in HARVEST_DEFS if d.formula}
                       | {("negative_list", d.key) for d in NEGATIVE_DEFS if d.formula})
    assert len(reads) >= 15
    assert set() == reads - formula_columns


def test_a_kind_the_workbook_lacks_takes_no_test_in_the_chain():
    # Segment 5 (budgets) counted by a constant 0: no row reaches it, so segment 4's branch serves the rest.
    assert '=IF({c:pos}="","",IF({c:pos}<20000000,a,IF({c:pos}<30000000,b,c)))' == _field(
        {2: "a", 3: "b", 4: "c", 5: "d"}, first=2, never=frozenset({5}))
    # Segments 2 and 3 lacking: the first branch taken serves the rows before it too.
    assert '=IF({c:pos}="","",IF({c:pos}<40000000,c,d))' == _field(
        {2: "a", 3: "b", 4: "c", 5: "d"}, first=2, never=frozenset({2, 3}))
    # With every kind present each segment keeps its test, and a blank last kind ends the chain with "".
    assert '=IF({c:pos}="","",IF({c:pos}<20000000,a,IF({c:pos}<30000000,b,IF({c:pos}<40000000,c,""))))' == _field(
        {2: "a", 3: "b", 4: "c"}, first=2)
