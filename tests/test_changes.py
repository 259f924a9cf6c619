"""Exporting the Actions sheet's changes: escaped CSV or text-safe xlsx, checks, recalculation, CLI."""
from __future__ import annotations

from pathlib import Path

import openpyxl
import pytest
import xlsxwriter

from sheetbuilder.weekly.changes import COLUMNS, HEADERS, NoActionsSheet, NotAWorkbook, WorkbookNotFound, export_changes
from sheetbuilder.cli import main
from sheetbuilder.workbook.csv_safe import read_csv_rows
from sheetbuilder.errors import OutputExists

HOSTILE = ['=HYPERLINK("http://x","y")', "+1+2", "-2+3", "@SUM(A1)", "\tleading tab"]
CAMPAIGN, GROUP = "C1 - Manual", "G1"
# (kind, campaign, ad group, term, match type, current, new, reason, product ID, money at stake);
# new may be ("=formula", cached value)
GOOD = [
    ("bid", CAMPAIGN, GROUP, HOSTILE[0], "exact", 0.5, ("=ROUND(0.5*1.1,2)", 0.55), "raise to value bid", "P1",
     ("=0.1+0.2", 0.30000000000000004)),
    ("add keyword", CAMPAIGN, GROUP, HOSTILE[1], "exact", None, 0.4, "promote", "P1", 12.5),
    ("add product target", CAMPAIGN, GROUP, HOSTILE[2], "product", None, 0.3, HOSTILE[3], "P2", 3),
    ("add negative", CAMPAIGN, GROUP, HOSTILE[3], "negative exact", None, None, "block", "", 7.456),
    ("budget", CAMPAIGN, "", "", "", 20, 25, HOSTILE[4], "P1, P2", 5),
]
MONEY_AT = (5, 6, 9)  # current, new, money at stake: written with two decimals (cents)
BAD = [
    ("bid", CAMPAIGN, GROUP, "cheap kw", "exact", 0.5, 0.05, "below floor"),  # floor is 0.10
    ("add keyword", "", "", "no home", "exact", None, 0.4, "promote"),  # no destination
    ("add keyword", "Nowhere", "G9", "lost", "exact", None, 0.4, "promote"),  # unknown campaign
    ("budget", CAMPAIGN, "", "", "", 20, -3, "negative"),
]
FIRST = 5


def make_actions(path: Path, rows=GOOD + BAD, blank_rows: int = 3) -> Path:
    """An Actions-shaped workbook with cached formula values, plus Settings names and in_ sheets."""
    book = xlsxwriter.Workbook(str(path), {"strings_to_formulas": False, "strings_to_urls": False})
    ws = book.add_worksheet("Actions")
    ws.write_string(0, 0, "Actions")
    ws.write_formula(1, 0, f'="{len(rows)} changes"', None, f"{len(rows)} changes")
    for c, h in enumerate(HEADERS):
        ws.write_string(3, c, h)
    for r, row in enumerate(rows, start=FIRST - 1):
        for c, v in enumerate(row):
            if isinstance(v, tuple):
                ws.write_formula(r, c, v[0], None, v[1])
            elif isinstance(v, str):
                ws.write_string(r, c, v)
            elif v is not None:
                ws.write_number(r, c, v)
    for r in range(FIRST - 1 + len(rows), FIRST - 1 + len(rows) + blank_rows):
        ws.write_formula(r, 0, '=""', None, "")  # an empty list row: blank Kind
    settings = book.add_worksheet("Settings")
    settings.write_number(0, 1, 0.10)
    settings.write_number(1, 1, 5.0)
    book.define_name("bid_floor", "=Settings!$B$1")
    book.define_name("bid_ceiling", "=Settings!$B$2")
    camp = book.add_worksheet("in_campaigns")
    camp.write_row(0, 0, ["campaign", "state"])
    camp.write_row(1, 0, [CAMPAIGN, "enabled"])
    ads = book.add_worksheet("in_ad_products")
    ads.write_row(0, 0, ["campaign", "ad_group", "product_id"])
    ads.write_row(1, 0, ["Auto only", "G2", "P1"])
    book.close()
    return path


def expected_rows():
    out = []
    for row in GOOD:
        values = [v[1] if isinstance(v, tuple) else v for v in row]
        out.append([f"{v:.2f}" if i in MONEY_AT and v is not None else v for i, v in enumerate(values)])
    return out


def _as_text(v):
    if v is None:
        return ""
    return str(v)


