"""The pipeline: settings, then readers, then the planners, then the renderer, atomically."""
from __future__ import annotations

import datetime as dt
import os
from dataclasses import dataclass, field
from pathlib import Path

import pandas as pd

from .columns import PlannedTable
from .errors import ERROR, WARNING, InputProblems, OutputExists, Problem, SheetbuilderError, UnsafeOutput
from .plan_bids import DEFS as BIDS_DEFS, plan_bids
from .plan_groups import DEFS as GROUPS_DEFS, plan_groups
from .atomic import atomic_output, refuse_input_as_output, scratch_dir
from .guard import reading
from .carry import (PROFIT_TARGET, CarryResult, PreviousWorkbookUnreadable, apply_edits, carried_catalog,
                    decision_column, entry_for, read_edits)
from .plan_actions import defs as ACTION_DEFS, plan_actions
from .plan_dashboard import Figure, dashboard, first_look
from .plan_unmatched import plan_carried, plan_unmatched
from .plan_guide import plan_guide
from .followup import Followup, read_followup
from .history import applied_rows, plan_history, read_history
from .plan_followup import CHANGE_DEFS as FOLLOWUP_DEFS, NAME as FOLLOWUP_NAME, SHEET as FOLLOWUP_SHEET, plan_followup
from .plan_budget import CAMPAIGN_DEFS, PRODUCT_DEFS as BUDGET_DEFS, plan_budget
from .plan_lists import HARVEST, NEGATIVES, plan_list
from .plan_mix import MATCH_DEFS, TYPE_DEFS as MIX_DEFS, plan_mix
from .plan_terms import _defs as TERMS_DEFS, plan_terms
from .plan_inputs import catalog_names, plan_input_sheets
from .plan_profit import DEFS as PROFIT_DEFS, plan_profit
from .plan_settings import plan_settings
from .periods import settings_for_inputs
from .readers import Inputs, read_inputs
from .render import Progress, render
from .saved import ACTIONS_NAME, EDITABLE_TABLES, PROFIT
from .settings import SETTINGS_FILE, Settings, load_settings
from .spec import WorkbookSpec


@dataclass
class Plan:
    """A planned workbook: the spec the renderer writes and the reference frames behind it."""

    spec: WorkbookSpec
    tables: dict[str, PlannedTable] = field(default_factory=dict)


@dataclass
class BuildResult:
    """What a build wrote and what it noticed."""

    output: Path
    warnings: list[Problem]
    plan: Plan
    rows: dict[str, int]
    carry: CarryResult | None = None


