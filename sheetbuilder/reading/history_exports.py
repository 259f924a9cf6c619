"""Past weekly exports read at once for the keyword history (``build --history DIR``).

DIR holds past keyword and product-target exports (the export the build reads as ``targets``),
each for its own period: every export file directly in DIR is read as one, and every folder in
DIR as one week's exports folder, whose targets export is found as the build finds it. Each is
read by the build's own reader (title rows, totals rows and one row per day as for this week's
exports), and its period from its dates, its title block or its file name
(:mod:`sheetbuilder.reading.periods`); an export that states no period is refused, since its
week could not be placed.
"""
from __future__ import annotations

from pathlib import Path

import pandas as pd

from sheetbuilder.errors import ERROR, Problem
from sheetbuilder.reading import contract as c
from sheetbuilder.reading.ours import built_by_us
from sheetbuilder.reading.periods import Period
from sheetbuilder.reading.readers import SUFFIXES, find_file, read_table
from sheetbuilder.reading.settings import Settings


def _export_paths(folder: Path, settings: Settings) -> tuple[list[Path], list[Problem]]:
    """The targets exports of folder: its export files, and the targets export of each folder in it."""
    paths, problems = [], []
    for entry in sorted(folder.iterdir()):
        if entry.name.startswith("."):
            continue
        if entry.is_dir():
            path, problem = find_file(entry, c.TABLE_BY_NAME["targets"], settings)
            if problem is not None:
                problems.append(Problem(f"{folder.name}/{entry.name}", None, None, problem.message))
            if path is not None:
                paths.append(path)
        elif entry.is_file() and entry.suffix.lower() in SUFFIXES and built_by_us(entry) is None:
            paths.append(entry)
    return paths, problems


def read_past_exports(folder: Path, settings: Settings) -> tuple[list[tuple[str, Period, pd.DataFrame]], list[Problem]]:
    """(name, period, targets frame) of every past export in folder, oldest first, and the problems found.

    Raises nothing: a file that cannot be read, or states no period, is an error in the problems.
    """
    folder = Path(folder)
    if not folder.is_dir():
        return [], [Problem(str(folder), None, None, "the --history folder does not exist; give the folder holding "
                                                     "past keyword exports")]
    paths, problems = _export_paths(folder, settings)
    out = []
    for path in paths:
        name = str(path.relative_to(folder))
        frame, found = read_table(path, c.TABLE_BY_NAME["targets"], settings)
        problems += [Problem(name, p.row, p.column, p.message, p.severity) for p in found]
        if frame is None or any(p.severity == ERROR for p in found):
            continue
        period = frame.attrs.get("period")
        if period is None:
            problems.append(Problem(name, None, None, "states no period (no dates in its rows, title or file name), "
                                                      "so its week cannot be placed in the keyword history; export "
                                                      "it with a date column, or put its dates in its file name "
                                                      "(targets 2026-11-23 to 2026-11-29.csv)"))
            continue
        out.append((name, period, frame))
    if not paths and not problems:
        problems.append(Problem(str(folder), None, None, "holds no export to read for the keyword history"))
    return sorted(out, key=lambda x: (x[1].start, x[1].end, x[0])), problems
