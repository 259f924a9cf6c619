"""Reading a saved workbook of ours once: the :class:`SavedWorkbook` record every weekly command takes.

``build --previous`` and ``changes`` each open the workbook once (:func:`read_saved_workbook`,
under the reading guard: a damaged file is the user's problem) and read everything they use
from it: the inputs, settings and typed edits it holds, the values it saved, its History and,
for ``changes``, its Actions and Follow-up lists. The workbook is then planned again from the
record (:func:`plan_saved`, outside the guard, so a failure there is a bug) while it is still open,
and its cells typed over a formula are read against that plan under the guard
(:mod:`sheetbuilder.weekly.typed_over`); the sheets read before that check (:data:`READ_TWICE`) are
checked (their XML) once, by their first read. What they compute from the record (the change list, the
carry, the follow-up) runs after the file is closed, so a failure there is a bug too.
"""
from __future__ import annotations

import gc
from contextlib import contextmanager
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from sheetbuilder.assemble import SHOWN_ONLY, Plan, plan_workbook
from sheetbuilder.errors import ERROR, Problem, SheetbuilderError
from sheetbuilder.reading.account import ACCOUNT_NAME
from sheetbuilder.reading.guard import reading
from sheetbuilder.reading.readers import Inputs
from sheetbuilder.reading.settings import Settings
from sheetbuilder.sheets.actions import HEADER_ROW as ACTIONS_HEADER_ROW, HEADERS, SHEET
from sheetbuilder.sheets.followup import CHANGE_DEFS, NAME as FOLLOWUP_NAME
from sheetbuilder.sheets.keyword_weeks import packed
from sheetbuilder.sheets.typed import (ACTIONS_NAME, DECISION_SHEETS, EDITABLE_TABLES, PROFIT_TARGET, CarryResult,
                                      key_text)
from sheetbuilder.values import is_blank, is_number
from sheetbuilder.weekly.carry import Edits, copy_problems, edits_in
from sheetbuilder.weekly.keyword_weeks import read_keyword_history
from sheetbuilder.weekly.saved import NotAWorkbook, SavedBook, read_history, saved_inputs, saved_settings
from sheetbuilder.weekly.typed_over import typed_over

# The sheets read (their typed columns, the Actions list) before the typed-over check streams them: a first read by
# the expat reader keeps their rows for that stream, so each is parsed once; a part the regular-expression reader
# reads (weekly/fast_cells.py) is read again for the stream, without being checked again, which costs less than
# keeping every cell. The others are read once by the check alone.
READ_TWICE = frozenset({decl.sheet for decl in EDITABLE_TABLES if not decl.sheet.startswith("in_")} | {SHEET})
HEADER_ROW = ACTIONS_HEADER_ROW + 1  # 1-based, as a spreadsheet shows it
FIRST_ROW = HEADER_ROW + 1


class NoActionsSheet(SheetbuilderError):
    """The workbook has no Actions sheet, or its header row is not the expected one."""


def _saved_actions(book: SavedBook, kinds_only: bool = False) -> list[tuple[int, list[Any]]]:
    """[(sheet row, visible values)] of the Actions list as the file saved it (blank Kind = an empty row).

    kinds_only: read only the Kind column of a list its defined name finds (the other values None): a workbook
    holding its inputs has its change list computed, and its saved Kinds only tell whether the file stores
    formula values. A list found without its name is read whole, its header row checked.
    """
    area = book.area(ACTIONS_NAME)
    first_col = area.first_col if area else 0
    width = len(HEADERS)
    rows = book.rows(area.sheet if area else book.sheet(SHEET) or SHEET,
                     frozenset({first_col} if kinds_only and area else range(first_col, first_col + width)))
    first_row = area.first_row if area else FIRST_ROW - 1
    header = [rows[first_row - 1][first_col + i] if first_row - 1 < len(rows) and first_col + i < len(
        rows[first_row - 1]) else None for i in range(width)]
    got = tuple("" if h is None else str(h).strip() for h in header)
    if area is None and got != HEADERS:
        raise NoActionsSheet(f"{book.path.name}: the {SHEET} sheet's row {HEADER_ROW} should read "
                             f"{', '.join(HEADERS)}; it reads {', '.join(got)}")
    last = area.last_row if area else len(rows) - 1
    return [(r + 1, [rows[r][first_col + i] if first_col + i < len(rows[r]) else None for i in range(width)])
            for r in range(first_row, min(last, len(rows) - 1) + 1)]


