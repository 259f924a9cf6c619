"""Property: a generated account rendered in the shapes real downloads and hand-kept sheets take reads
exactly as its canonical files do, or the build refuses; never other figures.

The frames compared are what every sheet is computed from (the planners are pure), so equal frames
mean an equal workbook. Shapes that read: a `;` delimiter with decimal commas (Unicode CLDR decimal
symbols; `;` with a decimal comma is common practice), a currency sign before every amount, a title
block stating the same period (ISO 8601 dates) above every dated export. Shapes that must refuse:
rows pasted twice, two currencies (ISO 4217 codes) in one account, a month of sales beside a week of
ads, an "Ad Units" column where orders belong (units are never read as orders).
"""
from __future__ import annotations

import csv
import io
import shutil
import tempfile
from pathlib import Path

import pandas as pd
import pytest
from hypothesis import HealthCheck, assume, given, settings, strategies as st

from accounts import COLUMNS, accounts, write_account
from sheetbuilder.errors import InputProblems
from sheetbuilder.pipeline import load

pytestmark = pytest.mark.slow  # reads two folders per example
MONEY = {"price", "unit_cost", "fees_per_unit", "revenue", "spend", "ad_sales", "bid", "daily_budget"}
DATED = ("store_sales", "ad_products", "targets", "search_terms")


def _text(rows: list[list[str]], delimiter: str = ",") -> str:
    out = io.StringIO()
    csv.writer(out, delimiter=delimiter, lineterminator="\n").writerows(rows)
    return out.getvalue()


def _rows(account: dict, table: str, cell=lambda column, value: value) -> list[list[str]]:
    columns = COLUMNS[table]
    return [columns] + [[cell(c, str(row[c])) for c in columns] for row in account[table]]


def _is_number(text: str) -> bool:
    try:
        float(text)
        return not text.endswith("%")
    except ValueError:
        return False


def semicolon_comma(account: dict) -> dict[str, str]:
    return {t: _text(_rows(account, t, lambda c, v: v.replace(".", ",") if _is_number(v) else v), ";")
            for t in COLUMNS if t in account}


def dollar_signs(account: dict) -> dict[str, str]:
    return {t: _text(_rows(account, t, lambda c, v: f"${v}" if c in MONEY and v else v)) for t in COLUMNS if t in account}


def titled(period: str, other: str | None = None):
    def shape(account: dict) -> dict[str, str]:
        return {t: (f"Date range: {other if other and t == 'store_sales' else period}\n\n" if t in DATED else "")
                + _text(_rows(account, t)) for t in COLUMNS if t in account}
    return shape


def pasted_twice(account: dict) -> dict[str, str]:
    files = {t: _text(_rows(account, t)) for t in COLUMNS if t in account}
    table = next(t for t in DATED if account.get(t))
    files[table] += _text(_rows(account, table)[1:])
    return files


def units_for_orders(account: dict) -> dict[str, str]:
    files = {t: _text(_rows(account, t)) for t in COLUMNS if t in account}
    header, _, rest = files["ad_products"].partition("\n")
    files["ad_products"] = header.replace("orders", "Ad Units") + "\n" + rest
    return files


def two_currencies(account: dict) -> dict[str, str]:
    files = dollar_signs(account)
    files["store_sales"] = _text(_rows(account, "store_sales", lambda c, v: f"{v} €" if c == "revenue" else v))
    return files


READ = {"semicolon_comma": semicolon_comma, "dollar_signs": dollar_signs,
        "same_period": titled("2026-11-01 - 2026-11-30")}
REFUSE = {"pasted_twice": pasted_twice, "two_currencies": two_currencies, "units_for_orders": units_for_orders,
          "month_beside_week": titled("2026-11-24 - 2026-11-30", "2026-11-01 - 2026-11-30")}


def _load(folder: Path):
    try:
        return load(folder)[0]
    except InputProblems:
        return None


def _write(folder: Path, files: dict[str, str], toml: str) -> Path:
    folder.mkdir(parents=True)
    for table, text in files.items():
        (folder / f"{table}.csv").write_text(text, encoding="utf-8")
    (folder / "settings.toml").write_text(toml, encoding="utf-8")
    return folder


def _frames(inputs) -> dict[str, pd.DataFrame]:
    return {n: f.drop(columns="_row").reset_index(drop=True) for n, f in inputs.tables.items() if f is not None}


@settings(max_examples=30, deadline=None, database=None, suppress_health_check=list(HealthCheck))
@given(accounts(max_products=5, max_ad_rows=8, max_targets=6, max_terms=6), st.sampled_from(sorted(READ | REFUSE)))
def test_a_shaped_account_reads_as_its_canonical_files_or_refuses(account, shape):
    base = Path(tempfile.mkdtemp())
    try:
        canonical = _load(write_account(account, base / "canonical"))
        assume(canonical is not None and account["store_sales"] and account["ad_products"])
        shaped = _load(_write(base / "shaped", (READ | REFUSE)[shape](account), account["settings"]))
        if shape in REFUSE:
            assert shaped is None, f"{shape} was read"
            return
        assert shaped is not None, f"{shape} was refused"
        for name, frame in _frames(canonical).items():
            pd.testing.assert_frame_equal(frame, _frames(shaped)[name], check_dtype=False, obj=f"{shape} {name}")
    finally:
        shutil.rmtree(base)