def test_csv_holds_exactly_the_valid_rows_escaped_and_reads_back(tmp_path):
    book = make_actions(tmp_path / "book.xlsx")
    out = tmp_path / "changes.csv"
    result = export_changes(book, out)
    assert result.written == len(GOOD)
    rows = read_csv_rows(out)
    assert rows[0] == list(COLUMNS)
    assert rows[1:] == [[_as_text(v) for v in r] for r in expected_rows()]
    raw = out.read_text(encoding="utf-8-sig")
    for text in HOSTILE:
        quoted = text.replace('"', '""')
        assert f'"\'{quoted}"' in raw  # escaped with a leading quote inside a quoted cell
    assert '"=HYPERLINK' not in raw


def test_inconsistent_changes_are_reported_with_their_row_and_not_written(tmp_path):
    book = make_actions(tmp_path / "book.xlsx")
    result = export_changes(book, tmp_path / "changes.csv")
    bad_rows = [FIRST + len(GOOD) + i for i in range(len(BAD))]
    assert result.refused == bad_rows
    by_row = {p.row: p for p in result.problems}
    assert "below the bid floor" in by_row[bad_rows[0]].message
    assert "no destination" in by_row[bad_rows[1]].message
    assert "not in the exports" in by_row[bad_rows[2]].message
    assert "positive number" in by_row[bad_rows[3]].message
    written = [r[3] for r in read_csv_rows(tmp_path / "changes.csv")[1:]]
    assert not {"cheap kw", "no home", "lost"} & set(written)


@pytest.mark.slow  # moved out of the fast lane, which must stay under two minutes
def test_a_built_workbook_without_saved_values_gives_the_same_list_computed_from_its_inputs(tmp_path):
    """No formula engine: the list is computed from the in_ sheets, Settings and Decisions the file holds."""
    from conftest import BUILT_ON, DEMO
    from sheetbuilder.pipeline import build
    built = build(DEMO, tmp_path / "demo.xlsx", built_on=BUILT_ON)
    resaved = tmp_path / "resaved.xlsx"
    openpyxl.load_workbook(built.output).save(resaved)  # openpyxl stores no formula values
    assert openpyxl.load_workbook(resaved, data_only=True)["Actions"]["A5"].value is None
    result = export_changes(resaved, tmp_path / "changes.csv")
    assert (True, True) == (result.computed, result.unchecked)
    original = export_changes(built.output, tmp_path / "c2.csv")
    assert original.rows == result.rows
    assert [] == original.overwritten and original.unchecked is False
    expected = [list(r) for r in built.plan.tables["Actions"].frame[["kind", "campaign", "ad_group", "target",
                                                                      "match_type", "current", "new", "reason"]]
                .itertuples(index=False, name=None) if r[0]]
    assert len(expected) - len(original.refused) == original.written


def test_an_actions_sheet_alone_without_saved_values_refuses_the_rows_it_cannot_read(tmp_path):
    book = make_actions(tmp_path / "book.xlsx")
    resaved = tmp_path / "resaved.xlsx"
    openpyxl.load_workbook(book).save(resaved)  # the formula in G5 (a bid's New) has no saved value now
    result = export_changes(resaved, tmp_path / "changes.csv")
    assert FIRST in result.refused
    assert "positive number in New, got blank" in next(p.message for p in result.problems if p.row == FIRST)


def test_xlsx_format_writes_text_as_text(tmp_path):
    book = make_actions(tmp_path / "book.xlsx")
    out = tmp_path / "changes.xlsx"
    result = export_changes(book, out, fmt="xlsx")
    assert result.written == len(GOOD)
    ws = openpyxl.load_workbook(out)["changes"]
    rows = [[c.value for c in row] for row in ws.iter_rows()]
    assert rows[0] == list(COLUMNS)
    assert [r[3] for r in rows[1:]] == [r[3] or None for r in GOOD]
    for row in ws.iter_rows(min_row=2):
        for cell in row:
            assert cell.data_type != "f"
    assert ws["G2"].value == pytest.approx(0.55)


def test_refuses_to_overwrite_without_force(tmp_path):
    book = make_actions(tmp_path / "book.xlsx")
    out = tmp_path / "changes.csv"
    out.write_text("keep me")
    with pytest.raises(OutputExists):
        export_changes(book, out)
    assert out.read_text() == "keep me"
    export_changes(book, out, force=True)
    assert read_csv_rows(out)[0] == list(COLUMNS)


def test_refusals_for_missing_file_and_missing_actions_sheet(tmp_path):
    with pytest.raises(WorkbookNotFound):
        export_changes(tmp_path / "nope.xlsx", tmp_path / "c.csv")
    other = tmp_path / "other.xlsx"
    wb = openpyxl.Workbook()
    wb.active.title = "Profit"
    wb.save(other)
    with pytest.raises(NoActionsSheet):
        export_changes(other, tmp_path / "c.csv")
    junk = tmp_path / "junk.xlsx"
    junk.write_text("no")
    with pytest.raises(NotAWorkbook):
        export_changes(junk, tmp_path / "c.csv")
    assert not (tmp_path / "c.csv").exists()


