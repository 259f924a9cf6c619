"""sheetbuilder batch: one workbook per account, an overview whose figures are the workbooks' own, and one
account's failure never stopping the others."""
from __future__ import annotations

import datetime as dt
import errno
import os
import shutil
from pathlib import Path

import openpyxl
import pytest

import sheetbuilder.batch as batch
from minimal import AD_PRODUCTS, STORE_SALES, write_account
from profit_io import profit_table
from workbook_io import engine_disagreements, open_values, read_table
from sheetbuilder.cli import main
from tools.recalc import formulas_values
from sheetbuilder.sheets.overview import AccountSummary, attention_order, plan_overview

OVERVIEW_HEADER = 5  # 1-based: title, caution, order, counts, header
ACTIONS_HEADER = 4   # 1-based: title, counts, note, header
# South spends 150.00 on P1's ads instead of 25.00: P1 loses money after ads.
SOUTH_ADS = AD_PRODUCTS.replace("C1,G1,P1,product ads,1000,50,25.00,100.00,5",
                                "C1,G1,P1,product ads,1000,50,150.00,100.00,5")
BROKEN_CATALOG = "sku_code,product_name,price,unit_cost,fees_per_unit\nP1,Widget,20.00,8.00,2.00\n"


def three_accounts(root: Path) -> Path:
    """north (profitable), south (one product losing money after ads), broken (no product ID column)."""
    accounts = root / "accounts"
    write_account(accounts / "north")
    write_account(accounts / "south", {"ad_products.csv": SOUTH_ADS})
    write_account(accounts / "broken", {"catalog.csv": BROKEN_CATALOG})
    return accounts


def overview_rows(path: Path) -> dict[str, dict]:
    """The overview's rows by account (stored values)."""
    return read_table(open_values(path)["Overview"], OVERVIEW_HEADER, "Account", stop=None)[0]


def overview_cells(path: Path) -> list[tuple]:
    """Every cell of the overview as written: formulas as text, values as stored."""
    return [tuple(c.value for c in row) for row in openpyxl.load_workbook(path)["Overview"].iter_rows()]


def actions_list(path: Path) -> list[dict]:
    """The Actions list's filled rows (stored values)."""
    rows = read_table(open_values(path)["Actions"], ACTIONS_HEADER, "Number", stop=None)[0]
    return [r for r in rows.values() if r["Kind"] not in (None, "")]


@pytest.fixture(scope="module")
def built(tmp_path_factory):
    """Three accounts built once with --jobs 1: (accounts, out, exit code)."""
    root = tmp_path_factory.mktemp("batch")
    accounts = three_accounts(root)
    code = main(["batch", str(accounts), "-o", str(root / "out"), "--jobs", "1", "-q"])
    return accounts, root / "out", code


def test_a_folder_with_one_refused_account_writes_the_others_and_exits_3(built):
    _, out, code = built
    assert 3 == code
    assert ["north.xlsx", "overview.xlsx", "south.xlsx"] == sorted(p.name for p in out.iterdir())


def test_overview_rows_equal_each_workbooks_profit_totals_to_the_cent(built):
    _, out, _ = built
    rows = overview_rows(out / "overview.xlsx")
    for account in ("north", "south"):
        products, totals, _ = profit_table(out / f"{account}.xlsx")
        row = rows[account]
        for header in ("Revenue", "Ad spend", "Ad sales", "Net profit after ads"):
            assert round(totals[header], 2) == round(row[header], 2), (account, header)
        assert sum(p["Status"] == "loss" for p in products.values()) == row["Products losing money"]
        listed = actions_list(out / f"{account}.xlsx")
        assert len(listed) == row["Changes proposed"]
        assert round(sum(r["Money at stake"] or 0 for r in listed), 2) == round(row["Money at stake"], 2)


