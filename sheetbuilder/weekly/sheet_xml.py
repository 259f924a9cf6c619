"""A saved worksheet's cells read with a streaming XML parser, in every spelling the standard allows.

ECMA-376 Part 1 (SpreadsheetML, 18.3.1.4 c, 18.3.1.73 row, 18.18.11 ST_CellType) lets a program
write the same cell many ways: attributes in any order, single or double quotes, a namespace
prefix on every element, no ``r`` on a row or cell (it then follows the previous one), a string
shared, inline (plain or in rich-text runs, phonetic runs excluded) or the cached text of a
formula, a date as a serial number in a date format or as ISO 8601 text (``t="d"``), booleans
and error values. Expat (the C parser Python ships) reads the part as a stream, so memory grows
with the cells kept, not with the sheet; no DTD is allowed (the guard refuses them before this).

Each read first tries :mod:`sheetbuilder.weekly.fast_cells`, a regular expression over the shapes
xlsxwriter, LibreOffice and openpyxl write (three to five times faster); it gives up on anything else
(NotFast), and the part is then read here by expat from its start, so both give the same values.
"""
from __future__ import annotations

import datetime as dt
from dataclasses import dataclass, field
from typing import IO, Any, Callable
from xml.parsers import expat

from sheetbuilder.reading import guard
from sheetbuilder.weekly import fast_cells
from sheetbuilder.reading.guard import UnsafeWorkbook

MAIN_NS = "http://schemas.openxmlformats.org/spreadsheetml/2006/main"
CHUNK = 1 << 16


class DamagedSheet(ValueError):
    """The part is not well-formed XML, or a cell reference cannot be read."""


class _Stop(Exception):
    """A row handler asked to read no further."""


def column_index(letters: str) -> int:
    """0-based column of 'A', 'AB' ..."""
    n = 0
    for ch in letters:
        n = n * 26 + (ord(ch.upper()) - 64)
    return n - 1


def split_reference(ref: str) -> tuple[int, int]:
    """(0-based row, 0-based column) of a reference such as 'B12' or '$B$12'."""
    ref = ref.replace("$", "")
    i = 0
    while i < len(ref) and ref[i].isalpha():
        i += 1
    if i == 0 or i == len(ref) or not ref[i:].isdigit() or i > 3:
        raise DamagedSheet(f"the cell reference '{ref}' cannot be read")
    return int(ref[i:]) - 1, column_index(ref[:i])


def iso_datetime(text: str) -> dt.datetime | dt.time | str:
    """A t="d" cell's ISO 8601 text as a datetime (a time alone as a time); the text itself when unreadable."""
    text = text.strip()
    try:
        if "T" not in text and ":" in text and "-" not in text:
            return dt.time.fromisoformat(text)
        value = dt.datetime.fromisoformat(text.replace("Z", "+00:00"))
        return value.replace(tzinfo=None)
    except ValueError:
        return text


def number(text: str) -> int | float:
    """A stored number as openpyxl reads it: int when written without a point or exponent."""
    if "." in text:
        return float(text)  # (float strips the spaces str.strip strips)
    try:
        return int(text)  # int reads no point, exponent, inf or nan: what it reads is what the rest reads as an int
    except ValueError:
        pass
    text = text.strip()
    if any(ch in text for ch in ".eE") or text.lower() in ("inf", "-inf", "nan"):
        return float(text)
    return int(text)


@dataclass
class _Cell:
    row: int = 0
    col: int = 0
    kind: str = "n"
    style: int = 0
    wanted: bool = False
    formula: bool = False
    value: list[str] = field(default_factory=list)
    inline: list[str] = field(default_factory=list)


