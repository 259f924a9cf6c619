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
import zipfile
from collections import Counter
from pathlib import Path

import openpyxl
import pytest

from conftest import BUILT_ON, DEMO, require_libreoffice
from sheetbuilder.pipeline import build
from oracle_settings import settings_oracle
from sheetbuilder.reading.settings import SETTINGS, SPEC_BY_KEY
from sheetbuilder.values import ERROR_VALUES
from sheetbuilder.values import is_number, same_value
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
    # The checked rows a sort moves (where a product or term is now), computed once per row for the lookups.
    "Profit": {"Catalog row now"},
    "Groups": {"Profit row now"},
    "Keys": {"Negative from term row now", "Blocked term row now"},
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
        **{action: _typed_steps(wb) for action in SAVED_AS},
        "notes_and_own_columns": _notes_steps(wb),
        **{f"{PROFIT_BY}{by}": [_sort_step(profit, "Product ID", by, ascending=False)] for by in _headers(profit)},
        **_tab_actions(wb),
        **{label: [{"op": "set", "sheet": "Settings", "cell": _typed_setting_cell(wb, key), "value": value}
                   for key, value in pasted.items()] for label, pasted in PASTES.items()},
        "product_row_added_below": _row_below_steps(catalog),
        "bid_page_of_three": _beyond_page_steps(demo),
    }


# Values pasted into live settings (a paste skips data validation): text into a percentage, and one of each
# kind the In use cell checks (a count, money, a choice, a date, a percentage typed as a whole number).
PASTES = {"text_in_a_setting": {"default_target_acos": "thirty percent"},
          "bad_paste_of_each_kind": {"min_clicks": "ten", "bid_floor": "0,10", "cap_target_at_break_even": "maybe",
                                     "period_end": "last Sunday", "max_bid_cut": 30}}
# {setting: (the words its Check starts with, the as-built value it names)}: demo_inputs/settings.toml and
# the declared defaults (README, "Settings").
# The as-built values are the demo's settings: its maximum bid cut is the default, 50% (README settings table).
FLAGS = {"default_target_acos": ("not a number", "30%"), "min_clicks": ("not a number", "10"),
         "bid_floor": ("not a number", "0.10"), "cap_target_at_break_even": ("not one of yes, no", "yes"),
         "period_end": ("not a date", "2026-11-29"), "max_bid_cut": ("outside 0% to 95%", "50%")}

# The two settings of the profit-seeking aim (issue 23): a number outside 0.05 to 3 and a word not yes or no.
PASTES["aim_settings_pasted"] = {"click_elasticity": 7, "seek_profit": "maybe"}
FLAGS.update({"click_elasticity": ("outside 0.05 to 3", "0.6"), "seek_profit": ("not one of yes, no", "yes")})


def _typed_setting_cell(wb, key: str) -> str:
    """The typed Value cell of a live setting on Settings (its defined name), as A1 text."""
    return wb.defined_names[key + "_typed"].attr_text.split("!")[1].replace("$", "")


PROFIT_BY = "profit_by_column:"  # one action per column of Profit's table: Data > Sort by it, descending


def _headers(ws) -> list[str]:
    """Every header of the table whose first header is Product ID (hidden helper columns included)."""
    return [h for h in _table(ws, "Product ID")[2] if h]


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
    saved = {k: out / f"{k}{SAVED_AS.get(k, '.xlsx')}" for k in actions}
    sources = {k: make(work) for k, make in OWN_SOURCE.items()}  # actions done on a workbook of their own
    jobs = [{"label": k, "src": str(sources.get(k, demo_build.output)), "dst": str(saved[k]), "steps": steps}
            for k, steps in actions.items()]
    results = run_driver(jobs, work)
    refused = {k: results.pop(k)["error"] for k in REFUSED}
    assert {k: {"error": None} for k in actions if k not in REFUSED} == results
    return {**{k: saved[k] for k in actions if k not in REFUSED}, "refused": refused}


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