def plan_workbook(inputs: Inputs, settings: Settings, built_on: dt.date,
                  warnings: list[Problem] | None = None, carry: CarryResult | None = None,
                  followup: Followup | None = None, history: list[dict] | None = None) -> Plan:
    """Plan every sheet from validated inputs: pure, writes nothing.

    Args:
        inputs: the validated tables.
        settings: the build's settings.
        built_on: the build date (for the attribution-window warning).
        warnings: problems of WARNING severity to list on the Guide.
        carry: edits carried from last week's workbook (decisions and target overrides).
        followup: last week's changes looked up in this week's exports (a Follow-up sheet after Actions).
        history: the History rows carried from the previous workbook (a History sheet; None: no sheet).

    Returns:
        The plan: the workbook spec and each computed table's reference frame.
    """
    exported = carry.exported if carry is not None else {}
    input_sheets, layouts = plan_input_sheets(inputs, settings.fold_plurals, exported)
    settings_sheet, names = plan_settings(settings, built_on, inputs.period,
                                          carry.as_built if carry is not None else None)
    decide = Decisions(carry)
    profit_sheet, profit = plan_profit(inputs, layouts, settings, built_on, decide.targets)
    tables = {"Profit": profit}
    sheets = [settings_sheet, profit_sheet]
    sections = [("Profit columns", PROFIT_DEFS)]
    ranges = {f"{t}.{col}": r for t, layout in layouts.items() for col, r in layout.ranges.items()}
    ranges.update(profit.ranges(profit_sheet.name, "profit"))
    groups_sheet, groups = plan_groups(layouts.get("ad_products"), profit, ranges)
    ranges.update(groups.ranges(groups_sheet.name, "groups"))
    after: list = []
    if "targets" in layouts:
        bids_sheet, bids = plan_bids(layouts["targets"], inputs.get("campaigns"), groups, profit, settings, ranges,
                                     decide.column)
        sheets.append(bids_sheet)
        tables["Bids"] = bids
        sections.append(("Bids columns", BIDS_DEFS))
    if "search_terms" in layouts and len(layouts["search_terms"].frame):
        terms_sheet, terms, keys_sheet, _ = plan_terms(layouts["search_terms"], groups, profit, inputs.get("targets"),
                                                       inputs.get("campaigns"), inputs.get("negatives"), settings,
                                                       ranges, decide.column)
        ranges.update(terms.ranges(terms_sheet.name, "terms"))
        sheets.append(terms_sheet)
        tables["Terms"] = terms
        for spec in (HARVEST, NEGATIVES):
            list_sheet, planned = plan_list(spec, terms, settings, ranges)
            sheets.append(list_sheet)
            tables[spec.sheet] = planned
            sections.append((f"{spec.sheet} columns", spec.defs))
        sections.insert(-2, ("Terms columns", TERMS_DEFS(0)))
        after.append(keys_sheet)
    mix_sheet, mix_tables = plan_mix(layouts.get("ad_products"), layouts.get("targets"), profit, settings, ranges)
    sheets.append(mix_sheet)
    tables.update(mix_tables)
    sections.append(("Mix columns", MIX_DEFS + [d for d in MATCH_DEFS if d.key not in {x.key for x in MIX_DEFS}]))
    budget_sheet, budget_tables = plan_budget(profit, layouts.get("campaigns"), layouts.get("ad_products"), settings,
                                              ranges, decide.column)
    sheets.append(budget_sheet)
    tables.update(budget_tables)
    sections.append(("Budget columns", BUDGET_DEFS + [d for d in CAMPAIGN_DEFS if d.key not in
                                                      {x.key for x in BUDGET_DEFS}]))
    if "targets" in layouts or "search_terms" in layouts:
        sheets.append(groups_sheet)
        tables["Groups"] = groups
        sections.append(("Groups columns", GROUPS_DEFS))
    sheets += after
    if "Bids" in tables:
        ranges.update(tables["Bids"].ranges("Bids", "bids"))
    for name, sheet, prefix in (("Harvest", "Harvest", "harvest"), ("Negatives", "Negatives", "negatives"),
                                ("Budget campaigns", "Budget", "budget_campaigns")):
        if name in tables:
            ranges.update(tables[name].ranges(sheet, prefix))
    sizes = {name: len(tables[name].frame) for name in ("Bids", "Harvest", "Negatives", "Budget campaigns")
             if name in tables}
    sizes["Source negatives"] = sizes.get("Harvest", 0)
    actions_sheet, actions, action_counts = plan_actions(tables, ranges, settings, sizes)
    tables["Actions"] = actions
    sheets.insert(sheets.index(budget_sheet) + 1, actions_sheet)
    sections.append(("Actions columns", ACTION_DEFS(["0"] * 5)))
    shifted = budget_sheet.above[2][1]
    figures = dashboard(tables, ranges, ("Budget!$B$3", shifted.value))
    figures.append(Figure("Changes in the Actions list", "=" + "+".join(
        f"Actions!${c}$2" for c in ("B", "D", "F", "H", "J")), float(sum(action_counts)), "int"))
    if followup is not None:
        followup_sheet, tables[FOLLOWUP_SHEET], tables["Follow-up products"], summary = plan_followup(
            followup, profit, ranges, layouts["targets"].frame if "targets" in layouts else None)
        sheets.insert(sheets.index(actions_sheet) + 1, followup_sheet)
        sections.append(("Follow-up columns", FOLLOWUP_DEFS))
        figures += [Figure(f"Follow-up: {label[0].lower()}{label[1:]}", "=" + ref, value,
                           "int" if i < 4 else "money") for i, (label, (ref, value)) in enumerate(summary.items())]
    if history is not None:
        rows = history + (applied_rows(followup.rows, built_on) if followup is not None else [])
        history_sheet, history_names = plan_history(rows)
        sheets.insert(sheets.index(actions_sheet) + (2 if followup is not None else 1), history_sheet)
        names = [*names, *history_names]
    sources = {k: v.name + (f" ({inputs.encodings[k]})" if k in inputs.encodings else "")
               for k, v in inputs.sources.items()}
    guide = plan_guide(settings, built_on, sections, warnings or [], inputs.checksums, sources, figures,
                       first_look(tables))
    if carry is not None and carry.unmatched:
        sheets.append(plan_unmatched(carry))
    if carry is not None and (carry.carried or carry.applied):
        carried_sheet, carried_names = plan_carried(carry)
        sheets.append(carried_sheet)
        names = [*names, *carried_names]
        mark_carried(carry, tables, input_sheets, layouts)
    names = [*names, *catalog_names(layouts), *edit_names(tables)]
    spec = WorkbookSpec([guide, *sheets, *input_sheets], names, settings.currency_symbol)
    return Plan(spec, tables)


