"""What a person does to the demo workbook in LibreOffice Calc, driven through its UNO bridge.

Each action (tests/uno_driver.py, run by the system python3 with python3-uno) is done on a copy of
the demo workbook, which LibreOffice then recalculates in full and saves; one LibreOffice serves every
action of the session. The figures are compared with the same workbook recalculated by LibreOffice
without the action: every sheet as a multiset of its rows, so a sorted sheet is compared by what
each row holds (its key and its figures), not by where it stands.
"""
from __future__ import annotations

import datetime as dt
import json
import shutil
import subprocess
from collections import Counter
from pathlib import Path

import openpyxl
import pytest

from conftest import BUILT_ON, DEMO, require_libreoffice
from sheetbuilder.pipeline import build
from oracle_settings import settings_oracle
from sheetbuilder.reading.settings import SETTINGS, SPEC_BY_KEY
from sheetbuilder.values import ERROR_VALUES
from sheetbuilder.weekly.changes import export_changes

DRIVER = Path(__file__).parent / "uno_driver.py"
SYSTEM_PYTHON = "/usr/bin/python3"

# Columns that hold a row's place rather than a figure (a running key, a position read from another sheet's
# order, a list's number): they change with the order of a sorted sheet by design.
PLACES = {
    "Bids": {"Position", "Changes key"},
    "Terms": {"Position", "Promoted terms key", "Blocked terms key"},
    "Harvest": {"Number", "Source negatives key", "Terms row"},
    "Negatives": {"Number", "Terms row"},
    "Actions": {"Number", "Source row"},
}
GUIDE_LINK_COLUMN = 2  # the first look's row numbers on Profit and Actions (Guide column C)


def _header_row(ws, names: set[str]) -> tuple[int, list[str]]:
    for r, row in enumerate(ws.iter_rows(values_only=True), start=1):
        if names & {v for v in row if isinstance(v, str)}:
            return r, ["" if v is None else str(v) for v in row]
    raise AssertionError(f"{ws.title}: no header row with {names}")


def _table(ws, first: str) -> tuple[int, int, list[str]]:
    """(header row, last body row, headers) of the table whose first header is first (1-based rows)."""
    header, headers = _header_row(ws, {first})
    last = header
    for r in range(header + 1, ws.max_row + 1):
        v = ws.cell(r, 1).value
        if v is None or v == "Total":
            break
        last = r
    return header, last, headers


def _norm(v):
    if isinstance(v, bool):
        return v
    if isinstance(v, (int, float)):
        return round(float(v), 9)
    return "" if v is None else v


def sheet_rows(path: Path) -> dict[str, Counter]:
    """Every sheet as a multiset of its rows' values, place-holding columns left out."""
    wb = openpyxl.load_workbook(path, data_only=True)
    out = {}
    for ws in wb.worksheets:
        skip: set[int] = set()
        if ws.title in PLACES:
            _, headers = _header_row(ws, PLACES[ws.title])
            skip = {i for i, h in enumerate(headers) if h in PLACES[ws.title]}
        elif ws.title == "Guide":
            skip = {GUIDE_LINK_COLUMN}
        out[ws.title] = Counter(tuple(_norm(v) for i, v in enumerate(row) if i not in skip)
                                for row in ws.iter_rows(values_only=True))
    return out


def _sort_step(ws, first_header: str, by: str, ascending: bool = True) -> dict:
    header, last, headers = _table(ws, first_header)
    width = max(i for i, h in enumerate(headers) if h) + 1
    return {"op": "sort", "sheet": ws.title, "range": [0, header, width - 1, last - 1], "by": headers.index(by),
            "ascending": ascending}


