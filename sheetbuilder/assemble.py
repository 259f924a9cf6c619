"""Assembling the workbook: the sheet planners run as an ordered list of named steps glued by anchors.

Each step plans one sheet (or a pair, such as Harvest and Negatives), provides its anchors (its
tables' ranges, totals and last cells, and single figures such as Budget's spend shifted) under
its own name in :class:`~sheetbuilder.sheets.anchors.Anchors`, and reads what it needs from there by
name. A step whose needs are absent (no targets export: no Bids; no search terms: no Terms,
Harvest or Negatives) is not run. Reading an anchor that no earlier step provides is an internal
error, never a placeholder range.

Where each sheet goes in the workbook, and each column section on the Guide, is declared once
here (``SHEET_ORDER``, ``SECTION_ORDER``), apart from the order the steps must run in.
"""
from __future__ import annotations

import datetime as dt
from dataclasses import dataclass, field, replace
from typing import Callable

from sheetbuilder.sheets.anchors import Anchors
from sheetbuilder.sheets.typed import ACTIONS_NAME, EDITABLE_TABLES, CarryResult, decision_column
from sheetbuilder.workbook.columns import ColumnDef, PlannedTable
from sheetbuilder.workbook.formula import check_names
from sheetbuilder.errors import Problem
from sheetbuilder.sheets.history import applied_rows, plan_history, week_of
from sheetbuilder.sheets.keyword_weeks import PackedHistory, plan_keyword_history
from sheetbuilder.sheets.actions import DEFS as ACTION_DEFS, SEGMENTS as ACTION_SEGMENTS, plan_actions
from sheetbuilder.sheets.bids import DEFS as BIDS_DEFS, plan_bids
from sheetbuilder.sheets.budget import CAMPAIGN_DEFS, PRODUCT_DEFS as BUDGET_DEFS, plan_budget
from sheetbuilder.sheets.dashboard import Figure, dashboard, first_look
from sheetbuilder.sheets.elasticity import ElasticityEstimate, estimate_elasticity
from sheetbuilder.sheets.followup import (CHANGE_DEFS as FOLLOWUP_DEFS, NAME as FOLLOWUP_NAME, SHEET as FOLLOWUP_SHEET,
                                          SUMMARY as FOLLOWUP_SUMMARY, Followup, plan_followup)
from sheetbuilder.sheets.groups import DEFS as GROUPS_DEFS, plan_groups
from sheetbuilder.sheets.guide import SETTINGS_FIGURE, plan_guide
from sheetbuilder.sheets.inputs import InputSheet, catalog_names, plan_input_sheets
from sheetbuilder.sheets.lists import HARVEST, NEGATIVES, plan_list
from sheetbuilder.sheets.mix import MATCH_DEFS, TYPE_DEFS as MIX_DEFS, plan_mix
from sheetbuilder.sheets.notes import place_notes
from sheetbuilder.sheets.profit import DEFS as PROFIT_DEFS, plan_profit
from sheetbuilder.sheets.settings_sheet import NOT_VALID_NAME, plan_settings
from sheetbuilder.sheets.terms import DEFS as TERMS_DEFS, plan_terms
from sheetbuilder.sheets.unmatched import carried_marks, marked_column, plan_carried, plan_unmatched
from sheetbuilder.reading.account import account_of_inputs
from sheetbuilder.reading.readers import Inputs
from sheetbuilder.reading.settings import Settings
from sheetbuilder.workbook.spec import Sheet, Table, WorkbookSpec

# Where each step's sheets go, left to right (the Guide first, the in_ sheets last).
SHEET_ORDER = ("guide", "settings", "profit", "bids", "terms", "harvest", "negatives", "mix", "budget", "actions",
               "followup", "history", "keyword_history", "groups", "keys", "unmatched", "carried", "inputs")
# The order of the column sections on the Guide.
SECTION_ORDER = ("profit", "bids", "terms", "harvest", "negatives", "mix", "budget", "groups", "actions", "followup")


