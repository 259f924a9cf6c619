"""The command line: a thin layer over the library.

    sheetbuilder build INPUTS -o WORKBOOK.xlsx [--force] [--previous OLD.xlsx]
    sheetbuilder changes WORKBOOK.xlsx -o changes.csv [--format csv|xlsx] [--force]
    sheetbuilder inspect INPUTS

Exit codes: 0 built or written; 2 the inputs have problems (all listed); 1 any other refusal
(output exists without --force, output would overwrite an input, no Actions sheet);
3 (changes) some changes were refused and listed, the valid ones were written.
"""
from __future__ import annotations

import argparse
import inspect
import sys
import time
from pathlib import Path

from rich.console import Console
from rich.markup import escape
from rich.progress import BarColumn, Progress, TextColumn, TimeElapsedColumn
from rich.table import Table

from . import __version__
from .carry import carried_summary
from .changes import export_changes
from .inspection import inspect_exports, report_lines
from .pipeline import build
from .errors import ERROR, InputProblems, Problem, SheetbuilderError

EXIT_INPUT = 2
EXIT_REFUSED = 1
EXIT_SOME_REFUSED = 3


def _run_build(args: argparse.Namespace, progress) -> object:
    """build(...), passing --previous through when given."""
    extra = {}
    if getattr(args, "previous", None) is not None:
        if "previous" not in inspect.signature(build).parameters:
            raise SheetbuilderError("--previous is not supported by this version of the build yet")
        extra["previous"] = args.previous
    return build(args.inputs, args.output, force=args.force, progress=progress, **extra)


def print_problems(console: Console, problems: list[Problem]) -> None:
    """All problems in one table: severity, file, row, column, message."""
    table = Table(title=None, show_lines=False, expand=False)
    for name in ("", "file", "row", "column", "problem"):
        table.add_column(name, overflow="fold")
    for p in problems:
        table.add_row(*(escape(x) for x in (p.severity, p.file, "" if p.row is None else str(p.row), p.column or "",
                                            p.message)))  # every character printed: [files] is not markup
    console.print(table)


def _build(args: argparse.Namespace, console: Console) -> int:
    """Run one build with progress on the terminal."""
    started = time.perf_counter()
    if console.is_terminal and not args.quiet:
        with Progress(TextColumn("{task.description}"), BarColumn(), TextColumn("{task.completed}/{task.total} rows"),
                      TimeElapsedColumn(), console=console, transient=True) as bar:
            tasks: dict[str, int] = {}

            def progress(sheet: str, done: int, total: int) -> None:
                if sheet not in tasks:
                    tasks[sheet] = bar.add_task(f"writing {sheet}", total=total)
                bar.update(tasks[sheet], completed=done)

            result = _run_build(args, progress)
    else:
        last = {"t": 0.0}

        def progress(sheet: str, done: int, total: int) -> None:
            now = time.perf_counter()
            if total >= 20000 and (now - last["t"] > 5 or done == total) and not args.quiet:
                last["t"] = now
                console.print(f"writing {sheet}: {done}/{total} rows")

        result = _run_build(args, progress)
    if result.warnings and not args.quiet:
        print_problems(console, result.warnings)
    if not args.quiet:
        rows = ", ".join(f"{k} {v}" for k, v in result.rows.items())
        console.print(f"wrote {result.output} ({rows} rows) in {time.perf_counter() - started:.1f} s")
        console.print("Decision aid only: review before changing a live ad account. Not financial or tax advice.")
    carry = getattr(result, "carry", None)  # the CarryResult when --previous was given
    if carry is not None and not args.quiet:
        console.print(carried_summary(carry))
    return 0


def _changes(args: argparse.Namespace, console: Console) -> int:
    """Export the Actions sheet's changes; list every refused one with its row."""
    result = export_changes(args.workbook, args.output, fmt=args.format, force=args.force)
    if result.recalculated:
        console.print(f"{args.workbook} held no formula values (saved by a program that does not store them); "
                      "recalculated them with the formulas library")
    if result.problems:
        console.print(f"[bold]{len(result.refused)} change(s) refused, not written:[/bold]")
        print_problems(console, result.problems)
    console.print(f"wrote {result.written} change(s) to {result.output}")
    return EXIT_SOME_REFUSED if result.problems else 0