@dataclass
class CellReader:
    """How values are turned into Python: the shared strings, the date styles and the date epoch."""

    shared: list[str]
    date_styles: frozenset[int] | set[int]
    from_serial: Callable[[float], Any]
    no_saved_value: Any = None
    checked: set[str] | None = None  # parts the regular-expression reader read to their end (not checked again)
    part: str = ""  # the part read, as checked names it

    def __post_init__(self) -> None:
        self.dated: dict[str, bool] = {}  # {a cell's s attribute as written: whether it is a date style}

    def value(self, cell: _Cell, formulas: bool) -> Any:
        """The cell's value as openpyxl gives it in values-only mode."""
        return self.value_of(cell.kind, cell.style, cell.formula, "".join(cell.value) if cell.value else None,
                             "".join(cell.inline), formulas)

    def raw_value(self, raw: tuple, formulas: bool) -> Any:
        """The value of a cell as :func:`sheetbuilder.weekly.fast_cells.scan` hands it over."""
        _, _, style, kind, formula, text, inline = raw
        dated = self.dated.get(style)
        if dated is None:
            dated = self.dated[style] = (int(style) if style else 0) in self.date_styles
        if not dated and text and (not kind or kind == "n"):  # a number, the commonest cell: at once
            try:
                return number(text)
            except ValueError:
                pass  # value_of refuses it the one way
        elif kind == "s" and text:  # a shared string, the next commonest
            try:
                return self.shared[int(text)]
            except (ValueError, IndexError):
                pass  # value_of refuses it the one way
        return self.value_of(kind or "n", int(style) if style else 0, bool(formula), text, inline, formulas)

    def value_of(self, kind: str, style: int, formula: bool, text: str | None, inline: str, formulas: bool) -> Any:
        """A cell's value from its type, style, whether it holds a formula, its saved value text and inline text."""
        if kind == "inlineStr":
            return inline
        if not text:
            return self.no_saved_value if formulas and formula else None
        if kind == "n":
            try:
                value = number(text)
            except ValueError:
                raise DamagedSheet(f"a number cell holds {text[:40]!r}") from None
            if style in self.date_styles:
                try:
                    return self.from_serial(value)
                except (OverflowError, ValueError):
                    return "#VALUE!"
            return value
        if kind == "s":
            try:
                return self.shared[int(text)]
            except (ValueError, IndexError):
                raise DamagedSheet(f"a cell points at shared string {text!r}, which the workbook does not hold") from None
        if kind == "b":
            return text.strip().lower() in ("1", "true")
        if kind in ("str", "e"):
            return text
        if kind == "d":
            return iso_datetime(text)
        return self.value_of("n", style, formula, text, inline, formulas)  # any other type reads as a number


_C, _ROW, _V, _F, _IS, _RPH, _T = range(1, 8)
_TAGS = {"c": _C, "row": _ROW, "v": _V, "f": _F, "is": _IS, "rPh": _RPH, "t": _T}
_DIGITS = "0123456789"


class _SheetParser:
    """The expat handlers of one read: the cell being read, where the last row and cell were, what is kept."""

    def __init__(self, reader: CellReader, columns: frozenset[int] | None, formulas: bool):
        self.reader, self.columns, self.formulas = reader, columns, formulas
        self.found: dict[int, dict[int, Any]] = {}
        self.row, self.col = -1, -1
        self.row_given = False  # the current row element says its number (its cells' references agree with it)
        self.depth_is = self.depth_rph = 0
        self.in_v = self.in_t = False
        self.cell = _Cell()
        self.tags: dict[str, int] = {}  # element names as the file spells them (any prefix) -> _C, _ROW ...
        self.letters: dict[str, int] = {}

    def tag(self, name: str) -> int:
        code = self.tags.get(name)
        if code is None:
            code = self.tags[name] = _TAGS.get(name.rsplit("}", 1)[-1], 0)
        return code

    def place(self, ref: str) -> tuple[int, int]:
        """(row, column) of a cell reference, the letters' column cached."""
        letters = ref.rstrip(_DIGITS)
        col = self.letters.get(letters)
        if col is None or len(letters) == len(ref):
            row, col = split_reference(ref)
            self.letters[letters] = col
            return row, col
        return int(ref[len(letters):]) - 1, col

    def start(self, name: str, attrs: dict[str, str]) -> None:
        code = self.tags.get(name) or self.tag(name)
        if code == _C:
            ref = attrs.get("r")
            if not ref:
                col = self.col + 1
            elif self.row_given and (col := self.letters.get(ref.rstrip(_DIGITS))) is not None \
                    and self.columns is not None and col not in self.columns:
                self.col, self.cell = col, _UNWANTED  # its row is the row element's: no need to read it
                return
            else:
                self.row, col = self.place(ref)
            self.col = col
            wanted = self.columns is None or col in self.columns
            self.cell = _Cell(self.row, col, attrs.get("t") or "n", int(attrs.get("s") or 0), wanted) if wanted \
                else _UNWANTED
        elif code == _ROW:
            r = attrs.get("r")
            self.row = int(r) - 1 if r else self.row + 1
            self.row_given = bool(r)
            self.col = -1
        elif not self.cell.wanted:
            return
        elif code == _V:
            self.in_v = True
        elif code == _F:
            self.cell.formula = True
        elif code == _IS:
            self.depth_is += 1
        elif code == _RPH:
            self.depth_rph += 1
        elif code == _T and self.depth_is:
            self.in_t = True

    def end(self, name: str) -> None:
        cell = self.cell
        if not cell.wanted:
            return
        code = self.tags.get(name) or self.tag(name)
        if code == _C:
            self.found.setdefault(cell.row, {})[cell.col] = self.reader.value(cell, self.formulas)
            self.cell = _UNWANTED
        elif code == _V:
            self.in_v = False
        elif code == _IS:
            self.depth_is -= 1
        elif code == _RPH:
            self.depth_rph -= 1
        elif code == _T:
            self.in_t = False

    def text(self, data: str) -> None:
        cell = self.cell
        if not cell.wanted:
            return
        if self.in_v:
            cell.value.append(data)
        elif self.in_t and not self.depth_rph:
            cell.inline.append(data)


