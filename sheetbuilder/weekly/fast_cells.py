"""A worksheet part's cells read by one regular expression, for the spellings xlsxwriter, LibreOffice and openpyxl write.

The streaming expat reader (:mod:`sheetbuilder.weekly.sheet_xml`) calls into Python five times a
cell; this reader matches a whole cell at once (``<c r=".." s=".." t=".."><f ..>..</f><v>..</v></c>``,
an inline string ``<is><t>..</t></is>``, an empty cell ``<c ../>``) and hands the cells over row by row.

It is strict, never lenient: the part is read here only while every byte of its ``sheetData`` is one
of the shapes below, in the order below, and everything around ``sheetData`` is well-formed XML
(checked by expat with no handlers, at C speed). Anything else raises :class:`NotFast`, and the
caller reads the part again with the expat reader, so a part is never read to a value the expat
reader would not give. What makes it give up: another encoding than UTF-8, bytes that are not
UTF-8, a character XML forbids, an entity other than the five predefined ones or a character
reference to a character XML forbids, ``]]>`` or CDATA, comments or processing instructions in the
cells, a namespace prefix on an element, attributes of a cell other than ``r``, ``s``, ``t`` in that
order (double quotes), a row or cell without ``r``, a cell whose row number is not its row's, rows
not in increasing order, rich text or phonetic runs, whitespace between a cell's elements, an
attribute written twice, an attribute with a prefix the root element does not declare, and a ``c``
or ``row`` element outside ``sheetData``.

Text is decoded as XML 1.0 says (2.11 end-of-line handling: a raw CR LF or CR reads as LF; 4.6 the
predefined entities; 4.1 character references), so ``&#13;`` stays a carriage return.
"""
from __future__ import annotations

import re
from itertools import groupby
from operator import itemgetter
from typing import IO, Callable, Iterator
from xml.parsers import expat

from sheetbuilder.workbook.formula import col_letter

CHUNK = 1 << 20


class NotFast(Exception):
    """The part holds a shape this reader does not read: the expat reader reads it instead."""


# XML 1.0 2.2 (Char) and 2.4: text holds no character XML forbids; '>' is left to the expat reader (']]>' is not
# allowed in text, and the writers read here escape every '>').
_TEXT = "[^<>\x00-\x08\x0b\x0c\x0e-\x1f\ufffe\uffff]*"
_VALUE = '"[^"<\x00-\x08\x0b\x0c\x0e-\x1f\ufffe\uffff]*"'  # an attribute value, double-quoted
# A formula's attributes (ECMA-376 Part 1, 18.3.1.40 f), each at most once, in the schema's order.
_FORMULA_ATTRIBUTES = "".join(f"(?: {name}={_VALUE})?" for name in (
    "t", "aca", "ref", "dt2D", "dtr", "del1", "del2", "r1", "r2", "ca", "si", "bx"))
_T_START = '<t(?: xml:space="preserve")?'
# A cell of the row whose number the group 'row' holds (its reference's digits are the row's).
_CELL = (r'<c r="[A-Z]{1,3}(?P=row)"(?: s="[0-9]+")?(?: t="[a-zA-Z]+")?(?: ?/>|>'
         rf'(?:<f{_FORMULA_ATTRIBUTES}(?: ?/>|>{_TEXT}</f>))?(?:<v>{_TEXT}</v>|<v ?/>)?'
         rf'(?:<is>(?:{_T_START} ?/>|{_T_START}>{_TEXT}</t>)</is>)?</c>)')
# One token of sheetData: a row of such cells only (or an empty row), else any one character, which is unknown.
_ROW = re.compile(rf'<row r="(?P<row>[0-9]+)"((?: [a-zA-Z][\w.:-]*={_VALUE})*)(?: ?/>|>((?:{_CELL})*+)</row>)|(.)',
                  re.S)
# The cells of a part _ROW read: (letters, row digits, style, type, '<f' when it holds a formula, saved value,
# inline text), '' for what a cell lacks.
_FIND = (r'<c r="({})([0-9]+)"(?: s="([0-9]+)")?(?: t="([a-zA-Z]+)")?(?: ?/>|>(?:(<f)[^>]*?(?:/>|>[^<]*</f>))?'
         r'(?:<v>([^<]*)</v>|<v ?/>)?(?:<is><t[^>]*?(?:/>|>([^<]*)</t>)</is>)?</c>)')
