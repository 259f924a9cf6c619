"""Recognising a workbook sheetbuilder built when it turns up among the exports.

A workbook of ours is never an export: read as one, its in_ sheets would pass for a catalog or
a sales table. It is known by the defined name over its Actions list (written by every build
and kept by spreadsheet programs when they save), and dated by its document's creation time
(ECMA-376 Part 2, core properties: ``dcterms:created``), which a re-save keeps.

Saved as OpenDocument (.ods), the name is a ``table:named-range`` or ``table:named-expression``
in ``content.xml`` (OpenDocument 1.2 Part 1, 9.4.12 and 9.4.13) and the date is ``meta.xml``'s
``meta:creation-date`` (4.3.2.1), which LibreOffice fills from ``dcterms:created``. content.xml is
checked by the guard first and then streamed by expat (no DTD, stopped at the name or at
MAX_CONTENT_BYTES), never held whole.
"""
from __future__ import annotations

import zipfile
import zlib
from pathlib import Path
from xml.parsers import expat

from defusedxml import DefusedXmlException
from defusedxml.ElementTree import ParseError, fromstring

from sheetbuilder.reading import guard

MARK = "sb_actions"  # the defined name every workbook of ours carries (over its Actions list: sheets.typed)
MAX_PART_BYTES = 8 << 20  # workbook.xml and core.xml of any real workbook are far smaller
SPREADSHEET_NS = "{http://schemas.openxmlformats.org/spreadsheetml/2006/main}"
CREATED = "{http://purl.org/dc/terms/}created"
MAX_CONTENT_BYTES = 512 << 20  # an .ods content.xml streamed further than this is not looked into
ODS_MIMETYPE = b"application/vnd.oasis.opendocument.spreadsheet"
ODS_TABLE = "urn:oasis:names:tc:opendocument:xmlns:table:1.0}"
ODS_NAMES = {ODS_TABLE + "named-range", ODS_TABLE + "named-expression"}
ODS_CREATED = "{urn:oasis:names:tc:opendocument:xmlns:meta:1.0}creation-date"


def _part(archive: zipfile.ZipFile, name: str):
    """A small XML part parsed without DTDs or entities, or None when absent, too large or broken."""
    try:
        entry = archive.getinfo(name)
        if entry.file_size > MAX_PART_BYTES:
            return None
        with archive.open(entry) as handle:
            return fromstring(handle.read(MAX_PART_BYTES + 1))
    except (KeyError, OSError, ValueError, EOFError, zipfile.BadZipFile, zlib.error, ParseError,
            DefusedXmlException):
        return None


class _Found(Exception):
    """Raised by the content.xml parser at the first name MARK (nothing after it is read)."""


def _refuse(*_args) -> None:
    raise expat.ExpatError("a document type declaration")


def _names_mark(archive: zipfile.ZipFile) -> bool:
    """Whether an .ods's content.xml defines the name MARK: streamed, no DTD, at most MAX_CONTENT_BYTES."""
    parser = expat.ParserCreate(namespace_separator="}")
    parser.StartDoctypeDeclHandler = parser.EntityDeclHandler = _refuse

    def start(name: str, attrs: dict[str, str]) -> None:
        if name in ODS_NAMES and attrs.get(ODS_TABLE + "name") == MARK:
            raise _Found

    parser.StartElementHandler = start
    seen = 0
    try:
        with archive.open("content.xml") as stream:
            while chunk := stream.read(guard.CHUNK):
                seen += len(chunk)
                if seen > MAX_CONTENT_BYTES:
                    return False
                parser.Parse(chunk, False)
        parser.Parse(b"", True)
    except _Found:
        return True
    except (KeyError, OSError, ValueError, EOFError, zipfile.BadZipFile, zlib.error, expat.ExpatError,
            NotImplementedError, RuntimeError):
        return False
    return False


def _ods_built(path: Path) -> str | None:
    """built_by_us for an .ods: the guard's checks first (a refused file is left to the reader to refuse)."""
    try:
        guard.check_workbook(path, guard.input_limits(), whole_parts=False)
    except guard.UnsafeWorkbook:
        return None
    try:
        with zipfile.ZipFile(path) as archive:
            kind = archive.getinfo("mimetype")
            if kind.file_size > 256 or archive.read(kind).strip() != ODS_MIMETYPE or not _names_mark(archive):
                return None
            meta = _part(archive, "meta.xml")
    except (KeyError, OSError, ValueError, EOFError, zipfile.BadZipFile, zlib.error):
        return None
    created = next(meta.iter(ODS_CREATED), None) if meta is not None else None
    return (created.text or "")[:10] if created is not None else ""


def built_by_us(path: Path) -> str | None:
    """The build date ('2026-12-02', or '' when not recorded) if path is a workbook sheetbuilder built, else None.

    An .xlsx or .xlsm is known by its defined names, an .ods (a workbook of ours saved as OpenDocument) by
    its named ranges.
    """
    suffix = Path(path).suffix.lower()
    if suffix == ".ods":
        return _ods_built(path)
    if suffix not in (".xlsx", ".xlsm"):
        return None
    try:
        archive = zipfile.ZipFile(path)
    except (zipfile.BadZipFile, OSError, ValueError, EOFError):
        return None
    with archive:
        book = _part(archive, "xl/workbook.xml")
        if book is None or not any(n.get("name") == MARK for n in book.iter(f"{SPREADSHEET_NS}definedName")):
            return None
        core = _part(archive, "docProps/core.xml")
        created = core.find(CREATED) if core is not None else None
        return (created.text or "")[:10] if created is not None else ""


def our_workbook_message(built: str) -> str:
    """What to do with a workbook of ours found among the exports."""
    when = f" (built {built})" if built else ""
    return (f"is a workbook sheetbuilder built{when}, not an export: to carry its edits into this week's workbook, "
            "pass it with --previous, and move it out of the exports folder")
