"""Exporting the changes a user settled on: the Actions sheet of an edited workbook, as rows.

:func:`export_changes` reads the workbook the user edited and saved, takes the Actions
sheet (title in row 1, counts in row 2, header in row 4, one change a row from row 5,
blank Kind = an empty list row), checks each change, and writes the valid ones as CSV
(every text cell escaped against formula injection, :mod:`sheetbuilder.csv_safe`) or as
.xlsx (text always written as text). Inconsistent changes are reported with their
Actions row, not written.

The formulas' values are the ones the file stores. A file saved by a program that
stores none (openpyxl, some converters) is recalculated with the `formulas` library,
and the result says so.
"""
from __future__ import annotations

import math
import numbers
import os
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from .csv_safe import write_csv
from .atomic import atomic_output
from .plan_actions import HEADER_ROW as ACTIONS_HEADER_ROW, HEADERS
from .render import render_rows
from .errors import OutputExists, Problem, SheetbuilderError, UnsafeOutput

SHEET = "Actions"
HEADER_ROW = ACTIONS_HEADER_ROW + 1  # 1-based, as a spreadsheet shows it
FIRST_ROW = 5
COLUMNS = ("kind", "campaign", "ad_group", "target_or_term", "match_type", "current", "new", "reason", "product_id",
           "money_at_stake")
MONEY = ("current", "new", "money_at_stake")  # written with two decimals, however the workbook stored them
KINDS = ("bid", "add keyword", "add product target", "add negative", "budget")
ADDS = ("add keyword", "add product target")
FORMATS = ("csv", "xlsx")


class WorkbookNotFound(SheetbuilderError):
    """The workbook to read does not exist."""


class NotAWorkbook(SheetbuilderError):
    """The file is not an .xlsx workbook that can be read."""


class NoActionsSheet(SheetbuilderError):
    """The workbook has no Actions sheet, or its header row is not the expected one."""


@dataclass
class ChangesResult:
    """What export_changes wrote and refused.

    Attributes:
        output: the file written.
        written: the number of changes written.
        problems: one Problem per inconsistency (file 'Actions', its row, its column).
        recalculated: True when the file held no formula values and was recalculated.
        refused: the Actions rows not written.
        rows: the rows written (columns as COLUMNS).
    """

    output: Path
    written: int
    problems: list[Problem] = field(default_factory=list)
    recalculated: bool = False
    refused: list[int] = field(default_factory=list)
    rows: list[list[Any]] = field(default_factory=list)


def _is_number(value: Any) -> bool:
    return isinstance(value, numbers.Real) and not isinstance(value, bool) and not (
        isinstance(value, float) and math.isnan(value))


def _blank(value: Any) -> bool:
    return value is None or (isinstance(value, str) and value.strip() == "") or (
        isinstance(value, float) and math.isnan(value))


def _load(path: Path, data_only: bool):
    import openpyxl
    import zipfile
    from openpyxl.utils.exceptions import InvalidFileException
    try:
        return openpyxl.load_workbook(path, data_only=data_only)
    except (zipfile.BadZipFile, InvalidFileException, KeyError, OSError, ValueError) as exc:
        raise NotAWorkbook(f"{path} is not an .xlsx workbook that can be read: {exc}") from None


def _named_value(wb, values, name: str) -> Any:
    """The value of the cell a defined name points at, or None."""
    if name not in wb.defined_names:
        return None
    for sheet, coord in wb.defined_names[name].destinations:
        if sheet in wb.sheetnames:
            return values(sheet, coord.replace("$", ""))
    return None


def _column_values(wb, sheet: str, header: str) -> set[str]:
    """The texts of the column headed header (row 1) of sheet, or empty when absent."""
    if sheet not in wb.sheetnames:
        return set()
    rows = wb[sheet].iter_rows(values_only=True)
    head = [str(v).strip() if v is not None else "" for v in next(rows, ())]
    if header not in head:
        return set()
    i = head.index(header)
    return {str(r[i]).strip() for r in rows if i < len(r) and not _blank(r[i])}