@pytest.mark.libreoffice
@pytest.mark.slow
def test_sorting_profit_by_any_column_keeps_every_figure_on_every_sheet(hands):
    """Issue 21: the demo workbook after Data > Sort of Profit by any column, in LibreOffice, shows the same
    figures on every other sheet as before the sort (and Profit the same rows, in another order)."""
    before = sheet_rows(hands["as_built"])
    by_column = sorted(k for k in hands if k.startswith(PROFIT_BY))
    assert len(by_column) >= 30  # every column of the table, not a few
    moved, differing = 0, {}
    for action in by_column:
        after = sheet_rows(hands[action])
        moved += _column(hands["as_built"], "Profit", "Product ID", "Product ID") != _column(
            hands[action], "Profit", "Product ID", "Product ID")
        differing.update({(action, name): sorted((before[name] - after[name]).items())[:2]
                          for name in before if before[name] != after.get(name)})
    assert {} == differing
    assert moved >= len(by_column) // 2  # most sorts moved rows, so the comparison above proves something


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


# Saving as .ods: a person types a Bids, Terms and Budget Decision, a unit cost on in_catalog, a target on Profit
# and two settings, then saves in OpenDocument (File > Save As, "calc8"); the same typing saved as .xlsx is the
# reference, for the format must change nothing that is read back. Two Terms Decisions are text a Decision
# cannot be (leading, doubled and trailing spaces, a line break; a leading =): they are not carried, and come
# back exactly as typed. LibreOffice 7.4 drops a tab typed in a cell when it saves .ods (it keeps it in .xlsx),
# so the text holds none; tests/test_ods.py reads text:tab as a tab.
SAVED_AS = {"saving_as_ods": ".ods", "typed_then_saved_as_xlsx": ".xlsx"}
ODD_TEXT = ("  two  spaces and\na line ", "=SUM(1,2)")
TYPED_BY_HAND = (  # (defined name of the column or setting, body row offset, value typed)
    ("sb_bids_decision", 0, 0.55), ("sb_bids_decision", 1, "keep"), ("sb_terms_decision", 0, "block"),
    ("sb_terms_decision", 1, ODD_TEXT[0]), ("sb_terms_decision", 2, ODD_TEXT[1]), ("sb_budget_decision", 0, "keep"),
    ("sb_catalog_unit_cost", 1, 30.5), ("sb_profit_target_override", 0, 0.22), ("default_target_acos_typed", 0, 0.27),
    ("thin_margin_typed", 0, 0.1))  # the typed Value cells (the names without _typed: In use)


def _typed_steps(wb) -> list[dict]:
    """The driver steps typing TYPED_BY_HAND into the cells the defined names point at."""
    steps = []
    for name, offset, value in TYPED_BY_HAND:
        sheet, ref = next(iter(wb.defined_names[name].destinations))
        column, row = openpyxl.utils.cell.coordinate_from_string(ref.split(":")[0].replace("$", ""))
        steps.append({"op": "set", "sheet": sheet, "cell": f"{column}{row + offset}", "value": value})
    return steps


def _differences(sheet: str, expected: list[list], got: list[list]) -> list[tuple]:
    """(sheet, row, column, expected, got) of every cell whose values differ (numbers within values.same_value)."""
    out = []
    for r in range(max(len(expected), len(got))):
        want, have = (expected[r] if r < len(expected) else []), (got[r] if r < len(got) else [])
        for c in range(max(len(want), len(have))):
            x, y = (want[c] if c < len(want) else None), (have[c] if c < len(have) else None)
            if not (same_value(x, y) if is_number(x) and is_number(y) else (x == y and type(x) is type(y))):
                out.append((sheet, r + 1, c + 1, x, y))
    return out


def _carried(path: Path, out: Path):
    """The carry of a build of the demo's exports with path as --previous."""
    from conftest import BUILT_ON, DEMO
    from sheetbuilder.pipeline import build
    return build(DEMO, out, built_on=BUILT_ON, previous=path).carry


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


