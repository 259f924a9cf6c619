"""Three weeks of the weekly routine, each workbook saved through LibreOffice as a user's would be.

Week 1 is built from the demo and edited as a person does (a corrected unit cost, a changed
threshold, a target ACoS override, a term Decision, a bid `keep`, two typed bids), then saved
by LibreOffice. Week 2 is built from exports in which one typed bid was applied in the ad
account, with --previous, and saved by LibreOffice untouched. Week 3 is built from the same
exports with --previous week 2: every standing edit must still be there.
"""
from __future__ import annotations

import csv
import datetime as dt
import shutil

import openpyxl
import pytest

from conftest import BUILT_ON, DEMO, require_libreoffice
from sheetbuilder.sheets.settings_sheet import typed_name
from sheetbuilder.cli import carried_summary
from sheetbuilder.pipeline import build
from tools.recalc import libreoffice_convert

PRODUCT_COST, NEW_COST = "LF-1012", 30.0
PRODUCT_TARGET, NEW_TARGET = "LF-1007", 0.45
NEW_THIN = 0.12  # the demo's settings.toml says 0.08


def _cell(ws, header_row, keys: dict, column):
    """The cell of column in the row whose key columns hold keys (header text as built)."""
    headers = [c.value for c in ws[header_row]]
    for row in ws.iter_rows(min_row=header_row + 1):
        if all(row[headers.index(h)].value == v for h, v in keys.items()):
            return row[headers.index(column)]
    raise KeyError(keys)


def _bid_key(row) -> dict:
    return {"Campaign": row["campaign"], "Ad group": row["ad_group"], "Target": row["target"],
            "Match type": row["match_type"]}


def _setting_cell(wb, name):
    """The typed Value cell of the setting name (its formulas read the checked In use cell beside it)."""
    sheet, coord = next(iter(wb.defined_names[typed_name(name)].destinations))
    return wb[sheet][coord.replace("$", "")]


def _apply_bid_in_export(folder, key: dict, bid: float) -> None:
    """Change one target's bid in targets.csv, as next week's export shows an applied bid."""
    path = folder / "targets.csv"
    with path.open(newline="", encoding="utf-8") as f:
        rows = list(csv.reader(f))
    header = rows[0]
    at = {h: header.index(h) for h in ("campaign", "ad_group", "target", "match_type", "bid")}
    hits = 0
    for row in rows[1:]:
        if [row[at["campaign"]], row[at["ad_group"]], row[at["target"]], row[at["match_type"]]] == list(key.values()):
            row[at["bid"]] = f"{bid:.2f}"
            hits += 1
    assert 1 == hits
    with path.open("w", newline="", encoding="utf-8") as f:
        csv.writer(f).writerows(rows)


@pytest.fixture(scope="module")
def weeks(tmp_path_factory):
    require_libreoffice()
    work = tmp_path_factory.mktemp("three_weeks")
    first = build(DEMO, work / "week1.xlsx", built_on=BUILT_ON)
    bids = first.plan.tables["Bids"].frame
    moving = bids.loc[bids["proposed"] != bids["bid"]]
    applied, pending, kept = moving.iloc[0], moving.iloc[1], moving.iloc[2]
    applied_bid = round(float(applied["bid"]) + 0.07, 2)
    pending_bid = round(float(pending["bid"]) + 0.11, 2)
    terms = first.plan.tables["Terms"].frame
    skipped = terms.loc[terms["verdict"] == "promote"].iloc[0]

    wb = openpyxl.load_workbook(first.output)
    _cell(wb["in_catalog"], 1, {"product_id": PRODUCT_COST}, "unit_cost").value = NEW_COST
    _cell(wb["Profit"], 5, {"Product ID": PRODUCT_TARGET}, "Your target ACoS").value = NEW_TARGET
    _setting_cell(wb, "thin_margin").value = NEW_THIN
    _cell(wb["Bids"], 4, _bid_key(applied), "Decision").value = applied_bid
    _cell(wb["Bids"], 4, _bid_key(pending), "Decision").value = pending_bid
    _cell(wb["Bids"], 4, _bid_key(kept), "Decision").value = "keep"
    _cell(wb["Terms"], 4, {"Position": skipped["pos"]}, "Decision").value = "skip"
    wb.save(work / "week1_edited.xlsx")
    saved1 = libreoffice_convert([work / "week1_edited.xlsx"], work / "saved1")[0]

    exports = work / "exports2"
    shutil.copytree(DEMO, exports)
    _apply_bid_in_export(exports, _bid_key(applied), applied_bid)
    second = build(exports, work / "week2.xlsx", built_on=BUILT_ON + dt.timedelta(days=7), previous=saved1)
    saved2 = libreoffice_convert([second.output], work / "saved2")[0]
    third = build(exports, work / "week3.xlsx", built_on=BUILT_ON + dt.timedelta(days=14), previous=saved2)
    return {"first": first, "second": second, "third": third, "applied": applied, "applied_bid": applied_bid,
            "pending": pending, "pending_bid": pending_bid, "kept": kept, "skipped": skipped}


