"""A saved OpenDocument spreadsheet (.ods) read as an .xlsx is read: its sheets, their cells, its defined names.

OpenDocument 1.2 and 1.3 (OASIS) keep a spreadsheet as a zip whose ``mimetype`` part reads
``application/vnd.oasis.opendocument.spreadsheet`` (Part 3, 3.3) and whose ``content.xml`` holds
every sheet as a ``table:table`` (Part 1, 9.1.2). A run of equal rows or cells is written once
with ``table:number-rows-repeated`` or ``table:number-columns-repeated`` (9.1.3, 9.1.4), and
spreadsheet programs repeat empty rows and cells to the sheet's last row and column, so only
cells holding a value or a formula are kept: a sheet costs what its used cells cost. A cell's
value is in its attributes by ``office:value-type`` (19.385: float, percentage, currency, date,
time, boolean, string) and its text in ``text:p`` paragraphs, one a line, where ``text:s``,
``text:tab`` and ``text:line-break`` stand for the spaces, tabs and line breaks typed (6.1.3 to
6.1.5). White space written as it is stays as it is: OpenDocument 1.2 (6.1.2) would collapse a run
of it, but LibreOffice (7.4) writes the leading and doubled spaces and line breaks of a cell of
several lines as they are and reads them back so, and a cell's value is what the program that
saved it shows. A formula's error is written by LibreOffice as ``calcext:value-type="error"``
with the error's text as the cell's text.

``content.xml`` is read with expat as a stream, never as a tree: once on opening to find each
sheet's bytes, its workbook-level names and any link to another file (refused, as the guard
refuses an .xlsx's external links), once more to keep each sheet's bytes apart, compressed, so that
the file is closed once opened, then once per sheet read, over that sheet's bytes only.
Values come back as the .xlsx reader gives them (:mod:`sheetbuilder.weekly.sheet_xml`): numbers
as int when written without a point, dates as datetimes, errors as their text.
"""
from __future__ import annotations

import datetime as dt
import re
import zipfile
import zlib
from dataclasses import dataclass, field
from itertools import chain
from pathlib import Path
from typing import Any, Callable
from xml.parsers import expat
from xml.sax.saxutils import quoteattr

from sheetbuilder.reading import guard
from sheetbuilder.reading.guard import UnsafeWorkbook, saved_limits
from sheetbuilder.weekly.names import Area, odf_area
from sheetbuilder.weekly.sheet_xml import CHUNK, DamagedSheet, KeptRows, iso_datetime, number, padded_rows

MIMETYPE = "application/vnd.oasis.opendocument.spreadsheet"
CONTENT = "content.xml"
MAX_ROWS, MAX_COLUMNS = 1_048_576, 16_384  # a sheet's rows and columns (as many as an .xlsx sheet holds)

OFFICE = "urn:oasis:names:tc:opendocument:xmlns:office:1.0}"
TABLE = "urn:oasis:names:tc:opendocument:xmlns:table:1.0}"
TEXT = "urn:oasis:names:tc:opendocument:xmlns:text:1.0}"
CALCEXT = "urn:org:documentfoundation:names:experimental:calc:xmlns:calcext:1.0}"

_SPREADSHEET, _SHEET, _NAMES = OFFICE + "spreadsheet", TABLE + "table", TABLE + "named-expressions"
_NAMED_RANGE, _NAMED_EXPRESSION = TABLE + "named-range", TABLE + "named-expression"
_LINKS = {TABLE + "table-source", TABLE + "cell-range-source", TABLE + "dde-links", TABLE + "dde-source"}
_ROW, _CELLS = TABLE + "table-row", {TABLE + "table-cell", TABLE + "covered-table-cell"}
_PARAGRAPHS = {TEXT + "p", TEXT + "h"}
_SPACES = {TEXT + "s", TEXT + "tab", TEXT + "line-break"}
_NOT_TEXT = {OFFICE + "annotation", TEXT + "note", TEXT + "ruby-text"}  # a comment or footnote is not the value
_NUMBERS = {"float", "percentage", "currency"}
_DURATION = re.compile(r"-?P(?:(\d+)D)?T?(?:(\d+)H)?(?:(\d+)M)?(?:(\d+(?:\.\d+)?)S)?$")
_REFERENCE = re.compile(r"^(?:of:)?=?\s*\[([^\]]*)\]\s*$")  # a named expression that is one bracketed reference