@pytest.mark.libreoffice
@pytest.mark.slow
def test_saving_as_ods_keeps_changes_and_carries_every_typed_value(hands, work):
    from sheetbuilder.weekly.saved import SavedBook
    ods, xlsx = hands["saving_as_ods"], hands["typed_then_saved_as_xlsx"]
    with zipfile.ZipFile(ods) as saved:  # saved as OpenDocument (OpenDocument 1.2 Part 3, 3.3), not as .xlsx
        assert (b"application/vnd.oasis.opendocument.spreadsheet", False) == (saved.read("mimetype"),
                                                                             "xl/workbook.xml" in saved.namelist())
    # Every cell of every sheet reads the same from both files (values, text as typed, dates, errors; a number
    # to the 15 significant digits the .xlsx keeps of a recalculated value, where the .ods keeps 17).
    with SavedBook(ods) as a, SavedBook(xlsx) as b:
        assert b.sheetnames == a.sheetnames
        assert [] == [d for sheet in b.sheetnames for d in _differences(sheet, b.rows(sheet), a.rows(sheet))][:5]
        assert ODD_TEXT[0] == a.rows("Terms", frozenset({17}))[5][17]
    # changes: the same list from either file, and that list is what the Actions sheet shows.
    from_ods, from_xlsx = (export_changes(p, work / f"changes_{p.stem}.csv") for p in (ods, xlsx))
    assert ([_change(r) for r in from_xlsx.rows], len(from_xlsx.refused), from_xlsx.overwritten) == \
           ([_change(r) for r in from_ods.rows], len(from_ods.refused), from_ods.overwritten)
    sheet, written = _actions_sheet(xlsx), Counter(_change(r) for r in from_ods.rows)
    assert Counter() == written - sheet
    assert len(from_ods.refused) == sum((sheet - written).values())
    # build --previous: every typed value carried (the odd texts reported, not carried), as from the .xlsx.
    by_ods, by_xlsx = _carried(ods, work / "from_ods.xlsx"), _carried(xlsx, work / "from_xlsx.xlsx")
    def records(carry):
        return sorted(((r.sheet, r.key, r.column, repr(r.value), r.why) for r in carry.carried + carry.unmatched))
    assert records(by_xlsx) == records(by_ods)
    typed = sorted(repr(v) for _, _, v in TYPED_BY_HAND if v not in ODD_TEXT)
    assert typed == sorted(repr(r.value) for r in by_ods.carried)
    assert sorted(ODD_TEXT) == sorted(r.value for r in by_ods.unmatched)
@pytest.mark.libreoffice
@pytest.mark.slow
def test_our_workbook_saved_as_ods_by_libreoffice_is_recognised_among_exports(hands, demo_build):
    from sheetbuilder.reading.ours import built_by_us
    built = built_by_us(demo_build.output)  # the .xlsx as built: its dcterms:created, kept by LibreOffice's save
    assert (10, built) == (len(built), built_by_us(hands["saving_as_ods"]))


# Notes typed on four sheets and a column of one's own right of Bids' Notes, then Bids sorted with it: each sheet's
# first header and key headers, and the texts typed (formula-like text and spaces must come back as typed).
NOTED = {"Profit": ("Product ID", ("Product ID",)), "Bids": ("Campaign", ("Campaign", "Ad group", "Target", "Match type")),
         "Terms": ("Campaign", ("Campaign", "Ad group", "Search term")), "Budget": ("Product ID", ("Product ID",))}
NOTE_TEXTS = ("=ask the supplier", "  restock before May  ", "+2 cartons", "plain words")
OWN_HEADER, OWN_VALUES = "Checked by", ("=Kim", "Lee", "  Ann")


def _noted_rows(ws, first: str, keys: tuple[str, ...]) -> tuple[int, list[str], dict[int, tuple]]:
    """(header row, headers, {row: key}) of a table (1-based rows)."""
    top, last, headers = _table(ws, first)
    rows = {r: tuple(ws.cell(r, headers.index(k) + 1).value for k in keys) for r in range(top + 1, last + 1)}
    return top, headers, rows


