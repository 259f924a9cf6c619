"""The weekly routine end to end: build, decide in the workbook, recalculate and save in
LibreOffice, export the changes, and rebuild next week with --previous.

The expected change list is the Python reference of a rebuild that carries the same edits,
so the check compares LibreOffice's recalculation of the user's edits with sheetbuilder's
own reference path. Injection escaping follows OWASP, "CSV Injection".
"""
from __future__ import annotations

import hashlib
import shutil
from collections import Counter

import openpyxl
import pytest

from conftest import BUILT_ON, DEMO, require_libreoffice
from workbook_io import open_values, read_table, same
from sheetbuilder.weekly.changes import export_changes, read_actions
from sheetbuilder.workbook.csv_safe import read_csv_rows
from sheetbuilder.pipeline import build
from tools.recalc import libreoffice_convert

HOSTILE = '=HYPERLINK("http://example.invalid","click")'


def _cell(ws, header_row, key_header, key, column):
    headers = [c.value for c in ws[header_row]]
    for row in ws.iter_rows(min_row=header_row + 1):
        if row[headers.index(key_header)].value == key:
            return row[headers.index(column)]
    raise KeyError(key)


@pytest.fixture(scope="module")
def routine(tmp_path_factory):
    require_libreoffice()
    work = tmp_path_factory.mktemp("routine")
    first = build(DEMO, work / "week1.xlsx", built_on=BUILT_ON)
    bids = first.plan.tables["Bids"].frame
    typed_target = bids.loc[bids["proposed"] != bids["bid"]].iloc[0]
    terms = first.plan.tables["Terms"].frame
    skipped = terms.loc[terms["verdict"] == "promote"].iloc[0]
    hostile = terms.loc[terms["term"] == HOSTILE].iloc[0]
    wb = openpyxl.load_workbook(first.output)
    b = wb["Bids"]
    headers = [c.value for c in b[4]]
    for row in b.iter_rows(min_row=5):
        if [row[headers.index(h)].value for h in ("Campaign", "Ad group", "Target", "Match type")] == [
                typed_target["campaign"], typed_target["ad_group"], typed_target["target"], typed_target["match_type"]]:
            row[headers.index("Decision")].value = 0.55
            break
    _cell(wb["Terms"], 4, "Position", skipped["pos"], "Decision").value = "skip"
    _cell(wb["Terms"], 4, "Position", hostile["pos"], "Decision").value = "block"
    _cell(wb["in_catalog"], 1, "product_id", "LF-1012", "unit_cost").value = 30.0
    _cell(wb["Profit"], 5, "Product ID", "LF-1007", "Your target ACoS").value = 0.45
    wb.save(work / "edited.xlsx")
    saved = libreoffice_convert([work / "edited.xlsx"], work / "saved")[0]  # the user saves in a spreadsheet program
    before = hashlib.sha256(saved.read_bytes()).hexdigest()
    second = build(DEMO, work / "week2.xlsx", built_on=BUILT_ON, previous=saved)
    return {"work": work, "first": first, "saved": saved, "second": second, "before": before,
            "typed_target": typed_target, "skipped": skipped, "hostile": hostile}


def _what(values) -> tuple:
    """What a change acts on: kind, campaign, ad group, target or term (blanks alike)."""
    return tuple("" if v is None else str(v) for v in list(values)[:4])


@pytest.mark.libreoffice
def test_changes_exports_exactly_the_reference_change_list(routine):
    result = export_changes(routine["saved"], routine["work"] / "changes.csv")
    header, *rows = read_csv_rows(routine["work"] / "changes.csv")
    assert ["kind", "campaign", "ad_group", "target_or_term", "match_type", "current", "new", "reason", "product_id",
            "money_at_stake"] == header
    expected = [c for c in routine["second"].plan.tables["Actions"].frame.to_dict("records") if c["kind"]]
    # Within a kind the rows follow the money at stake as each file was built, and edits move the rebuild's
    # figures, so rows are matched by what they change; the refused ones are left out of the expectation.
    saved_rows = dict(read_actions(routine["saved"])[0])
    refused = Counter(_what(saved_rows[r]) for r in result.refused)
    kept = []
    for e in expected:
        what = _what([e[k] for k in ("kind", "campaign", "ad_group", "target")])
        if refused[what]:
            refused[what] -= 1
        else:
            kept.append(e)
    assert len(kept) == len(rows)
    by_what = {}
    for e in kept:
        by_what.setdefault(_what([e[k] for k in ("kind", "campaign", "ad_group", "target")]), []).append(e)
    for got in rows:
        exp = by_what[_what(got)].pop(0)
        for key, value in zip(header, got):
            want = exp[{"target_or_term": "target", "money_at_stake": "money"}.get(key, key)]
            if key in ("current", "new", "money_at_stake"):
                assert value == "" or value == f"{float(value):.2f}", (exp, got)  # money with two decimals
                assert same(None if want is None else round(want, 2), float(value) if value else None), (exp, got)
            else:
                assert ("" if want is None else want) == value, (exp, got)
    assert result.computed  # no formula engine: computed from the workbook's inputs
    assert [] == result.overwritten  # LibreOffice's saved values agree with the computed list everywhere