def test_overview_figures_match_the_minimal_accounts_worked_by_hand(built):
    # Worked by hand from tests/minimal.py: margin before ads (price - cost - fees) / price = 50% for both
    # products; net profit after ads = revenue x margin - ad spend.
    _, out, _ = built
    rows = overview_rows(out / "overview.xlsx")
    assert (250.0, 35.0, 130.0, 90.0) == tuple(rows["north"][h] for h in ("Revenue", "Ad spend", "Ad sales",
                                                                            "Net profit after ads"))
    assert -35.0 == rows["south"]["Net profit after ads"]  # P1: 100 - 150; P2: 25 - 10
    assert 1 == rows["south"]["Products losing money"]
    assert pytest.approx(160 / 130) == rows["south"]["ACoS"]
    assert pytest.approx(35 / 250) == rows["north"]["TACoS"]


def test_overview_lists_refused_first_then_by_net_profit_lowest_first(built):
    _, out, _ = built
    assert ["broken", "south", "north"] == list(overview_rows(out / "overview.xlsx"))


def test_refused_account_has_its_first_problem_and_no_figures(built):
    _, out, _ = built
    row = overview_rows(out / "overview.xlsx")["broken"]
    assert "refused" == row["Status"]
    assert row["Problem or warning"].startswith("catalog.csv")
    assert "product_id" in row["Problem or warning"]
    assert [None] * 4 == [row[h] for h in ("Revenue", "Ad spend", "Net profit after ads", "Changes proposed")]


def test_overview_carries_the_guides_caution(built):
    _, out, _ = built
    ws = openpyxl.load_workbook(out / "overview.xlsx")["Overview"]
    assert "Decision aid only: review before changing a live ad account. Not financial or tax advice." == ws["A2"].value


def test_overview_ratios_are_formulas_whose_recalculation_equals_the_cached_values(built):
    _, out, _ = built
    path = out / "overview.xlsx"
    ws = openpyxl.load_workbook(path)["Overview"]
    assert '=IF(E7=0,"",F7/E7)' == ws["H7"].value  # TACoS of the first built row: ad spend / revenue
    problems, checked = engine_disagreements(path, formulas_values(path))
    assert [] == problems
    assert 6 == checked  # TACoS and ACoS of three rows


def test_jobs_1_and_jobs_2_give_the_same_overview(built, tmp_path):
    accounts, out, _ = built
    assert 3 == main(["batch", str(accounts), "-o", str(tmp_path / "two"), "--jobs", "2", "-q"])
    assert overview_cells(out / "overview.xlsx") == overview_cells(tmp_path / "two" / "overview.xlsx")


def test_a_crash_or_a_full_disk_in_one_account_leaves_the_others_built(tmp_path, monkeypatch, capsys):
    accounts = tmp_path / "accounts"
    for name in ("east", "north", "west"):
        write_account(accounts / name)
    real = batch.build

    def failing(folder, output, **kw):
        if Path(folder).name == "north":
            raise RuntimeError("boom")
        if Path(folder).name == "west":
            raise OSError(errno.ENOSPC, "No space left on device", str(output))
        return real(folder, output, **kw)
    monkeypatch.setattr(batch, "build", failing)
    assert 3 == main(["batch", str(accounts), "-o", str(tmp_path / "out"), "--jobs", "1", "-q"])
    assert ["east.xlsx", "overview.xlsx"] == sorted(p.name for p in (tmp_path / "out").iterdir())
    rows = overview_rows(tmp_path / "out" / "overview.xlsx")
    assert "internal error (RuntimeError: boom)" in rows["north"]["Problem or warning"]
    assert "No space left on device" in rows["west"]["Problem or warning"]
    assert "built" == rows["east"]["Status"]
    assert "Traceback" not in capsys.readouterr().err


def test_existing_overview_is_refused_without_force_and_replaced_with_it(tmp_path):
    accounts = tmp_path / "accounts"
    write_account(accounts / "north")
    out = tmp_path / "out"
    assert 0 == main(["batch", str(accounts), "-o", str(out), "--jobs", "1", "-q"])
    before = (out / "north.xlsx").read_bytes()
    write_account(accounts / "north", {"store_sales.csv": STORE_SALES.replace("200.00", "220.00")})
    assert 1 == main(["batch", str(accounts), "-o", str(out), "--jobs", "1", "-q"])
    assert before == (out / "north.xlsx").read_bytes()
    assert 0 == main(["batch", str(accounts), "-o", str(out), "--jobs", "1", "-q", "--force"])
    assert 270.0 == overview_rows(out / "overview.xlsx")["north"]["Revenue"]