def read_actions(workbook: Path) -> tuple[list[tuple[int, list[Any]]], dict[str, Any], bool]:
    """The Actions rows [(sheet row, 8 values)], the context for checks, and whether it was recalculated.

    Raises:
        WorkbookNotFound, NotAWorkbook, NoActionsSheet.
    """
    workbook = Path(workbook)
    if not workbook.is_file():
        raise WorkbookNotFound(f"the workbook {workbook} does not exist")
    formulas_wb = _load(workbook, data_only=False)
    if SHEET not in formulas_wb.sheetnames:
        raise NoActionsSheet(f"{workbook.name} has no {SHEET} sheet; build it with a sheetbuilder that writes one")
    cached_wb = _load(workbook, data_only=True)
    ws, cached = formulas_wb[SHEET], cached_wb[SHEET]
    formula_cells = [c.coordinate for row in ws.iter_rows() for c in row if c.data_type == "f"]
    has_cache = any(cached[c].value is not None for c in formula_cells)
    recalculated = bool(formula_cells) and not has_cache
    solved: dict = {}
    if recalculated:
        from .recalc import formulas_values
        solved = formulas_values(workbook)

    def value(sheet: str, coord: str) -> Any:
        cell = formulas_wb[sheet][coord]
        if cell.data_type != "f":
            return cell.value
        if recalculated:
            v = solved.get((sheet.upper(), coord.upper()), "")
            return None if v == "" else v
        return cached_wb[sheet][coord].value

    header = [value(SHEET, f"{chr(65 + i)}{HEADER_ROW}") for i in range(len(HEADERS))]
    got = tuple("" if h is None else str(h).strip() for h in header)
    if got != HEADERS:
        raise NoActionsSheet(f"{workbook.name}: the {SHEET} sheet's row {HEADER_ROW} should read "
                             f"{', '.join(HEADERS)}; it reads {', '.join(got)}")
    rows = []
    for r in range(FIRST_ROW, ws.max_row + 1):
        values = [value(SHEET, f"{chr(65 + i)}{r}") for i in range(len(HEADERS))]
        if _blank(values[0]):
            continue
        rows.append((r, values))
    context = {
        "bid_floor": _named_value(formulas_wb, value, "bid_floor"),
        "bid_ceiling": _named_value(formulas_wb, value, "bid_ceiling"),
        "campaigns": _column_values(formulas_wb, "in_campaigns", "campaign")
        | _column_values(formulas_wb, "in_ad_products", "campaign"),
        "has_campaign_sheets": "in_campaigns" in formulas_wb.sheetnames or "in_ad_products" in formulas_wb.sheetnames,
    }
    return rows, context, recalculated


def check_change(row: int, values: list[Any], context: dict[str, Any]) -> list[Problem]:
    """The problems of one change (none when it can be written)."""
    kind, campaign, group, term, _match, _current, new = values[:7]
    kind = str(kind).strip().lower()
    out: list[Problem] = []

    def bad(column: str, message: str) -> None:
        out.append(Problem(SHEET, row, column, message))

    if kind not in KINDS:
        bad("Kind", f"unknown kind {values[0]!r}; expected one of {', '.join(KINDS)}")
        return out
    if kind in ("bid", "budget"):
        if not _is_number(new) or new <= 0:
            bad("New", f"a {kind} needs a positive number in New, got {'blank' if _blank(new) else repr(new)}")
        elif kind == "bid":
            floor, ceiling = context.get("bid_floor"), context.get("bid_ceiling")
            if _is_number(floor) and new < floor:
                bad("New", f"the bid {new:g} is below the bid floor {floor:g}")
            if _is_number(ceiling) and new > ceiling:
                bad("New", f"the bid {new:g} is above the bid ceiling {ceiling:g}")
    if kind in ADDS:
        if _blank(campaign) or _blank(group):
            bad("Campaign" if _blank(campaign) else "Ad group",
                "no destination: choose the campaign and ad group to add it to")
        elif context.get("has_campaign_sheets") and str(campaign).strip() not in context.get("campaigns", set()):
            bad("Campaign", f"the campaign {str(campaign)!r} is not in the exports (in_campaigns, in_ad_products)")
    if kind in ADDS or kind == "add negative":
        if _blank(term):
            bad("Target or term", f"an {kind} needs a term")
        if kind == "add negative" and _blank(campaign):
            bad("Campaign", "a negative needs its campaign")
    return out


