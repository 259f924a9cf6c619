"""The command line: a thin layer over the library.

    sheetbuilder build INPUTS -o WORKBOOK.xlsx [--force] [--previous OLD.xlsx] [--history DIR]
    sheetbuilder changes WORKBOOK.xlsx -o changes.csv [--format csv|xlsx] [--force]
    sheetbuilder inspect INPUTS
    sheetbuilder batch ACCOUNTS -o OUT [--previous-dir DIR] [--jobs N] [--force]

Exit codes: 0 built or written; 2 the inputs have problems (all listed); 1 any other refusal
(output exists without --force, output would overwrite an input, no Actions sheet, a workbook
that cannot be read); 3 (changes) some changes were refused and listed, the valid ones were
written, (batch) some accounts were refused and listed, the others were written; 4 the
operating system refused a read or write (no space, read-only, permission, a folder where a
file was expected, a file gone); 70 an internal error (a bug: run again with
--debug and report the traceback); 130 interrupted (Ctrl-C, SIGTERM, SIGHUP). Every failure
is one message naming the path; a traceback is shown only with --debug. Nothing is left
behind: temporary files are removed on every one of these exits.
"""
from __future__ import annotations

import argparse
import errno
import signal
import sys
import time
import traceback
import warnings
from pathlib import Path

from rich.console import Console
from rich.markup import escape
from rich.progress import BarColumn, Progress, TextColumn, TimeElapsedColumn
from rich.table import Table

from sheetbuilder.version import __version__
from sheetbuilder.weekly.changes import COLUMNS as CHANGE_COLUMNS, export_changes
from sheetbuilder.reading.inspection import inspect_exports, report_lines
from sheetbuilder.pipeline import build
from sheetbuilder.batch import run_batch
from sheetbuilder.errors import ERROR, InputProblems, Problem, SheetbuilderError
from sheetbuilder.sheets.decisions import NOTES_HEADER
from sheetbuilder.sheets.typed import CarryResult, key_text
from sheetbuilder.values import shown

EXIT_INPUT = 2
EXIT_REFUSED = 1
EXIT_SOME_REFUSED = 3
EXIT_SYSTEM = 4
EXIT_BUG = 70        # EX_SOFTWARE in sysexits.h
EXIT_INTERRUPTED = 130  # 128 + SIGINT, as shells report Ctrl-C
STOP_SIGNALS = tuple(getattr(signal, n) for n in ("SIGINT", "SIGTERM", "SIGHUP") if hasattr(signal, n))

_ADVICE = {
    errno.ENOSPC: "no space left on the disk; free some space or write the output to another disk",
    errno.EDQUOT: "the disk quota is used up; free some space or write the output elsewhere",
    errno.EROFS: "the folder is read-only; write the output to a folder you can write to",
    errno.EACCES: "permission denied; write to a folder you own, or check the file's permissions",
    errno.EPERM: "the operation is not permitted; write to a folder you own",
    errno.EISDIR: "this is a folder; give a file name (such as workbook.xlsx)",
    errno.ENOTDIR: "a part of this path is not a folder; check the path",
    errno.ENOENT: "no such file or folder (it may have been moved or deleted while running); check the path",
    errno.ENAMETOOLONG: "the name is too long; choose a shorter one",
    errno.EMFILE: "too many files are open; close other programs and run again",
}



def carried_summary(result: CarryResult) -> str:
    """One paragraph for the command line: how many edits were carried, expired as applied, and not matched."""
    counts: dict[str, int] = {}
    for r in result.carried:
        counts[r.sheet] = counts.get(r.sheet, 0) + 1
    parts = [f"{n} on {sheet}" for sheet, n in counts.items()]
    text = f"Carried {len(result.carried)} edit(s) from the previous workbook"
    text += f" ({', '.join(parts)})." if parts else "."
    text += (f" {len(result.applied)} typed number(s) expired: this week's export shows them applied." if result.applied
             else " 0 typed numbers expired as applied.")
    if result.settings_changed:
        text += " Settings that now differ from settings.toml: " + ", ".join(
            f"{k} {shown(old)} -> {shown(new)}" for k, (old, new) in result.settings_changed.items()) + "."
    text += (f" {len(result.unmatched)} edit(s) could not be carried (their product, target or term is gone, "
             "or the value is not valid); they are listed on the Unmatched edits sheet." if result.unmatched
             else " 0 edits could not be matched.")
    text += own_notes_summary(result)
    return text