_UNWANTED = _Cell()


class _Letters(dict):
    """{column letters: 0-based column}, filled as letters are met."""

    def __missing__(self, letters: str) -> int:
        col = self[letters] = column_index(letters)
        return col
_FORMULA_CELL = (None, True)  # a formula cell as a stream hands it over, its saved value unread


def padded_rows(found: dict[int, dict[int, Any]]) -> list[list[Any]]:
    """{row: {column: value}} as rows of one width, from row 0 to the last row found.

    Raises:
        UnsafeWorkbook: the rows times the width exceed guard.MAX_SAVED_CELLS (a cell far from the rest).
    """
    width = 1 + max((c for cells in found.values() for c in cells), default=-1)
    height = max(found, default=-1) + 1
    if height * width > guard.MAX_SAVED_CELLS:
        raise UnsafeWorkbook(f"refused: a sheet's cells reach row {height:,} and column {width:,}, more than "
                             f"{guard.MAX_SAVED_CELLS:,} cells to read; delete what lies far below or right of "
                             "its tables and save it again")
    empty: dict[int, Any] = {}
    columns = range(width)
    return [list(map(found.get(r, empty).get, columns)) for r in range(height)]  # (the row's look-ups in C)


def read_cells(handle: IO[bytes], reader: CellReader, columns: frozenset[int] | None = None,
               formulas: bool = False) -> list[list[Any]]:
    """Every row of a worksheet part as a list of values, padded to one width (only ``columns`` when given).

    Raises:
        DamagedSheet: the part is not well-formed XML or a reference cannot be read.
    """
    try:  # the regular-expression reader first; the expat reader whenever it does not read the part
        return _fast_read(handle, reader, columns, formulas)
    except fast_cells.NotFast:
        handle.seek(0)
    sheet = _SheetParser(reader, columns, formulas)
    _parse(handle, sheet)
    return padded_rows(sheet.found)


def _fast_read(handle: IO[bytes], reader: CellReader, columns: frozenset[int] | None,
               formulas: bool) -> list[list[Any]]:
    """:func:`read_cells` by :func:`sheetbuilder.weekly.fast_cells.scan` (NotFast: the part is not for it)."""
    found: dict[int, dict[int, Any]] = {}
    value = reader.raw_value
    for row, cells, _ in fast_cells.scan(handle, _Letters(), columns, reader.checked, reader.part):
        found[row] = {c: value(raw, formulas) for c, raw in cells.items()}
    return padded_rows(found)


def _parse(handle: IO[bytes], sheet: _SheetParser) -> None:
    """Run expat over the part with the sheet's handlers, chunk by chunk (a handler's _Stop ends it early)."""
    parser = expat.ParserCreate(namespace_separator="}")
    parser.buffer_text = True
    parser.StartElementHandler, parser.EndElementHandler, parser.CharacterDataHandler = sheet.start, sheet.end, sheet.text
    try:
        while chunk := handle.read(CHUNK):
            parser.Parse(chunk, False)
        parser.Parse(b"", True)
    except _Stop:
        return
    except expat.ExpatError as exc:
        raise DamagedSheet(str(exc)) from None
    except (ValueError, OverflowError) as exc:
        raise DamagedSheet(str(exc)) from None


class _RowStream(_SheetParser):
    """The expat handlers of a streamed read: each row handed over as it ends, then forgotten."""

    def __init__(self, reader: CellReader, columns: set[int] | frozenset[int] | None,
                 on_row: Callable[[int, dict[int, tuple[Any, bool]]], bool | None]):
        super().__init__(reader, columns, False)
        self.on_row = on_row
        self.cells: dict[int, tuple[Any, bool]] = {}
        self.skip_rows = 0  # row elements not handed over (another reader handed them over)

    def end(self, name: str) -> None:
        code = self.tags.get(name) or self.tag(name)
        if code == _ROW:
            if self.skip_rows:
                self.skip_rows -= 1
                self.cells = {}
            elif self.cells:
                cells, self.cells = self.cells, {}
                if self.on_row(self.row, cells):
                    raise _Stop
            return
        cell = self.cell
        if code == _C and cell.wanted:  # a formula's saved value is not read: only its presence is asked for
            self.cells[cell.col] = _FORMULA_CELL if cell.formula else (self.reader.value(cell, False), False)
            self.cell = _UNWANTED
        elif cell.wanted:
            super().end(name)


