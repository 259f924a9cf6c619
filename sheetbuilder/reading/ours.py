"""Recognising a workbook sheetbuilder built when it turns up among the exports.

A workbook of ours is never an export: read as one, its in_ sheets would pass for a catalog or
a sales table. It is known by the defined name over its Actions list (written by every build
and kept by spreadsheet programs when they save), and dated by its document's creation time
(ECMA-376 Part 2, core properties: ``dcterms:created``), which a re-save keeps.
"""
from __future__ import annotations

import zipfile
import zlib
from pathlib import Path

from defusedxml import DefusedXmlException
from defusedxml.ElementTree import ParseError, fromstring

MARK = "sb_actions"  # the defined name every workbook of ours carries (over its Actions list: sheets.typed)
MAX_PART_BYTES = 8 << 20  # workbook.xml and core.xml of any real workbook are far smaller
SPREADSHEET_NS = "{http://schemas.openxmlformats.org/spreadsheetml/2006/main}"
CREATED = "{http://purl.org/dc/terms/}created"


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


def built_by_us(path: Path) -> str | None:
    """The build date ('2026-12-02', or '' when not recorded) if path is a workbook sheetbuilder built, else None."""
    if Path(path).suffix.lower() not in (".xlsx", ".xlsm"):
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