def plan_actions(demo: Path) -> dict[str, list[dict]]:
    """The actions of this module, each a list of driver steps on the demo workbook."""
    wb = openpyxl.load_workbook(demo)
    profit, catalog, bids, terms = wb["Profit"], wb["in_catalog"], wb["Bids"], wb["Terms"]
    return {
        "as_built": [],
        "profit_by_status": [_sort_step(profit, "Product ID", "Status")],
        "profit_by_net_profit": [_sort_step(profit, "Product ID", "Net profit after ads", ascending=False)],
        "catalog_by_name": [_sort_step(catalog, "product_id", "product_name", ascending=False)],
        "bids_and_terms": [_sort_step(bids, "Campaign", "Target"),  # built by money at stake
                           _sort_step(terms, "Campaign", "Search term", ascending=False)],
        "delete_a_bids_row": [{"op": "delete_row", "sheet": "Bids", "row": _table(bids, "Campaign")[0] + 2}],
        "delete_a_terms_row": [{"op": "delete_row", "sheet": "Terms", "row": _table(terms, "Campaign")[0] + 2}],
        "cost_for_added_product": [{"op": "set", "sheet": "in_catalog", "cell": cell, "value": value}
                                   for cell, value in _added_product_cells(catalog).items()],
        **{label: [{"op": "set", "sheet": "Settings", "cell": _typed_setting_cell(wb, key), "value": value}
                   for key, value in pasted.items()] for label, pasted in PASTES.items()},
    }


# Values pasted into live settings (a paste skips data validation): text into a percentage, and one of each
# kind the In use cell checks (a count, money, a choice, a date, a percentage typed as a whole number).
PASTES = {"text_in_a_setting": {"default_target_acos": "thirty percent"},
          "bad_paste_of_each_kind": {"min_clicks": "ten", "bid_floor": "0,10", "cap_target_at_break_even": "maybe",
                                     "period_end": "last Sunday", "max_bid_cut": 30}}
# {setting: (the words its Check starts with, the as-built value it names)}: demo_inputs/settings.toml and
# the declared defaults (README, "Settings").
FLAGS = {"default_target_acos": ("not a number", "30%"), "min_clicks": ("not a number", "10"),
         "bid_floor": ("not a number", "0.10"), "cap_target_at_break_even": ("not one of yes, no", "yes"),
         "period_end": ("not a date", "2026-11-29"), "max_bid_cut": ("outside 0% to 95%", "30%")}


def _typed_setting_cell(wb, key: str) -> str:
    """The typed Value cell of a live setting on Settings (its defined name), as A1 text."""
    return wb.defined_names[key + "_typed"].attr_text.split("!")[1].replace("$", "")


ADDED = "LF-1999"  # in the demo's store sales, not in its catalog: the build adds its row to in_catalog
TYPED = {"price": 20.0, "unit_cost": 8.0, "fees_per_unit": 2.0}


def _added_product_cells(catalog) -> dict[str, float]:
    """{cell: value} typing TYPED into the added product's in_catalog row."""
    header = [c.value for c in catalog[1]]
    row = next(r for r in range(2, catalog.max_row + 1) if catalog.cell(r, 1).value == ADDED)
    return {catalog.cell(row, header.index(k) + 1).coordinate: v for k, v in TYPED.items()}


def run_driver(jobs: list[dict], work: Path) -> dict:
    """Run the UNO driver once (one LibreOffice) over every job; {label: its result}."""
    if shutil.which(SYSTEM_PYTHON) is None or subprocess.run(
            [SYSTEM_PYTHON, "-c", "import uno"], capture_output=True).returncode != 0:
        pytest.fail("python3-uno is required for the UNO tests (./tasks.sh test installs it)")
    spec = work / "uno_jobs.json"
    spec.write_text(json.dumps(jobs), encoding="utf-8")
    done = subprocess.run([SYSTEM_PYTHON, str(DRIVER), str(spec)], capture_output=True, text=True, timeout=1800)
    assert 0 == done.returncode, done.stderr
    return json.loads(done.stdout.strip().splitlines()[-1])


@pytest.fixture(scope="session")
def hands(work, demo_build):
    """{action: the saved, recalculated copy}, every action done in one LibreOffice session."""
    require_libreoffice()
    out = work / "hands"
    out.mkdir()
    actions = plan_actions(demo_build.output)
    jobs = [{"label": k, "src": str(demo_build.output), "dst": str(out / f"{k}.xlsx"), "steps": steps}
            for k, steps in actions.items()]
    results = run_driver(jobs, work)
    refused = {k: results.pop(k)["error"] for k in REFUSED}
    assert {k: {"error": None} for k in actions if k not in REFUSED} == results
    return {**{k: out / f"{k}.xlsx" for k in actions if k not in REFUSED}, "refused": refused}


