"""Carrying edits from last week's workbook: read what a user typed, match it to the new inputs."""
from __future__ import annotations

import csv
import hashlib
import shutil
from pathlib import Path

import openpyxl
import pytest

from conftest import BUILT_ON, DEMO
from sheetbuilder.cli import carried_summary
from sheetbuilder.sheets.settings_sheet import typed_name
from sheetbuilder.sheets.typed import CarryRecord, decision_column
from sheetbuilder.sheets.unmatched import unmatched_sheet_rows
from sheetbuilder.weekly.carry import Edits, PreviousWorkbookUnreadable, apply_edits, carried_catalog, read_edits
from sheetbuilder.reading.normalise import normalise
from sheetbuilder.pipeline import build, load

PRODUCT = "LF-1007"
NEW_COST, NEW_TARGET, NEW_THIN = 3.21, 0.45, 0.12
BID_DECISION, TERM_DECISION = "keep", "block"


def _header(ws, row):
    return [c.value for c in ws[row]]


def _find_row(ws, header_row, key_header, key):
    headers = _header(ws, header_row)
    for row in ws.iter_rows(min_row=header_row + 1):
        if row[headers.index(key_header)].value == key:
            return row
    raise KeyError(key)


@pytest.fixture(scope="module")
def edited(tmp_path_factory):
    """The demo built, then edited as a user would with openpyxl; (path, what was typed)."""
    folder = tmp_path_factory.mktemp("carry")
    built = build(DEMO, folder / "demo.xlsx", built_on=BUILT_ON)
    wb = openpyxl.load_workbook(built.output)
    ws = wb["in_catalog"]
    row = _find_row(ws, 1, "product_id", PRODUCT)
    row[_header(ws, 1).index("unit_cost")].value = NEW_COST
    ws = wb["Profit"]
    row = _find_row(ws, 5, "Product ID", PRODUCT)
    row[_header(ws, 5).index("Your target ACoS")].value = NEW_TARGET
    sheet, coord = next(iter(wb.defined_names[typed_name("thin_margin")].destinations))
    wb[sheet][coord.replace("$", "")].value = NEW_THIN
    ws = wb["Bids"]
    h = _header(ws, 4)
    bids_row = [c.value for c in ws[5]]
    ws.cell(5, h.index("Decision") + 1).value = BID_DECISION
    bid_key = tuple(bids_row[h.index(x)] for x in ("Campaign", "Ad group", "Target", "Match type"))
    ws = wb["Terms"]
    h = _header(ws, 4)
    terms_row = [c.value for c in ws[5]]
    ws.cell(5, h.index("Decision") + 1).value = TERM_DECISION
    term_key = tuple(terms_row[h.index(x)] for x in ("Campaign", "Ad group", "Search term"))
    path = folder / "edited.xlsx"
    wb.save(path)
    return path, bid_key, term_key


