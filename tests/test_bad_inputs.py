"""Bad inputs: every problem is reported with its file, row and column, all in one run,
and nothing is written when the inputs have errors."""
from __future__ import annotations

from minimal import AD_PRODUCTS, CATALOG, STORE_SALES, TARGETS, write_account  # noqa: F401

import importlib
from pathlib import Path

import openpyxl
import pytest

from sheetbuilder.pipeline import build, load
from sheetbuilder.cli import main
from sheetbuilder.errors import ERROR, WARNING, InputProblems, OutputExists

# The package's `build` attribute is the function, which shadows the module of the same name.
build_module = importlib.import_module("sheetbuilder.pipeline")





def problems_of(folder: Path) -> list:
    """Every problem load() raises for folder."""
    with pytest.raises(InputProblems) as caught:
        load(folder)
    return caught.value.problems


def find(problems: list, file: str, row: int | None, column: str | None):
    """The one problem at file, row, column (fails with the full list otherwise)."""
    hits = [p for p in problems if p.file == file and p.row == row and p.column == column]
    assert 1 == len(hits), f"expected one problem at {file}, row {row}, column {column}; got {problems}"
    return hits[0]


def test_the_minimal_account_loads_without_problems(tmp_path):
    inputs, _, problems = load(write_account(tmp_path / "in"))
    assert [] == problems
    assert 2 == len(inputs.get("catalog"))


def test_missing_required_file_names_the_file_and_what_it_holds(tmp_path):
    folder = write_account(tmp_path / "in", {"store_sales.csv": None})
    problems = problems_of(folder)
    hits = [p for p in problems if "store_sales.csv" in p.message]
    assert 1 == len(hits)
    assert ERROR == hits[0].severity
    assert "missing file" in hits[0].message
    assert "all sales per product" in hits[0].message


def test_missing_column_is_reported_on_the_header_row(tmp_path):
    folder = write_account(tmp_path / "in", {"catalog.csv": CATALOG.replace(",price", ",colour")})
    problem = find(problems_of(folder), "catalog.csv", 1, "price")
    assert "missing column 'price'" in problem.message


def test_text_in_a_number_column_names_file_row_and_column(tmp_path):
    folder = write_account(tmp_path / "in", {"ad_products.csv": AD_PRODUCTS.replace(",25.00,", ",lots,")})
    problem = find(problems_of(folder), "ad_products.csv", 2, "spend")
    assert "'lots' is not a number" in problem.message
    assert "expected an amount" in problem.message


def test_duplicate_product_in_the_catalog_is_reported_on_the_repeat(tmp_path):
    catalog = CATALOG + "P1,Widget again,21.00,8.00,2.00\n"
    problem = find(problems_of(write_account(tmp_path / "in", {"catalog.csv": catalog})),
                   "catalog.csv", 4, "product_id")
    assert "appears more than once (rows 2, 4)" in problem.message
    assert "expected one row per product" in problem.message


def test_negative_spend_is_an_error(tmp_path):
    folder = write_account(tmp_path / "in", {"ad_products.csv": AD_PRODUCTS.replace(",10.00,", ",-10.00,")})
    problem = find(problems_of(folder), "ad_products.csv", 3, "spend")
    assert "is negative; expected zero or more" in problem.message


def test_negative_clicks_is_an_error(tmp_path):
    folder = write_account(tmp_path / "in", {"ad_products.csv": AD_PRODUCTS.replace(",50,", ",-50,")})
    problem = find(problems_of(folder), "ad_products.csv", 2, "clicks")
    assert "'-50' is negative" in problem.message


def test_orders_greater_than_clicks_is_an_error_on_the_orders_cell(tmp_path):
    ads = AD_PRODUCTS.replace(",20,10.00,30.00,2", ",20,10.00,30.00,21")
    problem = find(problems_of(write_account(tmp_path / "in", {"ad_products.csv": ads})),
                   "ad_products.csv", 3, "orders")
    assert "orders (21) are more than clicks (20)" in problem.message


def test_orders_greater_than_clicks_names_the_header_as_written(tmp_path):
    ads = AD_PRODUCTS.replace("orders", "Ad Orders").replace(",20,10.00,30.00,2", ",20,10.00,30.00,21")
    find(problems_of(write_account(tmp_path / "in", {"ad_products.csv": ads})), "ad_products.csv", 3, "Ad Orders")


