"""Exporting the changes a user settled on: the Actions list of an edited workbook, as rows.

:func:`export_changes` reads the workbook the user edited and saved and computes its change
list from the inputs the workbook holds (the ``in_`` sheets with any corrections, the
Settings, the typed Decisions and target ACoS overrides) with the same planning code that
builds the workbook (:func:`sheetbuilder.pipeline.plan_workbook`): no formula engine, so a
file saved without formula values reads as fast as one with them. The values its formulas saved
are not used: cells a user typed over a formula, on any sheet, are found by the formula missing
(:mod:`sheetbuilder.weekly.typed_over`) and reported. Each change is checked and the valid ones are written as
CSV (every text cell escaped against formula injection, :mod:`sheetbuilder.workbook.csv_safe`) or
as .xlsx (text always written as text). Inconsistent changes and invalid Decisions are
reported with their row, not written.

A workbook without our inputs (an Actions-shaped sheet alone) is read from its saved values.
"""
from __future__ import annotations

import os
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from sheetbuilder.workbook.atomic import atomic_output, scratch_dir
from sheetbuilder.weekly.change_list import CHANGE_KEY, KEYS, check_change, computed_actions, problem_at
from sheetbuilder.workbook.csv_safe import write_csv
from sheetbuilder.errors import OutputExists, Problem, SheetbuilderError, UnsafeOutput
from sheetbuilder.reading.guard import text_problem
from sheetbuilder.sheets.actions import HEADERS
from sheetbuilder.workbook.render import render_rows
from sheetbuilder.values import is_blank, is_number
from sheetbuilder.weekly.record import (NoActionsSheet, SavedWorkbook, no_cycle_collection,  # noqa: F401 (re-exported)
                                        read_saved_workbook)
from sheetbuilder.weekly.saved import NotAWorkbook, WorkbookNotFound  # noqa: F401 (re-exported)

COLUMNS = tuple({"target": "target_or_term", "money": "money_at_stake"}.get(k, k) for k in KEYS)
MONEY = ("current", "new", "money_at_stake")  # written with two decimals, however the workbook stored them
FORMATS = ("csv", "xlsx")


@dataclass
class ChangesResult:
    """What export_changes wrote and refused.

    Attributes:
        output: the file written.
        written: the number of changes written.
        problems: one Problem per inconsistency (file 'Actions', its row, its column).
        refused: the Actions rows not written.
        rows: the rows written (columns as COLUMNS).
        computed: True when the list was computed from the workbook's inputs (False: read from saved values).
        overwritten: one Problem per cell holding a typed value where the build wrote a formula, on any sheet, and
            one (row None) per sheet with formulas that could not be found to look.
        unchecked: True when the file stores no formula values (saved by a program that drops them); the list
            was computed from its inputs, and cells typed over a formula found by the formulas they replaced.
    """

    output: Path
    written: int
    problems: list[Problem] = field(default_factory=list)
    refused: list[int] = field(default_factory=list)
    rows: list[list[Any]] = field(default_factory=list)
    computed: bool = False
    overwritten: list[Problem] = field(default_factory=list)
    unchecked: bool = False


@dataclass
class Noticed:
    """What reading a change list noticed besides the rows.

    Attributes:
        computed: the list was computed from the workbook's inputs (False: read from its saved values).
        problems: the input problems of that computation.
        overwritten: one Problem per cell typed over a formula by hand (any sheet).
        unchecked: the file stores no formula values (saved by a program that drops them).
    """

    computed: bool = False
    problems: list[Problem] = field(default_factory=list)
    overwritten: list[Problem] = field(default_factory=list)
    unchecked: bool = False


def read_actions(workbook: Path) -> tuple[list[tuple[int, list[Any]]], dict[str, Any], Noticed]:
    """The change rows of the workbook at path (see :func:`actions_of`), read once under the reading guard.

    Raises:
        WorkbookNotFound, NotAWorkbook, NoActionsSheet.
    """
    return actions_of(read_saved_workbook(Path(workbook), NotAWorkbook, for_changes=True))


def actions_of(record: SavedWorkbook) -> tuple[list[tuple[int, list[Any]]], dict[str, Any], Noticed]:
    """The change rows [(sheet row, visible values)], the context for checks, and what was noticed.

    The file was read (under the reading guard) and closed; the change list is planned here, so a
    bug in planning is an internal error, not a file that cannot be read.
    """
    context, saved = record.context, record.actions
    notes = Noticed()
    if not record.holds_inputs:
        return [(r, v) for r, v in saved if not is_blank(v[0])], context, notes
    computed, problems, _, _ = computed_actions(record)
    notes.computed, notes.problems = True, problems
    # no saved values: a program that drops them saved it (typed-over cells are still found, by their formulas)
    notes.unchecked = bool(computed) and all(is_blank(values[0]) for _, values in saved)
    notes.overwritten = list(record.typed_over)
    return computed, context, notes


def _money(value: Any) -> Any:
    """A money cell rounded to the cent (however the workbook stored it); blank stays blank."""
    if not is_number(value):
        return None if is_blank(value) else value
    return round(float(value), 2) + 0.0


def _cents_text(row: list[Any]) -> list[Any]:
    """The row as CSV writes it: money with exactly two decimals."""
    return [f"{v:.2f}" if c in MONEY and is_number(v) else v for c, v in zip(COLUMNS, row)]