def own_notes_summary(result: CarryResult) -> str:
    """A sentence on the user's own notes and columns that could not be carried (never dropped without a word)."""
    lost = [r for r in result.unmatched if r.column == NOTES_HEADER or r.key.startswith("(column ")]
    lost += [r for r in result.unmatched if r not in lost and any(
        r.column == key_text(c.header) for c in result.own_columns.get(r.sheet, []))]
    if not lost:
        return ""
    return (f" {len(lost)} of them: your own notes or values of your own columns ("
            + ", ".join(f"{r.sheet} {r.key}" for r in lost[:3]) + (", ..." if len(lost) > 3 else "") + ").")


class Interrupted(KeyboardInterrupt):
    """A stop signal (SIGTERM, SIGHUP, or SIGINT) turned into an exception so that cleanup code runs."""

    def __init__(self, signum: int):
        super().__init__(signum)
        self.signum = signum


def _stop(signum: int, frame) -> None:
    """Signal handler: ignore further stop signals (cleanup must finish), then raise Interrupted."""
    for sig in STOP_SIGNALS:
        signal.signal(sig, signal.SIG_IGN)
    raise Interrupted(signum)


def os_error_message(exc: OSError, fallback: Path | None) -> str:
    """One line naming the path the operating system refused and what to do."""
    path = exc.filename or fallback
    if path is not None and fallback is not None and ".partial" in Path(path).name \
            and Path(path).parent == Path(fallback).parent:
        path = f"{fallback}'s folder"  # the temporary file beside the output is ours, not the user's to look for
    advice = _ADVICE.get(exc.errno or 0, f"{exc.strerror or exc}; check the path and run again")
    return f"cannot use {path}: {advice}. Nothing was written"


def _run_build(args: argparse.Namespace, progress) -> object:
    """build(...) with the command's options."""
    return build(args.inputs, args.output, force=args.force, progress=progress, previous=args.previous,
                 previous_anyway=args.previous_anyway, history=args.history)


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
    carry = result.carry  # the CarryResult when --previous was given
    if carry is not None and not args.quiet:
        console.print(carried_summary(carry))
    return 0


def _changes(args: argparse.Namespace, console: Console) -> int:
    """Export the Actions sheet's changes; list every refused one with its row."""
    result = export_changes(args.workbook, args.output, fmt=args.format, force=args.force,
                            include_unapplied=args.include_unapplied)
    if result.unchecked:
        console.print(f"{args.workbook} stores no formula values (saved by a program that does not store them): "
                      "the change list was computed from its inputs, and cells typed over a formula were found "
                      "by the formulas they replaced")
    if result.problems:
        console.print(f"[bold]{len(result.refused)} change(s) refused, not written; "
                      f"{sum(p.row is not None for p in result.overwritten)} cell(s) typed over a formula; other problems "
                      "below:[/bold]")
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


def _batch(args: argparse.Namespace, console: Console) -> int:
    """Build every account folder, then the overview; exit 3 when some accounts were refused."""
    started = time.perf_counter()
    show = console.is_terminal and not args.quiet
    with Progress(TextColumn("{task.description}"), BarColumn(), TextColumn("{task.completed}/{task.total} accounts"),
                  TimeElapsedColumn(), console=console, transient=True, disable=not show,
                  auto_refresh=False) as bar:  # no refresh thread: the batch's workers are forked from here
        task = bar.add_task("building accounts", total=None)

        def progress(summary, done: int, total: int) -> None:
            bar.update(task, completed=done, total=total, refresh=True, description=f"built {summary.account}"
                       if summary.status != "refused" else f"refused {summary.account}")

        try:
            result = run_batch(args.accounts, args.output, jobs=args.jobs, force=args.force,
                               previous_dir=args.previous_dir, progress=progress)
        except KeyboardInterrupt:
            console.print(f"the accounts built before the interruption are in {args.output}, without an overview; "
                          "run the batch again with --force to build them all", markup=False)
            raise
    refused = result.refused
    if refused:
        table = Table(title=None, expand=False)
        for name in ("refused account", "first problem"):
            table.add_column(name, overflow="fold")
        for a in refused:
            table.add_row(escape(a.account), escape(a.message))
        console.print(table)
    if not args.quiet:
        built = len(result.accounts) - len(refused)
        console.print(f"wrote {built} workbook(s) and {result.overview} ({len(refused)} account(s) refused) "
                      f"in {time.perf_counter() - started:.1f} s", markup=False)
        console.print("Decision aid only: review before changing a live ad account. Not financial or tax advice.")
    return EXIT_SOME_REFUSED if refused else 0


