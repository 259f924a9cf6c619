"""Many accounts in one run: one workbook per account, built in parallel, and an overview.

ACCOUNTS holds one folder per account, each as ``build`` takes it. Each account is built by
:func:`sheetbuilder.pipeline.build` (the one writing path: atomic, never over a file without
force) in a worker process; a worker turns any failure of its account (bad input, an unexpected
exception, a full disk) into a ``refused`` summary, so one account never stops the others. At
most ``jobs`` accounts are in flight at a time and a worker sends back only a small summary, so
memory is bounded by the jobs, not by the number of accounts. The overview is planned by
:mod:`sheetbuilder.sheets.overview` and written by the same renderer and atomic writer.
"""
from __future__ import annotations

import datetime as dt
import multiprocessing
import os
import signal
import sys
import time
from concurrent.futures import FIRST_COMPLETED, Future, ProcessPoolExecutor, wait
from concurrent.futures.process import BrokenProcessPool
from dataclasses import dataclass, field
from pathlib import Path
from typing import Callable, Iterable

from sheetbuilder.errors import ERROR, InputProblems, OutputExists, SheetbuilderError
from sheetbuilder.pipeline import build, write_atomically
from sheetbuilder.sheets.overview import REFUSED, AccountSummary, attention_order, plan_overview, problem_text, \
    refused, summarise

PREVIOUS_STEM = "previous"        # last week's workbook, when kept inside the account's folder
SAVED_SUFFIXES = (".xlsx", ".ods")  # last week's workbook as built, or saved as OpenDocument
OVERVIEW_FILE = "overview.xlsx"
# Linux: workers forked from this process start with its modules imported (a spawned worker imports
# them again, about a second each). The parent must hold no other thread when the pool starts: the
# command line's progress bar does not refresh on a thread. Elsewhere fork is unsafe or absent: spawn.
START_METHOD = "fork" if sys.platform.startswith("linux") else "spawn"
STOPPED = ("its build process stopped unexpectedly (killed, or out of memory), also when built alone; "
           "build it with: sheetbuilder build")


@dataclass(frozen=True)
class Task:
    """One account to build: where its exports are, where its workbook goes, and last week's workbook."""

    account: str
    folder: Path
    output: Path
    previous: Path | None
    force: bool
    built_on: dt.date


@dataclass
class BatchResult:
    """What a batch wrote: the overview and every account's summary, in attention order."""

    overview: Path
    accounts: list[AccountSummary] = field(default_factory=list)

    @property
    def refused(self) -> list[AccountSummary]:
        """The accounts that were not built."""
        return [a for a in self.accounts if a.status == REFUSED]


def account_folders(accounts: Path) -> list[Path]:
    """The account folders in ACCOUNTS, by name (hidden folders are skipped)."""
    accounts = Path(accounts)
    if not accounts.is_dir():
        raise SheetbuilderError(f"the accounts folder {accounts} does not exist or is not a folder")
    return sorted((p for p in accounts.iterdir() if p.is_dir() and not p.name.startswith(".")), key=lambda p: p.name)


def failure_message(exc: BaseException) -> str:
    """One line saying why an account was not built (never a traceback)."""
    if isinstance(exc, InputProblems):
        errors = [p for p in exc.problems if p.severity == ERROR] or list(exc.problems)
        more = f" (and {len(errors) - 1} more problem(s): run sheetbuilder inspect on the folder)" \
            if len(errors) > 1 else ""
        return problem_text(errors[0]) + more if errors else "the inputs have problems"
    if isinstance(exc, SheetbuilderError):
        return str(exc)
    if isinstance(exc, OSError):
        return f"the system refused {exc.filename or 'a file'}: {exc.strerror or exc}; nothing was written for it"
    if isinstance(exc, MemoryError):
        return "not enough memory to build it; build it alone, or from a shorter period"
    return f"internal error ({type(exc).__name__}: {exc}); build it alone with --debug and report the traceback"