_ALL = re.compile(_FIND.format("[A-Z]{1,3}"))
# The same for a caller asking for typed cells alone (see _pattern): a cell holding no formula and not written
# empty (<c ../>), its formula group always ''.
_FIND_TYPED = (r'<c r="({})([0-9]+)"(?: s="([0-9]+)")?(?: t="([a-zA-Z]+)")?>()(?!<f)'
               r'(?:<v>([^<]*)</v>|<v ?/>)?(?:<is><t[^>]*?(?:/>|>([^<]*)</t>)</is>)?</c>')
_ALL_TYPED = re.compile(_FIND_TYPED.format("[A-Z]{1,3}"))
FEW = 48  # a read of at most this many columns finds only their cells (one pattern per set of columns)
_BAD_AMP = re.compile(r"&(?!(?:lt|gt|amp|quot|apos|#[0-9]+|#x[0-9a-fA-F]+);)")
_REF = re.compile(r"&(?:(lt)|(gt)|(amp)|(quot)|(apos)|#([0-9]+)|#x([0-9a-fA-F]+));")
_PREDEFINED = (None, "<", ">", "&", '"', "'")
_ATTR_NAME = re.compile(r' ([^=]+)="')
# Outside sheetData: a cell or row the expat reader would read, a document type, and a comment, CDATA section or
# processing instruction (which could hide a sheetData of their own from this reader).
_OUTSIDE = re.compile(r"<(?:[^\s/>!?]+:)?(?:c|row)[\s/>]|<!|(?<=.)<\?", re.S)
_DECLARATION = re.compile(rb"<\?xml[^>]*?encoding\s*=\s*[\"']([^\"']*)[\"']")
_PREFIXES = re.compile(r'xmlns:([^\s=]+)\s*=')


def _char(code: int) -> str:
    """The character a reference names, or NotFast when XML forbids it (2.2 Char)."""
    if code in (0x9, 0xA, 0xD) or 0x20 <= code <= 0xD7FF or 0xE000 <= code <= 0xFFFD or 0x10000 <= code <= 0x10FFFF:
        return chr(code)
    raise NotFast("a character reference to a character XML forbids")


def _reference(m: re.Match) -> str:
    i = m.lastindex
    if i <= 5:
        return _PREDEFINED[i]
    return _char(int(m.group(6)) if i == 6 else int(m.group(7), 16))


def text(raw: str) -> str:
    """Character data as an XML parser hands it over: line ends normalised, then references replaced."""
    if "\r" in raw:
        raw = raw.replace("\r\n", "\n").replace("\r", "\n")
    if "&" in raw:
        raw = _REF.sub(_reference, raw)
    return raw


class _Attributes:
    """Attribute lists of rows and formulas already checked (each distinct list is checked once)."""

    def __init__(self, prefixes: set[str]):
        self.prefixes, self.seen = prefixes, {"": True}

    def check(self, attrs: str, taken: tuple[str, ...]) -> None:
        if attrs in self.seen:
            return
        names = _ATTR_NAME.findall(attrs) + list(taken)
        if len(set(names)) != len(names) or any(":" in n and n.split(":", 1)[0] not in self.prefixes
                                                for n in names):
            raise NotFast("an attribute written twice, or with a prefix that is not declared")
        self.seen[attrs] = True


def _not_utf8(data: bytes) -> str | None:
    """Why a part's prolog is not one this reader reads (another encoding than UTF-8, a byte-order mark of UTF-16)."""
    if data.startswith((b"\xff\xfe", b"\xfe\xff", b"\x00")) or data[1:2] == b"\x00":
        return "not UTF-8"
    declared = _DECLARATION.match(data.removeprefix(b"\xef\xbb\xbf"))
    if declared and declared.group(1).lower() != b"utf-8":
        return "an encoding other than UTF-8"
    return None


def _head(data: bytes) -> None:
    """Refuse a prolog this reader does not read (:func:`_not_utf8`)."""
    why = _not_utf8(data)
    if why is not None:
        raise NotFast(why)


def _outside(part: bytes, wellformed: Callable[[bytes], None]) -> None:
    """Check a stretch outside sheetData: well-formed (expat, no handlers) and holding no cell or row."""
    try:
        found = _OUTSIDE.search(part.decode("utf-8").removeprefix("\ufeff"))
    except UnicodeDecodeError:
        raise NotFast("not UTF-8") from None
    if found:
        raise NotFast("a cell or row outside sheetData, a document type, comment, CDATA or processing instruction")
    wellformed(part)


Cell = tuple  # (letters, row digits, style, type, '<f' or '', saved value text, inline text), '' for what it lacks