def _jobs(text: str) -> int:
    """--jobs: a whole number of at least 1."""
    try:
        n = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected a whole number of accounts built at once, got {text!r}")
    if n < 1:
        raise argparse.ArgumentTypeError(f"expected at least 1, got {n}")
    return n


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
    b.add_argument("--debug", action="store_true", help="show the traceback of any failure")
    b.add_argument("--previous", type=Path, default=None, metavar="OLD.xlsx",
                   help="last week's workbook, saved as .xlsx or .ods: carry its settings, costs, targets and Decisions into this one "
                        "(it is only read); edits that no longer match a row are listed on an Unmatched edits sheet. "
                        "A workbook built for another account (under half of its products or campaigns in these "
                        "exports) is refused")
    b.add_argument("--previous-anyway", action="store_true",
                   help="carry what matches from a --previous workbook built for another account instead of "
                        "refusing it (its Follow-up, History and Keyword history are not read)")
    b.add_argument("--history", type=Path, default=None, metavar="DIR",
                   help="past keyword exports to start the Keyword history with: each export file in DIR (or the "
                        "targets export of each folder in DIR) is one past period, read from its dates, title or "
                        "file name. A period already recorded is replaced only by the very same period; one that "
                        "shares some days with another is refused, naming both")
    b.set_defaults(run=_build)
    ch = sub.add_parser("changes", help="export the changes on a workbook's Actions sheet as CSV or .xlsx",
                        description="Read WORKBOOK (edited and saved by you) and write one row per change on its "
                                    f"Actions sheet: {', '.join(CHANGE_COLUMNS)}. Inconsistent changes (a bid outside the bid floor and ceiling, a "
                                    "New that is not a positive number, an added keyword without a destination or "
                                    "in an unknown campaign) are listed with their row and not written. Exit codes: "
                                    "0 every change written; 3 some refused (the valid ones are written); 1 nothing "
                                    "written (missing workbook, no Actions sheet, output exists without --force); "
                                    "4 the system refused a read or write; 130 interrupted.")
    ch.add_argument("workbook", type=Path, help="the edited workbook, saved as .xlsx or .ods")
    ch.add_argument("-o", "--output", type=Path, required=True, help="the file to write (.csv, or .xlsx with --format xlsx)")
    ch.add_argument("--format", choices=("csv", "xlsx"), default="csv", help="csv (default; text escaped against "
                    "formula injection) or xlsx (text written as text)")
    ch.add_argument("--force", action="store_true", help="overwrite the output if it exists")
    ch.add_argument("--include-unapplied", action="store_true",
                    help="also write last week's changes the Follow-up sheet reads as not applied")
    ch.add_argument("--debug", action="store_true", help="show the traceback of any failure")
    ch.set_defaults(run=_changes)
    ins = sub.add_parser("inspect", help="read a folder of exports and say what was read, building nothing",
                         description="Read the exports in INPUTS exactly as build does and print, for each file, the "
                                     "table it was matched to, the sheet and header row used, each column's mapping "
                                     "(canonical name <- header text), the rows read, summed, skipped as totals and "
                                     "refused, the period found in the dates, and every problem. Writes nothing. "
                                     "Exit codes: 0 the exports would build; 2 they have errors.")
    ins.add_argument("inputs", type=Path, help="the folder holding the exports")
    ins.set_defaults(run=_inspect)
    ba = sub.add_parser("batch", help="build one workbook per account folder, and an overview of the accounts",
                        description="Build every folder in ACCOUNTS (one account each, as build takes it) into "
                                    "OUT/ACCOUNT.xlsx, in parallel, and write OUT/overview.xlsx: one row per "
                                    "account, refused accounts first, then those with a blank net profit after "
                                    "ads, then by net profit after ads, lowest first. A refused account gets no "
                                    "workbook and its first problem on the overview; it never stops the others. "
                                    "Last week's workbook of an account is its previous.xlsx (or .ods) or "
                                    "--previous-dir's ACCOUNT.xlsx (or .ods); an account with two is refused. "
                                    "Exit codes: 0 every account "
                                    "built; 3 some refused (the others are written); 1 nothing built (no account "
                                    "folders, overview exists without --force); 4 the system refused the "
                                    "overview; 130 interrupted.")
    ba.add_argument("accounts", type=Path, help="the folder holding one folder of exports per account")
    ba.add_argument("-o", "--output", type=Path, required=True, help="the folder to write the workbooks in")
    ba.add_argument("--previous-dir", type=Path, default=None, metavar="DIR",
                    help="last week's workbooks, named ACCOUNT.xlsx or ACCOUNT.ods (last week's OUT): carried as "
                         "with --previous")
    ba.add_argument("--jobs", type=_jobs, default=None, metavar="N",
                    help="accounts built at once (default: the machine's cores)")
    ba.add_argument("--force", action="store_true", help="overwrite existing workbooks and the overview")
    ba.add_argument("-q", "--quiet", action="store_true", help="print only problems")
    ba.add_argument("--debug", action="store_true", help="show the traceback of any failure of the batch itself")
    ba.set_defaults(run=_batch)
    return p


