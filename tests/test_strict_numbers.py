"""Numbers are strict: counts are whole numbers, money takes only a currency mark, percent only %.

A letter beside a count (12O with the letter O, 12K, 1.5M, 10 PCS) used to be dropped as if it
were a currency mark, so clicks of 12O read as 12: a silently wrong number. Each such cell is
now an error naming the file, the row, the column and the text.
"""
from __future__ import annotations

import math

import minimal
import pytest
from hypothesis import HealthCheck, given, settings as hsettings, strategies as st

from sheetbuilder.reading import contract as c
from sheetbuilder.errors import ERROR, InputProblems
from sheetbuilder.reading.numbers import ISO_4217, NotANumber, parse_count, parse_number
from sheetbuilder.pipeline import load
from sheetbuilder.reading.readers import _parse_cell
from sheetbuilder.reading.settings import Settings

PROPERTY = hsettings(max_examples=300, deadline=None, suppress_health_check=[HealthCheck.too_slow])

NUMERIC_RULES = sorted({(t.name, r.name): r for t in c.TABLES for r in t.columns
                        if r.kind in c.NUMERIC_KINDS}.items())


def _problems(folder) -> list:
    with pytest.raises(InputProblems) as caught:
        load(folder)
    return [p for p in caught.value.problems if p.severity == ERROR]


@pytest.mark.parametrize("text", ["12O", "34OO", "12K", "1.5M", "10 PCS", "12k", "5 kg", "1e3", "$5", "5%",
                                  "12.5", "1.000"])
@pytest.mark.parametrize("file, column", [("ad_products.csv", "clicks"), ("ad_products.csv", "impressions"),
                                          ("ad_products.csv", "orders"), ("store_sales.csv", "units")])
def test_a_count_that_is_not_a_plain_whole_number_is_an_error_naming_file_row_column_and_text(
        tmp_path, file, column, text):
    rows = {"ad_products.csv": minimal.AD_PRODUCTS, "store_sales.csv": minimal.STORE_SALES}[file].splitlines()
    header = rows[0].split(",")
    cells = rows[1].split(",")
    cells[header.index(column)] = f'"{text}"'
    folder = minimal.write_account(tmp_path, {file: "\n".join([rows[0], ",".join(cells), *rows[2:]]) + "\n"})
    problems = _problems(folder)
    assert [(file, 2, column)] == [(p.file, p.row, p.column) for p in problems]
    assert f"'{text}'" in problems[0].message


@pytest.mark.parametrize("text", ["12K", "1.5M", "10 PCS", "12O", "12 usd", "5 kg", "3 items", "12%"])
def test_money_with_anything_but_a_currency_mark_is_an_error(tmp_path, text):
    ads = minimal.AD_PRODUCTS.replace(",25.00,", f',"{text}",')
    problems = _problems(minimal.write_account(tmp_path, {"ad_products.csv": ads}))
    assert [("ad_products.csv", 2, "spend")] == [(p.file, p.row, p.column) for p in problems]
    assert f"'{text}' is not a number" in problems[0].message


@pytest.mark.parametrize("text", ["$5", "5 USD", "0.5 EUR"])
def test_a_currency_mark_in_a_percent_column_is_an_error(text):
    rule = c.TABLE_BY_NAME["catalog"].column("target_acos")
    value, message = _parse_cell(rule, text, Settings())
    assert math.isnan(value)
    assert message is not None and f"'{text}'" in message


@pytest.mark.parametrize("text, expected", [
    ("1234", 1234.0), ("1,234", 1234.0), ("1 234", 1234.0), ("1\u00a0234", 1234.0), ("1'234", 1234.0),
    ("12,345,678", 12345678.0), ("12.0", 12.0), ("0", 0.0),
])
def test_counts_read_with_thousands_grouping(text, expected):
    assert expected == parse_count(text)


def test_counts_with_decimal_comma_group_thousands_with_a_point():
    assert 1234.0 == parse_count("1.234", decimal_comma=True)
    with pytest.raises(NotANumber):
        parse_count("1,234", decimal_comma=True)


# Fuzz: letters that are not a currency mark are refused in every numeric column.

NOT_CURRENCY_RUNS = st.text(alphabet=st.characters(categories=["Lu", "Ll", "Lo"]), min_size=4, max_size=8)
SHORT_NOT_CURRENCY = st.sampled_from(["K", "M", "O", "OO", "k", "m", "B", "PCS", "pcs", "x", "kg", "bn", "Mio",
                                      "EA", "QQQ"])
