"""The guard every file passes before the tool reads it: inputs and saved workbooks alike.

A workbook is a zip of XML parts. :func:`check_workbook` refuses one before any reader
inflates it: too large on disk, too many parts, parts that would unpack too far or too
many times larger than they are stored, a part whose data inflates beyond what its header
declares (each part is inflated as a stream that stops at the limit), an XML part with a
document type declaration (the only place entities can be declared: no DTD, no entity
expansion), and external links, found by parsing the relationship parts with a hardened
parser (defusedxml), so that ``TargetMode="&#69;xternal"`` is read as ``External``.

:func:`check_csv` refuses a text export that is too large before it is read, and
:func:`read_delimited` reads one with bounded rows and columns.

:func:`guard_saved_workbook` is the one call before opening a workbook the tool wrote
and a person saved (``changes``, ``--previous``); :func:`reading` turns whatever the
workbook reader raises on a damaged file into one clear refusal.

The limits are module constants, read at each call, so that tests can make them small.
"""
from __future__ import annotations

import csv
import io
import os
import re
import zipfile
from contextlib import contextmanager
from dataclasses import dataclass
from pathlib import Path
from typing import Iterator
from xml.parsers import expat

from defusedxml import DefusedXmlException
from defusedxml.ElementTree import ParseError, fromstring

from sheetbuilder.errors import SheetbuilderError

# Inputs (.xlsx exports): the limits the readers have always applied.
MAX_ZIP_TOTAL = 512 * 1024 * 1024   # bytes, all parts inflated
MAX_ZIP_RATIO = 100                 # inflated / stored, for a part of RATIO_ENTRY_MIN or more
RATIO_ENTRY_MIN = 16 * 1024 * 1024  # bytes inflated: smaller parts may compress as well as they like
MAX_ZIP_ENTRIES = 10_000
MAX_RELS_BYTES = 4 * 1024 * 1024    # a relationships part larger than this is not a workbook's
MAX_FILE_BYTES = 512 * 1024 * 1024  # a workbook or CSV file on disk

MAX_CSV_ROWS = 4_000_000            # rows of a text export (a sheet holds 1,048,576; search terms may merge)
MAX_CSV_COLUMNS = 1_000             # cells in one row
MAX_CSV_FIELD = 1024 * 1024         # characters in one cell (the csv module's own limit is 131,072)

CHUNK = 1024 * 1024

# Saved workbooks (changes, --previous): whatever build writes is read back, so the caps are what a
# workbook of a sheet's 1,048,576 rows can reach, not what an export needs. Their parts are read as
# streams by the saved-workbook reader (memory grows with the cells kept, never with a part), so the
# guard checks each part's declared size and ratio and its prolog, and inflates no part whole.
MAX_SAVED_FILE_BYTES = 8 * 1024**3
MAX_SAVED_TOTAL = 64 * 1024**3
# A saved sheet is read into rows of one width: its rows times its columns may not exceed MAX_SAVED_CELLS
# (a cell typed far from the tables cannot ask for billions of empty ones; 1,048,576 rows of 64 columns).
# An .ods sheet writes a run of equal rows or cells once with a repeat count (OpenDocument 1.2 Part 1,
# 9.1.3 and 9.1.4): the cells its repeats make beyond those it writes may number MAX_REPEATED_CELLS
# plus one per byte of the sheet's XML, so that a few bytes cannot ask for billions of cells.
MAX_SAVED_CELLS = 1_048_576 * 64
MAX_REPEATED_CELLS = 1_048_576
HYPERLINK = "/hyperlink"            # relationship type of a cell hyperlink: a web address, not a file read


class UnsafeWorkbook(SheetbuilderError, ValueError):
    """A file refused before it is opened: a zip bomb, entities, external links, not a workbook, too large."""


class UnreadableWorkbook(SheetbuilderError):
    """A saved workbook that passed the guard but that the workbook reader cannot make sense of."""


@dataclass(frozen=True)
class Limits:
    """The limits one check applies (bytes unless said otherwise)."""

    file_bytes: int
    total_bytes: int
    ratio: int
    ratio_min: int
    parts: int
    rels_bytes: int
    instead: str = "export CSV instead"  # what to do when refused (a saved workbook of ours is not exported)


