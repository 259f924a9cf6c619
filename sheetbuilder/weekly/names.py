"""Where a defined name points: an :class:`Area`, read from a range as either saved format spells it.

An .xlsx workbook keeps a name's range as ``Sheet!$A$6:$A$31`` (ECMA-376 Part 1, 18.2.5 definedName);
an .ods keeps it as ``$Sheet.$A$6:.$A$31`` (OpenDocument 1.2 Part 1, 9.4.12 table:named-range and
19.684 table:cell-range-address, a sheet name in single quotes when it holds other characters, a
quote in it doubled). Whole rows or columns (``$4:$4``) and ranges over two sheets are no table of
ours and read as no area.
"""
from __future__ import annotations

from dataclasses import dataclass

from sheetbuilder.weekly.sheet_xml import DamagedSheet, split_reference


@dataclass(frozen=True)
class Area:
    """Where a defined name points: a sheet and 0-based, inclusive column and row bounds."""

    sheet: str
    first_col: int
    last_col: int
    first_row: int
    last_row: int


def a1_area(sheet: str, ref: str) -> Area | None:
    """The area of an A1 reference or range ('$B$7', 'A6:A31') on sheet; None when it is not one."""
    parts = ref.replace("$", "").split(":")
    if not 1 <= len(parts) <= 2:
        return None
    try:
        (r0, c0), (r1, c1) = split_reference(parts[0]), split_reference(parts[-1])
    except DamagedSheet:
        return None
    return Area(sheet, min(c0, c1), max(c0, c1), min(r0, r1), max(r0, r1))


def _odf_sheet(text: str) -> tuple[str | None, str]:
    """(sheet name or None when the part names none, the cell after its '.') of one part of an ODF address."""
    text = text.removeprefix("$")
    if text.startswith("'"):
        i, name = 1, []
        while i < len(text):
            if text[i] == "'":
                if text[i + 1:i + 2] == "'":
                    name.append("'")
                    i += 2
                    continue
                break
            name.append(text[i])
            i += 1
        rest = text[i + 1:]
        if not rest.startswith("."):
            raise ValueError(text)
        return "".join(name), rest[1:]
    sheet, dot, cell = text.rpartition(".")
    if not dot:
        raise ValueError(text)
    return (sheet or None), cell


def odf_area(address: str) -> Area | None:
    """The area of an OpenDocument cell or range address ('$Profit.$A$6:.$A$31'); None when it is not one.

    Only the first range of a list (ranges are separated by spaces) is read, as only the first
    destination of an .xlsx name is.
    """
    first, _, _ = _split_outside_quotes(address.strip(), " ")
    if not first:
        return None
    start, colon, end = _split_outside_quotes(first, ":")
    try:
        sheet, cell0 = _odf_sheet(start)
        other, cell1 = _odf_sheet(end) if colon else (None, cell0)
    except ValueError:
        return None
    if sheet is None or (other is not None and other != sheet):
        return None
    return a1_area(sheet, f"{cell0}:{cell1}")


def _split_outside_quotes(text: str, sep: str) -> tuple[str, bool, str]:
    """(before, whether sep was found, after) at the first sep outside a quoted sheet name."""
    quoted = False
    for i, ch in enumerate(text):
        if ch == "'":
            quoted = not quoted
        elif ch == sep and not quoted:
            return text[:i], True, text[i + 1:]
    return text, False, ""
