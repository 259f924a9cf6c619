"""Cells typed over a formula, anywhere: found by the formula missing where the build wrote one.

The saved workbook's change list is planned again from the inputs it holds (the same plan the build
made); every table column the plan fills with formulas is then read in the saved sheet, one row at a
time, and a cell there holding a typed value instead of a formula is reported with its sheet, column
header and the row's key (product ID, or campaign / ad group / target / match type).

The test is the formula's presence, never its value: a file saved by a program that does not
recalculate (formulas kept, values dropped or stale) reports nothing, and sorted rows report nothing
(the columns are checked, the key only names the row). Each table is found by its header row,
whatever the tab is called now (:mod:`sheetbuilder.weekly.tabs`) and wherever the user moved its
columns (found by their header text, else where the plan put them).
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from sheetbuilder.errors import WARNING, Problem
from sheetbuilder.sheets.decisions import EditableColumns
from sheetbuilder.sheets.typed import DECISION_TABLES, EDITABLE_TABLES, key_text
from sheetbuilder.values import is_blank, shown
from sheetbuilder.workbook.spec import FORMULA, Table, WorkbookSpec

NUMERIC_STYLES = ("int", "money", "percent", "ratio")
MAX_KEYS = 4  # a table without a declared key is named by its first text columns, at most these
HEADER_SHARE = 0.6  # a row holding this share of a table's headers is taken for its header row
INSERTED_COLUMNS = 64  # columns a user may insert into a table and still have its header row found


@dataclass
class _Layout:
    """One planned table as the check reads it."""

    headers: list[str]
    formulas: list[int]  # planned columns holding formulas
    keys: list[int]  # planned columns naming a row
    rows: int
    decl: EditableColumns | None
    first_row: int = 0  # its header row as planned (0-based)

    @property
    def fewest(self) -> int:
        """The fewest text cells a row holds to be taken for this table's header row (a header text may stand more
        than once); a row with fewer is not compared with the headers at all."""
        need = max(1, HEADER_SHARE * len(self.headers))
        reached = 0
        for n, count in enumerate(sorted((self.headers.count(h) for h in set(self.headers)), reverse=True), 1):
            reached += count
            if reached >= need:
                return n
        return len(self.headers) + 1  # no row can be taken for it


def _layout(table: Table, decl: EditableColumns | None) -> _Layout:
    headers = [c.header for c in table.columns]
    if decl is not None:
        keys = [headers.index(decl.headers[k]) for k in decl.keys if decl.headers[k] in headers]
    else:
        keys = []
        for i, c in enumerate(table.columns):
            if c.kind == FORMULA or c.style.split("_")[0] in NUMERIC_STYLES or len(keys) == MAX_KEYS:
                break
            keys.append(i)
    return _Layout(headers, [i for i, c in enumerate(table.columns) if c.kind == FORMULA], keys, table.n_rows, decl,
                   table.first_row)


def _decls(spec_tables: dict[int, str]) -> dict[int, EditableColumns]:
    """{id of a planned table's columns: the declaration of its typed column}."""
    by_key = {decl.table: decl for decl in EDITABLE_TABLES}
    return {ident: by_key[key] for ident, key in spec_tables.items() if key in by_key}


class _Wanted(set):
    """The columns a stream of the check reads, their typed cells alone: a header row holds typed text, and a
    cell typed over a formula is typed (a reader may leave formula cells unread,
    :func:`sheetbuilder.weekly.fast_cells.typed_only`; one that hands them over is read the same)."""

    typed_only = True


class _SheetCheck:
    """The streamed check of one saved sheet: its tables' header rows found in order, then their bodies read.

    narrow: the body of a table with another below it is read in its formula and key columns alone (Groups' first
    table holds ten typed columns a row), the columns a header row can reach read again after its last planned row.
    This holds only while the sheet is laid out as planned: every body row handed over (each holds a key), and the
    next table's header row found where the plan put it, as far below; otherwise :attr:`redo` is set and the sheet is
    read again without narrowing (a row inserted or deleted by hand), so the check finds what reading every column
    finds.
    """

    def __init__(self, sheet: str, layouts: list[_Layout], narrow: bool = True):
        self.sheet, self.layouts = sheet, layouts
        self.narrow = narrow
        self.narrowed: tuple[int, int] | None = None  # (the next body row expected, the next header row expected)
        self.expect_header: int | None = None  # the row the next table's header must be found on (narrowed before)
        self.redo = False  # the sheet is not laid out as planned: read it again without narrowing
        self.next = 0  # the next table whose header row is looked for
        self.current: _Layout | None = None
        self.last = -1  # the current table's last body row (0-based), as planned
        self.at: dict[int, int] = {}  # planned column -> saved column
        self.saved_headers: dict[int, str] = {}
        # Read until the last table's header row is found: the columns a header row can reach (tables start at
        # column A; a user may insert columns), their typed cells; then only the typed cells of the columns checked.
        self.wide = range(max(len(t.headers) for t in layouts) + INSERTED_COLUMNS)
        self.columns = _Wanted(self.wide)
        self.found: list[Problem | None] = []  # None: a typed cell whose row's keys are read after the stream
        self.unnamed: dict[int, tuple[int, list[int], _Layout, int, Any, str]] = {}  # {index in found: its cell}
        self.fewest = [t.fewest for t in layouts]
        self.keys_read = True  # the columns read hold the current table's keys (until its last header row is found)

    def _header(self, r: int, cells: dict[int, tuple[Any, bool]]) -> bool:
        """Whether the row is the next table's header row (and if so, map its columns)."""
        if self.next >= len(self.layouts):
            return False
        layout = self.layouts[self.next]
        fewest = self.fewest[self.next]
        if len(cells) < fewest or sum(isinstance(v, str) and not formula for v, formula in cells.values()) < fewest:
            return False  # too few cells, or too few texts, to hold enough of its headers
        texts = {c: key_text(v) for c, (v, formula) in cells.items() if isinstance(v, str) and not formula}
        present = set(texts.values())
        if sum(h in present for h in layout.headers) < max(1, HEADER_SHARE * len(layout.headers)):
            return False
        where: dict[str, int] = {}
        for c, t in sorted(texts.items()):
            where.setdefault(t, c)
        self.at = {i: where[h] for i, h in enumerate(layout.headers) if h in where}
        taken, planned = set(self.at.values()), set(layout.headers)
        # Right of where the table's last column was found stand the user's own columns (a workbook built when the
        # table had fewer columns has them where today's plan puts its last ones): never taken for a planned one.
        end = self.at.get(len(layout.headers) - 1, len(layout.headers))
        for i in range(min(end, len(layout.headers))):  # a header renamed where it stands, its place taken by no other
            if i not in self.at and i not in taken and texts.get(i) not in planned:
                self.at[i] = i
        if self.expect_header is not None and r != self.expect_header:
            self.redo = True  # not where the plan put it, as far below the table above: read the sheet in full
        self.expect_header = None
        self.saved_headers = texts
        self.current, self.last = layout, r + layout.rows
        self.next += 1
        keys = [self.at.get(k) for k in layout.keys]
        if self.next < len(self.layouts) and self.narrow and keys and None not in keys and layout.rows:
            self.columns.clear()  # the body: its formula and key columns (each body row holds a key)
            self.columns.update({self.at[i] for i in layout.formulas if i in self.at} | set(keys))
            self.narrowed = (r + 1, r + self.layouts[self.next].first_row - layout.first_row)
        elif self.next == len(self.layouts):  # no header left to look for: only the typed cells of its formula
            self.columns.clear()           # columns are read (the keys of a row holding one are read after)
            self.columns.update(self.at.get(i, -1) for i in layout.formulas)
            self.keys_read = False
        return True

    def row(self, r: int, cells: dict[int, tuple[Any, bool]]) -> bool:
        """Check one saved row; True once every table was read (nothing more to read), or once the sheet is found
        not laid out as planned while narrowed (:attr:`redo`)."""
        if self.redo:
            return True
        if self.narrowed is not None:
            expected, header = self.narrowed
            if r != expected:  # a body row without a key, or rows deleted: read it again in full
                self.redo = True
                return True
            if r >= self.last:  # its last body row: the columns a header row can reach, from the next row on
                self.narrowed, self.expect_header = None, header
                self.columns.clear()
                self.columns.update(self.wide)
            else:
                self.narrowed = (r + 1, header)
            self._body(r, cells)
            return False
        if self._header(r, cells) or self.current is None or r > self.last:
            return self.next >= len(self.layouts) and r >= self.last
        self._body(r, cells)
        return self.next >= len(self.layouts) and r >= self.last

    def _body(self, r: int, cells: dict[int, tuple[Any, bool]]) -> None:
        """Check one body row of the current table: a typed value in a formula column is reported."""
        layout = self.current
        for i in layout.formulas:
            c = self.at.get(i)
            if c is None:
                continue
            value, formula = cells.get(c, (None, False))
            if formula or is_blank(value):
                continue
            header = self.saved_headers.get(c) or layout.headers[i]
            keys = [self.at.get(k, -1) for k in layout.keys]
            if not self.keys_read:
                self.unnamed[len(self.found)] = (r, keys, layout, i, value, header)
                self.found.append(None)
                continue
            key = " / ".join(key_text(cells.get(k, (None, False))[0]) for k in keys)
            self.found.append(Problem(self.sheet, r + 1, header, _message(layout, i, key, value), WARNING))

    def named(self, book: Any) -> list[Problem]:
        """The problems found, each typed cell read without its row's keys named by them (the sheet read again
        for those rows' key cells alone: only when a cell was typed over)."""
        if self.unnamed:
            rows = {r for r, *_ in self.unnamed.values()}
            last, columns = max(rows), {k for _, keys, *_ in self.unnamed.values() for k in keys}
            found: dict[int, dict[int, tuple[Any, bool]]] = {}

            def keep(r: int, cells: dict[int, tuple[Any, bool]]) -> bool:
                if r in rows:
                    found[r] = cells
                return r >= last
            if columns:
                book.stream(self.sheet, keep, columns)
            for at, (r, keys, layout, i, value, header) in self.unnamed.items():
                key = " / ".join(key_text(found.get(r, {}).get(k, (None, False))[0]) for k in keys)
                self.found[at] = Problem(self.sheet, r + 1, header, _message(layout, i, key, value), WARNING)
        return [p for p in self.found if p is not None]


def _message(layout: _Layout, column: int, key: str, value: Any) -> str:
    """What the report says of one typed-over cell, and where to type instead."""
    decl = layout.decl
    named = f"{key}: " if key.strip(" /") else ""
    if decl is not None and decl.same_figure_header == layout.headers[column]:
        return (f"{named}holds {shown(value)} typed over its formula; read as typed in "
                f"'{decl.headers[decl.value]}' (the sheet computes with it) and carried next week: "
                f"type your {decl.numeric or 'value'} in '{decl.headers[decl.value]}'")
    text = (f"{named}holds {shown(value)} where the build wrote a formula: typed over by hand, it is not read "
            "(the change list and next week's workbook use the formula's value)")
    if decl is not None and decl in DECISION_TABLES:
        text += f"; type your decision in '{decl.headers[decl.value]}'"
    return text


def typed_over(book: Any, spec: WorkbookSpec, tables: dict[str, Any]) -> list[Problem]:
    """A Problem per cell of the saved workbook holding a typed value where the plan has a formula.

    Args:
        book: the opened saved workbook (:class:`sheetbuilder.weekly.saved.SavedBook`).
        spec: the workbook planned again from the inputs it holds.
        tables: the plan's tables ({key: PlannedTable}), which tell each table's typed column.
    """
    decls = _decls({id(t.columns): key for key, t in tables.items()})
    out: list[Problem] = []
    for sheet in spec.sheets:
        planned = sorted((t for t in (sheet.table, *sheet.more) if t is not None and any(c.kind == FORMULA for c in
                                                                                          t.columns)),
                         key=lambda t: t.first_row)
        if not planned:
            continue
        layouts = [_layout(t, decls.get(id(t.columns))) for t in planned]
        now = book.sheet(sheet.name) or _renamed(book, layouts)
        if now is None:
            out.append(Problem(sheet.name, None, None, NOT_FOUND, WARNING))
            continue
        check = _SheetCheck(now, layouts)
        book.stream(now, check.row, check.columns)
        if check.redo or check.narrowed is not None or check.expect_header is not None:
            check = _SheetCheck(now, layouts, narrow=False)  # not laid out as planned: every column read
            book.stream(now, check.row, check.columns)
        out += check.named(book)
    return out


NOT_FOUND = ("this sheet is not in the workbook under its name, and no other sheet holds its header row (deleted, "
             "or renamed and its headers changed): values typed over its formulas could not be looked for. If it "
             "was deleted, the formulas that read it show #REF! in this workbook; the change list and next week's "
             "workbook are computed from the inputs and are not affected, and build --previous writes the sheet "
             "again. Anything typed on it is not carried.")
INSERTED_ROWS = 20  # rows a user may insert above a table whose renamed tab is found by its header row


def _renamed(book: Any, layouts: list[_Layout]) -> str | None:
    """The one sheet, among those no sheet we built was found on, whose top rows hold the first table's header row
    (a tab renamed that nothing else finds: the sheets without a typed column); None when none or several do."""
    tabs = book.tabs
    claimed = set(tabs.found.values()) | {s for copies in tabs.copies.values() for s in copies}
    holding = []
    for name in (s for s in book.sheetnames if s not in claimed):
        check = _SheetCheck(name, layouts)
        if any(check._header(r, {c: (v, False) for c, v in enumerate(row) if not is_blank(v)})
               for r, row in enumerate(book.head(name, layouts[0].first_row + 1 + INSERTED_ROWS))):
            holding.append(name)
    return holding[0] if len(holding) == 1 else None