@dataclass
class Plan:
    """A planned workbook: the spec the renderer writes and the reference frames behind it."""

    spec: WorkbookSpec
    tables: dict[str, PlannedTable] = field(default_factory=dict)


class Decisions:
    """What the planners take from carried edits: typed Decisions and target overrides (none without)."""

    def __init__(self, carry: CarryResult | None):
        self.carry = carry
        self.targets = dict(carry.targets) if carry else {}

    def column(self, sheet: str, rows) -> list:
        """The carried Decision of each row (None where none was typed)."""
        if self.carry is None:
            return [None for _ in rows]
        return decision_column(self.carry, sheet, rows)


@dataclass
class Assembly:
    """What the steps read (the build's inputs) and what they have planned so far."""

    inputs: Inputs
    settings: Settings
    built_on: dt.date
    warnings: list[Problem]
    carry: CarryResult | None
    followup: Followup | None
    history: list[dict] | None
    layouts: dict[str, InputSheet]
    decide: Decisions
    keyword_history: PackedHistory | None = None
    leave_out: frozenset[str] = frozenset()  # the steps not run (see plan_workbook)
    elasticity: ElasticityEstimate | None = None  # the click elasticity estimated from the keyword history
    anchors: Anchors = field(default_factory=Anchors)
    groups: PlannedTable | None = None  # the ad-group blends Bids and Terms read (a sheet only when one of them is)
    blends: PlannedTable | None = None  # the per-ad-group blends table on Groups, fetched by INDEX
    tables: dict[str, PlannedTable] = field(default_factory=dict)
    sheets: dict[str, list[Sheet]] = field(default_factory=dict)
    sections: dict[str, tuple[str, list[ColumnDef]]] = field(default_factory=dict)
    names: list[tuple[str, str]] = field(default_factory=list)
    figures: list[Figure] = field(default_factory=list)

    def place(self, where: str, *sheets: Sheet) -> None:
        """Put sheets at their declared place in the workbook (SHEET_ORDER)."""
        self.sheets.setdefault(where, []).extend(sheets)

    def table(self, step: str, name: str, planned: PlannedTable, sheet: str | None = None,
              prefix: str | None = None) -> PlannedTable:
        """Keep a planned table under name and, with a prefix, provide its ranges as anchors."""
        self.tables[name] = planned
        if prefix is not None:
            self.anchors.provide(step, planned.ranges(sheet, prefix))
        return planned


@dataclass(frozen=True)
class Step:
    """One planning step: its name, the anchor tables it needs (not run without them), and what it does."""

    name: str
    run: Callable[[Assembly], None]
    needs: tuple[str, ...] = ()
    when: Callable[[Assembly], bool] = lambda a: True


def _inputs(a: Assembly) -> None:
    for table, layout in a.layouts.items():
        a.anchors.provide("inputs", {f"{table}.{col}": r for col, r in layout.ranges.items()})


def _settings(a: Assembly) -> None:
    if a.keyword_history is not None and "keyword_history" not in a.leave_out:  # shown beside it, used by none
        a.elasticity = estimate_elasticity(a.keyword_history.rows)
    beside = {"click_elasticity": a.elasticity.text()} if a.elasticity is not None else None
    sheet, names = plan_settings(a.settings, a.built_on, a.inputs.period,
                                 a.carry.as_built if a.carry is not None else None, account_of_inputs(a.inputs),
                                 beside)
    a.place("settings", sheet)
    a.names += names


def _profit(a: Assembly) -> None:
    sheet, profit = plan_profit(a.inputs, a.layouts, a.settings, a.built_on, a.decide.targets)
    a.table("profit", "Profit", profit, sheet.name, "profit")
    a.place("profit", sheet)
    a.sections["profit"] = ("Profit columns", PROFIT_DEFS)