class _Patterns(dict):
    """{(frozenset of columns, typed cells alone): the pattern finding only their cells}."""

    def __missing__(self, key: tuple[frozenset[int], bool]) -> re.Pattern:
        columns, typed = key
        found = self[key] = re.compile((_FIND_TYPED if typed else _FIND).format("|".join(
            col_letter(c) for c in sorted(columns, reverse=True) if 0 <= c < 16384) or "(?!)"))
        return found


_PATTERNS = _Patterns()


def typed_only(columns: set[int] | frozenset[int] | None) -> bool:
    """Whether a caller asks for the typed cells of columns alone: a set whose attribute ``typed_only`` is true
    (cells holding a formula, and cells written empty, need not be handed over; a reader may all the same)."""
    return bool(getattr(columns, "typed_only", False))


def _pattern(columns: set[int] | frozenset[int] | None) -> tuple[re.Pattern, frozenset[int] | None]:
    """The pattern finding the cells of columns (all cells for None or many columns; only the typed ones when the
    caller asks, see :func:`typed_only`), and the columns it stands for."""
    if columns is None:
        return _ALL, None
    used, typed = frozenset(columns), typed_only(columns)
    if len(used) > FEW:
        return (_ALL_TYPED if typed else _ALL), used
    return _PATTERNS[(used, typed)], used


def _decoded(cells: dict[int, Cell]) -> None:
    """Replace the raw texts of cells by their character data (:func:`text`)."""
    for col, cell in cells.items():
        v, inline = cell[5], cell[6]
        if "&" in v or "\r" in v or "&" in inline or "\r" in inline:
            cells[col] = (*cell[:5], text(v), text(inline))


def _cells(found: list[Cell], columns_of: dict[str, int], columns: frozenset[int] | None) -> dict[int, Cell]:
    """{column: cell} of the cells found that columns keeps (NotFast for a cell written twice)."""
    if columns is None:
        cells = {columns_of[c[0]]: c for c in found}
        n = len(found)
    else:
        kept = [(col, c) for c in found if (col := columns_of[c[0]]) in columns]
        cells, n = dict(kept), len(kept)
    if len(cells) != n:
        raise NotFast("a cell written twice")
    return cells


def scan(handle: IO[bytes], columns_of: dict[str, int], columns: set[int] | frozenset[int] | None,
         checked: set[str] | None = None, part: str = "") -> Iterator[tuple[int, dict[int, Cell], int | None]]:
    """Each row of the part as (0-based row, {0-based column: raw cell}, ordinal), only the cells of columns when given.

    The ordinal counts the row elements of the part up to this one (empty rows too); None when the part was
    checked before, its rows then known to be in increasing order.

    Rows without such a cell are not handed over. ``columns`` is asked at each row (a set the caller may
    change between rows). ``columns_of`` maps column letters to 0-based columns (a dict that fills itself).
    The raw cell's texts are decoded (:func:`text`). A part read to its end is added to ``checked``
    (as ``part``); a part already there (the same bytes, read again) is not checked again, only its cells found.

    Raises:
        NotFast: the part holds anything this reader does not read (rows already handed over were read right).
    """
    if checked is not None and part in checked:
        yield from _again(handle, columns_of, columns)
        return
    parser = expat.ParserCreate(namespace_separator="}")  # no handlers: only well-formedness is checked

    def wellformed(part: bytes, final: bool = False) -> None:
        try:
            parser.Parse(part, final)
        except expat.ExpatError:
            raise NotFast("not well-formed XML around sheetData") from None

    buffer = b""
    while b"<sheetData" not in buffer:
        chunk = handle.read(CHUNK)
        if not chunk:
            raise NotFast("no sheetData")
        buffer += chunk
    _head(buffer)
    at = buffer.index(b"<sheetData")
    if buffer[at:at + 11] != b"<sheetData>":
        if buffer[at:at + 12] == b"<sheetData/>":
            _outside(buffer + handle.read(), lambda part: wellformed(part, True))
            if checked is not None:
                checked.add(part)
            return
        raise NotFast("a sheetData with attributes")
    head = buffer[:at + 11]
    _outside(head, wellformed)
    attributes = _Attributes(set(_PREFIXES.findall(head.decode("utf-8"))) | {"xml"})
    last_row, ordinal = -1, 0
    for data, tail in _blocks(buffer[at + 11:], handle):
        if "&" in data and _BAD_AMP.search(data):
            raise NotFast("an entity that is not predefined")
        if "&#" in data:
            for m in _REF.finditer(data):
                if m.lastindex >= 6:
                    _reference(m)
        for m in _ROW.finditer(data):
            digits, attrs, body, unknown = m.group("row", 2, 3, 4)
            if unknown is not None:
                raise NotFast("an element or text this reader does not read")
            row = int(digits) - 1
            if row <= last_row:
                raise NotFast("rows not in increasing order")
            last_row = row
            ordinal += 1
            if attrs:
                attributes.check(attrs, ("r",))
            if not body:
                continue
            pattern, used = _pattern(columns)
            cells = _cells(pattern.findall(body), columns_of, used)
            if cells:
                if "&" in body or "\r" in body:
                    _decoded(cells)
                yield row, cells, ordinal
        if tail is not None:
            _outside(tail + handle.read(), lambda part: wellformed(part, True))
    if checked is not None:
        checked.add(part)