def is_ods(archive: zipfile.ZipFile) -> bool:
    """Whether a zip is an OpenDocument spreadsheet: its ``mimetype`` part says so (Part 3, 3.3)."""
    try:
        info = archive.getinfo("mimetype")
    except KeyError:
        return False
    return info.file_size <= 256 and archive.read(info).strip() == MIMETYPE.encode("ascii")


@dataclass
class _Span:
    """Where one sheet's table:table element lies in content.xml, and the namespaces bound there."""

    start: int
    namespaces: dict[str | None, str]
    end: int = -1
    empty: bool = True


class _Index:
    """The handlers of the pass that finds the sheets, the workbook-level names and links to other files."""

    def __init__(self, parser: expat.XMLParserType):
        self.parser = parser
        self.depth = 0
        self.top = -1  # depth of office:spreadsheet
        self.scope: list[tuple[str | None, str]] = []
        self.spans: dict[str, _Span] = {}
        self.order: list[str] = []
        self.names: dict[str, tuple[str, str]] = {}
        self.sheet: str | None = None
        self.in_names = False

    def declare(self, prefix: str | None, uri: str) -> None:
        self.scope.append((prefix, uri))

    def undeclare(self, prefix: str | None) -> None:
        for i in range(len(self.scope) - 1, -1, -1):
            if self.scope[i][0] == prefix:
                del self.scope[i]
                return

    def start(self, name: str, attrs: dict[str, str]) -> None:
        self.depth += 1
        if self.sheet is not None:
            self.spans[self.sheet].empty = False
            if name in _LINKS:
                raise UnsafeWorkbook(f"refused: the sheet '{self.sheet}' links to another file "
                                     f"({(attrs.get('http://www.w3.org/1999/xlink}href') or '?')[:80]}); links to "
                                     f"other files are not read. Break the links or {saved_limits().instead}")
        elif name == _SPREADSHEET and self.top < 0:
            self.top = self.depth
        elif self.depth == self.top + 1:
            if name == _SHEET:
                self.sheet = attrs.get(TABLE + "name", "")
                if self.sheet in self.spans:
                    raise DamagedSheet(f"two sheets are named '{self.sheet}'")
                self.order.append(self.sheet)
                self.spans[self.sheet] = _Span(self.parser.CurrentByteIndex, dict(self.scope))
            elif name == _NAMES:
                self.in_names = True
            elif name in _LINKS:
                raise UnsafeWorkbook(f"refused: the workbook links to another file or program; links are not read. "
                                     f"Break the links or {saved_limits().instead}")
        elif self.in_names and self.depth == self.top + 2:
            if name == _NAMED_RANGE:
                self.names[attrs.get(TABLE + "name", "")] = ("range", attrs.get(TABLE + "cell-range-address", ""))
            elif name == _NAMED_EXPRESSION:
                self.names[attrs.get(TABLE + "name", "")] = ("expression", attrs.get(TABLE + "expression", ""))

    def end(self, name: str) -> None:
        if self.depth == self.top + 1:
            if self.sheet is not None and name == _SHEET:
                self.spans[self.sheet].end = self.parser.CurrentByteIndex
                self.sheet = None
            self.in_names = False
        self.depth -= 1


def _parse(parser: expat.XMLParserType, chunks) -> None:
    """Feed chunks to parser to the end, a damaged part raised as DamagedSheet."""
    try:
        for chunk in chunks:
            parser.Parse(chunk, False)
        parser.Parse(b"", True)
    except expat.ExpatError as exc:
        raise DamagedSheet(f"its {CONTENT} is not well-formed XML ({exc})") from None