def _inspect(args: argparse.Namespace, console: Console) -> int:
    """Read the exports as build would and print what was read; exit 2 when a problem is an error."""
    result = inspect_exports(args.inputs)
    for line in report_lines(result):
        console.print(line, markup=False, soft_wrap=True)
    if result.problems:
        print_problems(console, result.problems)
    return EXIT_INPUT if result.has_errors else 0


def parser() -> argparse.ArgumentParser:
    """The argument parser; each command's help is its documentation."""
    p = argparse.ArgumentParser(prog="sheetbuilder",
                                description="Turn marketplace sales and sponsored-ad exports into a live formula workbook.")
    p.add_argument("--version", action="version", version=f"sheetbuilder {__version__}")
    sub = p.add_subparsers(dest="command", required=True)
    b = sub.add_parser("build", help="read a folder of exports and write the workbook",
                       description="Read the exports in INPUTS (CSV or .xlsx, optional settings.toml) and write "
                                   "one workbook whose every figure is a live formula.")
    b.add_argument("inputs", type=Path, help="the folder holding the exports")
    b.add_argument("-o", "--output", type=Path, required=True, help="the .xlsx file to write")
    b.add_argument("--force", action="store_true", help="overwrite the output if it exists")
    b.add_argument("-q", "--quiet", action="store_true", help="print only problems")
    b.add_argument("--previous", type=Path, default=None, metavar="OLD.xlsx",
                   help="last week's workbook: carry its settings, costs, targets and Decisions into this one "
                        "(it is only read); edits that no longer match a row are listed on an Unmatched edits sheet")
    b.set_defaults(run=_build)
    ch = sub.add_parser("changes", help="export the changes on a workbook's Actions sheet as CSV or .xlsx",
                        description="Read WORKBOOK (edited and saved by you) and write one row per change on its "
                                    "Actions sheet: kind, campaign, ad_group, target_or_term, match_type, current, "
                                    "new, reason. Inconsistent changes (a bid outside the bid floor and ceiling, a "
                                    "New that is not a positive number, an added keyword without a destination or "
                                    "in an unknown campaign) are listed with their row and not written. Exit codes: "
                                    "0 every change written; 3 some refused (the valid ones are written); 1 nothing "
                                    "written (missing workbook, no Actions sheet, output exists without --force).")
    ch.add_argument("workbook", type=Path, help="the edited .xlsx workbook")
    ch.add_argument("-o", "--output", type=Path, required=True, help="the file to write (.csv, or .xlsx with --format xlsx)")
    ch.add_argument("--format", choices=("csv", "xlsx"), default="csv", help="csv (default; text escaped against "
                    "formula injection) or xlsx (text written as text)")
    ch.add_argument("--force", action="store_true", help="overwrite the output if it exists")
    ch.set_defaults(run=_changes)
    ins = sub.add_parser("inspect", help="read a folder of exports and say what was read, building nothing",
                         description="Read the exports in INPUTS exactly as build does and print, for each file, the "
                                     "table it was matched to, the sheet and header row used, each column's mapping "
                                     "(canonical name <- header text), the rows read, summed, skipped as totals and "
                                     "refused, the period found in the dates, and every problem. Writes nothing. "
                                     "Exit codes: 0 the exports would build; 2 they have errors.")
    ins.add_argument("inputs", type=Path, help="the folder holding the exports")
    ins.set_defaults(run=_inspect)
    return p


def main(argv: list[str] | None = None) -> int:
    """Entry point of the sheetbuilder command."""
    args = parser().parse_args(argv)
    console = Console(stderr=True, highlight=False)
    try:
        return args.run(args, console)
    except InputProblems as exc:
        errors = sum(1 for p in exc.problems if p.severity == ERROR)
        console.print(f"[bold]{errors} problem(s) in the inputs; nothing was written.[/bold]")
        print_problems(console, exc.problems)
        return EXIT_INPUT
    except SheetbuilderError as exc:
        console.print(f"sheetbuilder: {escape(str(exc))}")
        return EXIT_REFUSED


if __name__ == "__main__":
    sys.exit(main())