def build_account(task: Task) -> AccountSummary:
    """Build one account and summarise it; any failure becomes a refused summary (run in a worker)."""
    started = time.perf_counter()
    try:
        result = build(task.folder, task.output, force=task.force, built_on=task.built_on, previous=task.previous)
        warnings = [w for w in result.warnings if not _is_previous_note(w, task)]
        return summarise(task.account, result.plan, warnings, time.perf_counter() - started)
    except Exception as exc:  # one account's failure never stops the others
        return refused(task.account, failure_message(exc), time.perf_counter() - started)


def _is_previous_note(problem, task: Task) -> bool:
    """The build's note that previous.xlsx (.ods) in the folder was not read as an export: expected in a batch."""
    return task.previous is not None and task.previous.parent == task.folder and problem.file == task.previous.name


COUNTED = {2: "two", 3: "three", 4: "four"}


def previous_workbooks(folder: Path, previous_dir: Path | None) -> list[Path]:
    """The files that could be an account's last week's workbook: its previous.xlsx or .ods, and previous_dir's
    ACCOUNT.xlsx or ACCOUNT.ods (more than one is refused by the caller)."""
    places = [folder / PREVIOUS_STEM] + ([Path(previous_dir) / folder.name] if previous_dir is not None else [])
    return [p for p in (place.with_name(place.name + s) for place in places for s in SAVED_SUFFIXES) if p.is_file()]


def plan_tasks(folders: Iterable[Path], out: Path, force: bool, previous_dir: Path | None,
               built_on: dt.date) -> tuple[list[Task], list[AccountSummary]]:
    """The accounts to build, and the ones refused before building (a name clash, two previous workbooks)."""
    tasks, refusals = [], []
    for folder in folders:
        name = folder.name
        if name.casefold() == Path(OVERVIEW_FILE).stem:
            refusals.append(refused(name, f"an account folder named {name} would overwrite the overview "
                                          f"{OVERVIEW_FILE}; rename the folder"))
            continue
        found = previous_workbooks(folder, previous_dir)
        if len(found) > 1:
            listed = ", ".join(str(p) for p in found[:-1]) + f" and {found[-1]}"
            refusals.append(refused(name, f"{COUNTED.get(len(found), len(found))} previous workbooks, {listed}; "
                                          "keep the one edited last and move the others away, so that no edit "
                                          "is carried from the wrong one"))
            continue
        tasks.append(Task(name, folder, Path(out) / f"{name}.xlsx", found[0] if found else None, force, built_on))
    return tasks, refusals


def _check_out(accounts: Path, out: Path, force: bool) -> Path:
    """Make OUT (its parent must exist); refuse an OUT inside ACCOUNTS, or an existing overview without force."""
    out = Path(out)
    if out.exists() and not out.is_dir():
        raise SheetbuilderError(f"the output {out} is a file; give a folder for the workbooks")
    if not out.parent.is_dir():
        raise SheetbuilderError(f"the output folder's parent {out.parent} does not exist")
    root = Path(accounts).resolve()
    if out.resolve() != root and root in out.resolve().parents:
        raise SheetbuilderError(f"the output {out} is inside the accounts folder {accounts}, where it would be "
                                "taken for an account (or written among an account's exports); write the workbooks "
                                "outside it")
    out.mkdir(exist_ok=True)
    overview = out / OVERVIEW_FILE
    if overview.exists() and not force:
        raise OutputExists(f"{overview} exists; add --force to overwrite it and the accounts' workbooks")
    return overview


def _in_process(tasks: list[Task], done: Callable[[AccountSummary], None]) -> None:
    for task in tasks:
        done(build_account(task))


def _worker_signals() -> None:
    """A worker leaves Ctrl-C and hang-ups to the parent (which stops submitting, lets each running account
    finish and exits) and ends quietly on SIGTERM (a partial file it leaves is removed by the next run)."""
    for name in ("SIGINT", "SIGHUP"):
        if hasattr(signal, name):
            signal.signal(getattr(signal, name), signal.SIG_IGN)
    signal.signal(signal.SIGTERM, signal.SIG_DFL)