REFUSED = ("delete_a_bids_row", "delete_a_terms_row")  # actions LibreOffice must refuse


def _column(path: Path, sheet: str, first: str, header: str) -> list:
    ws = openpyxl.load_workbook(path, data_only=True)[sheet]
    top, last, headers = _table(ws, first)
    col = headers.index(header) + 1
    return [ws.cell(r, col).value for r in range(top + 1, last + 1)]


def _assert_same_figures(hands, action: str, sheet: str, first: str) -> None:
    # The action really moved rows (else the comparison below proves nothing) ...
    assert _column(hands["as_built"], sheet, first, first) != _column(hands[action], sheet, first, first)
    before, after = sheet_rows(hands["as_built"]), sheet_rows(hands[action])
    assert list(before) == list(after)
    # ... and every sheet, the sorted one included, holds the same rows with the same figures.
    for name in before:
        assert before[name] == after[name], (name, sorted((before[name] - after[name]).items())[:3],
                                              sorted((after[name] - before[name]).items())[:3])


# Each sort, the sheet it sorts and that sheet's first header: Profit by Status (the Guide's step 2) and by net
# profit, in_catalog by name (Profit's margins must stay with their products), Bids and Terms (the live lists).
SORTS = {"profit_by_status": ("Profit", "Product ID"), "profit_by_net_profit": ("Profit", "Product ID"),
         "catalog_by_name": ("in_catalog", "product_id"), "bids_and_terms": ("Bids", "Campaign")}


@pytest.mark.libreoffice
@pytest.mark.slow
@pytest.mark.parametrize("action", list(SORTS))
def test_sorting_keeps_every_figure_on_every_sheet_and_every_list_right(hands, action):
    _assert_same_figures(hands, action, *SORTS[action])


def _actions_sheet(path: Path) -> Counter:
    """The changes the Actions sheet shows."""
    ws = openpyxl.load_workbook(path, data_only=True)["Actions"]
    top, _, _ = _table(ws, "Kind")
    rows = [[ws.cell(r, c).value for c in range(1, 11)] for r in range(top + 1, ws.max_row + 1)]
    return Counter(_change(r) for r in rows if r[0] not in (None, ""))


def _change(row) -> tuple:
    """A change as compared: its words as text, its money to the cent."""
    return tuple(round(float(v), 2) if isinstance(v, (int, float)) and not isinstance(v, bool)
                 else ("" if v is None else str(v)) for v in row)


@pytest.mark.libreoffice
@pytest.mark.slow
@pytest.mark.parametrize("action", ["profit_by_status", "catalog_by_name", "bids_and_terms"])
def test_changes_on_a_sorted_workbook_equals_its_actions_sheet_and_finds_nothing_typed_over(hands, work, action):
    result = export_changes(hands[action], work / f"changes_{action}.csv")
    assert [] == result.overwritten
    # The demo's harvested rows without a destination are refused (each with a problem), the rest written: every
    # written change is on the sheet, and the sheet holds nothing more than the written and the refused ones.
    sheet, written = _actions_sheet(hands[action]), Counter(_change(r) for r in result.rows)
    assert Counter() == written - sheet
    assert len(result.refused) == sum((sheet - written).values())
    assert {"add keyword", "add product target"} == {change[0] for change in sheet - written}
    assert _actions_sheet(hands["as_built"]) == _actions_sheet(hands[action])


@pytest.mark.libreoffice
@pytest.mark.slow
def test_a_cost_typed_on_the_added_catalog_row_reaches_profit_live(hands):
    def profit(path):
        ws = openpyxl.load_workbook(path, data_only=True)["Profit"]
        top, last, headers = _table(ws, "Product ID")
        rows = [dict(zip(headers, [ws.cell(r, c).value for c in range(1, len(headers) + 1)]))
                for r in range(top + 1, last + 1)]
        return next(r for r in rows if r["Product ID"] == ADDED)
    before, after = profit(hands["as_built"]), profit(hands["cost_for_added_product"])
    assert ("no margin", None) == (before["Status"], before["Margin before ads"])
    margin = (TYPED["price"] - TYPED["unit_cost"] - TYPED["fees_per_unit"]) / TYPED["price"]
    assert margin == pytest.approx(after["Margin before ads"], abs=1e-12)
    assert after["Revenue"] * margin - after["Ad spend"] == pytest.approx(after["Net profit after ads"], abs=1e-9)


