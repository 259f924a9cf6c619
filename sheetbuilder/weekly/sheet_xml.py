"""A saved worksheet's cells read with a streaming XML parser, in every spelling the standard allows.

ECMA-376 Part 1 (SpreadsheetML, 18.3.1.4 c, 18.3.1.73 row, 18.18.11 ST_CellType) lets a program
write the same cell many ways: attributes in any order, single or double quotes, a namespace
prefix on every element, no ``r`` on a row or cell (it then follows the previous one), a string
shared, inline (plain or in rich-text runs, phonetic runs excluded) or the cached text of a
formula, a date as a serial number in a date format or as ISO 8601 text (``t="d"``), booleans
and error values. Expat (the C parser Python ships) reads the part as a stream, so memory grows
with the cells kept, not with the sheet; no DTD is allowed (the guard refuses them before this).
"""
from __future__ import annotations

import datetime as dt
from dataclasses import dataclass, field
from typing import IO, Any, Callable
from xml.parsers import expat

MAIN_NS = "http://schemas.openxmlformats.org/spreadsheetml/2006/main"
CHUNK = 1 << 16


class DamagedSheet(ValueError):
    """The part is not well-formed XML, or a cell reference cannot be read."""


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


def _number(text: str) -> int | float:
    """A stored number as openpyxl reads it: int when written without a point or exponent."""
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

    def value(self, cell: _Cell, formulas: bool) -> Any:
        """The cell's value as openpyxl gives it in values-only mode."""
        if cell.kind == "inlineStr":
            return "".join(cell.inline)
        text = "".join(cell.value) if cell.value else None
        if text is None or text == "":
            return self.no_saved_value if formulas and cell.formula else None
        kind = cell.kind
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
        try:
            number = _number(text)
        except ValueError:
            raise DamagedSheet(f"a number cell holds {text[:40]!r}") from None
        if cell.style in self.date_styles:
            try:
                return self.from_serial(number)
            except (OverflowError, ValueError):
                return "#VALUE!"
        return number


def read_cells(handle: IO[bytes], reader: CellReader, columns: frozenset[int] | None = None,
               formulas: bool = False) -> list[list[Any]]:
    """Every row of a worksheet part as a list of values, padded to one width (only ``columns`` when given).

    Raises:
        DamagedSheet: the part is not well-formed XML or a reference cannot be read.
    """
    found: dict[int, dict[int, Any]] = {}
    state = {"row": -1, "col": -1, "depth_is": 0, "depth_rph": 0, "in_v": False, "in_t": False}
    cell = _Cell()

    def local(name: str) -> str:
        return name.rsplit("}", 1)[-1]

    def start(name: str, attrs: dict[str, str]) -> None:
        nonlocal cell
        tag = local(name)
        if tag == "c":
            ref = attrs.get("r")
            if ref:
                row, col = split_reference(ref)
                state["row"] = row
            else:
                row, col = state["row"], state["col"] + 1
            state["col"] = col
            cell = _Cell(row, col, attrs.get("t", "n") or "n", int(attrs.get("s", "0") or 0),
                         columns is None or col in columns)
        elif tag == "row":
            r = attrs.get("r")
            state["row"] = int(r) - 1 if r else state["row"] + 1
            state["col"] = -1
        elif not cell.wanted:
            return
        elif tag == "v":
            state["in_v"] = True
        elif tag == "f":
            cell.formula = True
        elif tag == "is":
            state["depth_is"] += 1
        elif tag == "rPh":
            state["depth_rph"] += 1
        elif tag == "t" and state["depth_is"]:
            state["in_t"] = True

    def end(name: str) -> None:
        tag = local(name)
        if tag == "c":
            if cell.wanted:
                found.setdefault(cell.row, {})[cell.col] = reader.value(cell, formulas)
            cell.wanted = False
        elif tag == "v":
            state["in_v"] = False
        elif tag == "is":
            state["depth_is"] -= 1
        elif tag == "rPh":
            state["depth_rph"] -= 1
        elif tag == "t":
            state["in_t"] = False

    def text(data: str) -> None:
        if not cell.wanted:
            return
        if state["in_v"]:
            cell.value.append(data)
        elif state["in_t"] and not state["depth_rph"]:
            cell.inline.append(data)

    parser = expat.ParserCreate(namespace_separator="}")
    parser.buffer_text = True
    parser.StartElementHandler, parser.EndElementHandler, parser.CharacterDataHandler = start, end, text
    try:
        while chunk := handle.read(CHUNK):
            parser.Parse(chunk, False)
        parser.Parse(b"", True)
    except expat.ExpatError as exc:
        raise DamagedSheet(str(exc)) from None
    except (ValueError, OverflowError) as exc:
        raise DamagedSheet(str(exc)) from None
    width = 1 + max((c for cells in found.values() for c in cells), default=-1)
    last = max(found, default=-1)
    empty: dict[int, Any] = {}
    return [[found.get(r, empty).get(c) for c in range(width)] for r in range(last + 1)]