def test_cli_exit_codes(tmp_path, capsys):
    good = make_actions(tmp_path / "good.xlsx", rows=GOOD)
    mixed = make_actions(tmp_path / "mixed.xlsx")
    assert main(["changes", str(good), "-o", str(tmp_path / "a.csv")]) == 0
    assert main(["changes", str(mixed), "-o", str(tmp_path / "b.csv")]) == 3
    err = capsys.readouterr().err
    assert "4 change(s) refused" in err and "below the bid floor" in err
    assert main(["changes", str(good), "-o", str(tmp_path / "a.csv")]) == 1  # exists, no --force
    assert main(["changes", str(good), "-o", str(tmp_path / "a.csv"), "--force"]) == 0
    assert main(["changes", str(good), "-o", str(tmp_path / "c.xlsx"), "--format", "xlsx"]) == 0
    assert main(["changes", str(tmp_path / "missing.xlsx"), "-o", str(tmp_path / "d.csv")]) == 1


@pytest.mark.slow  # moved out of the fast lane, which must stay under two minutes
def test_cli_build_passes_previous_through(tmp_path):
    from conftest import DEMO
    old = tmp_path / "old.xlsx"
    assert main(["build", str(DEMO), "-o", str(old), "-q"]) == 0
    assert main(["build", str(DEMO), "-o", str(tmp_path / "new.xlsx"), "--previous", str(old), "-q"]) == 0


def test_the_actions_sheet_has_the_layout_changes_reads():
    from sheetbuilder.sheets.actions import HEADERS, defs
    assert list(HEADERS) == [d.header for d in defs(["0"] * 5) if not d.hidden]


@pytest.mark.libreoffice  # saved by LibreOffice, as a user's program would
def test_a_final_bid_typed_over_by_hand_is_reported_and_the_formula_value_exported(tmp_path):
    """Typed over the Final bid formula instead of in Decision: reported with its row; the list keeps the formula's value."""
    from conftest import BUILT_ON, DEMO
    from sheetbuilder.pipeline import build
    from sheetbuilder.sheets.bids import EDITABLE_COLUMNS as BIDS
    from sheetbuilder.weekly.saved import named_area
    built = build(DEMO, tmp_path / "demo.xlsx", built_on=BUILT_ON)
    original = export_changes(built.output, tmp_path / "c1.csv")
    wb = openpyxl.load_workbook(built.output)
    area = named_area(wb, BIDS.name_of(BIDS.result))
    wb[area.sheet].cell(area.first_row + 1, area.first_col + 1).value = 9.99  # a formula replaced by a number
    edited = tmp_path / "edited.xlsx"
    wb.save(edited)
    from tools.recalc import libreoffice_convert
    from conftest import require_libreoffice
    require_libreoffice()
    saved = libreoffice_convert([edited], tmp_path / "saved")[0]
    result = export_changes(saved, tmp_path / "c2.csv")
    assert [(BIDS.sheet, area.first_row + 1, "Final bid")] == [(p.file, p.row, p.column) for p in result.overwritten
                                                                if p.file == BIDS.sheet]
    assert original.rows == result.rows


def test_changes_beyond_a_full_list_are_said_on_the_sheet_and_by_changes_never_dropped_in_silence(tmp_path):
    # Harvest holds what qualified at build plus its room, within list_cap (settings.toml); capped at 3, the
    # terms to promote beyond it are in no list, so `changes`, which plans the same lists, reports them.
    # (The Actions sheet's bid page leaves nothing out: tests/test_actions_page.py.)
    import shutil

    from conftest import DEMO
    from oracle_terms import terms_oracle
    from oracle import profit_oracle
    from sheetbuilder.pipeline import build, load

    folder = tmp_path / "capped"
    shutil.copytree(DEMO, folder)
    with open(folder / "settings.toml", "a", encoding="utf-8") as fh:
        fh.write("list_cap = 3\n")
    inputs, settings, _ = load(folder)
    promote = len(terms_oracle(inputs.tables, settings, profit_oracle(inputs.tables, settings)[0])[1])
    assert promote > 3
    built = build(folder, tmp_path / "capped.xlsx")
    result = export_changes(built.output, tmp_path / "changes.csv")
    beyond = [(p.file, p.message.split(" (")[0]) for p in result.problems if p.row is None]
    assert ("Harvest", f"{promote - 3} of the {promote} terms to promote are beyond the Harvest list's 3 rows") in beyond
    assert [] == [p for p in beyond if p[0] == "Actions"]
    assert 0 != main(["changes", str(built.output), "-o", str(tmp_path / "again.csv")])