@dataclass
class SavedWorkbook:
    """Everything the weekly commands take from a saved workbook of ours, read once and closed.

    Attributes:
        path: the workbook.
        sheetnames: its sheets, in order.
        tables: the input tables of its in_ sheets (corrections included); None when the workbook holds
            no inputs (no in_catalog or Settings sheet: an Actions-shaped sheet alone).
        settings, built_on: its Settings sheet (the defaults and today without one).
        edits: everything typed in it (Decisions, target overrides, what was lost).
        account_name: the exports folder it was built from, as its Settings sheet records it ('' before
            workbooks recorded it).
        problems: cells that could not be read as their column's kind.
        context: what the checks of a change read besides the change (see
            :func:`sheetbuilder.weekly.change_list.check_change`).
        history, history_problems: its History rows and why they could not be read (read for ``build
            --previous``).
        actions: [(sheet row, visible values)] of its Actions list as saved (read for ``changes``; only the Kind
            of each row when it holds inputs: its list is then computed).
        followup: [(sheet row, {column key: value})] of its Follow-up's "Last week's changes" (read for
            ``changes --include-unapplied``).
        planned, plan_problems: the workbook planned again from its inputs and typed edits (as the build
            planned it, without the sheets only shown: :data:`sheetbuilder.assemble.SHOWN_ONLY`), and the
            problems of those edits; None without inputs.
        typed_over: one Problem per cell holding a typed value where the plan has a formula
            (:mod:`sheetbuilder.weekly.typed_over`).
    """

    path: Path
    sheetnames: list[str]
    tables: dict[str, Any] | None
    settings: Settings
    built_on: Any
    edits: Edits
    problems: list[Problem]
    context: dict[str, Any]
    history: list[dict] = field(default_factory=list)
    history_problems: list[Problem] = field(default_factory=list)
    actions: list[tuple[int, list[Any]]] = field(default_factory=list)
    followup: list[tuple[int, dict[str, Any]]] = field(default_factory=list)
    account_name: str = ""
    keyword_history: Any = None  # its Keyword history (sheets.keyword_weeks.KeywordHistory), None when it holds none
    keyword_history_problems: list[Problem] = field(default_factory=list)
    planned: Plan | None = None
    plan_problems: list[Problem] = field(default_factory=list)
    typed_over: list[Problem] = field(default_factory=list)

    @property
    def holds_inputs(self) -> bool:
        """Whether the workbook holds the inputs its change list is computed from."""
        return self.tables is not None


def _column_values(book: SavedBook, sheet: str, header: str) -> set[str]:
    """The texts of the column headed header (row 1) of the in_ sheet built as sheet, or empty when absent."""
    sheet = book.sheet(sheet)
    rows = book.rows(sheet) if sheet is not None else []
    if not rows:
        return set()
    head = [str(v).strip() if v is not None else "" for v in rows[0]]
    if header not in head:
        return set()
    i = head.index(header)
    return {str(r[i]).strip() for r in rows[1:] if not is_blank(r[i])}


def read_context(book: SavedBook) -> dict[str, Any]:
    """What the checks read besides a change: bid floor and ceiling, the campaigns in the exports."""
    return {
        "bid_floor": book.named_value("bid_floor"),
        "bid_ceiling": book.named_value("bid_ceiling"),
        "campaigns": (_column_values(book, "in_campaigns", "campaign")
                      | _column_values(book, "in_ad_products", "campaign")),
        "has_campaign_sheets": any(book.sheet(s) is not None for s in ("in_campaigns", "in_ad_products")),
    }


def _followup_rows(book: SavedBook) -> list[tuple[int, dict[str, Any]]]:
    """[(sheet row, {column key: value})] of the Follow-up's Last week's changes, found by its defined name."""
    visible = [d.key for d in CHANGE_DEFS]
    area = book.area(FOLLOWUP_NAME)
    if area is None:
        return []
    rows = book.rows(area.sheet, frozenset(range(area.first_col, area.first_col + len(visible))))
    return [(r + 1, dict(zip(visible, rows[r][area.first_col:area.first_col + len(visible)])))
            for r in range(area.first_row, min(area.last_row, len(rows) - 1) + 1)]


def plan_saved(saved: SavedWorkbook, without_shown: bool = False) -> tuple[Plan, list[Problem]]:
    """The saved workbook planned again from the inputs and typed edits it holds, as the build planned it,
    and the problems of its typed edits (a Decision that is not valid, a column lost, a copy not read).

    without_shown: plan what the change list, the follow-up and the typed-over check read, not the sheets only shown
    (:data:`sheetbuilder.assemble.SHOWN_ONLY`): the same tables, formulas and values.
    Pure: the record was read and the file may be closed; a failure here is a bug, not a damaged file.
    """
    settings, edits = saved.settings, saved.edits
    problems = list(saved.problems)
    fold = settings.fold_plurals
    decisions: dict[str, dict] = {}
    for entry in DECISION_SHEETS:
        for parts, value in edits.decisions.get(entry.label, {}).items():
            decisions.setdefault(entry.label, {})[entry.key_of(parts, fold)] = value
            why = entry.decl.problem(value)
            if why is not None:
                problems.append(Problem(entry.sheet, None, entry.value_header,
                                        f"{' / '.join(key_text(p) for p in parts)}: {why}; the change is not written"))
    targets: dict[str, float] = {}
    for pid, value in edits.targets.items():
        if is_number(value):
            targets[pid] = float(value)
        else:
            problems.append(Problem(PROFIT_TARGET.sheet, None, PROFIT_TARGET.value_header,
                                    f"{pid}: {value!r} is not a target ACoS; the product's other target is used"))
    for label, why in edits.lost:
        problems.append(Problem(label, None, "Decision", why))
    problems += copy_problems(edits)
    carry = CarryResult(settings, targets=targets, decisions=decisions, source=str(saved.path), inputs_as_saved=True)
    tables = {k: None if v is None else v.copy() for k, v in saved.tables.items()}  # the record's stay as read
    # Bids read its keyword history's totals when the build recorded its own week: planned again from the same
    history = saved.keyword_history
    problems += [p for p in saved.keyword_history_problems if p.severity == ERROR]
    keywords = packed(history, current=history.current, texts=not without_shown) if history is not None else None
    return plan_workbook(Inputs(tables), settings, saved.built_on, [], carry, keyword_history=keywords,
                         leave_out=SHOWN_ONLY if without_shown else frozenset()), problems