def _groups(a: Assembly) -> None:
    sheet, groups, blends = plan_groups(a.layouts.get("ad_products"), a.tables["Profit"], a.anchors, a.settings)
    a.anchors.provide("groups", groups.ranges(sheet.name, "groups"))
    a.anchors.provide("groups", blends.ranges(sheet.name, "blends"))
    a.groups = groups
    a.blends = blends
    if "targets" in a.layouts or "search_terms" in a.layouts:  # the blends are read by Bids or Terms
        a.table("groups", "Groups", groups)
        a.table("groups", "Blends", blends)
        a.place("groups", sheet)
        a.sections["groups"] = ("Groups columns", GROUPS_DEFS)


def _bids(a: Assembly) -> None:
    as_saved = a.carry is not None and a.carry.inputs_as_saved  # a saved workbook planned again: keys as it stores them
    history = a.keyword_history.lookup(not as_saved) if a.keyword_history is not None else None
    sheet, bids = plan_bids(a.layouts["targets"], a.inputs.get("campaigns"), a.groups, a.tables["Profit"],
                            a.settings, a.anchors, a.decide.column, blends=a.blends, history=history)
    a.table("bids", "Bids", bids, "Bids", "bids")
    a.place("bids", sheet)
    a.sections["bids"] = ("Bids columns", BIDS_DEFS)


def _terms(a: Assembly) -> None:
    sheet, terms, keys_sheet, _ = plan_terms(a.layouts["search_terms"], a.groups, a.tables["Profit"],
                                             a.inputs.get("targets"), a.inputs.get("campaigns"),
                                             a.inputs.get("negatives"), a.settings, a.anchors, a.decide.column,
                                             blends=a.blends)
    a.table("terms", "Terms", terms, sheet.name, "terms")
    a.place("terms", sheet)
    a.place("keys", keys_sheet)
    a.sections["terms"] = ("Terms columns", TERMS_DEFS)


def _lists(a: Assembly) -> None:
    # The Negatives list's anchors are not named 'negatives': that is the in_negatives input table.
    for spec, where, prefix in ((HARVEST, "harvest", "harvest"), (NEGATIVES, "negatives", "negative_list")):
        sheet, planned = plan_list(spec, a.tables["Terms"], a.settings, a.anchors)
        a.table(where, spec.sheet, planned, spec.sheet, prefix)
        a.place(where, sheet)
        a.sections[where] = (f"{spec.sheet} columns", spec.defs)


def _mix(a: Assembly) -> None:
    sheet, tables = plan_mix(a.layouts.get("ad_products"), a.layouts.get("targets"), a.tables["Profit"], a.settings,
                             a.anchors)
    a.tables.update(tables)
    a.place("mix", sheet)
    a.sections["mix"] = ("Mix columns", MIX_DEFS + [d for d in MATCH_DEFS if d.key not in {x.key for x in MIX_DEFS}])


def _budget(a: Assembly) -> None:
    sheet, tables, provides = plan_budget(a.tables["Profit"], a.layouts.get("campaigns"), a.layouts.get("ad_products"),
                                          a.settings, a.anchors, a.decide.column)
    a.tables.update(tables)
    if "Budget campaigns" in tables:
        a.anchors.provide("budget", tables["Budget campaigns"].ranges(sheet.name, "budget_campaigns"))
    for name, (ref, value) in provides.items():
        a.anchors.provide_cell("budget", name, ref, value)
    a.place("budget", sheet)
    a.sections["budget"] = ("Budget columns", BUDGET_DEFS + [d for d in CAMPAIGN_DEFS if d.key not in
                                                             {x.key for x in BUDGET_DEFS}])


def _actions(a: Assembly) -> None:
    sizes = {s.label: len(a.tables[s.table].frame) for s in ACTION_SEGMENTS if s.table in a.tables}
    sheet, actions, counts, count_refs = plan_actions(a.tables, a.anchors, a.settings, sizes)
    a.table("actions", "Actions", actions)
    for i, (ref, count) in enumerate(zip(count_refs, counts)):
        a.anchors.provide_cell("actions", f"actions_count.{ACTION_SEGMENTS[i].number}", ref, float(count))
    a.place("actions", sheet)
    a.sections["actions"] = ("Actions columns", ACTION_DEFS)