def _notes_steps(wb) -> list[dict]:
    """Typing NOTE_TEXTS in rows 2, 4, ... of each Notes column, OWN_HEADER and OWN_VALUES right of Bids' Notes,
    then sorting Bids by Target with that column inside the sorted range."""
    steps = []
    for sheet, (first, keys) in NOTED.items():
        ws = wb[sheet]
        top, headers, rows = _noted_rows(ws, first, keys)
        col = headers.index("Notes") + 1
        for i, text in enumerate(NOTE_TEXTS):
            steps.append({"op": "set", "sheet": sheet, "cell": ws.cell(top + 2 + 2 * i, col).coordinate, "value": text})
        if sheet == "Bids":
            steps.append({"op": "set", "sheet": sheet, "cell": ws.cell(top, col + 1).coordinate, "value": OWN_HEADER})
            for i, text in enumerate(OWN_VALUES):
                steps.append({"op": "set", "sheet": sheet, "cell": ws.cell(top + 1 + 3 * i, col + 1).coordinate,
                              "value": text})
            last = max(rows)
            steps.append({"op": "sort", "sheet": sheet, "range": [0, top, col, last - 1], "by": headers.index("Target"),
                          "ascending": False})
    return steps


def _typed_by_key(ws, first: str, keys: tuple[str, ...]) -> dict[tuple, tuple]:
    """{key: (note, own column)} of every row holding either (own column: the one right of Notes)."""
    top, headers, rows = _noted_rows(ws, first, keys)
    col = headers.index("Notes") + 1
    out = {}
    for r, key in rows.items():
        cells = (ws.cell(r, col).value, ws.cell(r, col + 1).value)
        if cells != (None, None):
            out[key] = cells
    return out


@pytest.mark.libreoffice
@pytest.mark.slow
def test_notes_and_own_columns_are_carried_to_next_week_by_key(hands, demo_build, work):
    demo = openpyxl.load_workbook(demo_build.output)
    expected = {}  # what was typed, by the key of the row it was typed on (read before the sort)
    for sheet, (first, keys) in NOTED.items():
        top, _, rows = _noted_rows(demo[sheet], first, keys)
        typed = {rows[top + 2 + 2 * i]: (text, None) for i, text in enumerate(NOTE_TEXTS)}
        if sheet == "Bids":
            for i, text in enumerate(OWN_VALUES):
                key = rows[top + 1 + 3 * i]
                typed[key] = (typed.get(key, (None,))[0], text)
        expected[sheet] = typed
    saved = openpyxl.load_workbook(hands["notes_and_own_columns"], data_only=True)
    # LibreOffice sorted Bids with the own column (else the check below proves nothing about keys) ...
    assert _column(hands["notes_and_own_columns"], "Bids", "Campaign", "Target") != _column(
        hands["as_built"], "Bids", "Campaign", "Target")
    assert {s: expected[s] for s in NOTED} == {s: _typed_by_key(saved[s], *NOTED[s]) for s in NOTED}
    # ... and next week's workbook holds each note and own value beside the same key, the header in place.
    week2 = build(DEMO, work / "notes_week2.xlsx",
                  built_on=BUILT_ON, previous=hands["notes_and_own_columns"])
    assert [] == week2.carry.unmatched
    assert {} == week2.carry.decisions
    wb = openpyxl.load_workbook(week2.output)
    assert {s: expected[s] for s in NOTED} == {s: _typed_by_key(wb[s], *NOTED[s]) for s in NOTED}
    _, _, headers = _table(wb["Bids"], "Campaign")
    assert OWN_HEADER == headers[headers.index("Notes") + 1]


# ---- renamed and copied tabs, a number typed over a formula (issue 21) -------------------------------------------

TAB_COST, TAB_DECISION, TAB_TARGET = 7.5, 0.77, 0.05
RENAMED = {"in_catalog": "Catalog", "Bids": "My bids"}


