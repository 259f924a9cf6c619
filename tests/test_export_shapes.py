"""Exports shaped as they really arrive: title blocks, unit suffixes, filler words, totals rows,
several sheets, and .xls/.xlsb/.ods files written by a real spreadsheet program.

Each shape is built and compared with the canonical minimal account's workbook: every computed
cell (formula and cached value) must be the same, so the shape changed nothing but the reading.
The canonical workbook's values are themselves checked three ways by the demo and generated
tests (tests/test_profit_three_way.py, test_bids.py, test_recalc_engines.py).
"""
from __future__ import annotations

import os
import subprocess
import tempfile
from pathlib import Path

import minimal
import openpyxl
import pytest

from bids_io import CHECKED, bids_oracle_for, bids_table
from conftest import BUILT_ON, require_libreoffice
from workbook_io import engine_disagreements, mismatches, open_values
from same_cells import computed_differences
from sheetbuilder.errors import ERROR, WARNING, InputProblems
from sheetbuilder.pipeline import build, load
from tools.recalc import formulas_values, libreoffice_convert, make_profile, soffice_path

CANONICAL = {"targets.csv": minimal.TARGETS}


def _rows(text: str) -> list[list[str]]:
    return [line.split(",") for line in text.strip().splitlines()]


def _typed(cell: str):
    try:
        return float(cell)
    except ValueError:
        return cell


def _xlsx(path: Path, sheets: dict[str, list[list]]) -> None:
    wb = openpyxl.Workbook()
    wb.remove(wb.active)
    for name, rows in sheets.items():
        ws = wb.create_sheet(name)
        for row in rows:
            ws.append([_typed(x) if isinstance(x, str) else x for x in row])
    wb.save(path)


@pytest.fixture(scope="module")
def canonical(tmp_path_factory) -> Path:
    root = tmp_path_factory.mktemp("canonical")
    folder = minimal.write_account(root / "in", CANONICAL)
    return build(folder, root / "canonical.xlsx", built_on=BUILT_ON).output


@pytest.mark.slow  # moved out of the fast lane, which must stay under two minutes
def test_the_canonical_build_equals_the_reference_and_its_recalculation(canonical, tmp_path):
    """The workbook every shape is compared with, checked three ways (reference, cached, recalculated)."""
    folder = canonical.parent / "in"
    expected = bids_oracle_for(folder)
    rows, _ = bids_table(canonical)
    assert sorted(expected) == sorted(rows)
    assert [] == mismatches(expected, rows, CHECKED, "canonical")
    problems, checked = engine_disagreements(canonical, formulas_values(canonical))
    assert [] == problems and checked > 100


@pytest.mark.libreoffice
def test_the_canonical_build_equals_its_libreoffice_recalculation(canonical, tmp_path):
    require_libreoffice()
    wb = open_values(libreoffice_convert([canonical], tmp_path / "lo")[0])
    values = {(ws.title.upper(), c.coordinate): c.value for ws in wb.worksheets for row in ws.iter_rows() for c in row}
    problems, checked = engine_disagreements(canonical, values)
    assert [] == problems and checked > 100


def _same_as_canonical(folder: Path, canonical: Path, tmp_path: Path) -> list:
    result = build(folder, tmp_path / "shaped.xlsx", built_on=BUILT_ON)
    assert [] == computed_differences(canonical, result.output)
    return result.warnings


def _problems(folder: Path) -> list:
    with pytest.raises(InputProblems) as caught:
        load(folder)
    return [p for p in caught.value.problems if p.severity == ERROR]


# Header finding

def test_a_title_block_above_the_header_in_a_csv_is_skipped_and_noted(tmp_path, canonical):
    ads = "Advertised products report\nAccount: invented seller\n\nCreated 2026-11-30\n" + minimal.AD_PRODUCTS
    warnings = _same_as_canonical(minimal.write_account(tmp_path / "in", {**CANONICAL, "ad_products.csv": ads}),
                                  canonical, tmp_path)
    notes = [p for p in warnings if p.file == "ad_products.csv"]
    assert [5] == [p.row for p in notes]
    assert "the header is row 5; rows 1 to 4" in notes[0].message


def test_a_title_block_in_a_second_sheet_of_an_xlsx_is_found(tmp_path, canonical):
    folder = minimal.write_account(tmp_path / "in", {**CANONICAL, "catalog.csv": None})
    _xlsx(folder / "catalog.xlsx", {"Read me": [["This workbook lists our products"], ["Prices in dollars"]],
                                    "Products": [["Product list"], ["kept by hand"], []] + _rows(minimal.CATALOG)})
    warnings = _same_as_canonical(folder, canonical, tmp_path)
    messages = [p.message for p in warnings if p.file == "catalog.xlsx"]
    assert any("read the sheet 'Products'" in m for m in messages)
    assert any("the header is row 4" in m for m in messages)


# Header names as people write them

def test_unit_suffixes_and_filler_words_in_headers_are_matched(tmp_path, canonical):
    targets = minimal.TARGETS.replace(
        "campaign,ad_group,target,match_type,state,bid,impressions,clicks,spend,ad_sales,orders",
        "Campaign Name,Ad Group Name,Keyword Text,Match Type,Status,Bid (USD),Impressions,Total Clicks,"
        "Spend [$],Ad Sales ($),Orders")
    assert targets != minimal.TARGETS
    warnings = _same_as_canonical(minimal.write_account(tmp_path / "in", {"targets.csv": targets}), canonical,
                                  tmp_path)
    assert [] == [p for p in warnings if "currency" in p.message]


