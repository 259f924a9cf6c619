"""The pipeline: settings, then readers, then the planners (:mod:`sheetbuilder.assemble`), then the renderer."""
from __future__ import annotations

import datetime as dt
import os
from dataclasses import dataclass
from pathlib import Path

import pandas as pd

from sheetbuilder.assemble import Plan, plan_workbook  # noqa: F401 (plan_workbook re-exported: the planning twin of build)
from sheetbuilder.workbook.atomic import atomic_output, refuse_input_as_output, scratch_dir
from sheetbuilder.weekly.carry import (CarryResult, PreviousWorkbookUnreadable, apply_edits, carried_catalog,
                                      copy_problems)
from sheetbuilder.weekly.change_list import followup_of
from sheetbuilder.weekly.keyword_weeks import joined_history, this_week_period
from sheetbuilder.weekly.record import read_saved_workbook
from sheetbuilder.reading.history_exports import read_past_exports
from sheetbuilder.sheets.keyword_weeks import packed, too_long
from sheetbuilder.errors import ERROR, WARNING, InputProblems, OutputExists, Problem, SheetbuilderError, UnsafeOutput
from sheetbuilder.reading.account import account_of, account_of_inputs, check_previous
from sheetbuilder.sheets.inputs import with_missing_products
from sheetbuilder.reading.periods import settings_for_inputs
from sheetbuilder.reading.readers import Inputs, read_inputs
from sheetbuilder.workbook.render import Progress, render
from sheetbuilder.reading.settings import SETTINGS_FILE, Settings, load_settings
from sheetbuilder.workbook.spec import WorkbookSpec


@dataclass
class BuildResult:
    """What a build wrote and what it noticed."""

    output: Path
    warnings: list[Problem]
    plan: Plan
    rows: dict[str, int]
    carry: CarryResult | None = None


def load(folder: Path, besides: tuple[Path, ...] = ()) -> tuple[Inputs, Settings, list[Problem]]:
    """Read settings and inputs; raise InputProblems when any problem is an error.

    besides: files the command reads as well (the previous workbook), never reported as strays of the folder.
    """
    settings, problems = load_settings(Path(folder))
    inputs, found = read_inputs(Path(folder), settings, besides)
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
    if inputs.tables.get("catalog") is not None:  # a row to fill on in_catalog for every product it lacks
        inputs.tables["catalog"] = with_missing_products(inputs.tables["catalog"], inputs.tables)
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
          progress: Progress | None = None, previous: Path | None = None, previous_anyway: bool = False,
          history: Path | None = None) -> BuildResult:
    """Read the exports in folder and write the workbook to output.

    Args:
        folder: the input folder (CSV or .xlsx exports, optional settings.toml).
        output: the .xlsx file to write.
        force: overwrite output if it exists.
        built_on: the build date; today when None.
        progress: optional callback(sheet, rows written, rows in sheet).
        previous: last week's workbook, whose typed values are carried into this one (only read).
        previous_anyway: carry from a previous workbook built for another account (too little in common)
            instead of refusing it; its Follow-up, History and Keyword history are not read.
        history: a folder of past keyword exports, each for its own period, added to the Keyword history
            (:mod:`sheetbuilder.reading.history_exports`).

    Returns:
        The output path, the warnings, the plan, and the rows per input table.

    Raises:
        InputProblems: the inputs have errors (nothing is written).
        OutputExists: output exists and force is False.
        AnotherAccount: previous was built for another account and previous_anyway is False.
    """
    folder, output = Path(folder), Path(output)
    _check_output(output, folder, force)
    if previous is not None and output.exists() and Path(previous).exists() and os.path.samefile(previous, output):
        raise UnsafeOutput(f"{output} is the previous workbook; write the new one under another name")
    inputs, settings, problems = load(folder, (Path(previous),) if previous is not None else ())
    past: list = []
    if history is not None:  # past exports: their errors stop the build as this week's do
        past, found = read_past_exports(Path(history), settings)
        problems += found
        if any(p.severity == ERROR for p in found):
            raise InputProblems(problems)
    read = {f"the input file for {name}": path for name, path in inputs.sources.items()}
    read.update({f"the past export {name}": Path(history) / name for name, _, _ in past})
    read["the settings file"] = folder / SETTINGS_FILE
    if previous is not None:
        read["the previous workbook"] = Path(previous)
    refuse_input_as_output(output, read)
    carry = None
    exported_tables = dict(inputs.tables)  # as exported, before any carried correction
    followup, history_rows, saved_keywords, keyword_source = None, None, None, None
    keyword_problems: list[Problem] = []
    period = this_week_period(inputs.period, settings)  # before the carry: this week's exports and settings.toml
    if previous is not None:
        saved = read_saved_workbook(Path(previous), PreviousWorkbookUnreadable)  # the one read of it
        notes, another = check_previous(account_of(saved.account_name or Path(previous).name, saved.tables or {}),
                                        account_of_inputs(inputs), Path(previous).name,
                                        previous_anyway)
        problems += notes
        carry = apply_edits(saved.edits, inputs.tables, settings)
        problems += copy_problems(saved.edits) + saved.typed_over
        settings = carry.settings
        carry.exported["catalog"] = inputs.tables["catalog"]  # in_catalog records the export, not the carry
        inputs.tables["catalog"] = carried_catalog(inputs.tables["catalog"], carry)
        if not another:  # another account's changes are never followed up here
            followup, skipped = followup_of(saved, exported_tables, settings, inputs.period)
            history_rows = saved.history
            problems += skipped + saved.history_problems
            saved_keywords, keyword_source = saved.keyword_history, Path(previous).name
            keyword_problems += saved.keyword_history_problems
    keywords, dropped, found = joined_history(saved_keywords, past, exported_tables.get("targets"), period, settings,
                                              keyword_source)
    keyword_sheet = packed(keywords, dropped, period)  # Bids reads its totals when it holds this week
    keyword_problems += found + too_long(keyword_sheet.rows)
    problems += keyword_problems
    if any(p.severity == ERROR for p in keyword_problems):  # a keyword history that cannot be read or joined
        raise InputProblems(problems)
    warnings = [p for p in problems if p.severity == WARNING]
    plan = plan_workbook(inputs, settings, built_on or dt.date.today(), warnings, carry, followup, history_rows,
                         keyword_sheet)
    write_atomically(plan.spec, output, progress, force)
    rows = {k: len(v) for k, v in inputs.tables.items() if isinstance(v, pd.DataFrame)}
    return BuildResult(output, warnings, plan, rows, carry)
