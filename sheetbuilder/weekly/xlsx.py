"""A saved .xlsx workbook, opened: its sheet names and defined names by openpyxl (read-only), its cells streamed.

openpyxl reads the workbook part (sheet names, defined names, shared strings, date styles); each
sheet's cells are read by :mod:`sheetbuilder.weekly.sheet_xml` from openpyxl's own handle on the file.
The shared strings are read by one regular expression when the part holds plain strings alone, as xlsxwriter
writes them (:func:`plain_strings`); openpyxl's own reader reads any other part.
"""
from __future__ import annotations

import re
from pathlib import Path
from typing import IO, Any, Callable
from xml.parsers import expat

from openpyxl.reader.excel import ExcelReader
from openpyxl.reader.strings import read_string_table
from openpyxl.utils.datetime import from_excel
from openpyxl.xml.constants import SHARED_STRINGS, SHEET_MAIN_NS

from sheetbuilder.weekly import fast_cells
from sheetbuilder.weekly.names import Area, a1_area
from sheetbuilder.weekly.sheet_xml import CellReader, read_cells, read_keeping_rows, stream_cells


def named_area(wb: Any, name: str) -> Area | None:
    """The area an openpyxl workbook's workbook-level defined name covers, or None when missing, broken or off-sheet."""
    try:
        if name not in wb.defined_names:
            return None
        destinations = list(wb.defined_names[name].destinations)
    except (KeyError, ValueError, TypeError, AttributeError):
        return None
    for sheet, ref in destinations:
        if sheet in wb.sheetnames:
            return a1_area(sheet, ref)
    return None


# The shared-strings part as xlsxwriter writes it: an XML declaration, the sst root in the main namespace (no
# prefix), then plain strings alone (ECMA-376 Part 1, 18.4.8 si: one t, no runs, no phonetic text), no space
# between elements.
_SST_START = re.compile(r'\A(?:<\?xml [^>]*\?>)?[ \t\r\n]*<sst xmlns="' + re.escape(SHEET_MAIN_NS) +
                        r'"(?: (?:count|uniqueCount)="[0-9]+")*>')
_DECLARED = re.compile(rb"(?:\xef\xbb\xbf)?<\?xml[^>]*?encoding\s*=\s*[\"']([^\"']*)[\"']")
_PLAIN = '<si><t(?: xml:space="preserve")?(?:/>|>[^<]*</t>)</si>'
_PLAIN_ALL = re.compile(f"(?:{_PLAIN})*+")
_PLAIN_TEXT = re.compile('<si><t(?: xml:space="preserve")?(?:/>|>([^<]*)</t>)</si>')


def plain_strings(source: IO[bytes]) -> list[str] | None:
    """The shared strings of a part holding plain strings alone (see _SST_START), as openpyxl's reader gives them
    (:func:`openpyxl.reader.strings.read_string_table`: the text as an XML parser hands it over, its 'x005F_'
    escapes removed); None for any other part, or one that is not well-formed XML (openpyxl's reader then reads it
    and says why)."""
    data = source.read()
    declared = _DECLARED.match(data)
    if declared and declared.group(1).lower() != b"utf-8":
        return None
    try:
        text = data.decode("utf-8")  # (UTF-16, with or without its byte-order mark, does not decode)
        expat.ParserCreate().Parse(data, True)  # well-formed: no forbidden character, entity or reference
    except (expat.ExpatError, UnicodeDecodeError):
        return None
    text = text.removeprefix("\ufeff")
    start = _SST_START.match(text)
    end = text.rfind("</sst>")
    if start is None or end < 0 or text[end + 6:].strip(" \t\r\n") or not _PLAIN_ALL.fullmatch(text, start.end(), end):
        return None
    return [fast_cells.text(t).replace("x005F_", "") for t in _PLAIN_TEXT.findall(text, start.end(), end)]


class _Reader(ExcelReader):
    """openpyxl's reader, its shared strings read by :func:`plain_strings` when the part is of that shape."""

    def read_strings(self) -> None:
        found = self.package.find(SHARED_STRINGS)
        if found is not None:
            with self.archive.open(found.PartName[1:]) as src:
                strings = plain_strings(src)
            if strings is not None:
                self.shared_strings = strings
                return
            with self.archive.open(found.PartName[1:]) as src:
                self.shared_strings = read_string_table(src)


class XlsxFile:
    """An .xlsx saved workbook, opened read-only: the interface :class:`sheetbuilder.weekly.ods.OdsFile` offers too.

    Raises:
        what openpyxl raises on a file it cannot read (the opener turns it into a plain refusal).
    """

    def __init__(self, path: Path):
        self.path = Path(path)
        self._handle = open(self.path, "rb")  # a handle, not a name: its content says .xlsx, whatever it is called
        try:  # openpyxl.load_workbook(read_only=True, data_only=True), the shared strings read faster
            reader = _Reader(self._handle, read_only=True, data_only=True)
            reader.read()
            self.wb = reader.wb
        except BaseException:
            self._handle.close()
            raise
        self.sheetnames: list[str] = list(self.wb.sheetnames)
        self._checked: set[str] = set()  # parts read to their end by the regular-expression reader

    def has_name(self, name: str) -> bool:
        """Whether the workbook defines name (at workbook level), broken or not."""
        return name in self.wb.defined_names

    def area(self, name: str) -> Area | None:
        """The area a workbook-level name covers, or None when it is missing, broken or off-sheet."""
        return named_area(self.wb, name)

    def read(self, sheet: str, columns: frozenset[int] | None = None, formulas: bool = False,
             no_saved_value: Any = None) -> list[list[Any]]:
        """Every row of sheet as a list of values, padded to one width (only ``columns`` when given).

        Raises:
            DamagedSheet: the sheet's XML is not well-formed or a cell cannot be read.
        """
        return self._parse(sheet, no_saved_value, lambda fh, reader: read_cells(fh, reader, columns, formulas))

    def read_keeping_rows(self, sheet: str, columns: frozenset[int] | None = None, formulas: bool = False,
                       no_saved_value: Any = None) -> tuple[list[list[Any]], Any]:
        """:meth:`read`, and every row as :meth:`stream` would hand it over (all columns), in one pass.

        Raises:
            DamagedSheet: the sheet's XML is not well-formed or a cell cannot be read.
        """
        return self._parse(sheet, no_saved_value, lambda fh, reader: read_keeping_rows(fh, reader, columns, formulas))

    def stream(self, sheet: str, on_row: Callable[[int, dict[int, tuple[Any, bool]]], bool | None],
               columns: set[int] | None = None, no_saved_value: Any = None) -> None:
        """Hand each row of sheet to on_row as it is read (:func:`sheetbuilder.weekly.sheet_xml.stream_cells`).

        Raises:
            DamagedSheet: the sheet's XML is not well-formed or a cell cannot be read.
        """
        self._parse(sheet, no_saved_value, lambda fh, reader: stream_cells(fh, reader, on_row, columns))

    def _parse(self, sheet: str, no_saved_value: Any, parse: Callable[[Any, CellReader], Any]) -> Any:
        """parse(handle on the sheet's part, its CellReader)."""
        ws = self.wb[sheet]
        reader = CellReader(ws._shared_strings, self.wb._date_formats, lambda n: from_excel(n, self.wb.epoch),
                            no_saved_value, self._checked, ws._worksheet_path)
        with self.wb._archive.open(ws._worksheet_path) as fh:  # openpyxl's own handle on the file
            return parse(fh, reader)

    def close(self) -> None:
        """Close the file."""
        self.wb.close()
        self._handle.close()