def _cell_of(ws, first: str, header: str, body_row: int) -> str:
    """The address of column header in the body_row-th body row (0-based) of the table starting with first."""
    top, _, headers = _table(ws, first)
    return ws.cell(top + 1 + body_row, headers.index(header) + 1).coordinate


def _most_bid_product_row(wb) -> int:
    """The Profit body row (0-based) of the product with the most keywords on Bids (its bids move with its target)."""
    products = _column_of(wb["Bids"], "Campaign", "Product ID")
    most = Counter(p for p in products if p).most_common(1)[0][0]
    return _column_of(wb["Profit"], "Product ID", "Product ID").index(most)


def _column_of(ws, first: str, header: str) -> list:
    top, last, headers = _table(ws, first)
    return [ws.cell(r, headers.index(header) + 1).value for r in range(top + 1, last + 1)]


def _tab_actions(wb) -> dict[str, list[dict]]:
    """Rename in_catalog and Bids then type a cost and a Decision; copy Bids and type a Decision on the copy;
    type a number over Profit's Target ACoS formula."""
    bids, catalog, profit = wb["Bids"], wb["in_catalog"], wb["Profit"]
    return {
        "renamed_tabs": [*({"op": "rename_sheet", "sheet": old, "to": new} for old, new in RENAMED.items()),
                         {"op": "set", "sheet": RENAMED["in_catalog"], "cell": _cell_of(catalog, "product_id", "unit_cost", 1),
                          "value": TAB_COST},
                         {"op": "set", "sheet": RENAMED["Bids"], "cell": _cell_of(bids, "Campaign", "Decision", 0),
                          "value": TAB_DECISION}],
        "copied_bids": [{"op": "copy_sheet", "sheet": "Bids", "to": "Bids (2)", "position": wb.sheetnames.index("Bids") + 1},
                        {"op": "set", "sheet": "Bids (2)", "cell": _cell_of(bids, "Campaign", "Decision", 0),
                         "value": TAB_DECISION}],
        "number_over_target_acos": [{"op": "set", "sheet": "Profit", "value": TAB_TARGET,
                                     "cell": _cell_of(profit, "Product ID", "Target ACoS", _most_bid_product_row(wb))}],
    }


def _changes_equal_the_actions_sheet(hands, work, action: str):
    """export_changes of the action's saved copy, checked to hold what its Actions sheet holds."""
    result = export_changes(hands[action], work / f"changes_{action}.csv")
    sheet, written = _actions_sheet(hands[action]), Counter(_change(r) for r in result.rows)
    assert Counter() == written - sheet
    assert len(result.refused) == sum((sheet - written).values())  # the demo's adds without a destination
    assert {"add keyword", "add product target"} == {change[0] for change in sheet - written}
    return result


def _next_week(hands, work, action: str):
    from conftest import BUILT_ON, DEMO
    from sheetbuilder.pipeline import build
    return build(DEMO, work / f"next_{action}.xlsx", built_on=BUILT_ON, previous=hands[action])


def _first_bid(path: Path) -> tuple:
    ws = openpyxl.load_workbook(path, read_only=False)["Bids"]
    return tuple(_column_of(ws, "Campaign", h)[0] for h in ("Campaign", "Ad group", "Target", "Match type"))


@pytest.mark.libreoffice
@pytest.mark.slow
def test_renaming_tabs_keeps_changes_and_carrying_working(hands, work):
    names = openpyxl.load_workbook(hands["renamed_tabs"], read_only=True).sheetnames
    assert set(RENAMED.values()) <= set(names) and not set(RENAMED) & set(names)
    result = _changes_equal_the_actions_sheet(hands, work, "renamed_tabs")
    assert [] == result.overwritten
    key = _first_bid(hands["as_built"])
    assert [TAB_DECISION] == [r[6] for r in result.rows if r[0] == "bid" and tuple(r[1:5]) == key]
    product = _column_of(openpyxl.load_workbook(hands["as_built"])["in_catalog"], "product_id", "product_id")[1]
    carry = _next_week(hands, work, "renamed_tabs").carry
    carried = {(r.sheet, r.key, r.column): r.value for r in carry.carried}
    assert TAB_COST == carried[("in_catalog", product, "unit_cost")]
    assert TAB_DECISION == carried[("Bids", " / ".join(key), "Decision")]
    assert [] == carry.unmatched


