"""`sheetbuilder inspect`: reads the exports as build does, prints what it read, writes nothing.

Also: messages print every character (square brackets are not terminal markup), settings take
true/false or yes/no, and an unknown setting names the closest known one.
"""
from __future__ import annotations

import io
from pathlib import Path

import minimal
import pytest

from conftest import DEMO
from rich.console import Console

from sheetbuilder.cli import main, print_problems
from sheetbuilder.errors import Problem
from sheetbuilder.reading.settings import load_settings


def _run(capsys, *argv) -> tuple[int, str]:
    code = main(list(argv))
    return code, capsys.readouterr().err


def test_inspect_on_the_demo_lists_every_file_its_table_and_mapping_and_exits_0(capsys):
    before = sorted((p.name, p.stat().st_mtime_ns) for p in DEMO.iterdir())
    code, out = _run(capsys, "inspect", str(DEMO))
    assert 0 == code
    for table in ("catalog", "store_sales", "ad_products", "targets", "search_terms", "campaigns", "negatives"):
        assert f"{table}.csv -> {table}" in out
    assert "spend <- Cost" in out
    assert "campaign <- Campaign Name" in out
    assert "rows: 33 read, 0 summed into others, 0 skipped as totals, 0 refused" in out
    assert before == sorted((p.name, p.stat().st_mtime_ns) for p in DEMO.iterdir())  # nothing written


def test_inspect_reports_header_row_sums_totals_and_period_of_shaped_exports(tmp_path, capsys):
    targets = ("Keyword report\n\nDate,Campaign Name,Ad Group,Keyword Text,Match Type,Status,Bid (USD),Impressions,"
               "Clicks,Spend (USD),Ad Sales (USD),Orders\n"
               "2026-11-23,C1,G1,widget,exact,enabled,0.50,50,5,2.50,10.00,1\n"
               "2026-11-24,C1,G1,widget,exact,enabled,0.60,50,5,2.50,10.00,0\n"
               "Total,,,,,,,100,10,5.00,20.00,1\n")
    folder = minimal.write_account(tmp_path, {"targets.csv": targets})
    code, out = _run(capsys, "inspect", str(folder))
    assert 0 == code
    assert "targets.csv -> targets" in out
    assert "header row 3, UTF-8" in out
    assert "bid <- Bid (USD)" in out
    assert "target <- Keyword Text" in out
    assert "rows: 2 read, 1 summed into others, 1 skipped as totals, 0 refused" in out
    assert "period found: 2026-11-23 to 2026-11-24 (2 days)" in out


def test_inspect_exits_2_and_lists_the_refused_rows(tmp_path, capsys):
    ads = minimal.AD_PRODUCTS.replace(",50,", ",12O,")
    code, out = _run(capsys, "inspect", str(minimal.write_account(tmp_path, {"ad_products.csv": ads})))
    assert 2 == code
    assert "ad_products.csv -> ad_products (not read" not in out
    assert "1 refused" in out
    assert "'12O' is not a whole number" in out
    assert not list(tmp_path.glob("*.xlsx"))


def test_inspect_help_describes_the_command(capsys):
    with pytest.raises(SystemExit) as exited:
        main(["inspect", "--help"])
    assert 0 == exited.value.code
    assert "Writes nothing" in " ".join(capsys.readouterr().out.split())


def test_messages_print_square_brackets():
    problem = Problem("ad_products.csv", 1, "[spend]", 'name it in [files] or add [columns.ad_products] spend = "x"')
    out = io.StringIO()
    print_problems(Console(file=out, width=400), [problem])
    assert "[spend]" in out.getvalue()
    assert 'name it in [files] or add [columns.ad_products] spend = "x"' in out.getvalue()


@pytest.mark.parametrize("text, expected", [("true", True), ("false", False), ('"yes"', True), ('"no"', False),
                                            ('"Yes"', True)])
def test_a_true_false_setting_accepts_yes_and_no(tmp_path, text, expected):
    (tmp_path / "settings.toml").write_text(f"fold_plurals = {text}\n")
    settings, problems = load_settings(tmp_path)
    assert ([], expected) == (problems, settings.fold_plurals)


@pytest.mark.parametrize("text, expected", [("true", "yes"), ("false", "no"), ('"yes"', "yes"), ('"no"', "no")])
def test_a_yes_no_setting_accepts_true_and_false(tmp_path, text, expected):
    (tmp_path / "settings.toml").write_text(f"source_negative = {text}\n")
    settings, problems = load_settings(tmp_path)
    assert ([], expected) == (problems, settings.source_negative)


def test_an_unknown_setting_names_the_closest_known_one(tmp_path):
    (tmp_path / "settings.toml").write_text("thin_margn = 0.1\nperiod_day = 7\n")
    _, problems = load_settings(Path(tmp_path))
    assert ["thin_margn", "period_day"] == [p.column for p in problems]
    assert "did you mean thin_margin?" in problems[0].message
    assert "did you mean period_days?" in problems[1].message