class KeptRows:
    """The rows of a sheet as a stream of all its columns hands them over, kept compactly for a later stream.

    Each row is kept as its columns (one tuple shared by every row with the same columns) and its values,
    a formula cell as a marker: about a pointer per cell besides the values themselves.
    """

    FORMULA = object()  # a formula cell, its saved value unread

    def __init__(self) -> None:
        self.rows: list[tuple[int, tuple[int, ...], tuple[Any, ...]]] = []
        self._columns: dict[tuple[int, ...], tuple[int, ...]] = {}

    def keep(self, row: int, cells: dict[int, Any]) -> None:
        """Keep one row: {column: value, or FORMULA}."""
        columns = tuple(cells)
        self.rows.append((row, self._columns.setdefault(columns, columns), tuple(cells.values())))

    def stream(self, on_row: Callable[[int, dict[int, tuple[Any, bool]]], bool | None],
               columns: set[int] | frozenset[int] | None = None) -> None:
        """Hand the rows kept to on_row exactly as :func:`stream_cells` would hand over the sheet's."""
        formula = self.FORMULA
        for r, cols, values in self.rows:
            cells = {c: _FORMULA_CELL if v is formula else (v, False) for c, v in zip(cols, values)
                     if columns is None or c in columns}
            if cells and on_row(r, cells):
                return


class _KeepingRead(_RowStream):
    """A read of some columns that also keeps every row as a stream of all columns would hand it over."""

    def __init__(self, reader: CellReader, columns: frozenset[int] | None, formulas: bool, kept: KeptRows):
        super().__init__(reader, None, kept.keep)
        self.kept_columns, self.formulas = columns, formulas

    def end(self, name: str) -> None:
        cell = self.cell
        if cell.wanted and (self.tags.get(name) or self.tag(name)) == _C:
            read = self.kept_columns is None or cell.col in self.kept_columns
            if read:
                value = self.reader.value(cell, self.formulas)
                self.found.setdefault(cell.row, {})[cell.col] = value
            self.cells[cell.col] = KeptRows.FORMULA if cell.formula else (
                value if read else self.reader.value(cell, False))
            self.cell = _UNWANTED
            return
        super().end(name)


def read_keeping_rows(handle: IO[bytes], reader: CellReader, columns: frozenset[int] | None = None,
                      formulas: bool = False) -> tuple[list[list[Any]], KeptRows | None]:
    """:func:`read_cells` and, in the same pass, every row as :func:`stream_cells` hands it over (all columns).

    A later stream of the sheet replays the rows kept (:meth:`KeptRows.stream`) instead of reading the part again.
    A part the regular-expression reader reads (:mod:`sheetbuilder.weekly.fast_cells`) keeps nothing (None):
    streaming it again with the few columns a stream asks for costs less than keeping every cell of it.

    Raises:
        DamagedSheet: the part is not well-formed XML or a reference cannot be read.
    """
    try:  # the regular-expression reader first; the expat reader whenever it does not read the part
        return _fast_read(handle, reader, columns, formulas), None
    except fast_cells.NotFast:
        handle.seek(0)
    kept = KeptRows()
    sheet = _KeepingRead(reader, columns, formulas, kept)
    _parse(handle, sheet)
    return padded_rows(sheet.found), kept


def stream_cells(handle: IO[bytes], reader: CellReader,
                 on_row: Callable[[int, dict[int, tuple[Any, bool]]], bool | None],
                 columns: set[int] | frozenset[int] | None = None) -> None:
    """Hand each row of a worksheet part to on_row as it is read: (0-based row, {column: (value, holds a formula)}).

    Only the cells of columns are read when given (a set on_row may change between rows); rows
    without such cells are not handed over. A set asking for typed cells alone (its attribute ``typed_only``,
    :func:`sheetbuilder.weekly.fast_cells.typed_only`) may also go without its formula and empty cells: the
    regular-expression reader leaves them unread, the expat reader hands them over all the same.
    A formula cell reads as (None, True), its saved value unread.
    on_row returns True to stop reading. Memory holds one row at a time.

    Raises:
        DamagedSheet: the part is not well-formed XML or a reference cannot be read.
    """
    delivered = (-1, 0)  # the last row the regular-expression reader handed over, and its ordinal
    try:
        value = reader.raw_value
        for row, cells, ordinal in fast_cells.scan(handle, _Letters(), columns, reader.checked, reader.part):
            delivered = (row, ordinal)
            if on_row(row, {c: _FORMULA_CELL if raw[4] else (value(raw, False), False) for c, raw in cells.items()}):
                return
        return
    except fast_cells.NotFast:
        handle.seek(0)
    # The rows handed over were read right: the expat reader hands over the rest, from the row element after the
    # last one handed over (counted by ordinal; by row number in a part checked before, its rows in increasing order)
    sheet = _RowStream(reader, columns, on_row)
    if delivered[1] is None:
        last = delivered[0]
        sheet.on_row = lambda row, cells: on_row(row, cells) if row > last else None
    else:
        sheet.skip_rows = delivered[1]
    _parse(handle, sheet)