def test_a_currency_in_a_header_other_than_currency_symbol_is_a_warning(tmp_path):
    ads = minimal.AD_PRODUCTS.replace("spend,ad_sales", "Spend (EUR),Ad Sales (EUR)")
    _, _, problems = load(minimal.write_account(tmp_path, {"ad_products.csv": ads}))
    currency = [p for p in problems if "currency" in p.message]
    assert [("ad_products.csv", 1, "Spend (EUR)", WARNING)] == [(p.file, p.row, p.column, p.severity)
                                                                for p in currency]


def test_a_missing_column_names_the_closest_header_and_the_exact_columns_line(tmp_path):
    ads = minimal.AD_PRODUCTS.replace("spend", "Spnd")
    problems = _problems(minimal.write_account(tmp_path, {"ad_products.csv": ads}))
    assert [("ad_products.csv", 1, "spend")] == [(p.file, p.row, p.column) for p in problems]
    assert "did you mean 'Spnd'?" in problems[0].message
    assert problems[0].message.endswith('[columns.ad_products] spend = "Spnd"')


# Totals rows

@pytest.mark.parametrize("label", ["Total", "TOTALS", "Grand total", ""])
def test_a_totals_row_under_the_data_is_skipped_and_noted(tmp_path, canonical, label):
    ads = minimal.AD_PRODUCTS + f"{label},,,,1500,70,35.00,130.00,7\n"
    sales = minimal.STORE_SALES + f"{label or ''},15,250.00\n"
    folder = minimal.write_account(tmp_path / "in", {**CANONICAL, "ad_products.csv": ads, "store_sales.csv": sales})
    warnings = _same_as_canonical(folder, canonical, tmp_path)
    noted = {(p.file, p.row) for p in warnings if "totals row" in p.message}
    assert {("ad_products.csv", 4), ("store_sales.csv", 4)} == noted


def test_a_row_labelled_total_that_is_not_the_sum_is_an_error(tmp_path):
    ads = minimal.AD_PRODUCTS + "Total,,,,1500,71,35.00,130.00,7\n"
    problems = _problems(minimal.write_account(tmp_path, {"ad_products.csv": ads}))
    assert [("ad_products.csv", 4)] == [(p.file, p.row) for p in problems]
    assert "clicks 71 where the rows above sum to 70" in problems[0].message


def test_a_blank_key_row_that_is_not_a_sum_stays_an_error(tmp_path):
    ads = minimal.AD_PRODUCTS + ",,,product ads,10,1,0.50,0,0\n"
    problems = _problems(minimal.write_account(tmp_path, {"ad_products.csv": ads}))
    assert {("ad_products.csv", 4)} == {(p.file, p.row) for p in problems}


# Files that match no table

def test_a_file_matching_no_table_is_noted_with_the_table_it_resembles(tmp_path):
    folder = minimal.write_account(tmp_path, {"keyword report.csv": minimal.TARGETS})
    _, _, problems = load(folder)
    stray = [p for p in problems if p.file == "keyword report.csv"]
    assert [WARNING] == [p.severity for p in stray]
    assert "it looks most like 'targets'" in stray[0].message


# Formats written by a real spreadsheet program (LibreOffice headless converts the CSV)

def _convert(csv_path: Path, fmt: str, outdir: Path) -> Path:
    filters = {"xls": "xls:MS Excel 97", "ods": "ods"}  # LibreOffice reads .xlsb but cannot write it
    with tempfile.TemporaryDirectory(prefix="sb-lo-") as tmp:
        profile = make_profile(Path(tmp))
        cmd = [soffice_path(), f"-env:UserInstallation=file://{profile}", "--headless", "--norestore",
               "--convert-to", filters[fmt], "--outdir", str(outdir), str(csv_path)]
        subprocess.run(cmd, capture_output=True, text=True, timeout=600, env={**os.environ, "HOME": tmp})
    out = outdir / f"{csv_path.stem}.{fmt}"
    assert out.exists(), f"LibreOffice did not write {out.name}"
    return out


@pytest.mark.libreoffice
@pytest.mark.parametrize("fmt", ["xls", "ods"])
def test_spreadsheet_formats_written_by_libreoffice_read_like_the_csv(tmp_path, canonical, fmt):
    require_libreoffice()
    source = tmp_path / "src"
    source.mkdir()
    (source / "targets.csv").write_text("Keyword report\n\n" + minimal.TARGETS, encoding="utf-8")
    converted = _convert(source / "targets.csv", fmt, tmp_path / "conv")
    folder = minimal.write_account(tmp_path / "in")
    (folder / converted.name).write_bytes(converted.read_bytes())
    warnings = _same_as_canonical(folder, canonical, tmp_path)
    assert any("the header is row 3" in p.message for p in warnings if p.file == converted.name)


def test_an_empty_recognised_spreadsheet_is_an_error(tmp_path):
    folder = minimal.write_account(tmp_path, {"catalog.csv": None})
    _xlsx(folder / "catalog.xlsx", {"Sheet1": []})
    problems = _problems(folder)
    assert [("catalog.xlsx", None)] == [(p.file, p.row) for p in problems]
    assert "empty" in problems[0].message