def _followup(a: Assembly) -> None:
    targets = a.layouts["targets"].frame if "targets" in a.layouts else None
    sheet, a.tables[FOLLOWUP_SHEET], a.tables["Follow-up products"], summary = plan_followup(
        a.followup, a.tables["Profit"], a.anchors, targets)
    for label, (ref, value) in summary.items():
        a.anchors.provide_cell("followup", f"followup_summary.{label}", ref, value)
    a.place("followup", sheet)
    a.sections["followup"] = ("Follow-up columns", FOLLOWUP_DEFS)


def _history(a: Assembly) -> None:
    if a.followup is not None:
        end = a.followup.current.end if a.followup.current is not None else None
        rows = a.history + applied_rows(a.followup.rows, week_of(end, a.built_on))
    else:
        rows = a.history
    sheet, names = plan_history(rows)
    a.place("history", sheet)
    a.names += names


def _keyword_history(a: Assembly) -> None:
    sheet, names = plan_keyword_history(a.keyword_history)
    a.place("keyword_history", sheet)
    a.names += names


def _guide(a: Assembly) -> None:
    """The dashboard's figures, read from the anchors, then the Guide."""
    figures = dashboard(a.tables, a.anchors, (a.anchors["budget.shifted"], a.anchors.value("budget.shifted")))
    figures.append(Figure(SETTINGS_FIGURE, "=" + NOT_VALID_NAME, 0.0, "int"))  # a build types only valid values
    counts = [name for name in a.anchors if name.startswith("actions_count.")]
    figures.append(Figure("Changes to apply (all written by the changes command)",
                          "=" + "+".join(a.anchors[n] for n in counts),
                          float(sum(a.anchors.value(n) for n in counts)), "int"))
    for label, style in FOLLOWUP_SUMMARY:
        name = f"followup_summary.{label}"
        if name in a.anchors:
            figures.append(Figure(f"Follow-up: {label[0].lower()}{label[1:]}", "=" + a.anchors[name],
                                  a.anchors.value(name), style))
    sources = {k: v.name + (f" ({a.inputs.encodings[k]})" if k in a.inputs.encodings else "")
               for k, v in a.inputs.sources.items()}
    sections = [a.sections[k] for k in SECTION_ORDER if k in a.sections]
    exports = [("Currency in the exports", a.inputs.currency or "no currency marked; amounts read as written"),
               ("Period in the exports", str(a.inputs.period) if a.inputs.period else "no dates; period_days applies")]
    if a.elasticity is not None:
        exports.append(("Click elasticity in the keyword history", a.elasticity.text()))
    a.place("guide", plan_guide(a.settings, a.built_on, sections, a.warnings, a.inputs.checksums, sources, figures,
                                first_look(a.tables, "inventory" in a.layouts), exports))


def _notes(a: Assembly) -> None:
    """The notes carried by key, the user's own columns beside them, and room for more (unlocked)."""
    place_notes(a.sheets, a.tables, a.carry)


def _unmatched(a: Assembly) -> None:
    a.place("unmatched", plan_unmatched(a.carry))


def _carried(a: Assembly) -> None:
    sheet, names = plan_carried(a.carry)
    a.place("carried", sheet)
    a.names += names
    catalog = next((s for s in a.sheets.get("inputs", []) if s.name == "in_catalog"), None)
    _with_marks(a, carried_marks(a.carry, a.tables, catalog, a.layouts))


# The steps only shown: a change list, the follow-up and the check of cells typed over a formula need none of them
# (a saved workbook is planned again without them, for ``changes`` and ``build --previous``):
# they plan no table holding formulas and provide no anchor another step reads; the Keyword history's packed weeks
# and the click elasticity estimated from them are shown, never used.
SHOWN_ONLY = frozenset({"keyword_history", "guide"})