def _profit_margin_of(path: Path, product: str):
    """The cached 'Margin before ads' of product on the Profit sheet."""
    ws = openpyxl.load_workbook(path, data_only=True)["Profit"]
    rows = list(ws.iter_rows(values_only=True))
    header_at = next(i for i, r in enumerate(rows) if "Margin before ads" in r)
    header = rows[header_at]
    row = next(r for r in rows[header_at + 1:] if r[header.index("Product ID")] == product)
    return row[header.index("Margin before ads")]


def test_ad_product_missing_from_catalog_is_a_warning_and_its_margin_is_blank(tmp_path):
    ads = AD_PRODUCTS + "C1,G1,P9,product ads,300,10,4.00,0.00,0\n"
    folder = write_account(tmp_path / "in", {"ad_products.csv": ads})
    _, _, problems = load(folder)
    problem = find(problems, "ad_products.csv", 4, "product_id")
    assert WARNING == problem.severity
    assert "'P9' is not in the catalog" in problem.message
    result = build(folder, tmp_path / "out.xlsx")
    assert [problem] == result.warnings
    assert _profit_margin_of(result.output, "P9") in (None, "")
    assert 0.5 == pytest.approx(_profit_margin_of(result.output, "P1"))


@pytest.mark.parametrize("content", [b"", b"  \n\t\n   \r\n"], ids=["zero_bytes", "whitespace_only"])
def test_empty_file_is_reported_as_empty(tmp_path, content):
    folder = write_account(tmp_path / "in", {"store_sales.csv": content})
    problem = find(problems_of(folder), "store_sales.csv", None, None)
    assert "the file is empty; expected a header row and data rows" == problem.message


def test_unknown_match_type_in_targets_names_the_cell_and_the_choices(tmp_path):
    folder = write_account(tmp_path / "in", {"targets.csv": TARGETS.replace(",exact,", ",fuzzy,")})
    problem = find(problems_of(folder), "targets.csv", 2, "match_type")
    assert "'fuzzy' is not one of exact, phrase, broad, product or auto" == problem.message


@pytest.mark.parametrize("toml, column, words", [
    ("thin_margn = 0.1\n", "thin_margn", "unknown setting"),
    ('period_days = "thirty"\n', "period_days", "expected a number, got 'thirty'"),
    ("decimal_comma = 1\n", "decimal_comma", "expected true or false"),
    ("thin_margin = 0.3\nstrong_margin = 0.2\n", "thin_margin", "expected thin <= strong"),
    ("[columns.ad_prodcts]\nspend = \"Cost\"\n", "columns.ad_prodcts", "unknown table"),
    ("[columns.ad_products]\nspent = \"Cost\"\n", "columns.ad_products.spent", "unknown column"),
    ("[files]\ncatalogue = \"x.csv\"\n", "files.catalogue", "unknown table"),
], ids=["unknown_key", "wrong_type", "wrong_bool", "thin_above_strong", "unknown_columns_table",
        "unknown_mapped_column", "unknown_files_table"])
def test_bad_settings_values_are_reported(tmp_path, toml, column, words):
    folder = write_account(tmp_path / "in", {"settings.toml": toml})
    problem = find(problems_of(folder), "settings.toml", None, column)
    assert words in problem.message


def test_one_run_reports_every_problem_in_two_files(tmp_path):
    catalog = CATALOG.replace("20.00", "twenty").replace(",4.00,", ",-4.00,")
    ads = AD_PRODUCTS.replace(",50,", ",many,").replace(",30.00,2", ",30.00,99")
    folder = write_account(tmp_path / "in", {"catalog.csv": catalog, "ad_products.csv": ads})
    problems = problems_of(folder)
    where = {(p.file, p.row, p.column) for p in problems if p.severity == ERROR}
    assert {("catalog.csv", 2, "price"), ("catalog.csv", 3, "unit_cost"),
            ("ad_products.csv", 2, "clicks"), ("ad_products.csv", 3, "orders")} == where


def test_build_with_errors_writes_no_output(tmp_path):
    folder = write_account(tmp_path / "in", {"catalog.csv": CATALOG.replace("20.00", "twenty")})
    out = tmp_path / "out.xlsx"
    with pytest.raises(InputProblems):
        build(folder, out)
    assert [] == sorted(p.name for p in tmp_path.iterdir() if p.name != "in")