def input_limits() -> Limits:
    """The limits for .xlsx exports read by the build."""
    return Limits(MAX_FILE_BYTES, MAX_ZIP_TOTAL, MAX_ZIP_RATIO, RATIO_ENTRY_MIN, MAX_ZIP_ENTRIES, MAX_RELS_BYTES)


def saved_limits() -> Limits:
    """The limits for a saved workbook of ours: as large as build writes, the same ratio, parts and links."""
    return Limits(MAX_SAVED_FILE_BYTES, MAX_SAVED_TOTAL, MAX_ZIP_RATIO, RATIO_ENTRY_MIN, MAX_ZIP_ENTRIES,
                  MAX_RELS_BYTES, "build the workbook again from the exports")


def _mib(n: float) -> str:
    return f"{n / 2**20:,.0f} MiB"


def _check_size(path: Path, limit: int, what: str) -> int:
    """The file's size in bytes; UnsafeWorkbook when larger than limit."""
    size = os.stat(path).st_size
    if size > limit:
        raise UnsafeWorkbook(f"refused: the {what} is {_mib(size)}, more than {_mib(limit)}; "
                             "export a shorter period")
    return size


class _Prolog(Exception):
    """Raised by the prolog parser once the root element starts (the DTD can only come before it)."""


def _no_doctype(*_args) -> None:
    raise UnsafeWorkbook("a document type declaration")


def _prolog_parser() -> expat.XMLParserType:
    """An expat parser that refuses any DTD and stops at the root element."""
    parser = expat.ParserCreate()
    parser.StartDoctypeDeclHandler = _no_doctype
    parser.EntityDeclHandler = _no_doctype

    def start(*_args) -> None:
        raise _Prolog

    parser.StartElementHandler = start
    return parser


def _inflate(archive: zipfile.ZipFile, entry: zipfile.ZipInfo, limit: int, keep: bool,
             prolog_only: bool = False) -> bytes:
    """The part's data inflated as a stream that stops at limit, its prolog checked if it is XML.

    With prolog_only, inflating stops once an XML part's root element starts (a DTD can only come
    before it; the reader that reads the part later is bounded by its declared size).
    Returns the data when keep is True (a small part), else b"".
    """
    low = entry.filename.lower()
    xml = low.endswith((".xml", ".rels", ".vml"))
    parser = _prolog_parser() if xml else None
    kept: list[bytes] = []
    seen = 0
    try:
        with archive.open(entry) as stream:
            while True:
                chunk = stream.read(CHUNK)
                if not chunk:
                    break
                seen += len(chunk)
                if seen > limit or seen > entry.file_size:
                    raise UnsafeWorkbook(f"refused: the part '{entry.filename}' inflates beyond "
                                         f"{_mib(min(limit, entry.file_size))}; it may be a zip bomb")
                if parser is not None:
                    try:
                        parser.Parse(chunk, False)
                    except _Prolog:
                        parser = None
                        if prolog_only and not keep:
                            break
                    except expat.ExpatError as exc:
                        raise UnsafeWorkbook(f"not a readable spreadsheet: the part '{entry.filename}' is not "
                                             f"well-formed XML ({exc})") from None
                if keep:
                    kept.append(chunk)
    except UnsafeWorkbook as exc:
        if str(exc) == "a document type declaration":
            raise UnsafeWorkbook(f"refused: the part '{entry.filename}' declares a document type (DTD), which a "
                                 "workbook never needs and which can expand entities without bound") from None
        raise
    except (zipfile.BadZipFile, OSError, ValueError, EOFError, NotImplementedError, RuntimeError) as exc:
        raise UnsafeWorkbook(f"not a readable spreadsheet: the part '{entry.filename}' is broken: {exc}") from None
    return b"".join(kept)


def _external_target(data: bytes, name: str) -> str | None:
    """The target of the first external or external-link relationship in a .rels part, else None."""
    try:
        root = fromstring(data, forbid_dtd=True)
    except (ParseError, DefusedXmlException, ValueError) as exc:
        raise UnsafeWorkbook(f"not a readable spreadsheet: the part '{name}' is not well-formed XML ({exc})") from None
    for rel in root.iter():
        if not rel.tag.endswith("Relationship"):
            continue
        kind = (rel.get("Type") or "").strip()
        external = (rel.get("TargetMode") or "").strip().lower() == "external"
        if kind.lower().endswith("/externallink") or kind.lower().endswith("/externallinkpath") or (
                external and not kind.endswith(HYPERLINK)):
            return rel.get("Target") or "?"
    return None


