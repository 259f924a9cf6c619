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