def test_build_with_errors_and_force_leaves_an_existing_output_untouched(tmp_path):
    folder = write_account(tmp_path / "in", {"catalog.csv": CATALOG.replace("20.00", "twenty")})
    out = tmp_path / "out.xlsx"
    out.write_bytes(b"the previous workbook")
    with pytest.raises(InputProblems):
        build(folder, out, force=True)
    assert b"the previous workbook" == out.read_bytes()
    assert ["out.xlsx"] == sorted(p.name for p in tmp_path.iterdir() if p.name != "in")


def test_cli_exits_2_and_prints_every_problem(tmp_path, capsys, monkeypatch):
    monkeypatch.setenv("COLUMNS", "250")
    catalog = CATALOG.replace("20.00", "twenty")
    ads = AD_PRODUCTS.replace(",10.00,", ",-10.00,")
    folder = write_account(tmp_path / "in", {"catalog.csv": catalog, "ad_products.csv": ads})
    out = tmp_path / "out.xlsx"
    assert 2 == main(["build", str(folder), "-o", str(out)])
    err = capsys.readouterr().err
    assert "2 problem(s) in the inputs; nothing was written." in err
    assert "'twenty' is not a number" in err
    assert "'-10.00' is negative" in err
    assert "catalog.csv" in err and "ad_products.csv" in err
    assert not out.exists()


def test_output_that_exists_without_force_raises_and_keeps_its_bytes(tmp_path):
    folder = write_account(tmp_path / "in")
    out = tmp_path / "out.xlsx"
    out.write_bytes(b"keep me")
    with pytest.raises(OutputExists):
        build(folder, out)
    assert b"keep me" == out.read_bytes()


def test_crash_mid_render_leaves_no_partial_file(tmp_path, monkeypatch):
    def crashing_render(spec, path, progress=None, tmpdir=None):
        Path(path).write_bytes(b"PK half a workbook")
        raise RuntimeError("disk on fire")

    monkeypatch.setattr(build_module, "render", crashing_render)
    folder = write_account(tmp_path / "in")
    out_dir = tmp_path / "out"
    out_dir.mkdir()
    with pytest.raises(RuntimeError, match="disk on fire"):
        build(folder, out_dir / "book.xlsx")
    assert [] == sorted(p.name for p in out_dir.iterdir())


def test_crash_mid_render_with_force_keeps_the_previous_output(tmp_path, monkeypatch):
    def crashing_render(spec, path, progress=None, tmpdir=None):
        Path(path).write_bytes(b"PK half a workbook")
        raise RuntimeError("disk on fire")

    monkeypatch.setattr(build_module, "render", crashing_render)
    out = tmp_path / "book.xlsx"
    out.write_bytes(b"previous")
    with pytest.raises(RuntimeError):
        build(write_account(tmp_path / "in"), out, force=True)
    assert b"previous" == out.read_bytes()
    assert [] == [p.name for p in tmp_path.iterdir() if p.name.endswith(".partial.xlsx")]


def test_a_header_written_twice_is_reported(tmp_path):
    sales = "product_id,units,Units,revenue\nP1,10,11,200.00\nP2,5,5,50.00\n"
    problem = find(problems_of(write_account(tmp_path / "in", {"store_sales.csv": sales})),
                   "store_sales.csv", 1, "units")
    assert "several columns could be 'units' ('units', 'Units')" in problem.message


def test_a_blank_product_in_the_ad_rows_is_one_error_and_no_catalog_warning(tmp_path):
    ads = AD_PRODUCTS.replace("C1,G1,P2,", "C1,G1, ,")
    problems = problems_of(write_account(tmp_path / "in", {"ad_products.csv": ads}))
    assert [("ad_products.csv", 3, "product_id", ERROR)] == [(p.file, p.row, p.column, p.severity)
                                                             for p in problems]
    assert "is blank; expected a value" == problems[0].message


@pytest.mark.parametrize("toml, words", [
    ("thin_margin = 8\n", "expected a percentage from -100% to 100%, written as 8% or 0.08, got 8"),
    ("period_days = 0\n", "expected a value from 1 to 3660, got 0"),
], ids=["percent_out_of_range", "days_out_of_range"])
def test_settings_out_of_range_say_the_range(tmp_path, toml, words):
    folder = write_account(tmp_path / "in", {"settings.toml": toml})
    problem = find(problems_of(folder), "settings.toml", None, toml.split(" ")[0])
    assert words == problem.message


def test_thin_margin_as_a_percent_text_is_accepted(tmp_path):
    _, settings, _ = load(write_account(tmp_path / "in", {"settings.toml": 'thin_margin = "5%"\n'}))
    assert 0.05 == pytest.approx(settings.thin_margin)