def check_workbook(path: Path, limits: Limits | None = None, whole_parts: bool = True) -> None:
    """Refuse a workbook that is too large, not a zip, would inflate too far, declares entities or links out.

    The central directory's figures are checked before anything is inflated; then every
    part is inflated as a stream that stops at its limit (a header that lies about a
    part's size is caught), XML parts are refused if they declare a DTD, and the
    relationship parts are parsed to find external links and external targets (cell
    hyperlinks, which are web addresses and never read, are allowed).

    Args:
        path: the .xlsx file.
        limits: the limits to apply; input_limits() when None.
        whole_parts: inflate every part whole (exports); False for a saved workbook of ours, whose XML
            parts are inflated up to their root element and whose other parts are left to the reader.

    Raises:
        UnsafeWorkbook: saying what is wrong.
    """
    limits = limits or input_limits()
    _check_size(path, limits.file_bytes, "workbook")
    try:
        archive = zipfile.ZipFile(path)
    except (zipfile.BadZipFile, OSError, ValueError, EOFError) as exc:
        raise UnsafeWorkbook(f"not a readable spreadsheet: not an .xlsx workbook (a zip file): {exc}") from None
    with archive:
        entries = archive.infolist()
        if len(entries) > limits.parts:
            raise UnsafeWorkbook(f"refused: the workbook holds {len(entries)} parts, more than {limits.parts}; "
                                 f"it may be a zip bomb. Save it again from the spreadsheet program, or {limits.instead}")
        total = sum(e.file_size for e in entries)
        if total > limits.total_bytes:
            raise UnsafeWorkbook(f"refused: the workbook would unpack to {_mib(total)}, more than "
                                 f"{_mib(limits.total_bytes)}; it may be a zip bomb: {limits.instead}")
        for e in entries:
            if e.file_size >= limits.ratio_min and e.file_size > limits.ratio * max(e.compress_size, 1):
                raise UnsafeWorkbook(f"refused: the part '{e.filename}' unpacks {e.file_size / max(e.compress_size, 1):,.0f} "
                                     f"times larger than it is stored, more than {limits.ratio}; it may be a zip "
                                     f"bomb: {limits.instead}")
        names = {e.filename for e in entries}
        if not names & {"xl/workbook.xml", "xl/workbook.bin", "content.xml"}:  # .xlsx/.xlsm, .xlsb, .ods
            raise UnsafeWorkbook("not a readable spreadsheet: a zip file without a workbook (no xl/workbook.xml)")
        links = sorted(n for n in names if n.lower().startswith("xl/externallinks/"))
        if links:
            raise UnsafeWorkbook(f"refused: the workbook has external links ({links[0]}); links to other files are not "
                                 f"read. Break the links (Data > Edit Links > Break Link) or {limits.instead}")
        for e in entries:
            rels = e.filename.lower().endswith(".rels")
            if rels and e.file_size > limits.rels_bytes:
                raise UnsafeWorkbook(f"refused: the part '{e.filename}' is {e.file_size:,} bytes, too large for a "
                                     "relationships part")
            if not whole_parts and not rels and not e.filename.lower().endswith((".xml", ".vml")):
                continue  # not XML: no DTD to look for, and the reader never inflates it
            data = _inflate(archive, e, limits.total_bytes, keep=rels, prolog_only=not whole_parts)
            if rels and (target := _external_target(data, e.filename)) is not None:
                raise UnsafeWorkbook(f"refused: the workbook links to an external target in '{e.filename}' "
                                     f"({target[:80]}); links to other files are not read. Break the links or "
                                     f"{limits.instead}")