def _blocks(buffer: bytes, handle: IO[bytes]) -> Iterator[tuple[str, bytes | None]]:
    """The text of sheetData in blocks of whole rows (UTF-8 checked), the last with the bytes from its end on."""
    while True:
        end = buffer.find(b"</sheetData>")
        if end >= 0:
            block, tail = buffer[:end], buffer[end:]
        else:
            cut = buffer.rfind(b"</row>") + 6
            if cut < 6:
                cut = 0
            block, buffer, tail = buffer[:cut], buffer[cut:], None
        try:
            yield block.decode("utf-8"), tail
        except UnicodeDecodeError:
            raise NotFast("not UTF-8") from None
        if tail is not None:
            return
        chunk = handle.read(CHUNK)
        if not chunk:
            raise NotFast("the part ends inside sheetData")
        buffer += chunk


def _again(handle: IO[bytes], columns_of: dict[str, int],
           columns: set[int] | frozenset[int] | None) -> Iterator[tuple[int, dict[int, Cell], None]]:
    """:func:`scan` of a part it read to its end before: its cells found without checking the part again."""
    buffer = b""
    while b"<sheetData>" not in buffer:
        buffer += handle.read(CHUNK)
    buffer = buffer[buffer.index(b"<sheetData>") + 11:]
    for data, _ in _blocks(buffer, handle):
        pos: int | None = 0
        while pos is not None:
            pattern, used = _pattern(columns)
            typed = typed_only(columns)
            rows = groupby(pattern.findall(data, pos), key=itemgetter(1))  # a checked part: rows in increasing order
            pos = None
            for digits, found in rows:
                cells = _cells(list(found), columns_of, used)
                if not cells:
                    continue
                _decoded(cells)
                yield int(digits) - 1, cells, None
                if columns is not None and (used != columns or typed != typed_only(columns)):
                    # the columns wanted changed: find again after this row
                    pos = data.find("</row>", data.find(f'<row r="{digits}"')) + 6
                    break


# The shared-string table (ECMA-376 Part 1, 18.4.9 sst) as xlsxwriter and LibreOffice write it: each string an <si>
# holding one <t> (no runs, no phonetic text), the root in the main namespace, unprefixed.
_SST = re.compile(r'<sst xmlns="http://schemas\.openxmlformats\.org/spreadsheetml/2006/main"'
                  rf'(?: [a-zA-Z][\w.:-]*={_VALUE})*(?:/>|>(.*)</sst>)\s*\Z', re.S)
_SI = re.compile(rf'<si>{_T_START}>({_TEXT})</t></si>|(.)', re.S)
_PROLOG = re.compile(r'(?:<\?xml [^<>]*\?>)?\s*')


def shared_strings(data: bytes) -> list[str] | None:
    """The strings of a shared-string part as openpyxl reads them (each <si>'s text, 'x005F_' removed), or None when
    the part holds any other shape (runs, phonetic text, an empty <t/>, a prefix, another namespace ...): openpyxl
    then reads it. The part is checked well-formed by expat (no handlers) first."""
    if _not_utf8(data) is not None:
        return None
    try:
        body = data.decode("utf-8").removeprefix("\ufeff")
    except UnicodeDecodeError:
        return None
    try:
        expat.ParserCreate(namespace_separator="}").Parse(data, True)
    except expat.ExpatError:
        return None
    root = _SST.match(body, _PROLOG.match(body).end())
    if root is None:
        return None
    found = _SI.findall(root.group(1) or "")
    if any(other for _, other in found):
        return None
    return [text(t).replace("x005F_", "") for t, _ in found]
