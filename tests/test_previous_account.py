"""Last week's workbook must be this account's: another seller's is refused naming both, a partial overlap is stated.

The rule is ours (README, "Last week's workbook"): under half of the products shared, or (both
having campaigns) under half of the campaigns, counted against the smaller set.
"""
from __future__ import annotations

from minimal import write_account

import shutil

import openpyxl
import pytest

from sheetbuilder.sheets.settings_sheet import HEADERS
from sheetbuilder.cli import main
from sheetbuilder.errors import AnotherAccount
from sheetbuilder.pipeline import build


@pytest.fixture(scope="module")
def small_week1(tmp_path_factory):
    """A minimal account's workbook (products P1, P2; campaign C1), built from a folder named 'shop_a'."""
    root = tmp_path_factory.mktemp("prev")
    out = root / "week1.xlsx"
    build(write_account(root / "shop_a"), out)
    return out


def test_the_settings_sheet_records_the_account_it_was_built_for(small_week1):
    book = openpyxl.load_workbook(small_week1)
    destination = next(iter(book.defined_names["sb_account"].destinations))
    row = book[destination[0]][destination[1].replace("$", "")].row
    cells = [c.value for c in book["Settings"][row]]
    assert "shop_a" == cells[1]
    assert "2 products, 1 campaigns, fingerprint " in cells[HEADERS.index("What it does")]


def test_another_accounts_workbook_as_previous_is_refused_naming_both(demo_build, tmp_path):
    other = write_account(tmp_path / "shop_b")
    with pytest.raises(AnotherAccount) as refused:
        build(other, tmp_path / "week2.xlsx", previous=demo_build.output)
    text = str(refused.value)
    assert "'demo_inputs' (" in text and "these exports are 'shop_b' (2 products, 1 campaigns" in text
    assert "--previous-anyway" in text
    assert not (tmp_path / "week2.xlsx").exists()


def test_the_command_exits_1_on_another_accounts_workbook(demo_build, tmp_path, capsys):
    other = write_account(tmp_path / "shop_b")
    assert 1 == main(["build", str(other), "-o", str(tmp_path / "w.xlsx"), "--previous", str(demo_build.output)])
    assert "built for another account" in capsys.readouterr().err


def test_previous_anyway_carries_what_matches_and_reads_no_follow_up(demo_build, tmp_path):
    other = write_account(tmp_path / "shop_b")
    result = build(other, tmp_path / "week2.xlsx", previous=demo_build.output, previous_anyway=True)
    notes = [p.message for p in result.warnings if p.file == demo_build.output.name]
    assert 1 == len(notes) and "--previous-anyway" in notes[0]
    assert "Follow-up" not in openpyxl.load_workbook(result.output, read_only=True).sheetnames


def test_a_partial_overlap_is_stated_with_counts(small_week1, tmp_path):
    catalog = "product_id,product_name,price,unit_cost,fees_per_unit\nP1,Widget,20.00,8.00,2.00\n" \
              "P2,Gadget,10.00,4.00,1.00\nP3,Gizmo,15.00,5.00,1.00\n"
    folder = write_account(tmp_path / "shop_a", {"catalog.csv": catalog})
    result = build(folder, tmp_path / "week2.xlsx", previous=small_week1)
    notes = [p.message for p in result.warnings if p.file == "week1.xlsx" and "shares" in p.message]
    assert ["last week's workbook shares 2 of its 2 products (3 this week) and 1 of its 1 campaigns (1 this week): "
            "products or campaigns came or went; edits on rows that are gone are listed on Unmatched edits"] == notes


def test_the_same_account_next_week_says_nothing_about_accounts(small_week1, tmp_path):
    result = build(write_account(tmp_path / "shop_a"), tmp_path / "week2.xlsx", previous=small_week1)
    about_accounts = [p for p in result.warnings if p.file == "week1.xlsx" and ("account" in p.message
                                                                              or "shares" in p.message)]
    assert [] == about_accounts


def test_previous_kept_in_the_exports_folder_is_not_called_a_stray(small_week1, tmp_path):
    folder = write_account(tmp_path / "shop_a")
    shutil.copy(small_week1, folder / "previous.xlsx")
    result = build(folder, tmp_path / "week2.xlsx", previous=folder / "previous.xlsx")
    assert [] == [p for p in result.warnings if p.file == "previous.xlsx" and "sheetbuilder built" in p.message]