def guard_saved_workbook(path: Path, error: type[SheetbuilderError] = UnsafeWorkbook) -> None:
    """Refuse a saved workbook (changes, --previous) the guard finds unsafe, naming its path.

    Raises:
        error: '<path>: <what is wrong>' (the caller's own "cannot read the workbook" error).
    """
    path = Path(path)
    if not path.is_file():
        return  # the opener reports a missing file in its own words
    try:
        check_workbook(path, saved_limits(), whole_parts=False)
    except UnsafeWorkbook as exc:
        raise error(f"{path}: {exc}") from None


@contextmanager
def reading(path: Path, error: type[SheetbuilderError] = UnreadableWorkbook) -> Iterator[None]:
    """Turn anything the workbook reader raises on a damaged saved workbook into error, naming path.

    Errors the tool raises on purpose pass through; the original is chained for --debug.
    """
    try:
        yield
    except SheetbuilderError:
        raise
    except MemoryError:
        raise error(f"{path}: not enough memory to read this workbook; close other programs or save a "
                    "smaller copy") from None
    except Exception as exc:  # openpyxl and the XML parsers raise many types on damaged parts
        raise error(f"{path} is not a workbook that can be read ({type(exc).__name__}: {exc}); open it in the "
                    "spreadsheet program and save it again, or build a new one") from exc


def check_csv(path: Path) -> None:
    """Refuse a text export (or an .xls, which is not a zip) larger than MAX_FILE_BYTES before reading it.

    Raises:
        UnsafeWorkbook: the file is too large.
    """
    _check_size(path, MAX_FILE_BYTES, "file")


def read_delimited(text: str, delimiter: str) -> list[list[str]]:
    """The rows of CSV text, with at most MAX_CSV_ROWS rows, MAX_CSV_COLUMNS cells a row and MAX_CSV_FIELD a cell.

    Blank rows are kept (row numbers stay those of the file) as one shared empty list.

    Raises:
        UnsafeWorkbook: a bound is exceeded, saying which and where.
        csv.Error: the text is not CSV.
    """
    blank: list[str] = []
    rows: list[list[str]] = []
    old = csv.field_size_limit(MAX_CSV_FIELD)
    try:
        for row in csv.reader(io.StringIO(text, newline=""), delimiter=delimiter):
            if len(rows) >= MAX_CSV_ROWS:
                raise UnsafeWorkbook(f"refused: more than {MAX_CSV_ROWS:,} rows; export a shorter period")
            if len(row) > MAX_CSV_COLUMNS:
                raise UnsafeWorkbook(f"refused: row {len(rows) + 1} has {len(row):,} cells, more than "
                                     f"{MAX_CSV_COLUMNS:,}; this is not an export of the expected shape")
            rows.append(row if any(row) else blank)
    finally:
        csv.field_size_limit(old)
    return rows


# ---- text ------------------------------------------------------------------------------------------
# A workbook stores text as XML 1.0, which cannot hold most control characters, U+FFFE,
# U+FFFF or lone surrogates; the writer escapes control characters as _xHHHH_ (ECMA-376
# Part 1, 22.9.2.19, ST_Xstring) and literal _xHHHH_ text as _x005F_xHHHH_, and programs
# read those escapes back differently (openpyxl leaves them, LibreOffice decodes them in
# cells but not in a formula's stored result). Text holding any of these is refused on
# input, so that every string the tool writes reads back exactly everywhere.
_XSTRING = re.compile(r"_x[0-9A-Fa-f]{4}_")
_UNSAFE_CHAR = re.compile(r"[\x00-\x08\x0b-\x1f\ufffe\uffff\ud800-\udfff]")
_SETTING_CHAR = re.compile(r"[\x00-\x1f\x7f\ufffe\uffff\ud800-\udfff]")


def text_problem(text: str, setting: bool = False) -> str | None:
    """Why text cannot be written to a workbook and read back exactly, or None when it can.

    Tab and line feed are kept in cells; a setting may hold no control character at all.
    """
    bad = (_SETTING_CHAR if setting else _UNSAFE_CHAR).search(text)
    if bad:
        ch = bad.group()
        return (f"holds the control character U+{ord(ch):04X} at position {bad.start() + 1}, which a workbook "
                "cannot keep exactly; remove it")
    look = _XSTRING.search(text)
    if look:
        return (f"holds {look.group()!r}, which spreadsheet programs read as an escaped character, so it would "
                "not come back as written; change it")
    return None