def _note(record, source: str) -> str:
    """The note on a carried cell: where it came from and when it was first typed."""
    first = f"; first typed in the workbook built {record.first_typed}" if record.first_typed else ""
    return (f"Carried from {source}{first}. A word stays until you clear it; a typed number expires once "
            "the export shows it applied.")


def mark_carried(carry: CarryResult, tables: dict[str, PlannedTable], input_sheets: list, layouts: dict) -> None:
    """Shade every carried cell with its own input style and give it a note (typed columns and in_catalog)."""
    source = Path(carry.source).name if carry.source else "the previous workbook"
    records = {(r.sheet, r.compared): r for r in carry.carried if r.compared}
    fold = carry.settings.fold_plurals
    for decl in EDITABLE_TABLES:
        planned = tables.get(decl.table)
        if planned is None:
            continue
        column = planned.columns[list(planned.letters).index(decl.value)]
        entry = entry_for(decl.label) if decl.label != PROFIT.label else PROFIT_TARGET
        keys = planned.frame[list(decl.keys)].itertuples(index=False, name=None)
        for i, parts in enumerate(keys):
            record = records.get((decl.label, entry.export_key(parts, fold)))
            if record is not None:
                column.cell_styles[i] = column.style.split("_")[0] + "_carried"
                column.notes[i] = _note(record, source)
    catalog = next((s for s in input_sheets if s.name == "in_catalog"), None)
    if catalog is None or "catalog" not in layouts:
        return
    row_of = {str(p): i for i, p in enumerate(layouts["catalog"].frame["product_id"])}
    by_header = {c.header: c for c in catalog.table.columns}
    for r in carry.carried:
        if r.sheet == "in_catalog" and r.key in row_of and r.column in by_header:
            column = by_header[r.column]
            column.cell_styles[row_of[r.key]] = column.style.split("_")[0] + "_carried"
            column.notes[row_of[r.key]] = _note(r, source)


def edit_names(tables: dict[str, PlannedTable]) -> list[tuple[str, str]]:
    """Defined names over every typed column and its keys, and over the Actions list (see saved.py)."""
    out = [n for decl in EDITABLE_TABLES if decl.table in tables for n in decl.defined_names(tables[decl.table])]
    if "Actions" in tables:
        out.append((ACTIONS_NAME, "=" + tables["Actions"].body_range("Actions")))
    if "Follow-up" in tables:
        out.append((FOLLOWUP_NAME, "=" + tables["Follow-up"].body_range(FOLLOWUP_SHEET)))
    return out


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


def load(folder: Path) -> tuple[Inputs, Settings, list[Problem]]:
    """Read settings and inputs; raise InputProblems when any problem is an error."""
    settings, problems = load_settings(Path(folder))
    inputs, found = read_inputs(Path(folder), settings)
    problems += found
    settings, notes = settings_for_inputs(settings, inputs)
    problems += notes
    if settings.thin_margin > settings.strong_margin:
        problems.append(Problem("settings.toml", None, "thin_margin",
                                f"the thin threshold ({settings.thin_margin:g}) is above the strong threshold "
                                f"({settings.strong_margin:g}); expected thin <= strong"))
    if settings.bid_floor > settings.bid_ceiling:
        problems.append(Problem("settings.toml", None, "bid_floor",
                                f"the bid floor ({settings.bid_floor:g}) is above the bid ceiling "
                                f"({settings.bid_ceiling:g}); expected floor <= ceiling"))
    if any(p.severity == ERROR for p in problems):
        raise InputProblems(problems)
    return inputs, settings, problems