NUMBER_TEXT = st.builds(lambda n, cents: f"{n}.{cents:02d}" if cents is not None else str(n),
                        st.integers(0, 10 ** 9), st.none() | st.integers(0, 99))


@PROPERTY
@given(number=NUMBER_TEXT, letters=NOT_CURRENCY_RUNS | SHORT_NOT_CURRENCY, where=st.sampled_from(
    ["before", "after", "after-space", "inside"]))
def test_any_letter_that_is_not_a_currency_mark_is_refused_in_every_numeric_column(number, letters, where):
    if where == "inside":
        cut = max(1, len(number) // 2)
        text = number[:cut] + letters + number[cut:]
    else:
        text = {"before": letters + number, "after": number + letters, "after-space": f"{number} {letters}"}[where]
    for (table, _), rule in NUMERIC_RULES:
        value, message = _parse_cell(rule, text, Settings())
        assert message is not None, f"{table}.{rule.name} read {text!r} as {value}"
        assert math.isnan(value) or rule.kind != c.COUNT


@PROPERTY
@given(letter=st.characters(categories=["Lu", "Ll", "Lo"]), number=st.integers(1, 10 ** 6))
def test_any_letter_in_a_count_is_refused(letter, number):
    for text in (f"{number}{letter}", f"{letter}{number}", f"{number} {letter}"):
        with pytest.raises(NotANumber):
            parse_count(text)


# Property: a number written with any accepted grouping, currency mark and percent reads back exactly.

def _grouped(whole: int, sep: str) -> str:
    """whole with its thousands separated by sep (written here, not by the code under test)."""
    digits = str(whole)
    head = len(digits) % 3 or 3
    parts = [digits[:head]] + [digits[i:i + 3] for i in range(head, len(digits), 3)]
    return sep.join(parts)


CURRENCY_MARKS = st.sampled_from(["$", "€", "£", "¥", "₹", "US$", "R$", "USD", "EUR", "GBP", "JPY", "kr"])


@PROPERTY
@given(whole=st.integers(0, 10 ** 12), cents=st.integers(0, 99), sep=st.sampled_from([",", " ", "\u00a0", "'", ""]),
       mark=CURRENCY_MARKS, before=st.booleans(), space=st.booleans(), negative=st.booleans())
def test_money_with_any_grouping_and_currency_mark_reads_back_exactly(whole, cents, sep, mark, before, space,
                                                                     negative):
    body = f"{_grouped(whole, sep)}.{cents:02d}"
    gap = " " if space else ""
    text = f"{mark}{gap}{body}" if before else f"{body}{gap}{mark}"
    text = f"-{text}" if negative else text
    expected = float(f"{whole}.{cents:02d}")
    value, percent = parse_number(text, money=True)
    assert (-expected if negative else expected, False) == (value, percent)


@PROPERTY
@given(whole=st.integers(0, 10 ** 12), cents=st.integers(0, 99), sep=st.sampled_from([".", " ", "\u00a0", "'", ""]),
       mark=CURRENCY_MARKS)
def test_money_with_decimal_comma_reads_back_exactly(whole, cents, sep, mark):
    text = f"{_grouped(whole, sep)},{cents:02d} {mark}"
    assert (float(f"{whole}.{cents:02d}"), False) == parse_number(text, decimal_comma=True, money=True)


@PROPERTY
@given(whole=st.integers(0, 10 ** 12), sep=st.sampled_from([",", " ", "\u00a0", "'", ""]))
def test_counts_with_any_grouping_read_back_exactly(whole, sep):
    assert float(whole) == parse_count(_grouped(whole, sep))


@PROPERTY
@given(whole=st.integers(0, 999), hundredths=st.integers(0, 99))
def test_percent_with_a_percent_sign_reads_back_exactly(whole, hundredths):
    text = f"{whole}.{hundredths:02d}%"
    assert (float(f"{whole}.{hundredths:02d}") / 100, True) == parse_number(text, money=False)


def test_every_iso_code_is_three_capital_letters():
    assert all(len(code) == 3 and code.isalpha() and code.isupper() for code in ISO_4217)
    assert {"USD", "EUR", "GBP", "JPY", "INR", "CHF"} <= ISO_4217