def test_existing_account_workbook_without_force_refuses_that_account_only(tmp_path):
    accounts = tmp_path / "accounts"
    write_account(accounts / "north")
    write_account(accounts / "south")
    out = tmp_path / "out"
    out.mkdir()
    (out / "north.xlsx").write_bytes(b"kept")
    assert 3 == main(["batch", str(accounts), "-o", str(out), "--jobs", "1", "-q"])
    assert b"kept" == (out / "north.xlsx").read_bytes()
    rows = overview_rows(out / "overview.xlsx")
    assert "--force" in rows["north"]["Problem or warning"]
    assert "built" == rows["south"]["Status"]


@pytest.mark.slow  # three batches
def test_previous_dir_carries_last_weeks_workbook_and_two_previous_workbooks_are_refused(tmp_path):
    accounts = tmp_path / "accounts"
    write_account(accounts / "north")
    write_account(accounts / "south")
    assert 0 == main(["batch", str(accounts), "-o", str(tmp_path / "week1"), "--jobs", "1", "-q"])
    shutil.copy(tmp_path / "week1" / "south.xlsx", accounts / "south" / "previous.xlsx")
    write_account(accounts / "north", {"store_sales.csv": STORE_SALES.replace("200.00", "220.00")})  # next week
    assert 3 == main(["batch", str(accounts), "-o", str(tmp_path / "week2"), "--jobs", "1", "-q",
                      "--previous-dir", str(tmp_path / "week1")])
    rows = overview_rows(tmp_path / "week2" / "overview.xlsx")
    assert "built" == rows["north"]["Status"]
    assert "two previous workbooks" in rows["south"]["Problem or warning"]
    names = openpyxl.load_workbook(tmp_path / "week2" / "north.xlsx").sheetnames
    assert "Follow-up" in names  # carried: last week's changes are followed up
    shutil.copy(tmp_path / "week1" / "north.xlsx", accounts / "north" / "previous.xlsx")
    assert 0 == main(["batch", str(accounts), "-o", str(tmp_path / "week2b"), "--jobs", "1", "-q"])
    rows = overview_rows(tmp_path / "week2b" / "overview.xlsx")
    assert "built" == rows["north"]["Status"]  # its own previous.xlsx is carried, not counted as a stray file
    assert "Follow-up" in openpyxl.load_workbook(tmp_path / "week2b" / "north.xlsx").sheetnames


def test_no_account_folders_is_refused_with_exit_1(tmp_path, capsys):
    (tmp_path / "accounts").mkdir()
    assert 1 == main(["batch", str(tmp_path / "accounts"), "-o", str(tmp_path / "out")])
    assert "holds no account folders" in capsys.readouterr().err


def test_accounts_in_different_currencies_are_not_shown_in_one_currency():
    rows = [AccountSummary("north", "built", currency="$", revenue=100.0, ad_spend=10.0, ad_sales=40.0,
                           net_profit=20.0, losing=0, changes=0, at_stake=0.0),
            AccountSummary("south", "built", currency="€", revenue=200.0, ad_spend=10.0, ad_sales=40.0,
                           net_profit=30.0, losing=0, changes=0, at_stake=0.0)]
    table = plan_overview(rows, dt.date(2026, 12, 5)).sheets[0].table
    columns = {c.header: c for c in table.columns}
    assert ["$", "€"] == list(columns["Currency"].values)
    assert {"ratio"} == {columns[h].style for h in ("Revenue", "Ad spend", "Net profit after ads", "Money at stake")}


def test_accounts_sharing_a_currency_show_it_on_their_money_columns():
    rows = [AccountSummary(name, "built", currency="€", revenue=100.0, ad_spend=10.0, ad_sales=40.0,
                           net_profit=20.0, losing=0, changes=0, at_stake=0.0) for name in ("north", "south")]
    spec = plan_overview(rows, dt.date(2026, 12, 5))
    assert "€" == spec.currency_symbol
    assert "money" == {c.header: c for c in spec.sheets[0].table.columns}["Revenue"].style