def _chunks(handle):
    """The handle's data in chunks."""
    while chunk := handle.read(CHUNK):
        yield chunk


def _store(handle, spans: dict[str, _Span]) -> dict[str, bytes]:
    """{sheet: its bytes of content.xml, compressed apart}: reading a sheet then inflates its own bytes only.

    One pass over the part (zlib, level 1: a tenth to a twentieth of the XML in memory).
    """
    todo = sorted((span.start, span.end, name) for name, span in spans.items() if not span.empty)
    stored: dict[str, bytes] = {}
    parts: list[bytes] = []
    packer = zlib.compressobj(1)
    at = 0
    for chunk in _chunks(handle):
        upto = at + len(chunk)
        while todo and todo[0][0] < upto:
            start, end, name = todo[0]
            parts.append(packer.compress(chunk[max(start - at, 0):min(end, upto) - at]))
            if end > upto:
                break
            parts.append(packer.flush())
            stored[name], parts, packer = b"".join(parts), [], zlib.compressobj(1)
            todo.pop(0)
        at = upto
    if todo:
        raise DamagedSheet(f"its {CONTENT} ends inside the sheet '{todo[0][2]}'")
    return stored


def _inflate(packed: bytes):
    """A sheet's stored bytes inflated again, in pieces of at most CHUNK bytes."""
    unpacker = zlib.decompressobj()
    for i in range(0, len(packed), CHUNK):
        data = packed[i:i + CHUNK]
        while data:
            if piece := unpacker.decompress(data, CHUNK):
                yield piece
            data = unpacker.unconsumed_tail
    if tail := unpacker.flush():
        yield tail


