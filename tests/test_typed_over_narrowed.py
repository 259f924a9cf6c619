"""The typed-over check reads a table with another below it in its formula and key columns alone, and the whole
sheet again when the sheet is not laid out as planned: what it finds is what reading every column finds.

A saved sheet is given as rows of cells; the fake book streams them as the readers do (only the columns asked for,
asked at each row; a row without such a cell not handed over; a formula cell not handed over to a caller asking for
typed cells alone, :func:`sheetbuilder.weekly.fast_cells.typed_only`), and counts the cells it hands over.
"""
from __future__ import annotations

from sheetbuilder.weekly.fast_cells import typed_only
from sheetbuilder.weekly.typed_over import _layout, _SheetCheck, typed_over
from sheetbuilder.workbook.spec import DATA, FORMULA, Column, Sheet, Table, WorkbookSpec

F = object()  # a formula cell


class _Book:
    def __init__(self, rows: dict[int, dict[int, object]]):
        self.rows, self.handed, self.streams = rows, 0, 0

    def sheet(self, name):
        return name

    def stream(self, sheet, on_row, columns=None):
        self.streams += 1
        for r in sorted(self.rows):
            cells = {c: ((None, True) if v is F else (v, False)) for c, v in self.rows[r].items()
                     if (columns is None or c in columns) and not (v is F and typed_only(columns))}
            self.handed += len(cells)
            if cells and on_row(r, cells):
                return


def _table(first_row: int, n: int, title: str) -> Table:
    """Key | Size (typed) | Note (typed) | Cost (formula) | Share (formula), n body rows."""
    return Table(first_row, [Column("Key", "text", DATA, [f"k{i}" for i in range(n)]),
                             Column(f"{title} size", "int", DATA, [1] * n),
                             Column("Note", "text", DATA, [""] * n),
                             Column(f"{title} cost", "money", FORMULA, [0.0] * n, "=1"),
                             Column("Share", "percent", FORMULA, [0.0] * n, "=1")])


def _spec() -> WorkbookSpec:
    # The first table's header on row 2 (0-based), 6 body rows (3 to 8), the second's header on row 11, 3 body rows.
    return WorkbookSpec([Sheet("Sheet", table=_table(2, 6, "Top"), more=[_table(11, 3, "Low")])], [], "$")


def _saved(top: int = 2, low: int = 11, top_rows: int = 6) -> dict[int, dict[int, object]]:
    """The sheet as the plan lays it out (or with its tables' header rows elsewhere)."""
    rows: dict[int, dict[int, object]] = {0: {0: "a title"}}
    for head, n, title in ((top, top_rows, "Top"), (low, 3, "Low")):
        rows[head] = {0: "Key", 1: f"{title} size", 2: "Note", 3: f"{title} cost", 4: "Share"}
        for i in range(n):
            rows[head + 1 + i] = {0: f"k{i}", 1: 1, 2: "a note", 3: F, 4: F}
    return rows


def _found(rows) -> tuple[list[tuple[int, str, str]], _Book]:
    book = _Book(rows)
    return [(p.row, p.column, p.message.partition("holds ")[0].rstrip(": ")) for p in typed_over(book, _spec(), {})], book


def test_a_value_typed_over_a_formula_in_either_table_is_reported_with_its_key():
    rows = _saved()
    rows[5][3], rows[13][4] = 7.5, 0.2  # Top cost of k2, Share of k1 in the second table
    found, book = _found(rows)
    assert [(6, "Top cost", "k2"), (14, "Share", "k1")] == found
    assert 2 == book.streams  # the sheet once, then the keys of the row holding the last table's typed cell


def test_the_first_tables_body_is_read_in_its_formula_and_key_columns_alone():
    found, narrowed = _found(_saved())
    assert [] == found
    wide = _Book(_saved())
    check = _SheetCheck("Sheet", [_layout(t, None) for t in (_spec().sheets[0].table, *_spec().sheets[0].more)],
                        narrow=False)
    wide.stream("Sheet", check.row, check.columns)
    assert [] == check.named(wide)
    # Each of the first table's six body rows hands over its key alone, not its typed Size and Note (the title and
    # both header rows are read whole; the last table's formula columns hold no typed cell).
    assert (1 + 5 + 6 * 1 + 5, 1 + 5 + 6 * 3 + 5) == (narrowed.handed, wide.handed)


def test_rows_deleted_from_the_first_table_are_read_again_in_full_and_the_second_table_found():
    # Two body rows deleted: the second table's header row moves up by two, inside the first table's planned rows.
    rows = _saved(top_rows=4, low=9)
    rows[11][3] = 3.0  # Low cost of k1, now on row 12
    found, book = _found(rows)
    assert [(12, "Low cost", "k1")] == found
    assert 3 == book.streams  # narrowed, again in full, the keys of the typed cell's row


def test_rows_inserted_between_the_tables_are_read_again_in_full():
    rows = _saved(low=13)  # two rows inserted above the second table
    rows[11] = {0: "typed by hand", 3: "not a table"}
    rows[14][3] = 3.0
    found, book = _found(rows)
    assert [(15, "Low cost", "k0")] == found
    assert 3 == book.streams


def test_a_body_row_without_its_key_is_read_again_in_full():
    rows = _saved()
    del rows[4][0]  # k1's key cleared, its formulas kept: its row hands over no cell of the narrowed columns
    rows[13][3] = 2.0  # Low cost of k1 in the second table
    found, book = _found(rows)
    assert [(14, "Low cost", "k1")] == found
    assert 3 == book.streams  # narrowed, again in full, the keys of the typed cell's row


def test_a_key_cleared_beside_a_value_typed_over_its_formula_is_reported_as_reading_every_column_does():
    rows = _saved()
    del rows[4][0]
    rows[4][3] = 9.0  # the row still hands over a cell: read narrowed, named by its blank key
    found, book = _found(rows)
    assert [(5, "Top cost", "")] == found
    assert 1 == book.streams