def _check_output(workbook: Path, output: Path, fmt: str, force: bool) -> None:
    if fmt not in FORMATS:
        raise SheetbuilderError(f"unknown format {fmt!r}; expected csv or xlsx")
    if not output.parent.is_dir():
        raise SheetbuilderError(f"the output folder {output.parent} does not exist")
    if output.is_dir():
        raise SheetbuilderError(f"the output {output} is a folder; give a file name such as {output / 'changes.csv'}")
    if fmt == "xlsx" and output.suffix.lower() != ".xlsx":
        raise SheetbuilderError(f"the output {output.name} should end in .xlsx for --format xlsx")
    if fmt == "csv" and output.suffix.lower() in (".xlsx", ".xlsm", ".xls"):
        raise SheetbuilderError(f"the output {output.name} is named as a workbook; name it .csv or use --format xlsx")
    if output.exists() and workbook.exists() and os.path.samefile(output, workbook):
        raise UnsafeOutput(f"{output} is the workbook being read; choose another output name")
    if output.exists() and not force:
        raise OutputExists(f"{output} exists; add --force to overwrite it")


def write_xlsx(path: Path, header: list[str], rows: list[list[Any]], force: bool = False) -> Path:
    """Write header and rows to path as one sheet, text always as text, atomically."""
    cells = [[float(v) if is_number(v) else (None if is_blank(v) else str(v)) for v in row] for row in rows]
    with atomic_output(path, ".xlsx", force) as tmp:
        render_rows(tmp, "changes", header, cells, scratch_dir(tmp))
    return path


UNAPPLIED_REASON = "last week's change, not yet applied"


def unapplied_rows(saved: SavedWorkbook, present: set[tuple]) -> list[tuple[int, list[Any]]]:
    """[(Follow-up row, values as KEYS)] of last week's changes the Follow-up reads as not applied.

    A change whose kind and keys are already in this week's list (present) is left out: this
    week's proposal or decision replaces it. None without a Follow-up sheet.
    """
    out = []
    for row, got in saved.followup:
        if got.get("applied") != "no":
            continue
        named = {"kind": got["kind"], "campaign": got["campaign"], "ad_group": got["ad_group"],
                 "target": got["target"], "match_type": got["match_type"], "product_id": got["product_id"],
                 "current": got["now"], "new": got["planned"], "reason": UNAPPLIED_REASON}
        key = tuple("" if is_blank(named[k]) else named[k] for k in CHANGE_KEY)
        if key not in present:
            out.append((row, [named.get(k) for k in KEYS]))
    return out


def export_changes(workbook: Path, output: Path, fmt: str = "csv", force: bool = False,
                   include_unapplied: bool = False) -> ChangesResult:
    """Write the valid changes of the workbook's Actions sheet to output; report the others.

    Args:
        workbook: the .xlsx the user edited and saved.
        output: the .csv or .xlsx file to write.
        fmt: 'csv' or 'xlsx'.
        force: overwrite output if it exists.
        include_unapplied: also write last week's changes that its Follow-up sheet reads as not
            applied (and that this week's list does not change again), reason "last week's change,
            not yet applied".

    Returns:
        The rows written, the problems (with their Actions row), and whether the list was
        computed from the workbook's inputs.

    Raises:
        WorkbookNotFound, NotAWorkbook, NoActionsSheet: the workbook cannot be read as one with Actions.
        OutputExists: output exists and force is False.
    """
    workbook, output = Path(workbook), Path(output)
    _check_output(workbook, output, fmt, force)
    with no_cycle_collection():  # the plan's millions of objects hold no cycle: the collector would only walk them
        return _export(workbook, output, fmt, force, include_unapplied)


def _export(workbook: Path, output: Path, fmt: str, force: bool, include_unapplied: bool) -> ChangesResult:
    """export_changes once its output was checked."""
    saved = read_saved_workbook(workbook, NotAWorkbook, for_changes=True, followup=include_unapplied)  # one read
    rows, context, notes = actions_of(saved)
    if include_unapplied:
        present = {tuple("" if is_blank(v) else v for v in (dict(zip(KEYS, values))[k] for k in CHANGE_KEY))
                   for _, values in rows}
        rows = rows + unapplied_rows(saved, present)
    problems: list[Problem] = list(notes.problems) + list(notes.overwritten)
    refused: list[int] = []
    kept: list[list[Any]] = []
    for r, values in rows:
        found = check_change(r, values, context) + [
            problem_at(r, h, m) for h, v in zip(HEADERS, values) if isinstance(v, str) and (m := text_problem(v))]
        if found:
            problems += found
            refused.append(r)
            continue
        values = list(values)
        values[0] = str(values[0]).strip().lower()
        kept.append([_money(v) if c in MONEY else None if v == "" or (is_blank(v) and not isinstance(v, str)) else v
                     for c, v in zip(COLUMNS, values)])
    if fmt == "csv":
        write_csv(output, COLUMNS, [_cents_text(r) for r in kept], force=force)
    else:
        write_xlsx(output, list(COLUMNS), kept, force=force)
    return ChangesResult(output, len(kept), problems, refused, kept, notes.computed, notes.overwritten,
                         notes.unchecked)
