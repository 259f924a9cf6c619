"""`inspect`: the plan twin of `build`. Reads every export as the build would and reports what
it read, builds nothing.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

from sheetbuilder.reading import contract as c
from sheetbuilder.errors import ERROR, Problem
from sheetbuilder.reading.evidence import currency_label
from sheetbuilder.reading.periods import Period, settings_for_inputs
from sheetbuilder.reading.readers import read_inputs
from sheetbuilder.reading.settings import load_settings


@dataclass
class FileReport:
    """What was read from one file: its table, header row, column mapping and row counts."""

    file: str
    table: str
    read: bool
    sheet: str = ""
    header_row: int | None = None
    encoding: str = ""
    columns: dict[str, str] = field(default_factory=dict)  # canonical name -> header text
    rows_read: int = 0
    summed: int = 0
    totals: int = 0
    refused: int = 0
    period: Period | None = None
    period_source: str = ""
    currency: str = ""
    numbers: str = ""
    ids: str = ""
    layout: list[str] = field(default_factory=list)  # header rows joined, hidden rows and columns


@dataclass
class Inspection:
    """The report of one inspect run."""

    files: list[FileReport]
    period: Period | None
    problems: list[Problem]
    currency: str = ""

    @property
    def has_errors(self) -> bool:
        """Whether any problem would stop the build."""
        return any(p.severity == ERROR for p in self.problems)


def inspect_exports(folder: Path) -> Inspection:
    """Read the exports in folder (and settings.toml) as `build` would, writing nothing.

    Returns:
        Per file: the table it was matched to, the sheet and header row used, each column's
        mapping, the rows read, summed into others, skipped as totals and refused; the period
        found; and every problem.
    """
    folder = Path(folder)
    settings, problems = load_settings(folder)
    inputs, found = read_inputs(folder, settings)
    problems += found
    problems += settings_for_inputs(settings, inputs)[1]
    files = []
    for table in c.TABLES:
        path = inputs.sources.get(table.name)
        if path is None:
            continue
        frame = inputs.get(table.name)
        refused = len({p.row for p in problems if p.file == path.name and p.severity == ERROR and p.row})
        if frame is None:
            files.append(FileReport(path.name, table.name, False, refused=refused))
            continue
        attrs = frame.attrs
        files.append(FileReport(path.name, table.name, True, attrs.get("sheet", ""), attrs.get("header_row"),
                                attrs.get("encoding", ""), dict(attrs.get("columns", {})),
                                attrs.get("rows_read", len(frame)), attrs.get("summed", 0), attrs.get("totals", 0),
                                refused, attrs.get("period"), attrs.get("period_source", ""),
                                _currency(attrs.get("currency")), attrs.get("numbers", ""), attrs.get("id_note", ""),
                                list(attrs.get("layout", []))))
    return Inspection(files, inputs.period, problems, inputs.currency)


def _currency(found) -> str:
    """A file's currency as inspect shows it: the ISO 4217 code(s) and the marks seen."""
    if not found:
        return ""
    codes, marks = found
    return currency_label(codes, set(marks)) + f" (marks: {', '.join(marks)})"


def report_lines(result: Inspection) -> list[str]:
    """The inspection as plain lines of text (the command prints them without markup)."""
    lines = []
    for f in result.files:
        lines.append(f"{f.file} -> {f.table}" + ("" if f.read else " (not read: see the problems below)"))
        if not f.read:
            continue
        where = f"sheet '{f.sheet}', " if f.sheet else ""
        lines.append(f"  {where}header row {f.header_row}, {f.encoding}")
        for name, header in f.columns.items():
            lines.append(f"  {name} <- {header}")
        lines.append(f"  rows: {f.rows_read} read, {f.summed} summed into others, {f.totals} skipped as totals, "
                     f"{f.refused} refused")
        lines.append(f"  period: {f.period} (from {f.period_source})" if f.period is not None
                     else "  period: none stated")
        lines.append(f"  currency: {f.currency or 'no currency marked'}")
        if f.numbers:
            lines.append(f"  numbers: {f.numbers}")
        if f.ids:
            lines.append(f"  product IDs: {f.ids}")
        lines.extend(f"  layout: {note}" for note in f.layout)
    lines.append(f"currency found: {result.currency or 'none marked'}")
    lines.append(f"period found: {result.period}" if result.period else "period found: none (the exports carry no "
                                                                           "dates; period_days and period_end apply)")
    errors = sum(1 for p in result.problems if p.severity == ERROR)
    lines.append(f"{errors} error(s), {len(result.problems) - errors} note(s) and warning(s)")
    return lines
