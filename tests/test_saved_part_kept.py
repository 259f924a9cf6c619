"""A saved sheet read for its typed columns keeps its inflated bytes for the one stream after it (the typed-over
check's), so the part is not inflated twice: that stream hands over what a stream of the freshly opened file hands
over, for that sheet and no other, and the bytes are dropped once streamed."""
from __future__ import annotations

from sheetbuilder.sheets.decisions import NO_SAVED_VALUE
from sheetbuilder.weekly.xlsx import XlsxFile


def _streamed(book: XlsxFile, sheet: str) -> list[tuple[int, dict]]:
    rows: list[tuple[int, dict]] = []
    book.stream(sheet, lambda r, cells: rows.append((r, cells)) and False, None, NO_SAVED_VALUE)
    return rows


def test_the_stream_after_a_first_read_hands_over_that_sheets_rows_from_the_bytes_it_kept(demo_build):
    fresh = XlsxFile(demo_build.output)
    expected = {sheet: _streamed(fresh, sheet) for sheet in ("Bids", "Terms")}
    fresh.close()
    book = XlsxFile(demo_build.output)
    rows, kept = book.read_keeping_rows("Bids", frozenset({0, 1}), True, NO_SAVED_VALUE)
    assert None is kept  # read by the regular-expression reader: its bytes are kept, not its rows
    assert "Campaign" in [row[0] for row in rows[:6]]
    assert ["xl/worksheets/sheet4.xml"] == list(book._inflated)
    assert expected["Terms"] == _streamed(book, "Terms")  # another sheet: read from the file, the kept bytes untouched
    assert ["xl/worksheets/sheet4.xml"] == list(book._inflated)
    assert expected["Bids"] == _streamed(book, "Bids")
    assert {} == book._inflated  # dropped once streamed
    assert expected["Bids"] == _streamed(book, "Bids")  # and a later stream reads the file again
    assert len(expected["Bids"]) > 90
    book.close()


def test_a_part_beyond_the_bytes_kept_at_once_is_inflated_again_and_read_the_same(demo_build, monkeypatch):
    import sheetbuilder.weekly.xlsx as xlsx
    fresh = XlsxFile(demo_build.output)
    expected = _streamed(fresh, "Terms")
    fresh.close()
    book = XlsxFile(demo_build.output)
    book.read_keeping_rows("Bids", frozenset({0}), True, NO_SAVED_VALUE)
    kept = len(book._inflated["xl/worksheets/sheet4.xml"])
    monkeypatch.setattr(xlsx, "KEPT_BYTES", kept + 1000)  # Bids kept; Terms (larger) would pass the bound
    book.read_keeping_rows("Terms", frozenset({0}), True, NO_SAVED_VALUE)
    assert ["xl/worksheets/sheet4.xml"] == list(book._inflated)
    assert expected == _streamed(book, "Terms")
    book.close()
    assert {} == book._inflated