def _money(value: Any) -> Any:
    """A money cell rounded to the cent (however the workbook stored it); blank stays blank."""
    if not _is_number(value):
        return None if _blank(value) else value
    return round(float(value), 2) + 0.0


def _cents_text(row: list[Any]) -> list[Any]:
    """The row as CSV writes it: money with exactly two decimals."""
    return [f"{v:.2f}" if c in MONEY and _is_number(v) else v for c, v in zip(COLUMNS, row)]


def _check_output(workbook: Path, output: Path, fmt: str, force: bool) -> None:
    if fmt not in FORMATS:
        raise SheetbuilderError(f"unknown format {fmt!r}; expected csv or xlsx")
    if not output.parent.is_dir():
        raise SheetbuilderError(f"the output folder {output.parent} does not exist")
    if fmt == "xlsx" and output.suffix.lower() != ".xlsx":
        raise SheetbuilderError(f"the output {output.name} should end in .xlsx for --format xlsx")
    if fmt == "csv" and output.suffix.lower() in (".xlsx", ".xlsm", ".xls"):
        raise SheetbuilderError(f"the output {output.name} is named as a workbook; name it .csv or use --format xlsx")
    if output.exists() and workbook.exists() and os.path.samefile(output, workbook):
        raise UnsafeOutput(f"{output} is the workbook being read; choose another output name")
    if output.exists() and not force:
        raise OutputExists(f"{output} exists; add --force to overwrite it")


def write_xlsx(path: Path, header: list[str], rows: list[list[Any]]) -> Path:
    """Write header and rows to path as one sheet, text always as text, atomically."""
    cells = [[float(v) if _is_number(v) else (None if _blank(v) else str(v)) for v in row] for row in rows]
    with atomic_output(path, ".xlsx") as tmp:
        render_rows(tmp, "changes", header, cells)
    return path


def export_changes(workbook: Path, output: Path, fmt: str = "csv", force: bool = False) -> ChangesResult:
    """Write the valid changes of the workbook's Actions sheet to output; report the others.

    Args:
        workbook: the .xlsx the user edited and saved.
        output: the .csv or .xlsx file to write.
        fmt: 'csv' or 'xlsx'.
        force: overwrite output if it exists.

    Returns:
        The rows written, the problems (with their Actions row), and whether the workbook
        had to be recalculated.

    Raises:
        WorkbookNotFound, NotAWorkbook, NoActionsSheet: the workbook cannot be read as one with Actions.
        OutputExists: output exists and force is False.
    """
    workbook, output = Path(workbook), Path(output)
    _check_output(workbook, output, fmt, force)
    rows, context, recalculated = read_actions(workbook)
    problems: list[Problem] = []
    refused: list[int] = []
    kept: list[list[Any]] = []
    for r, values in rows:
        found = check_change(r, values, context)
        if found:
            problems += found
            refused.append(r)
            continue
        values = list(values)
        values[0] = str(values[0]).strip().lower()
        kept.append([_money(v) if c in MONEY else None if v == "" or (_blank(v) and not isinstance(v, str)) else v
                     for c, v in zip(COLUMNS, values)])
    if fmt == "csv":
        write_csv(output, COLUMNS, [_cents_text(r) for r in kept], force=force)
    else:
        write_xlsx(output, list(COLUMNS), kept)
    return ChangesResult(output, len(kept), problems, recalculated, refused, kept)
