"""Safe CSV output: text that a spreadsheet would run as a formula is escaped, and reads back exactly.

Source: OWASP, "CSV Injection": cells must not begin with =, +, -, @, tab (0x09) or
carriage return (0x0D); prepend a single quote, and wrap text cells in double quotes.
"""
from __future__ import annotations

import csv

import pytest

from sheetbuilder.workbook import atomic
from sheetbuilder.workbook.csv_safe import escape_cell, read_csv_rows, unescape_cell, write_csv
from sheetbuilder.errors import OutputExists

HOSTILE = ['=HYPERLINK("http://x","y")', "+1+2", "-2+3", "@SUM(A1)", "\tTAB", "\rCR"]


@pytest.mark.parametrize("first", ["=", "+", "-", "@", "\t", "\r"],
                         ids=["equals", "plus", "minus", "at", "tab", "carriage_return"])
def test_text_beginning_with_a_dangerous_character_gets_a_leading_quote(first):
    assert "'" + first + "x" == escape_cell(first + "x")


@pytest.mark.parametrize("text", HOSTILE, ids=["hyperlink", "plus", "minus", "at", "tab", "cr"])
def test_formula_like_terms_are_escaped_and_unescaped_back(text):
    assert "'" + text == escape_cell(text)
    assert text == unescape_cell(escape_cell(text))


@pytest.mark.parametrize("text", ["plant pot", "a=b", "", "'quoted", "50% off"],
                         ids=["plain", "equals_inside", "empty", "leading_quote_then_letter", "percent"])
def test_harmless_text_is_written_unchanged(text):
    assert text == escape_cell(text)


def test_a_quote_before_a_dangerous_character_survives_the_round_trip():
    assert "''=x" == escape_cell("'=x")
    assert "'=x" == unescape_cell(escape_cell("'=x"))


def test_a_negative_number_is_a_number_and_is_not_escaped():
    assert "-2" == escape_cell(-2)
    assert "-2.5" == escape_cell(-2.5)


def test_none_and_nan_are_written_blank():
    assert "" == escape_cell(None)
    assert "" == escape_cell(float("nan"))


def test_round_trip_gives_back_the_same_text_exactly(tmp_path):
    texts = HOSTILE + ["'=x", "'quoted", "two\nlines", "comma, and \"quotes\"", "🌱 seed tray 🌼", "עציץ", ""]
    path = write_csv(tmp_path / "terms.csv", ["search_term"], [[t] for t in texts])
    assert [["search_term"]] + [[t] for t in texts] == read_csv_rows(path)


def test_the_file_is_utf8_with_a_byte_order_mark(tmp_path):
    path = write_csv(tmp_path / "terms.csv", ["term"], [["Straße"]])
    data = path.read_bytes()
    assert b"\xef\xbb\xbf" == data[:3]
    assert "Straße" in data.decode("utf-8-sig")


def test_every_dangerous_text_cell_is_written_with_its_quote(tmp_path):
    path = write_csv(tmp_path / "terms.csv", ["term"], [[t] for t in HOSTILE])
    with open(path, encoding="utf-8-sig", newline="") as fh:
        raw = [row[0] for row in csv.reader(fh)][1:]
    assert ["'" + t for t in HOSTILE] == raw


def test_a_negative_number_stays_numeric_in_the_file(tmp_path):
    path = write_csv(tmp_path / "spend.csv", ["term", "spend"], [["-2+3", -2], ["pot", -2.5]])
    lines = path.read_text(encoding="utf-8-sig").splitlines()
    assert ['"term","spend"', '"\'-2+3",-2', '"pot",-2.5'] == lines
    assert [["term", "spend"], ["-2+3", "-2"], ["pot", "-2.5"]] == read_csv_rows(path)


def test_an_existing_file_is_not_overwritten_without_force(tmp_path):
    path = tmp_path / "terms.csv"
    path.write_bytes(b"keep me")
    with pytest.raises(OutputExists):
        write_csv(path, ["term"], [["pot"]])
    assert b"keep me" == path.read_bytes()


def test_force_overwrites_an_existing_file(tmp_path):
    path = tmp_path / "terms.csv"
    path.write_bytes(b"old")
    write_csv(path, ["term"], [["pot"]], force=True)
    assert [["term"], ["pot"]] == read_csv_rows(path)


def test_an_error_while_writing_leaves_no_temporary_file_and_no_output(tmp_path):
    class Unprintable:
        def __str__(self):
            raise RuntimeError("cannot print")

    out = tmp_path / "out"
    out.mkdir()
    with pytest.raises(RuntimeError, match="cannot print"):
        write_csv(out / "terms.csv", ["term"], [["pot"], [Unprintable()]])
    assert [] == sorted(p.name for p in out.iterdir())


def test_an_error_while_overwriting_keeps_the_previous_file(tmp_path, monkeypatch):
    path = tmp_path / "terms.csv"
    path.write_bytes(b"previous")

    def failing_replace(src, dst):
        raise OSError("disk full")

    monkeypatch.setattr(atomic.os, "replace", failing_replace)
    with pytest.raises(OSError, match="disk full"):
        write_csv(path, ["term"], [["pot"]], force=True)
    assert b"previous" == path.read_bytes()
    assert ["terms.csv"] == sorted(p.name for p in tmp_path.iterdir())