def _in_pool(tasks: list[Task], jobs: int, done: Callable[[AccountSummary], None]) -> list[Task]:
    """Build on a pool of jobs processes, submitting as slots free; return the tasks a broken pool lost."""
    queue, lost = list(reversed(tasks)), []
    context = multiprocessing.get_context(START_METHOD)
    with ProcessPoolExecutor(max_workers=jobs, mp_context=context, initializer=_worker_signals) as pool:
        running: dict[Future, Task] = {}
        try:
            while queue or running:
                broken = False
                while queue and len(running) < jobs and not broken:
                    try:
                        running[pool.submit(build_account, queue[-1])] = queue[-1]
                        queue.pop()
                    except BrokenProcessPool:  # broken since the last wait: the running futures say so too
                        broken = True
                finished, _ = wait(running, return_when=FIRST_COMPLETED)
                if broken or any(isinstance(f.exception(), BrokenProcessPool) for f in finished):
                    finished = wait(running)[0]  # the pool is broken: every running account ends now
                    queue.reverse()
                    lost, queue = queue, []
                for future in finished:
                    task = running.pop(future)
                    if isinstance(future.exception(), BrokenProcessPool):  # which account killed it is not known
                        lost.append(task)
                    else:
                        done(future.result())
        finally:
            for future in running:
                future.cancel()
    return lost


def build_accounts(tasks: list[Task], jobs: int, done: Callable[[AccountSummary], None]) -> None:
    """Build every task, calling done with each summary as it arrives (jobs 1: in this process).

    When a worker process dies, the accounts it took with it are built again one at a time, each
    in a fresh process; one that stops its process again is refused.
    """
    if jobs <= 1:
        _in_process(tasks, done)
        return
    lost = _in_pool(tasks, min(jobs, max(len(tasks), 1)), done)
    for task in lost:
        if _in_pool([task], 1, done):
            done(refused(task.account, STOPPED))


def run_batch(accounts: Path, out: Path, jobs: int | None = None, force: bool = False,
              previous_dir: Path | None = None, built_on: dt.date | None = None,
              progress: Callable[[AccountSummary, int, int], None] | None = None) -> BatchResult:
    """Build every account folder in accounts into out, then write out/overview.xlsx.

    Args:
        accounts: the folder holding one folder of exports per account.
        out: the folder to write ACCOUNT.xlsx and overview.xlsx in (made when missing).
        jobs: accounts built at once (default: the machine's cores).
        force: overwrite existing workbooks and the overview.
        previous_dir: last week's workbooks, named ACCOUNT.xlsx or ACCOUNT.ods (an account's own previous.xlsx
            or previous.ods is used too; two for one account refuse it).
        built_on: the build date; today when None.
        progress: optional callback(summary, accounts done, accounts in all).

    Returns:
        The overview's path and every account's summary, in attention order.

    Raises:
        SheetbuilderError: no account folders, a bad output folder, or the overview exists without force.
    """
    folders = account_folders(accounts)
    if not folders:
        raise SheetbuilderError(f"{accounts} holds no account folders; put each account's exports in a folder "
                                "of its own inside it")
    if previous_dir is not None:
        if not Path(previous_dir).is_dir():
            raise SheetbuilderError(f"the previous workbooks' folder {previous_dir} does not exist")
        if Path(previous_dir).resolve() == Path(out).resolve():
            raise SheetbuilderError(f"{out} holds last week's workbooks (--previous-dir); write this week's to "
                                    "another folder")
    overview = _check_out(accounts, out, force)
    built_on = built_on or dt.date.today()
    tasks, summaries = plan_tasks(folders, Path(out), force, previous_dir, built_on)
    total = len(folders)

    finished: list[AccountSummary] = []

    def done(summary: AccountSummary) -> None:
        finished.append(summary)
        if progress is not None:
            progress(summary, len(finished), total)

    for summary in summaries:
        done(summary)
    build_accounts(tasks, jobs or os.cpu_count() or 1, done)
    write_atomically(plan_overview(finished, built_on), overview, force=force)
    return BatchResult(overview, attention_order(finished))