def _check_output(output: Path, inputs_folder: Path, force: bool) -> None:
    """Refuse to overwrite without force, to write over an input, or into a missing folder."""
    if not output.parent.is_dir():
        raise SheetbuilderError(f"the output folder {output.parent} does not exist")
    if output.is_dir():
        raise SheetbuilderError(f"the output {output} is a folder; give a file name such as {output / 'workbook.xlsx'}")
    if output.suffix.lower() != ".xlsx":
        raise SheetbuilderError(f"the output {output.name} should end in .xlsx")
    if Path(inputs_folder).is_dir():
        for p in Path(inputs_folder).iterdir():
            if p.exists() and output.exists() and os.path.samefile(p, output):
                raise UnsafeOutput(f"{output} is one of the input files; choose another output name")
    if output.exists() and not force:
        raise OutputExists(f"{output} exists; add --force to overwrite it")


def write_atomically(spec: WorkbookSpec, output: Path, progress: Progress | None = None, force: bool = False) -> None:
    """Render to a temporary file beside output, then move it into place (replacing only with force)."""
    with atomic_output(output, ".xlsx", force) as tmp:
        render(spec, tmp, progress, scratch_dir(tmp))


def build(folder: Path, output: Path, force: bool = False, built_on: dt.date | None = None,
          progress: Progress | None = None, previous: Path | None = None) -> BuildResult:
    """Read the exports in folder and write the workbook to output.

    Args:
        folder: the input folder (CSV or .xlsx exports, optional settings.toml).
        output: the .xlsx file to write.
        force: overwrite output if it exists.
        built_on: the build date; today when None.
        progress: optional callback(sheet, rows written, rows in sheet).
        previous: last week's workbook, whose typed values are carried into this one (only read).

    Returns:
        The output path, the warnings, the plan, and the rows per input table.

    Raises:
        InputProblems: the inputs have errors (nothing is written).
        OutputExists: output exists and force is False.
    """
    folder, output = Path(folder), Path(output)
    _check_output(output, folder, force)
    if previous is not None and output.exists() and Path(previous).exists() and os.path.samefile(previous, output):
        raise UnsafeOutput(f"{output} is the previous workbook; write the new one under another name")
    inputs, settings, problems = load(folder)
    read = {f"the input file for {name}": path for name, path in inputs.sources.items()}
    read["the settings file"] = folder / SETTINGS_FILE
    if previous is not None:
        read["the previous workbook"] = Path(previous)
    refuse_input_as_output(output, read)
    carry = None
    exported_tables = dict(inputs.tables)  # as exported, before any carried correction
    if previous is not None:
        with reading(previous, PreviousWorkbookUnreadable):
            edits = read_edits(Path(previous))
        carry = apply_edits(edits, inputs.tables, settings)
        settings = carry.settings
        carry.exported["catalog"] = inputs.tables["catalog"]  # in_catalog records the export, not the carry
        inputs.tables["catalog"] = carried_catalog(inputs.tables["catalog"], carry)
    followup, history = None, None
    if previous is not None:
        with reading(previous, PreviousWorkbookUnreadable):
            followup, skipped = read_followup(Path(previous), exported_tables, settings, inputs.period)
            history, unread = read_history(Path(previous))
        problems += skipped + unread
    warnings = [p for p in problems if p.severity == WARNING]
    plan = plan_workbook(inputs, settings, built_on or dt.date.today(), warnings, carry, followup, history)
    write_atomically(plan.spec, output, progress, force)
    rows = {k: len(v) for k, v in inputs.tables.items() if isinstance(v, pd.DataFrame)}
    return BuildResult(output, warnings, plan, rows, carry)