class OdsFile:
    """An .ods saved workbook, opened: sheet names, defined names, and each sheet's cells on request.

    Offers what :class:`sheetbuilder.weekly.saved.SavedBook` reads from an .xlsx: ``sheetnames``,
    ``area(name)``, ``has_name(name)``, ``read(sheet, columns, formulas, no_saved_value)``, ``read_keeping_rows``
    (the read and the rows a stream hands over, in one pass), ``stream`` and ``close()``.

    Raises:
        DamagedSheet: content.xml is not well-formed or holds no spreadsheet.
        UnsafeWorkbook: a sheet links to another file.
    """

    def __init__(self, path: Path):
        self.path = Path(path)
        archive = zipfile.ZipFile(self.path)
        try:
            parser = expat.ParserCreate(namespace_separator="}")
            index = _Index(parser)
            parser.StartElementHandler, parser.EndElementHandler = index.start, index.end
            parser.StartNamespaceDeclHandler, parser.EndNamespaceDeclHandler = index.declare, index.undeclare
            with archive.open(CONTENT) as fh:
                _parse(parser, _chunks(fh))
            if index.top < 0:
                raise DamagedSheet(f"its {CONTENT} holds no spreadsheet")
            with archive.open(CONTENT) as fh:
                self._stored = _store(fh, index.spans)
        finally:
            archive.close()
        self.sheetnames: list[str] = index.order
        self._spans, self._names = index.spans, index.names

    def has_name(self, name: str) -> bool:
        """Whether the workbook defines name (at workbook level), broken or not."""
        return name in self._names

    def area(self, name: str) -> Area | None:
        """The area a workbook-level name covers, or None when it is missing, not a range or off-sheet."""
        kind, text = self._names.get(name, ("", ""))
        if kind == "expression":
            ref = _REFERENCE.match(text)
            text = ref.group(1) if ref else ""
        area = odf_area(text) if text else None
        return area if area is not None and area.sheet in self._spans else None

    def read(self, sheet: str, columns: frozenset[int] | None = None, formulas: bool = False,
             no_saved_value: Any = None) -> list[list[Any]]:
        """Every row of sheet as a list of values, padded to one width (only ``columns`` when given).

        Raises:
            DamagedSheet: the sheet's XML is not well-formed or a cell cannot be read.
            UnsafeWorkbook: its repeats would make far more cells than it writes.
        """
        return padded_rows(self._cells(sheet, columns, formulas, no_saved_value).found)

    def read_keeping_rows(self, sheet: str, columns: frozenset[int] | None = None, formulas: bool = False,
                       no_saved_value: Any = None) -> tuple[list[list[Any]], KeptRows]:
        """:meth:`read`, and every row as :meth:`stream` would hand it over (all columns), in one pass.

        Raises:
            DamagedSheet, UnsafeWorkbook: as :meth:`read`.
        """
        cells = self._cells(sheet, columns, formulas, no_saved_value, keep_rows=True)
        kept = KeptRows()
        for r in sorted(cells.streamed):
            kept.keep(r, dict(cells.streamed[r]))
        return padded_rows(cells.found), kept

    def stream(self, sheet: str, on_row: Callable[[int, dict[int, tuple[Any, bool]]], bool | None],
               columns: set[int] | None = None, no_saved_value: Any = None) -> None:
        """Hand each row of sheet to on_row, as the .xlsx reader does: (0-based row, {column: (value, holds a
        formula)}), a formula cell as (None, True); on_row returns True to stop. The sheet is read whole first
        (an .ods is read by rows of values; its rows are handed over from them).

        Raises:
            DamagedSheet, UnsafeWorkbook: as :meth:`read`.
        """
        wanted = None if columns is None else frozenset(columns)
        cells = self._cells(sheet, wanted, True, no_saved_value, with_formulas=True)
        for r in sorted(cells.found):
            if on_row(r, dict(cells.found[r])):
                return

    def _cells(self, sheet: str, columns: frozenset[int] | None, formulas: bool, no_saved_value: Any,
               with_formulas: bool = False, keep_rows: bool = False) -> "_Cells":
        """The handlers after one read of sheet (their rows found; keep_rows: also every row as streamed)."""
        span = self._spans[sheet]
        cells = _Cells(columns, formulas, no_saved_value, guard.MAX_REPEATED_CELLS + span.end - span.start, sheet,
                       with_formulas, keep_rows)
        if span.empty or span.end <= span.start:
            return cells
        parser = expat.ParserCreate(namespace_separator="}")
        parser.buffer_text = True
        parser.StartElementHandler, parser.EndElementHandler = cells.start, cells.end
        parser.CharacterDataHandler = cells.text
        declared = " ".join(("xmlns" if p is None else f"xmlns:{p}") + "=" + quoteattr(uri)
                            for p, uri in span.namespaces.items())
        body = _inflate(self._stored[sheet])
        first = next(body, b"")
        tag = re.match(rb"<([^\s/>]+)", first)
        if tag is None:
            raise DamagedSheet(f"the sheet '{sheet}' cannot be found again in {CONTENT}")
        _parse(parser, chain((f"<sheet {declared}>".encode(), first), body, (b"</" + tag.group(1) + b"></sheet>",)))
        return cells

    def close(self) -> None:
        """Let go of the sheets kept (the file itself was closed once read)."""
        self._stored = {}

    def __enter__(self) -> "OdsFile":
        return self

    def __exit__(self, *exc: Any) -> None:
        self.close()


def _repeat(text: str | None, what: str) -> int:
    """A number-rows/columns-repeated count (1 when absent)."""
    if text is None:
        return 1
    try:
        n = int(text)
    except ValueError:
        raise DamagedSheet(f"a {what} repeat count reads {text[:20]!r}") from None
    if n < 1:
        raise DamagedSheet(f"a {what} repeat count reads {n}")
    return n