@pytest.mark.libreoffice
def test_typed_decisions_reach_the_change_list(routine):
    header, *rows = read_csv_rows(routine["work"] / "changes.csv") if (routine["work"] / "changes.csv").exists() \
        else read_csv_rows(export_changes(routine["saved"], routine["work"] / "changes.csv").output)
    t = routine["typed_target"]
    bid_rows = [r for r in rows if r[0] == "bid" and r[3] == t["target"] and r[1] == t["campaign"]
                and r[4] == t["match_type"]]
    assert ["0.55"] == [r[6] for r in bid_rows]
    assert routine["skipped"]["term"] not in {r[3] for r in rows if r[0] in ("add keyword", "add product target")}
    assert [HOSTILE] == [r[3] for r in rows if r[0] == "add negative" and r[3] == HOSTILE]  # read back as text


@pytest.mark.libreoffice
def test_the_csv_escapes_the_hostile_term(routine):
    if not (routine["work"] / "changes.csv").exists():
        export_changes(routine["saved"], routine["work"] / "changes.csv")
    raw = (routine["work"] / "changes.csv").read_text(encoding="utf-8-sig")
    assert "'" + HOSTILE.replace('"', '""') in raw  # OWASP: a leading quote keeps it text


@pytest.mark.libreoffice
def test_rebuilding_with_previous_carries_every_typed_value(routine):
    wb = openpyxl.load_workbook(routine["second"].output)
    assert 30.0 == _cell(wb["in_catalog"], 1, "product_id", "LF-1012", "unit_cost").value
    assert 0.45 == _cell(wb["Profit"], 5, "Product ID", "LF-1007", "Your target ACoS").value
    assert "skip" == _cell(wb["Terms"], 4, "Position", routine["skipped"]["pos"], "Decision").value
    assert "block" == _cell(wb["Terms"], 4, "Position", routine["hostile"]["pos"], "Decision").value
    frame = routine["second"].plan.tables["Bids"].frame
    t = routine["typed_target"]
    row = frame.loc[(frame["campaign"] == t["campaign"]) & (frame["target"] == t["target"])
                    & (frame["match_type"] == t["match_type"]) & (frame["ad_group"] == t["ad_group"])]
    assert [0.55] == row["decision"].tolist()
    assert routine["before"] == hashlib.sha256(routine["saved"].read_bytes()).hexdigest()  # never changed
    assert "Unmatched edits" not in wb.sheetnames  # everything matched


@pytest.mark.libreoffice
def test_an_edit_whose_row_is_gone_is_listed_not_dropped(routine, tmp_path):
    folder = tmp_path / "next_week"
    shutil.copytree(DEMO, folder)
    # Gone from every export: a product only the catalog lost still gets a row to fill on in_catalog, where its
    # typed cost is carried (tests/test_adding_products.py).
    for name in ("catalog.csv", "store_sales.csv", "ad_products.csv"):
        lines = (folder / name).read_text().splitlines()
        (folder / name).write_text("\n".join(l for l in lines if "LF-1012" not in l) + "\n")
    result = build(folder, tmp_path / "week2.xlsx", built_on=BUILT_ON, previous=routine["saved"])
    ws = open_values(result.output)["Unmatched edits"]
    rows, _, _ = read_table(ws, 4, "Sheet", stop=None)
    listed = [c.value for row in ws.iter_rows(min_row=5) for c in row]
    assert any("LF-1012" in str(v) for v in listed)