def main(argv: list[str] | None = None) -> int:
    """Entry point of the sheetbuilder command."""
    args = parser().parse_args(argv)
    console = Console(stderr=True, highlight=False)
    debug = getattr(args, "debug", False)
    handlers = {}
    try:
        for sig in STOP_SIGNALS:
            handlers[sig] = signal.signal(sig, _stop)
    except ValueError:  # not the main thread: signals stay as they are
        pass
    try:
        with warnings.catch_warnings():  # a library's warning (openpyxl on a workbook it half knows) is not ours
            if not debug:               # to print: what matters reaches the user as a problem or a refusal
                warnings.simplefilter("ignore")
            return _run(args, console, debug)
    finally:
        for sig, old in handlers.items():
            signal.signal(sig, old)


def _run(args: argparse.Namespace, console: Console, debug: bool) -> int:
    """Run the command; every failure becomes one message and its exit code."""
    def say(message: str, code: int) -> int:
        if debug:
            console.print(traceback.format_exc(), markup=False, highlight=False)
        console.print(f"sheetbuilder: {message}", markup=False, highlight=False, soft_wrap=True)
        return code

    try:
        return args.run(args, console)
    except InputProblems as exc:
        errors = sum(1 for p in exc.problems if p.severity == ERROR)
        console.print(f"[bold]{errors} problem(s) in the inputs; nothing was written.[/bold]")
        print_problems(console, exc.problems)
        return EXIT_INPUT
    except SheetbuilderError as exc:
        return say(str(exc), EXIT_REFUSED)
    except OSError as exc:
        return say(os_error_message(exc, getattr(args, "output", None)), EXIT_SYSTEM)
    except KeyboardInterrupt as exc:
        name = signal.Signals(exc.signum).name if isinstance(exc, Interrupted) else "SIGINT (Ctrl-C)"
        return say(f"interrupted by {name}; temporary files were removed and {getattr(args, 'output', 'the output')} "
                   "was not replaced. Run the command again to finish", EXIT_INTERRUPTED)
    except MemoryError:
        return say("not enough memory to finish; close other programs, or build from a shorter period",
                   EXIT_SYSTEM)
    except Exception as exc:  # a bug: one line, the details with --debug
        return say(f"internal error ({type(exc).__name__}: {exc}); nothing was written. Run again with --debug "
                   "and report the traceback", EXIT_BUG)


if __name__ == "__main__":
    sys.exit(main())
