"""The Actions sheet as a review page: it shows the first actions_cap bid changes and every change of the other
kinds, and `changes` writes every change, bid changes beyond the page included (README, Settings: actions_cap).

Expected values come from the independent reference (tests/oracle_actions.py) and from the Bids sheet's own
cached Final bid and Current bid, never from the Actions planner.
"""
from __future__ import annotations

import shutil

import openpyxl
import pytest

from conftest import BUILT_ON, DEMO
from oracle_actions import actions_oracle
from sheetbuilder.cli import main
from sheetbuilder.pipeline import build, load
from sheetbuilder.weekly.changes import export_changes
from sheetbuilder.workbook.csv_safe import read_csv_rows

PAGE = 3
# No term is promoted (no add without a destination, which `changes` refuses), so every change is written.
SETTINGS = f"actions_cap = {PAGE}\nmin_promote_orders = 1000\n"
BID_KEY = ("Campaign", "Ad group", "Target", "Match type")


@pytest.fixture(scope="module")
def paged(tmp_path_factory):
    """(the built workbook, the reference change list by kind) of the demo with a bid page of PAGE rows."""
    work = tmp_path_factory.mktemp("paged")
    folder = work / "account"
    shutil.copytree(DEMO, folder)
    with open(folder / "settings.toml", "a", encoding="utf-8") as fh:
        fh.write("\n" + SETTINGS)
    inputs, settings, _ = load(folder)
    return build(folder, work / "paged.xlsx", built_on=BUILT_ON).output, actions_oracle(inputs.tables, settings)


def _actions_rows(path) -> list[tuple]:
    """The Actions sheet's filled rows as cached: (kind, campaign, ad group, target, match type, new)."""
    ws = openpyxl.load_workbook(path, data_only=True)["Actions"]
    return [(r[0], r[1], r[2], r[3], r[4], r[6]) for r in ws.iter_rows(min_row=5, values_only=True) if r[0]]


def _bids_changed(path) -> list[tuple]:
    """The Bids rows whose cached Final bid differs from the Current bid, in sheet order: (keys..., final)."""
    ws = openpyxl.load_workbook(path, data_only=True)["Bids"]
    rows = ws.iter_rows(min_row=4, values_only=True)
    header = list(next(rows))
    at = {h: header.index(h) for h in (*BID_KEY, "Current bid", "Final bid")}
    return [tuple(r[at[h]] for h in BID_KEY) + (r[at["Final bid"]],) for r in rows
            if r[0] and r[at["Final bid"]] != r[at["Current bid"]]]


def _written_bids(rows: list[list[str]]) -> list[tuple]:
    """The CSV's bid rows: (campaign, ad group, target, match type, new as a number)."""
    return [(r[1], r[2], r[3], r[4], float(r[6])) for r in rows[1:] if r[0] == "bid"]


def test_the_page_shows_the_first_bid_changes_and_says_how_many_there_are(paged):
    path, reference = paged
    bid_changes = len(reference["bid"])
    others = sum(len(v) for k, v in reference.items() if k != "bid")
    assert bid_changes > PAGE
    shown = _actions_rows(path)
    assert PAGE == sum(1 for r in shown if r[0] == "bid")
    assert others == sum(1 for r in shown if r[0] != "bid")  # every change of the other kinds is listed
    assert [r[0] for r in shown[:PAGE]] == ["bid"] * PAGE  # the bid page first
    note = openpyxl.load_workbook(path, data_only=True)["Actions"]["A3"].value
    assert (f"Showing the first {PAGE} of {bid_changes} bid changes; every one is on Bids (its Final bid) and "
            "sheetbuilder changes writes them all.") == note
    assert [r[:5] + (r[5],) for r in shown[:PAGE]] == [("bid",) + b for b in _bids_changed(path)[:PAGE]]


def test_changes_writes_every_bid_change_in_bids_order_then_the_other_kinds(paged, tmp_path):
    path, reference = paged
    out = tmp_path / "changes.csv"
    assert 0 == main(["changes", str(path), "-o", str(out)])
    rows = read_csv_rows(out)
    kinds = [r[0] for r in rows[1:]]
    assert sum(len(v) for v in reference.values()) == len(kinds)
    bid_count = len(reference["bid"])
    assert ["bid"] * bid_count == kinds[:bid_count]  # bid changes first, then the other kinds
    written = _written_bids(rows)
    expected = [(c, g, t, m, round(new, 2)) for _, c, g, t, m, _, new, *_ in reference["bid"]]
    assert sorted(expected) == sorted(written)
    assert [b[:4] + (round(b[4], 2),) for b in _bids_changed(path)] == written  # in the Bids sheet's order


def _typed_beyond_the_page(path, tmp_path, decision=None):
    """(the edited copy, the row's keys, what was typed): a Decision on the last Bids row whose bid does not
    change (beyond the page, which holds the first PAGE changes); by default its bid plus 0.07."""
    values = openpyxl.load_workbook(path, data_only=True)["Bids"]
    header = [c.value for c in values[4]]
    current, final = header.index("Current bid"), header.index("Final bid")
    row = max(r for r in range(5, values.max_row + 1)
              if values.cell(r, 1).value and values.cell(r, final + 1).value == values.cell(r, current + 1).value)
    typed = round(values.cell(row, current + 1).value + 0.07, 2) if decision is None else decision
    key = tuple(values.cell(row, header.index(h) + 1).value for h in BID_KEY)
    wb = openpyxl.load_workbook(path)
    wb["Bids"].cell(row, header.index("Decision") + 1).value = typed
    edited = tmp_path / "edited.xlsx"
    wb.save(edited)
    return edited, key, typed


@pytest.mark.slow  # two more builds; the page itself is checked in the fast lane
def test_a_decision_typed_on_a_bids_row_beyond_the_page_is_written(paged, tmp_path):
    path, reference = paged
    edited, key, typed = _typed_beyond_the_page(path, tmp_path)
    result = export_changes(edited, tmp_path / "changes.csv")
    bids = [r for r in result.rows if r[0] == "bid"]
    assert len(reference["bid"]) + 1 == len(bids)
    assert [key + (typed, "your decision")] == [tuple(r[1:5]) + (r[6], r[7]) for r in bids if tuple(r[1:5]) == key]
    assert [] == [p for p in result.problems if p.file == "Actions"]


@pytest.mark.slow  # two more builds; the page itself is checked in the fast lane
def test_an_invalid_decision_beyond_the_page_is_refused_on_bids_naming_its_target(paged, tmp_path):
    path, _ = paged
    edited, key, _ = _typed_beyond_the_page(path, tmp_path, decision="a lot")
    result = export_changes(edited, tmp_path / "changes.csv")
    campaign, group, target, match = key
    assert [("Bids", None, "Final bid")] == [(p.file, p.row, p.column) for p in result.problems
                                            if f"{target} ({match}) in {campaign} / {group}" in p.message]
    assert 1 == len(result.refused)
    assert key not in [tuple(r[1:5]) for r in result.rows]