@pytest.mark.libreoffice
@pytest.mark.slow
def test_decisions_typed_on_a_copied_sheet_are_named_not_lost(hands, work):
    result = _changes_equal_the_actions_sheet(hands, work, "copied_bids")
    named = [p.message for p in result.problems if p.file == "Bids (2)"]
    assert 1 == len(named) and named[0].startswith(
        "Decisions on a copy of Bids ('Bids (2)') were not read; type them on Bids")
    key = " / ".join(_first_bid(hands["as_built"]))
    built = _next_week(hands, work, "copied_bids")
    assert [("Bids (2)", key, TAB_DECISION)] == [(r.sheet, r.key, r.value) for r in built.carry.unmatched]
    assert named == [w.message for w in built.warnings if w.file == "Bids (2)"]
    assert {} == built.carry.decisions  # read from neither place


@pytest.mark.libreoffice
@pytest.mark.slow
def test_a_number_typed_over_a_formula_is_reported_with_where_to_type(hands, work):
    # LibreOffice computes the sheet with the typed target, and so does the exported list ...
    result = _changes_equal_the_actions_sheet(hands, work, "number_over_target_acos")
    assert _actions_sheet(hands["as_built"]) != _actions_sheet(hands["number_over_target_acos"])
    wb = openpyxl.load_workbook(hands["as_built"])
    row = _most_bid_product_row(wb)
    product = _column_of(wb["Profit"], "Product ID", "Product ID")[row]
    top = _table(wb["Profit"], "Product ID")[0]
    assert [("Profit", top + 1 + row, "Target ACoS")] == [(p.file, p.row, p.column) for p in result.overwritten]
    assert "type your target in 'Your target ACoS'" in result.overwritten[0].message
    # ... and next week carries it where it belongs, saying where it was found.
    built = _next_week(hands, work, "number_over_target_acos")
    assert {product: TAB_TARGET} == built.carry.targets
    assert [result.overwritten[0].message] == [w.message for w in built.warnings if w.file == "Profit"]


# ---- a product typed on a row below in_catalog's table (issue 21) ---------------------------------------------------

BELOW = {"product_id": "LF-2001", "product_name": "Added by hand", "price": 30.0, "unit_cost": 12.0,
         "fees_per_unit": 3.0}  # a product no export names yet: its costs typed before it sells


def _row_below_steps(catalog) -> list[dict]:
    """Typing BELOW into the first row under in_catalog's table (left unlocked for rows a user adds)."""
    header = [c.value for c in catalog[1]]
    below = max(r for r in range(1, catalog.max_row + 1) if catalog.cell(r, 1).value not in (None, "")) + 1
    return [{"op": "set", "sheet": "in_catalog", "cell": f"{catalog.cell(1, header.index(k) + 1).column_letter}{below}",
             "value": v} for k, v in BELOW.items()]


@pytest.mark.libreoffice
@pytest.mark.slow
def test_a_product_typed_on_a_row_below_in_catalog_is_kept_next_week(hands, work):
    # LibreOffice lets a person type there (the sheet stays protected; those rows are unlocked) ...
    assert "product_row_added_below" in hands
    _changes_equal_the_actions_sheet(hands, work, "product_row_added_below")
    # ... and next week's build keeps the row, its name and every typed cell, listed on Carried edits.
    built = _next_week(hands, work, "product_row_added_below")
    ws = openpyxl.load_workbook(built.output)["in_catalog"]
    header = [c.value for c in ws[1]]
    kept = [dict(zip(header, r)) for r in ws.iter_rows(min_row=2, values_only=True) if r[0] == BELOW["product_id"]]
    assert [BELOW] == [{k: row[k] for k in BELOW} for row in kept]
    assert {"price", "unit_cost", "fees_per_unit"} == {r.column for r in built.carry.carried
                                                       if r.key == BELOW["product_id"]}