@pytest.mark.libreoffice
def test_a_corrected_unit_cost_is_still_there_in_week_three(weeks):
    wb = openpyxl.load_workbook(weeks["third"].output)
    original = float(next(r for r in csv.DictReader((DEMO / "catalog.csv").open(encoding="utf-8"))
                          if r["product_id"] == PRODUCT_COST)["unit_cost"])
    assert NEW_COST == _cell(wb["in_catalog"], 1, {"product_id": PRODUCT_COST}, "unit_cost").value
    assert original == _cell(wb["in_catalog"], 1, {"product_id": PRODUCT_COST}, "exported_unit_cost").value


@pytest.mark.libreoffice
def test_a_changed_threshold_is_still_there_in_week_three_and_as_built_is_the_toml_value(weeks):
    wb = openpyxl.load_workbook(weeks["third"].output)
    cell = _setting_cell(wb, "thin_margin")
    assert NEW_THIN == cell.value
    assert 0.08 == wb[cell.parent.title].cell(cell.row, 7).value  # "As built": the demo settings.toml
    assert NEW_THIN == weeks["third"].carry.settings.thin_margin


@pytest.mark.libreoffice
def test_a_target_override_a_term_decision_and_a_bid_keep_are_still_there_in_week_three(weeks):
    wb = openpyxl.load_workbook(weeks["third"].output)
    assert NEW_TARGET == _cell(wb["Profit"], 5, {"Product ID": PRODUCT_TARGET}, "Your target ACoS").value
    assert "skip" == _cell(wb["Terms"], 4, {"Position": weeks["skipped"]["pos"]}, "Decision").value
    assert "keep" == _cell(wb["Bids"], 4, _bid_key(weeks["kept"]), "Decision").value


@pytest.mark.libreoffice
def test_a_typed_bid_the_export_shows_applied_expires_and_is_listed_as_applied(weeks):
    key = tuple(_bid_key(weeks["applied"]).values())
    second = weeks["second"]
    assert [(key, weeks["applied_bid"])] == [(tuple(r.key.split(" / ")), r.value) for r in second.carry.applied]
    assert "1 typed number(s) expired" in carried_summary(second.carry)
    for week in ("second", "third"):
        wb = openpyxl.load_workbook(weeks[week].output)
        assert _cell(wb["Bids"], 4, _bid_key(weeks["applied"]), "Decision").value is None  # left blank


@pytest.mark.libreoffice
def test_a_typed_bid_not_yet_applied_is_still_carried_and_flagged_in_week_three(weeks):
    wb = openpyxl.load_workbook(weeks["third"].output)
    assert weeks["pending_bid"] == _cell(wb["Bids"], 4, _bid_key(weeks["pending"]), "Decision").value
    key = " / ".join(_bid_key(weeks["pending"]).values())
    record = next(r for r in weeks["third"].carry.carried if r.sheet == "Bids" and r.key == key)
    assert "not yet applied" in record.why


@pytest.mark.libreoffice
def test_carried_edits_lists_each_carried_value_with_the_week_it_was_first_typed(weeks):
    wb = openpyxl.load_workbook(weeks["third"].output)
    ws = wb["Carried edits"]
    header = [c.value for c in ws[4]]
    rows = [dict(zip(header, [c.value for c in row])) for row in ws.iter_rows(min_row=5) if row[0].value]
    listed = {(r["Sheet"], r["Key"], r["Column"]): r for r in rows}
    pending = " / ".join(_bid_key(weeks["pending"]).values())
    cost = listed[("in_catalog", PRODUCT_COST, "unit_cost")]
    assert NEW_COST == cost["Typed value"]
    assert ("Settings", "thin_margin", "Value") in listed and ("Bids", pending, "Decision") in listed
    assert 0.08 == listed[("Settings", "thin_margin", "Value")]["Export value"]
    assert {dt.datetime.combine(BUILT_ON, dt.time())} == {r["First typed"] for r in rows}  # typed in week 1


@pytest.mark.libreoffice
def test_every_carried_cell_is_shaded_apart_and_has_a_note(weeks):
    from sheetbuilder.workbook.palette import CARRIED_FILL
    wb = openpyxl.load_workbook(weeks["third"].output)
    cells = [_cell(wb["Bids"], 4, _bid_key(weeks["pending"]), "Decision"),
             _cell(wb["Bids"], 4, _bid_key(weeks["kept"]), "Decision"),
             _cell(wb["in_catalog"], 1, {"product_id": PRODUCT_COST}, "unit_cost"),
             _cell(wb["Profit"], 5, {"Product ID": PRODUCT_TARGET}, "Your target ACoS"),
             _cell(wb["Terms"], 4, {"Position": weeks["skipped"]["pos"]}, "Decision"),
             _setting_cell(wb, "thin_margin")]
    for cell in cells:
        assert CARRIED_FILL.lstrip("#").upper() in str(cell.fill.fgColor.rgb).upper(), cell.coordinate
        assert "Carried from" in cell.comment.text, cell.coordinate