@pytest.mark.libreoffice
@pytest.mark.slow
@pytest.mark.parametrize("action", REFUSED)
def test_deleting_a_row_of_bids_or_terms_is_refused_so_no_list_turns_to_ref_errors(hands, action):
    # A deleted Bids or Terms row would break the running keys below it (#REF! down Actions, Harvest and
    # Negatives); the sheets stay protected against deleting rows, and the Guide says to type keep or skip.
    assert hands["refused"][action].startswith("LibreOffice refused to delete row")


def _errors(path: Path) -> list[str]:
    """Every cell of every sheet that holds an error value, as Sheet!A1."""
    wb = openpyxl.load_workbook(path, data_only=True)
    return [f"{ws.title}!{c.coordinate}" for ws in wb.worksheets for row in ws.iter_rows() for c in row
            if isinstance(c.value, str) and c.value in ERROR_VALUES]


@pytest.mark.libreoffice
@pytest.mark.slow
@pytest.mark.parametrize("action", list(PASTES))
def test_text_pasted_into_a_setting_costs_one_flag_not_errors(hands, work, action):
    path, pasted = hands[action], PASTES[action]
    assert [] == _errors(path)
    wb = openpyxl.load_workbook(path, data_only=True)
    settings = wb["Settings"]
    for key in pasted:
        row = [c.value for c in settings[int(_typed_setting_cell(wb, key)[1:])]]
        words, as_built = FLAGS[key]
        assert (pasted[key], f"{words}: using the as-built value {as_built}") == (row[1], row[3]), key
    for spec in (s for s in SETTINGS if s.live):  # every row's In use and Check, as the reference has them
        row = [c.value for c in settings[int(_typed_setting_cell(wb, spec.key)[1:])]]
        typed = row[1].date() if isinstance(row[1], dt.datetime) else row[1]
        built = row[6].date() if isinstance(row[6], dt.datetime) else row[6]
        used, flagged = settings_oracle(spec, typed, built)
        in_use = row[2].date() if isinstance(row[2], dt.datetime) else row[2]
        assert (_norm(used), flagged) == (_norm(in_use), row[3] not in (None, "")), spec.key
    assert len(pasted) == settings["B3"].value
    guide = {ws_row[0]: ws_row[1] for ws_row in wb["Guide"].iter_rows(max_row=30, values_only=True)}
    assert ("A typed setting is not valid: its as-built value is in use instead (see the key figure below and the "
            "Check column on Settings).") == guide["Settings"]
    assert len(pasted) == guide["Typed settings not valid (as-built value in use)"]
    # Every figure elsewhere is the as-built workbook's: the pasted values cost nothing but their flags.
    before, after = sheet_rows(hands["as_built"]), sheet_rows(path)
    assert {n: before[n] for n in before if n not in ("Settings", "Guide")} == \
           {n: after[n] for n in after if n not in ("Settings", "Guide")}
    # changes re-plans with the as-built values and says which typed values it could not use.
    result = export_changes(path, work / f"changes_{action}.csv")
    said = {p.column: p.message for p in result.problems if p.file == "Settings"}
    assert {key: f"the workbook's formulas use the as-built value {FLAGS[key][1]}" for key in pasted} == {
        key: message.split("; ")[-1] for key, message in said.items()}
    assert _actions_sheet(hands["as_built"]) == _actions_sheet(path)
    assert Counter() == Counter(_change(r) for r in result.rows) - _actions_sheet(path)
    # Next week nothing typed is lost without a word: each pasted value is listed as not carried.
    week2 = build(DEMO, work / f"week2_{action}.xlsx", built_on=BUILT_ON, previous=path)
    listed = {r.key: r.why for r in week2.carry.unmatched if r.sheet == "Settings"}
    typed = {k: repr(v) if isinstance(v, str) else f"{v:g}" for k, v in pasted.items()}  # as a message quotes it
    assert {key: f"{typed[key]} typed for {SPEC_BY_KEY[key].label} is {FLAGS[key][0]}; the as-built value "
                 "was kept" for key in pasted} == listed