# The Actions page (README, Settings: actions_cap): the demo built with a bid page of 3 rows and no term promoted
# (no add without a destination, which `changes` refuses), a Decision typed in LibreOffice on a Bids row beyond
# the page, saved; `changes` then writes every bid change LibreOffice's own Bids sheet shows.
PAGE_SETTINGS = "actions_cap = 3\nmin_promote_orders = 1000\n"


def _paged_demo(work: Path) -> Path:
    """The demo built with PAGE_SETTINGS appended to its settings.toml."""
    folder = work / "paged_demo"
    shutil.copytree(DEMO, folder)
    with open(folder / "settings.toml", "a", encoding="utf-8") as fh:
        fh.write("\n" + PAGE_SETTINGS)
    return build(folder, work / "paged_demo.xlsx", built_on=BUILT_ON).output


OWN_SOURCE = {"bid_page_of_three": _paged_demo}


def _bids_values(path: Path) -> tuple[list[str], list[tuple]]:
    """Bids' headers and its rows' cached values, in sheet order."""
    ws = openpyxl.load_workbook(path, data_only=True)["Bids"]
    top, last, headers = _table(ws, "Campaign")
    return headers, [tuple(ws.cell(r, c + 1).value for c in range(len(headers))) for r in range(top + 1, last + 1)]


def _beyond_page(demo: Path) -> tuple[str, tuple, float]:
    """(the Decision cell, the row's keys, the bid typed) on the last Bids row whose bid does not change."""
    headers, rows = _bids_values(demo)
    top = _table(openpyxl.load_workbook(demo)["Bids"], "Campaign")[0]
    current, final = headers.index("Current bid"), headers.index("Final bid")
    i = max(i for i, r in enumerate(rows) if r[0] and r[final] == r[current])
    cell = openpyxl.utils.get_column_letter(headers.index("Decision") + 1) + str(top + 1 + i)
    return cell, rows[i][:4], round(rows[i][current] + 0.07, 2)


def _beyond_page_steps(demo: Path) -> list[dict]:
    """A bid typed in Decision on the last Bids row whose bid does not change (beyond a page of 3 bid changes)."""
    cell, _, value = _beyond_page(demo)
    return [{"op": "set", "sheet": "Bids", "cell": cell, "value": value}]


@pytest.mark.libreoffice
@pytest.mark.slow
def test_bid_changes_beyond_the_actions_page_are_all_written_after_libreoffice_saves(hands, work, demo_build):
    from sheetbuilder.cli import main
    from sheetbuilder.workbook.csv_safe import read_csv_rows
    saved = hands["bid_page_of_three"]
    headers, rows = _bids_values(saved)  # as LibreOffice recalculated them, the typed Decision included
    at = [headers.index(h) for h in ("Campaign", "Ad group", "Target", "Match type", "Final bid")]
    changed = [tuple(r[i] for i in at[:4]) + (round(r[at[4]], 2),) for r in rows
               if r[0] and r[at[4]] != r[headers.index("Current bid")]]
    _, key, typed = _beyond_page(demo_build.output)
    assert key + (typed,) in changed  # LibreOffice's Bids took the typed bid
    assert changed.index(key + (typed,)) >= 3  # beyond the page
    ws = openpyxl.load_workbook(saved, data_only=True)["Actions"]
    shown = [r for r in ws.iter_rows(min_row=5, values_only=True) if r[0]]
    assert 3 == sum(1 for r in shown if r[0] == "bid")
    assert (f"Showing the first 3 of {len(changed)} bid changes; every one is on Bids (its Final bid) and "
            "sheetbuilder changes writes them all.") == ws["A3"].value
    out = work / "changes_bid_page.csv"
    assert 0 == main(["changes", str(saved), "-o", str(out)])
    written = [(r[1], r[2], r[3], r[4], round(float(r[6]), 2)) for r in read_csv_rows(out)[1:] if r[0] == "bid"]
    assert changed == written