def _sha(path: Path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


def test_read_edits_finds_what_was_typed_and_leaves_the_file_unchanged(edited):
    path, bid_key, term_key = edited
    before = _sha(path)
    edits = read_edits(path)
    assert _sha(path) == before
    assert isinstance(edits, Edits)
    assert edits.settings["thin_margin"] == NEW_THIN
    assert edits.catalog[(PRODUCT, "unit_cost")] == NEW_COST
    assert edits.targets == {PRODUCT: NEW_TARGET}
    assert edits.decisions["Bids"] == {bid_key: BID_DECISION}
    assert edits.decisions["Terms"] == {term_key: TERM_DECISION}


def test_an_unedited_workbook_carries_nothing(tmp_path):
    built = build(DEMO, tmp_path / "demo.xlsx", built_on=BUILT_ON)
    inputs, settings, _ = load(DEMO)
    result = apply_edits(read_edits(built.output), inputs.tables, settings)
    assert result.carried == [] and result.unmatched == []
    assert result.settings == settings and result.catalog == {} and result.targets == {}


def test_apply_edits_against_the_same_inputs_carries_every_edit(edited):
    path, bid_key, term_key = edited
    inputs, settings, _ = load(DEMO)
    result = apply_edits(read_edits(path), inputs.tables, settings)
    assert result.unmatched == []
    assert result.settings.thin_margin == NEW_THIN
    assert result.settings_changed == {"thin_margin": (settings.thin_margin, NEW_THIN)}
    assert result.catalog == {(PRODUCT, "unit_cost"): NEW_COST}
    assert result.targets == {PRODUCT: NEW_TARGET}
    sheets = sorted(r.sheet for r in result.carried)
    assert sheets == ["Bids", "Profit", "Settings", "Terms", "in_catalog"]
    assert decision_column(result, "Bids", [bid_key, ("x", "y", "z", "exact")]) == [BID_DECISION, None]
    shouty = (term_key[0], term_key[1], "  " + term_key[2].upper() + " ")
    assert decision_column(result, "Terms", [shouty]) == [TERM_DECISION]
    catalog = carried_catalog(inputs.tables["catalog"], result)
    assert catalog.set_index("product_id").loc[PRODUCT, "unit_cost"] == NEW_COST
    assert inputs.tables["catalog"].set_index("product_id").loc[PRODUCT, "unit_cost"] != NEW_COST
    text = carried_summary(result)
    assert "Carried 5 edit(s)" in text and "thin_margin" in text


def _drop_rows(src: Path, dst: Path, drop) -> None:
    with open(src, encoding="utf-8-sig", newline="") as fh:
        rows = list(csv.reader(fh))
    kept = [rows[0]] + [r for r in rows[1:] if not drop(r)]
    with open(dst, "w", encoding="utf-8", newline="") as fh:
        csv.writer(fh).writerows(kept)


def test_edits_whose_rows_are_gone_are_unmatched(edited, tmp_path):
    path, bid_key, term_key = edited
    folder = tmp_path / "inputs"
    shutil.copytree(DEMO, folder)
    for name in ("catalog.csv", "store_sales.csv", "ad_products.csv"):
        _drop_rows(DEMO / name, folder / name, lambda r: PRODUCT in r)
    _drop_rows(DEMO / "targets.csv", folder / "targets.csv", lambda r: tuple(r[:4]) == bid_key)
    _drop_rows(DEMO / "search_terms.csv", folder / "search_terms.csv",
               lambda r: (r[0], r[1], normalise(r[4])) == (term_key[0], term_key[1], normalise(term_key[2])))
    inputs, settings, _ = load(folder)
    result = apply_edits(read_edits(path), inputs.tables, settings)
    gone = {(r.sheet, r.column) for r in result.unmatched}
    assert gone == {("in_catalog", "catalog inputs"), ("Profit", "Your target ACoS"), ("Bids", "Decision"),
                    ("Terms", "Decision")}
    assert len(result.unmatched) == 4
    catalog = next(r for r in result.unmatched if r.sheet == "in_catalog")
    assert catalog.key == PRODUCT and f"unit_cost {NEW_COST:g}" in catalog.value
    assert all(r.key == PRODUCT for r in result.unmatched if r.sheet in ("in_catalog", "Profit"))
    assert [r.sheet for r in result.carried] == ["Settings"]
    assert result.catalog == {} and result.targets == {} and result.decisions == {}
    rows = unmatched_sheet_rows(result)
    assert rows[0] == ["Sheet", "Key", "Column", "Value", "Why"]
    assert len(rows) == 1 + len(result.unmatched)
    assert "could not be carried" in carried_summary(result)


def test_invalid_values_are_unmatched_with_the_reason():
    edits = Edits("x.xlsx", settings={"thin_margin": "lots", "bid_floor": 9.0, "period_end": None},
                  catalog={("P1", "unit_cost"): "cheap", ("P1", "price"): -4.0},
                  targets={"P1": 7.0})
    import pandas as pd
    from sheetbuilder.reading.settings import Settings
    tables = {"catalog": pd.DataFrame({"product_id": ["P1"], "price": [10.0], "unit_cost": [4.0],
                                       "fees_per_unit": [1.0], "target_acos": [float("nan")],
                                       "margin": [float("nan")]})}
    result = apply_edits(edits, tables, Settings())
    why = {(r.key, r.column): r.why for r in result.unmatched}
    assert "'lots' typed for Thin-margin threshold is not a number; the as-built value was kept" == why[
        ("thin_margin", "Value")]
    assert "above bid_ceiling" in why[("bid_floor", "Value")]
    assert why[("P1", "unit_cost")] == "not a number"
    assert "negative" in why[("P1", "price")]
    assert "target ACoS" in why[("P1", "Your target ACoS")]
    assert result.settings == Settings()
    assert isinstance(result.unmatched[0], CarryRecord)


def test_a_missing_or_unreadable_previous_workbook_is_refused(tmp_path):
    with pytest.raises(PreviousWorkbookUnreadable):
        read_edits(tmp_path / "nope.xlsx")
    bad = tmp_path / "bad.xlsx"
    bad.write_text("not a workbook")
    with pytest.raises(PreviousWorkbookUnreadable):
        read_edits(bad)


def test_header_rows_are_found_by_scanning(tmp_path):
    """A Decision sheet whose header moved down a row still reads."""
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "Bids"
    ws.append(["Bids"])
    ws.append(["note"])
    ws.append([])
    ws.append([])
    ws.append(["Campaign", "Ad group", "Target", "Match type", "Decision"])
    ws.append(["C1", "G1", "kw", "exact", 0.5])
    ws.append(["C1", "G1", "kw2", "exact", None])
    path = tmp_path / "moved.xlsx"
    wb.save(path)
    assert read_edits(path).decisions == {"Bids": {("C1", "G1", "kw", "exact"): 0.5}}


def test_decisions_that_are_not_a_valid_word_or_number_are_unmatched_with_the_reason():
    """Text in a numeric Decision, an unknown word and a saved formula error are never carried or ignored."""
    from sheetbuilder.sheets.decisions import NO_SAVED_VALUE
    inputs, settings, _ = load(DEMO)
    t = inputs.tables["targets"].iloc[0]
    s = inputs.tables["search_terms"].iloc[0]
    c = inputs.tables["campaigns"].iloc[0]
    bid_key = (t["campaign"], t["ad_group"], t["target"], t["match_type"])
    term_key = (s["campaign"], s["ad_group"], s["search_term"])
    edits = Edits("x.xlsx", decisions={"Bids": {bid_key: "about 0.40"}, "Terms": {term_key: "#DIV/0!"},
                                       "Budget campaigns": {(c["campaign"],): "lots"},
                                       "Budget": {("LF-1001",): NO_SAVED_VALUE}})
    result = apply_edits(edits, inputs.tables, settings)
    why = {r.sheet: r.why for r in result.unmatched}
    assert {} == result.decisions and [] == result.carried
    assert "'about 0.40' is not a valid decision; expected a number or 'keep'" == why["Bids"]
    assert "'lots' is not a valid decision; expected a number or 'keep'" == why["Budget campaigns"]
    assert "formula error (#DIV/0!)" in why["Terms"]
    assert "formula with no saved value" in why["Budget"]


def test_keys_with_a_tab_or_longer_than_a_cell_still_match_their_rows(tmp_path):
    """A target holding a tab and one longer than a cell (cut with a mark when written:
    Microsoft, "Excel specifications and limits", 32,767 characters) are carried, not reported as gone.
    (Other control characters are refused on input: a workbook cannot keep them exactly.)"""
    import csv as _csv
    from minimal import TARGETS, write_account
    from sheetbuilder.sheets.bids import EDITABLE_COLUMNS as BIDS
    from sheetbuilder.weekly.saved import named_area
    control, long = "tab\tkw", "w" * 40_000
    rows = TARGETS + "".join(f'C1,G1,"{t}",exact,enabled,0.40,100,10,5.00,20.00,1\n' for t in (control, long))
    folder = write_account(tmp_path / "acct", {"targets.csv": rows})
    built = build(folder, tmp_path / "w1.xlsx", built_on=BUILT_ON)
    wb = openpyxl.load_workbook(built.output)
    target = named_area(wb, BIDS.name_of("target"))
    value = named_area(wb, BIDS.name_of("decision"))
    ws = wb[target.sheet]
    for r in range(target.first_row + 1, target.last_row + 2):
        ws.cell(r, value.first_col + 1).value = 0.33
    wb.save(tmp_path / "edited.xlsx")
    inputs, settings, _ = load(folder)
    result = apply_edits(read_edits(tmp_path / "edited.xlsx"), inputs.tables, settings)
    assert [] == result.unmatched
    assert 3 == len(result.carried)
    frame = build(folder, tmp_path / "w2.xlsx", built_on=BUILT_ON, previous=tmp_path / "edited.xlsx").plan.tables["Bids"].frame
    assert [0.33, 0.33, 0.33] == frame["decision"].tolist()


def _spend_week(spend_now: float) -> dict:
    import pandas as pd
    return {"catalog": pd.DataFrame({"product_id": ["P1", "P2"]}),
            "ad_products": pd.DataFrame({"product_id": ["P1", "P1", "P2"], "campaign": ["C1", "C2", "C1"],
                                         "spend": [spend_now / 2, spend_now / 2, 50.0]})}


@pytest.mark.parametrize("spend_now, applied", [(100.0, True), (95.0, True), (104.9, True), (94.0, False),
                                                (106.0, False)])
def test_a_typed_product_spend_expires_once_the_export_is_within_5_percent_or_one_unit(spend_now, applied):
    # The rule (README, "Decisions and carried edits"): within the larger of 5% of the typed spend and 1.
    from sheetbuilder.reading.settings import Settings
    edits = Edits("w1.xlsx", decisions={"Budget": {("P1",): 100.0}})
    result = apply_edits(edits, _spend_week(spend_now), Settings())
    assert applied == any(r.key == "P1" for r in result.applied)
    assert (not applied) == any(r.key == "P1" for r in result.carried)


def test_a_small_typed_spend_expires_within_one_currency_unit():
    from sheetbuilder.reading.settings import Settings
    result = apply_edits(Edits("w1.xlsx", decisions={"Budget": {("P1",): 4.0}}), _spend_week(4.9), Settings())
    assert ["applied: this export's spend is 4.9, within 5% or 1 of it"] == [r.why for r in result.applied]


def test_a_typed_bid_still_expires_only_when_applied_to_the_cent():
    import pandas as pd
    from sheetbuilder.reading.settings import Settings
    targets = pd.DataFrame({"campaign": ["C1"], "ad_group": ["G1"], "target": ["pot"], "match_type": ["exact"],
                            "bid": [0.99]})
    result = apply_edits(Edits("w1.xlsx", decisions={"Bids": {("C1", "G1", "pot", "exact"): 1.0}}),
                         {"targets": targets}, Settings())
    assert [] == result.applied and 1 == len(result.carried)


def _exported_spend(product: str) -> float:
    """The product's ad spend in the demo's ad_products export (its Cost column, written as $24.65)."""
    with (DEMO / "ad_products.csv").open(newline="", encoding="utf-8") as f:
        return sum(float(r["Cost"].replace("$", "").replace(",", "")) for r in csv.DictReader(f)
                   if r["Product ID"] == product)


def _budget_decisions(path) -> tuple[dict[str, str], dict[str, object]]:
    """({product: its Decision cell}, {product: what the cell holds}) of the Budget products table, by header."""
    ws = openpyxl.load_workbook(path)["Budget"]
    top = next(r for r in range(1, ws.max_row + 1) if ws.cell(r, 1).value == "Product ID")
    col = _header(ws, top).index("Decision") + 1
    rows = {}
    for r in range(top + 1, ws.max_row + 1):
        if ws.cell(r, 1).value in (None, "Total"):
            break
        rows[ws.cell(r, 1).value] = r
    return ({p: ws.cell(r, col).coordinate for p, r in rows.items()}, {p: ws.cell(r, col).value for p, r in rows.items()})


@pytest.mark.slow
def test_a_typed_product_spend_the_export_comes_within_5_percent_of_expires_next_week(tmp_path):
    from conftest import edit_workbook
    week1 = build(DEMO, tmp_path / "week1.xlsx", built_on=BUILT_ON)
    near, far = round(_exported_spend("LF-1001") * 1.04, 2), round(_exported_spend("LF-1002") * 1.5, 2)
    cells, _ = _budget_decisions(week1.output)
    edited = edit_workbook(week1.output, tmp_path / "typed.xlsx", [("Budget", cells["LF-1001"], near),
                                                                    ("Budget", cells["LF-1002"], far)])
    week2 = build(DEMO, tmp_path / "week2.xlsx", built_on=BUILT_ON, previous=edited)
    assert [("Budget", "LF-1001", near)] == [(r.sheet, r.key, r.value) for r in week2.carry.applied]
    assert [("Budget", "LF-1002", far)] == [(r.sheet, r.key, r.value) for r in week2.carry.carried
                                            if r.sheet == "Budget"]
    _, typed = _budget_decisions(week2.output)
    assert (None, far) == (typed["LF-1001"], typed["LF-1002"])