def _duration(text: str) -> Any:
    """An office:time-value (an ISO 8601 duration, 'PT12H30M00S') as a time of day; the text when longer."""
    m = _DURATION.match(text.strip())
    if m is None or text.strip().startswith("-"):
        return text
    days, hours, minutes, seconds = (float(g) if g else 0.0 for g in m.groups())
    total = ((days * 24 + hours) * 60 + minutes) * 60 + seconds
    if total >= 86_400:
        return text
    whole = int(total)
    return dt.time(whole // 3600, whole // 60 % 60, whole % 60, round((total - whole) * 1e6) % 1_000_000)


@dataclass
class _Cell:
    """The cell being read: its attributes, how many times it repeats, its paragraphs."""

    attrs: dict[str, str]
    repeat: int
    formula: bool
    text: bool  # its value is its text (a string without office:string-value, an error, a cell of text only)
    paragraphs: list[str] = field(default_factory=list)


_PASSED = _Cell({}, 0, False, False)  # a cell in no wanted column
_COLUMNS_REPEATED, _FORMULA = TABLE + "number-columns-repeated", TABLE + "formula"
_VALUE_TYPE, _STRING_VALUE, _EXTENDED_TYPE = OFFICE + "value-type", OFFICE + "string-value", CALCEXT + "value-type"


class _Cells:
    """The expat handlers of one sheet's read: the rows kept, the cell and paragraph being read."""

    def __init__(self, columns: frozenset[int] | None, formulas: bool, no_saved_value: Any, budget: int, sheet: str,
                 with_formulas: bool = False, keep_rows: bool = False):
        self.columns, self.formulas, self.no_saved_value = columns, formulas, no_saved_value
        self.with_formulas = with_formulas  # keep (value, holds a formula) pairs, a formula as (None, True)
        # keep_rows: also keep every column's cells as a stream hands them over (a formula as KeptRows.FORMULA)
        self.keep_rows, self.passed_over = keep_rows, None if keep_rows else columns
        self.streamed: dict[int, dict[int, Any]] = {}
        self.kept_streamed: dict[int, Any] = {}
        self.copies_streamed = 0
        self.budget, self.sheet = budget, sheet
        self.found: dict[int, dict[int, Any]] = {}
        self.row = 0          # the row the next table:table-row is
        self.col = 0          # the column the next cell is
        self.rows_repeated = 1
        self.kept: dict[int, Any] = {}  # the current row's cells
        self.cell: _Cell | None = None
        self.depth = 0        # elements open inside the cell being read
        self.skip = 0         # elements open inside a comment or note
        self.paragraph: list[str] | None = None
        self.copies = 0

    def start(self, name: str, attrs: dict[str, str]) -> None:
        cell = self.cell
        if cell is not None:
            self.depth += 1
            if self.skip or name in _NOT_TEXT:
                self.skip += 1
            elif not cell.text:
                return
            elif name in _PARAGRAPHS and self.depth == 1:
                self.paragraph = []
            elif self.paragraph is not None and name in _SPACES:
                local = name[len(TEXT):]
                self.paragraph.append("\t" if local == "tab" else "\n" if local == "line-break"
                                      else " " * _repeat(attrs.get(TEXT + "c"), "space"))
        elif name == _ROW:
            self.rows_repeated = _repeat(attrs.get(TABLE + "number-rows-repeated"), "row")
            self.col, self.kept, self.kept_streamed = 0, {}, {}
        elif name in _CELLS:
            repeat = _repeat(attrs.get(_COLUMNS_REPEATED), "column")
            columns, self.depth, self.skip = self.passed_over, 0, 0
            if columns is not None and (self.col not in columns if repeat == 1 else
                                        not any(self.col <= c < self.col + repeat for c in columns)):
                self.col += repeat  # not wanted: passed over
                self.cell = _PASSED
                return
            kind = attrs.get(_VALUE_TYPE)
            formula = _FORMULA in attrs
            text = (attrs.get(_EXTENDED_TYPE) == "error" or (kind == "string" and _STRING_VALUE not in attrs)
                    or (kind is None and not formula))
            self.cell = _Cell(attrs, repeat, formula, text)

    def end(self, name: str) -> None:
        cell = self.cell
        if cell is not None:
            if self.depth == 0:
                self._keep(cell)
                self.cell = None
                return
            self.depth -= 1
            if self.skip:
                self.skip -= 1
            elif self.paragraph is not None and self.depth == 0 and name in _PARAGRAPHS:
                cell.paragraphs.append("".join(self.paragraph))
                self.paragraph = None
        elif name == _ROW:
            self._keep_row()

    def text(self, data: str) -> None:
        if self.paragraph is not None and not self.skip:
            self.paragraph.append(data)  # as written (see the module's note on white space)

    def _value(self, cell: _Cell) -> tuple[bool, Any]:
        """(whether the cell holds anything, its value as the .xlsx reader gives it)."""
        attrs = cell.attrs
        kind = attrs.get(OFFICE + "value-type")
        missing = self.no_saved_value if self.formulas and cell.formula else None
        if attrs.get(CALCEXT + "value-type") == "error":
            return True, "\n".join(cell.paragraphs)
        if kind in _NUMBERS:
            try:
                return True, number(attrs.get(OFFICE + "value", ""))
            except ValueError:
                raise DamagedSheet(f"a number cell holds {attrs.get(OFFICE + 'value', '')[:40]!r}") from None
        if kind == "date":
            value = iso_datetime(attrs.get(OFFICE + "date-value", ""))
            return True, value
        if kind == "time":
            return True, _duration(attrs.get(OFFICE + "time-value", ""))
        if kind == "boolean":
            return True, attrs.get(OFFICE + "boolean-value", "").strip().lower() == "true"
        if kind == "string" or (kind is None and not cell.formula):
            text = attrs.get(OFFICE + "string-value")
            text = "\n".join(cell.paragraphs) if text is None else text
            if text == "" and cell.formula:
                return True, missing
            return kind is not None or text != "", text
        return cell.formula, missing  # a formula that saved no value, or a value type this reader does not know

    def _keep(self, cell: _Cell) -> None:
        """Keep the cell's value in every wanted column it covers."""
        if cell is _PASSED:
            return
        first = self.col
        self.col += cell.repeat
        held, value = self._value(cell)
        if self.keep_rows:
            self._put(self.kept_streamed, first, None, held or cell.formula,
                      KeptRows.FORMULA if cell.formula else value, True)
        if self.with_formulas:
            held, value = held or cell.formula, (None, True) if cell.formula else (value, False)
        self._put(self.kept, first, self.columns, held, value)

    def _put(self, kept: dict[int, Any], first: int, columns: frozenset[int] | None, held: bool, value: Any,
             streamed: bool = False) -> None:
        """Put the cell's value in every column of columns it covers."""
        if not held:
            return
        if self.col > MAX_COLUMNS:
            raise DamagedSheet(f"a cell of row {self.row + 1} lies beyond column {MAX_COLUMNS:,}")
        covered = range(first, self.col) if columns is None else [c for c in columns if first <= c < self.col]
        self._spend(len(covered) - 1, streamed)
        for c in covered:
            kept[c] = value

    def _keep_row(self) -> None:
        """Keep the row's cells in every row it repeats into."""
        first, repeat = self.row, self.rows_repeated
        self.row += repeat
        if self.keep_rows:
            self._repeat_row(self.kept_streamed, self.streamed, first, repeat, True)
        self._repeat_row(self.kept, self.found, first, repeat)

    def _repeat_row(self, kept: dict[int, Any], found: dict[int, dict[int, Any]], first: int, repeat: int,
                    streamed: bool = False) -> None:
        if not kept:
            return
        if self.row > MAX_ROWS:
            raise DamagedSheet(f"a row holding values lies beyond row {MAX_ROWS:,}")
        self._spend(len(kept) * (repeat - 1), streamed)
        for r in range(first, self.row):
            found[r] = kept

    def _spend(self, copies: int, streamed: bool = False) -> None:
        """Count cells made by repeats (a read's and a stream's apart); refuse a sheet whose repeats would make far
        more cells than it writes."""
        if streamed:
            self.copies_streamed += copies
        else:
            self.copies += copies
        if max(self.copies, self.copies_streamed) > self.budget:
            raise UnsafeWorkbook(f"refused: the sheet '{self.sheet}' repeats its cells into more than "
                                 f"{self.budget:,} cells beyond those it writes; it may be a zip bomb: "
                                 f"{saved_limits().instead}")
