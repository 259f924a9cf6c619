"""demo_inputs_raw/: the demo seller's exports in real-world shapes build the canonical demo's workbook.

The folder (written by tools/make_demo_raw.py from demo_inputs/) has a title block, totals rows,
unit suffixes, one row per keyword per day with mid-period bid changes, start and end dates,
one .xlsx and one .ods file, and no settings.toml. The canonical demo's settings.toml sets only
values the raw folder reaches without one: period_days = 30 and period_end = 2026-11-29 come
from the dates, and the rest (currency_symbol, attribution_days, thin_margin, strong_margin,
default_target_acos) are the defaults. So the comparison is against the canonical demo as it is.
"""
from __future__ import annotations

import datetime as dt

import pytest

from conftest import BUILT_ON, DEMO, ROOT
from same_cells import computed_cells, computed_differences
from sheetbuilder.cli import main
from sheetbuilder.pipeline import build, load
from sheetbuilder.reading.settings import Settings

RAW = ROOT / "demo_inputs_raw"


def test_the_raw_folder_has_the_real_world_shapes():
    names = sorted(p.name for p in RAW.iterdir())
    assert "settings.toml" not in names
    assert {".xlsx", ".ods"} <= {p.suffix for p in RAW.iterdir()}
    assert (RAW / "targets.csv").read_text(encoding="utf-8").startswith("\"Keyword report, daily\"\n\nDate,")


def test_the_canonical_demo_settings_differ_from_defaults_only_in_the_period():
    _, settings, _ = load(DEMO)
    defaults = Settings()
    changed = {k for k in ("currency_symbol", "period_days", "period_end", "attribution_days", "thin_margin",
                           "strong_margin", "default_target_acos") if settings.value(k) != defaults.value(k)}
    assert {"period_end"} == changed  # period_days = 30 is also the default


def test_the_period_comes_from_the_dates(tmp_path):
    inputs, settings, _ = load(RAW)
    assert (30, dt.date(2026, 11, 29)) == (settings.period_days, settings.period_end)
    assert (dt.date(2026, 10, 31), dt.date(2026, 11, 29)) == (inputs.period.start, inputs.period.end)


@pytest.mark.slow
def test_the_raw_demo_builds_a_workbook_whose_every_computed_cell_equals_the_canonical_demo(demo_build, tmp_path):
    raw = build(RAW, tmp_path / "raw.xlsx", built_on=BUILT_ON).output
    assert len(computed_cells(demo_build.output)) > 2000
    assert [] == computed_differences(demo_build.output, raw)


def test_inspect_on_the_raw_demo_reports_each_shape(capsys):
    assert 0 == main(["inspect", str(RAW)])
    out = capsys.readouterr().err
    assert "catalog.xlsx -> catalog" in out and "sheet 'Products', header row 4" in out
    assert "store_sales.ods -> store_sales" in out
    assert "rows: 3750 read, 3625 summed into others, 0 skipped as totals, 0 refused" in out
    assert "rows: 33 read, 0 summed into others, 1 skipped as totals, 0 refused" in out
    assert "bid <- Bid (USD)" in out
    assert "period found: 2026-10-31 to 2026-11-29 (30 days)" in out


@pytest.mark.slow
def test_a_decimal_comma_sales_download_builds_the_demo_and_the_terminal_says_how_it_read_it(demo_build, tmp_path,
                                                                                                capsys, monkeypatch):
    # A download from a decimal-comma locale: a title line, ';' between fields, 2708,10 for 2708.10 (Unicode CLDR
    # decimal symbols; ';' beside a decimal comma is common practice, no source).
    folder = tmp_path / "in"
    folder.mkdir()
    for p in DEMO.iterdir():
        (folder / p.name).write_bytes(p.read_bytes())
    lines = (DEMO / "store_sales.csv").read_text(encoding="utf-8").splitlines()
    assert "LF-1001,44,2708.10" == lines[1]
    (folder / "store_sales.csv").write_text("Store sales by product\n" + "\n".join(
        line.replace(",", ";").replace(".", ",") for line in lines) + "\n", encoding="utf-8")
    out = tmp_path / "comma.xlsx"
    warnings = build(folder, out, built_on=BUILT_ON).warnings
    assert [] == computed_differences(demo_build.output, out)
    expected = ("store_sales.csv", 3, "revenue", "amounts are read with a decimal comma (the file's values write a "
                "decimal comma): '2708,10' is read as 2708.1")
    assert [expected] == [(p.file, p.row, p.column, p.message) for p in warnings if "decimal comma" in p.message]
    monkeypatch.setenv("COLUMNS", "400")  # a wide terminal: each problem on one line of the table
    assert 0 == main(["build", str(folder), "-o", str(tmp_path / "cli.xlsx")])
    assert expected[3] in capsys.readouterr().err
