"""The command line: a thin layer over the library.

    sheetbuilder build INPUTS -o WORKBOOK.xlsx [--force]

Exit codes: 0 built; 2 the inputs have problems (all listed); 1 any other refusal
(output exists without --force, output would overwrite an input).
"""
from __future__ import annotations

import argparse
import sys
import time
from pathlib import Path

from rich.console import Console
from rich.progress import BarColumn, Progress, TextColumn, TimeElapsedColumn
from rich.table import Table

from . import __version__
from .pipeline import build
from .errors import ERROR, InputProblems, Problem, SheetbuilderError

EXIT_INPUT = 2
EXIT_REFUSED = 1


def print_problems(console: Console, problems: list[Problem]) -> None:
    """All problems in one table: severity, file, row, column, message."""
    table = Table(title=None, show_lines=False, expand=False)
    for name in ("", "file", "row", "column", "problem"):
        table.add_column(name, overflow="fold")
    for p in problems:
        table.add_row(p.severity, p.file, "" if p.row is None else str(p.row), p.column or "", p.message)
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

            result = build(args.inputs, args.output, force=args.force, progress=progress)
    else:
        last = {"t": 0.0}

        def progress(sheet: str, done: int, total: int) -> None:
            now = time.perf_counter()
            if total >= 20000 and (now - last["t"] > 5 or done == total) and not args.quiet:
                last["t"] = now
                console.print(f"writing {sheet}: {done}/{total} rows")

        result = build(args.inputs, args.output, force=args.force, progress=progress)
    if result.warnings and not args.quiet:
        print_problems(console, result.warnings)
    if not args.quiet:
        rows = ", ".join(f"{k} {v}" for k, v in result.rows.items())
        console.print(f"wrote {result.output} ({rows} rows) in {time.perf_counter() - started:.1f} s")
        console.print("Decision aid only: review before changing a live ad account. Not financial or tax advice.")
    return 0


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
    b.set_defaults(run=_build)
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
        console.print(f"sheetbuilder: {exc}")
        return EXIT_REFUSED


if __name__ == "__main__":
    sys.exit(main())