@contextmanager
def no_cycle_collection():
    """Python's collector of reference cycles paused while a workbook is read, planned and its change list written:
    the read makes millions of rows and cells that are never cycles, and the collector's passes over them cost
    about 6% of the read (measured at 10k keywords), and a full pass over what the plan holds about 0.15 s more.
    Whatever the command leaves is collected as usual once it resumes (a pause inside a pause changes nothing)."""
    paused = gc.isenabled()
    gc.disable()
    try:
        yield
    finally:
        if paused:
            gc.enable()


def read_saved_workbook(path: Path, unreadable: type[SheetbuilderError] = NotAWorkbook,
                        for_changes: bool = False, followup: bool = False) -> SavedWorkbook:
    """Read a saved workbook of ours once, under the reading guard, and close it.

    A workbook holding inputs is planned again (:func:`plan_saved`, outside the guard: a failure there
    is a bug) while it is open, and its cells typed over a formula are then read under the guard. Both commands
    read from that plan only its change list, its Profit table and its formula tables (the follow-up of
    ``build --previous``, the typed-over check), so it leaves out the sheets only shown
    (:data:`sheetbuilder.assemble.SHOWN_ONLY`), as ``changes`` always did.

    Args:
        path: the workbook (only read).
        unreadable: the error a damaged file raises (``build --previous`` and ``changes`` name it apart).
        for_changes: also read the Actions list as saved (not the History); refuse a workbook
            without an Actions sheet, and read one without inputs from its saved values.
        followup: also read the Follow-up's rows (``changes --include-unapplied``).

    Raises:
        WorkbookNotFound, unreadable: the file is missing or cannot be read.
        NoActionsSheet: for_changes, and the workbook has no Actions list to read.
    """
    with reading(path, unreadable):
        book = SavedBook(Path(path))
    with book, no_cycle_collection():
        book.streamed_again = set(READ_TWICE)
        with reading(path, unreadable):
            record = _record(book, for_changes, followup)
        if record.holds_inputs:  # planned for what is read from the plan: the change list and the typed-over check
            record.planned, record.plan_problems = plan_saved(record, without_shown=True)
            with reading(path, unreadable):
                record.typed_over = typed_over(book, record.planned.spec, record.planned.tables)
    return record


def _record(book: SavedBook, for_changes: bool, followup: bool) -> SavedWorkbook:
    """Everything the commands read from the opened workbook (see :func:`read_saved_workbook`)."""
    names = list(book.sheetnames)
    if for_changes and book.sheet(SHEET) is None:
        raise NoActionsSheet(f"{book.path.name} has no {SHEET} sheet; build it with a sheetbuilder that writes one")
    holds_inputs = not for_changes or all(book.sheet(s) is not None for s in ("in_catalog", "Settings"))
    actions = _saved_actions(book, kinds_only=holds_inputs) if for_changes else []
    if not holds_inputs:
        if actions and all(is_blank(v) for _, values in actions for v in values):
            raise NoActionsSheet(f"{book.path.name} stores no values on {SHEET} and holds no inputs to "
                                 "compute them from; open and save it in a spreadsheet program first")
        return SavedWorkbook(book.path, names, tables=None, settings=Settings(), built_on=None,
                             edits=Edits(str(book.path)), problems=[], context=read_context(book), actions=actions)
    tables, problems = saved_inputs(book)
    settings, built_on, setting_problems = saved_settings(book)
    problems += [Problem("Settings", None, p.column, p.message) for p in setting_problems]
    history, history_problems = ([], []) if for_changes else read_history(book)
    keywords, keyword_problems = read_keyword_history(book)  # Bids read its totals: `changes` plans with it
    return SavedWorkbook(book.path, names, tables=tables, settings=settings, built_on=built_on,
                         edits=edits_in(book, notes=not for_changes), problems=problems, context=read_context(book),
                         history=history, history_problems=history_problems, actions=actions,
                         followup=_followup_rows(book) if followup else [],
                         account_name=str(book.named_value(ACCOUNT_NAME) or ""),
                         keyword_history=keywords, keyword_history_problems=keyword_problems)