# The steps in the order they must run: each reads only anchors the steps before it provide.
STEPS: tuple[Step, ...] = (
    Step("inputs", _inputs),
    Step("settings", _settings),
    Step("profit", _profit),
    Step("groups", _groups),
    Step("bids", _bids, needs=("targets",)),
    Step("terms", _terms, needs=("search_terms",), when=lambda a: len(a.layouts["search_terms"].frame) > 0),
    Step("lists", _lists, needs=("terms",)),
    Step("mix", _mix),
    Step("budget", _budget),
    Step("actions", _actions),
    Step("followup", _followup, when=lambda a: a.followup is not None),
    Step("history", _history, when=lambda a: a.history is not None),
    Step("keyword_history", _keyword_history, when=lambda a: a.keyword_history is not None),
    Step("guide", _guide),
    Step("notes", _notes),
    Step("unmatched", _unmatched, when=lambda a: a.carry is not None and bool(a.carry.unmatched)),
    Step("carried", _carried, when=lambda a: a.carry is not None and bool(a.carry.carried or a.carry.applied)),
)


def plan_workbook(inputs: Inputs, settings: Settings, built_on: dt.date,
                  warnings: list[Problem] | None = None, carry: CarryResult | None = None,
                  followup: Followup | None = None, history: list[dict] | None = None,
                  keyword_history: PackedHistory | None = None, leave_out: frozenset[str] = frozenset()) -> Plan:
    """Plan every sheet from validated inputs: pure, writes nothing.

    Args:
        inputs: the validated tables.
        settings: the build's settings.
        built_on: the build date (for the attribution-window warning).
        warnings: problems of WARNING severity to list on the Guide.
        carry: edits carried from last week's workbook (decisions and target overrides).
        followup: last week's changes looked up in this week's exports (a Follow-up sheet after Actions).
        history: the History rows carried from the previous workbook (a History sheet; None: no sheet).
        keyword_history: the keyword history to write (a Keyword history sheet; None: no sheet).
        leave_out: names of steps not to run (``SHOWN_ONLY``: a saved workbook planned again, not a workbook to write;
            the keyword history's totals alone are then read, :func:`sheetbuilder.sheets.keyword_weeks.packed`).

    Returns:
        The plan: the workbook spec and each computed table's reference frame.
    """
    exported = carry.exported if carry is not None else {}
    input_sheets, layouts = plan_input_sheets(inputs, settings.fold_plurals, exported)
    a = Assembly(inputs, settings, built_on, warnings or [], carry, followup, history, layouts, Decisions(carry),
                 keyword_history, frozenset(leave_out))
    a.place("inputs", *input_sheets)
    for step in STEPS:
        if step.name not in a.leave_out and all(need in a.anchors.tables() for need in step.needs) and step.when(a):
            step.run(a)
    names = [*a.names, *catalog_names(layouts), *edit_names(a.tables)]
    sheets = [s for where in SHEET_ORDER for s in a.sheets.get(where, [])]
    spec = WorkbookSpec(sheets, names, settings.currency_symbol)
    check_names(spec.formulas(), {name for name, _ in names})  # a setting's name in formula text is a defined one
    return Plan(spec, a.tables)


def _with_marks(a: Assembly, marks: dict[int, dict[int, str]]) -> None:
    """Put marked copies of the marked columns in the assembly's sheets and tables (the planned ones are not changed)."""
    def table(t: Table | None) -> Table | None:
        return None if t is None else replace(t, columns=[marked_column(c, marks) for c in t.columns])

    for where, sheets in a.sheets.items():
        a.sheets[where] = [replace(s, table=table(s.table), more=[table(t) for t in s.more]) for s in sheets]
    for name, planned in a.tables.items():
        a.tables[name] = replace(planned, columns=[marked_column(c, marks) for c in planned.columns])


def edit_names(tables: dict[str, PlannedTable]) -> list[tuple[str, str]]:
    """Defined names over every typed column and its keys, and over the Actions list (see saved.py)."""
    out = [n for decl in EDITABLE_TABLES if decl.table in tables for n in decl.defined_names(tables[decl.table])]
    if "Actions" in tables:
        out.append((ACTIONS_NAME, "=" + tables["Actions"].body_range("Actions")))
    if "Follow-up" in tables:
        out.append((FOLLOWUP_NAME, "=" + tables["Follow-up"].body_range(FOLLOWUP_SHEET)))
    return out
