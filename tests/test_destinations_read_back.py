"""The [destinations] of settings.toml reach `changes`: settings.toml is not in the workbook, so the build records
the destinations it used on Settings, and `changes`, which plans the workbook again from what it holds, reads them
there. Before, a term promoted from an automatic campaign showed its destination on Terms and Actions but `changes`
refused it as having none."""
from __future__ import annotations

import shutil

import openpyxl

from conftest import BUILT_ON, DEMO
from sheetbuilder.pipeline import build
from sheetbuilder.weekly.changes import export_changes

PRODUCT, CAMPAIGN, GROUP = "LF-1015", "LF - Outdoor Lighting - Manual", "String Lights"  # a live manual group


def _promoted_from_elsewhere(path) -> set[str]:
    """The terms Terms (as built, cached values) promotes into CAMPAIGN / GROUP from another ad group."""
    ws = openpyxl.load_workbook(path, read_only=True, data_only=True)["Terms"]
    rows = ws.iter_rows(values_only=True)
    header = next(r for r in rows if r and r[0] == "Campaign")
    at = {h: i for i, h in enumerate(header) if h}
    return {r[at["Search term"]] for r in rows if r and r[at["Final"]] == "promote"
            and (r[at["Destination campaign"]], r[at["Destination ad group"]]) == (CAMPAIGN, GROUP)
            and (r[at["Campaign"]], r[at["Ad group"]]) != (CAMPAIGN, GROUP)}


def test_adds_whose_destination_comes_from_settings_toml_are_written_by_changes_as_the_workbook_shows(tmp_path):
    inputs = tmp_path / "exports"
    shutil.copytree(DEMO, inputs)
    with open(inputs / "settings.toml", "a", encoding="utf-8") as f:
        f.write(f'\n[destinations]\n"{PRODUCT}" = {{ campaign = "{CAMPAIGN}", ad_group = "{GROUP}" }}\n')
    book = tmp_path / "week.xlsx"
    build(inputs, book, built_on=BUILT_ON)
    moved = _promoted_from_elsewhere(book)
    assert moved  # the demo's automatic campaign promotes some of this product's terms
    result = export_changes(book, tmp_path / "changes.csv")
    written = {(r[0], r[1], r[2], r[3]) for r in result.rows}
    assert {("add keyword", CAMPAIGN, GROUP, t) for t in moved} <= written
    assert [] == [p.message for p in result.problems if any(f"'{t}'" in p.message for t in moved)]
