"""The user's real loop: one 7-day export a week, and last week's workbook given as ``--previous``.

:class:`WeeklyMethod` runs sheetbuilder's method as a seller does each week: the simulator writes
one 7-day export (catalog, store sales, ad products, targets), ``pipeline.load`` reads it, and the
keyword history is carried from last week's workbook the way ``pipeline.build`` carries it with
``--previous``: the history read back from what the workbook stores (the Keyword history sheet's
cells, as :func:`sheetbuilder.sheets.keyword_weeks.plan_keyword_history` lays them out, read by
:func:`sheetbuilder.weekly.keyword_weeks.read_keyword_history`), joined with this week's export
(``joined_history``), packed (``packed``) and handed to ``plan_workbook(keyword_history=...)``.
The next week's bids are the Bids table's Final bids; the ACoS the method aims at, per keyword,
is the Bids table's :data:`AIM_COLUMN`.

Only the previous workbook's keyword history is carried (no Decisions are typed, the settings are
the same every week, and no other sheet feeds the bids), so the study skips rendering the .xlsx;
tests/test_study.py checks that the history it carries is the one ``build --previous`` carries.
"""
from __future__ import annotations

import tempfile
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from sheetbuilder.errors import ERROR
from sheetbuilder.pipeline import load, plan_workbook
from sheetbuilder.sheets.keyword_weeks import SHEET, PackedHistory, packed, plan_keyword_history, too_long
from sheetbuilder.weekly.keyword_weeks import joined_history, read_keyword_history, this_week_period

from .market import Market
from .policies import Window, bids_column, built_on, write_exports

AIM_COLUMN = "target_acos"  # the Bids column holding the ACoS each keyword's bid aims at
PREVIOUS = "last week.xlsx"


class StoredSheet:
    """The Keyword history sheet as a saved workbook gives its cells back (the few calls the reader makes)."""

    def __init__(self, history: PackedHistory):
        sheet, _ = plan_keyword_history(history)
        table = sheet.table
        body = [list(row) for row in zip(*(column.values for column in table.columns))]
        above = [[None if cell is None else cell.value for cell in row] for row in sheet.above]
        self._rows = above + [[]] * (table.first_row - len(above)) + [[c.header for c in table.columns]] + body
        self.sheetnames = [SHEET]
        self.path = Path(PREVIOUS)

    def area(self, name: str) -> None:
        """No defined name: the reader finds the sheet by its name and header, as a renamed name would make it."""
        return None

    def rows(self, sheet: str, columns: Any = None, formulas: bool = False) -> list[list[Any]]:
        width = max(len(r) for r in self._rows)
        return [r + [None] * (width - len(r)) for r in self._rows] if sheet == SHEET else []


def carried(stored: PackedHistory | None, targets, period, settings) -> PackedHistory:
    """This week's keyword history: last week's, read back from its stored cells, joined with this week's export."""
    saved = None
    if stored is not None:
        saved, problems = read_keyword_history(StoredSheet(stored))
        if saved is None or any(p.severity == ERROR for p in problems):
            raise RuntimeError(f"last week's keyword history did not read back: {problems}")
    history, dropped, problems = joined_history(saved, [], targets, period, settings,
                                                PREVIOUS if stored is not None else None)
    history_sheet = packed(history, dropped, period)  # Bids reads the totals when they hold this week, as build does
    problems += too_long(history_sheet.rows)
    if any(p.severity == ERROR for p in problems):
        raise RuntimeError(f"the keyword history could not be carried: {problems}")
    return history_sheet


@dataclass
class WeeklyMethod:
    """The workbook's method on the user's real loop (one 7-day export a week, history carried by --previous)."""

    settings: dict = field(default_factory=dict)
    window_weeks = 1  # the simulator hands it one week's results
    stored: PackedHistory | None = field(default=None, repr=False)

    def start(self, market: Market) -> None:
        """A new account: no previous workbook."""
        self.stored = None

    def __call__(self, market: Market, window: Window) -> tuple[np.ndarray, np.ndarray]:
        """(next week's bids, the ACoS each aims at): this week's export planned with the carried history."""
        if window.weeks != 1:
            raise ValueError("the weekly loop reads one 7-day export a week")
        with tempfile.TemporaryDirectory(prefix="study-week-") as tmp:
            write_exports(Path(tmp), market, window, self.settings)
            inputs, settings, _ = load(Path(tmp))
        period = this_week_period(inputs.period, settings)
        self.stored = carried(self.stored, inputs.tables.get("targets"), period, settings)
        plan = plan_workbook(inputs, settings, built_on(window.week), [], keyword_history=self.stored)
        return bids_column(plan, market, "final"), bids_column(plan, market, AIM_COLUMN)