def test_a_worker_process_that_dies_in_one_account_leaves_the_others_built(tmp_path, monkeypatch):
    accounts = tmp_path / "accounts"
    for name in ("east", "north", "south", "west"):
        write_account(accounts / name)
    real = batch.build

    def dying(folder, output, **kw):
        if Path(folder).name == "north":
            os._exit(9)  # as the system ending a process out of memory would
        return real(folder, output, **kw)
    monkeypatch.setattr(batch, "build", dying)  # forked workers start with this module as patched
    if batch.START_METHOD != "fork":
        pytest.skip("workers are spawned on this system: the patch does not reach them")
    assert 3 == main(["batch", str(accounts), "-o", str(tmp_path / "out"), "--jobs", "2", "-q"])
    rows = overview_rows(tmp_path / "out" / "overview.xlsx")
    assert ["built"] * 3 == [rows[n]["Status"] for n in ("east", "south", "west")]
    assert batch.STOPPED == rows["north"]["Problem or warning"]


def test_attention_order_puts_refused_then_unknown_profit_then_lowest_profit_first():
    rows = [AccountSummary("a-profit", "built", net_profit=50.0), AccountSummary("b-loss", "warnings", net_profit=-5.0),
            AccountSummary("c-refused", "refused"), AccountSummary("d-unknown", "built", net_profit=float("nan")),
            AccountSummary("e-loss", "built", net_profit=-5.0)]
    assert ["c-refused", "d-unknown", "b-loss", "e-loss", "a-profit"] == [r.account for r in attention_order(rows)]


def test_output_inside_the_accounts_folder_is_refused_before_building(tmp_path, capsys):
    accounts = tmp_path / "accounts"
    write_account(accounts / "north")
    assert 1 == main(["batch", str(accounts), "-o", str(accounts / "north" / "out")])
    assert "inside the accounts folder" in capsys.readouterr().err
    assert not (accounts / "north" / "out").exists()


def _plan(accounts: Path, previous_dir: Path | None):
    """({account: its last week's workbook}, {refused account: its message}) as the batch plans them."""
    tasks, refusals = batch.plan_tasks(batch.account_folders(accounts), accounts.parent / "out", False,
                                       previous_dir, dt.date(2026, 12, 5))
    return {t.account: t.previous for t in tasks}, {r.account: r.message for r in refusals}


def test_previous_dir_takes_last_weeks_workbook_saved_as_ods_and_previous_ods_in_the_folder(tmp_path):
    accounts, last = tmp_path / "accounts", tmp_path / "week1"
    for name in ("north", "south", "east"):
        (accounts / name).mkdir(parents=True)
    last.mkdir()
    (last / "north.ods").write_bytes(b"ods")
    (last / "east.xlsx").write_bytes(b"xlsx")
    (accounts / "south" / "previous.ods").write_bytes(b"ods")
    assert ({"north": last / "north.ods", "south": accounts / "south" / "previous.ods", "east": last / "east.xlsx"},
            {}) == _plan(accounts, last)


def test_an_account_with_its_workbook_saved_as_both_xlsx_and_ods_is_refused_naming_both(tmp_path):
    accounts, last = tmp_path / "accounts", tmp_path / "week1"
    (accounts / "north").mkdir(parents=True)
    (accounts / "south").mkdir()
    last.mkdir()
    (last / "north.xlsx").write_bytes(b"xlsx")
    (last / "north.ods").write_bytes(b"ods")
    (accounts / "south" / "previous.xlsx").write_bytes(b"xlsx")
    (accounts / "south" / "previous.ods").write_bytes(b"ods")
    tasks, refusals = _plan(accounts, last)
    assert ({}, ["north", "south"]) == (tasks, sorted(refusals))
    assert (f"two previous workbooks, {last / 'north.xlsx'} and {last / 'north.ods'}; keep the one edited last"
            == refusals["north"].split(" and move")[0])
    assert f"{accounts / 'south' / 'previous.xlsx'} and {accounts / 'south' / 'previous.ods'}" in refusals["south"]
