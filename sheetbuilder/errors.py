"""The one exception hierarchy of sheetbuilder, and problems as data.

Readers never raise on the first bad cell: they collect :class:`Problem` records
(file, row, column, message) so that one run reports every problem at once. The
build raises :class:`InputProblems` carrying all of them when any is an error.
"""
from __future__ import annotations

from dataclasses import dataclass

ERROR = "error"
WARNING = "warning"


@dataclass(frozen=True)
class Problem:
    """One problem found in the inputs.

    Args:
        file: the input file's name (or the folder, for a missing file).
        row: the 1-based row in the file as a spreadsheet shows it (the header
            is row 1), or None when the problem concerns the whole file.
        column: the column's header as written in the file, or None.
        message: what is wrong and what was expected.
        severity: ERROR stops the build; WARNING is reported and the build goes on.
    """

    file: str
    row: int | None
    column: str | None
    message: str
    severity: str = ERROR

    def where(self) -> str:
        """The location as 'file, row N, column X'."""
        parts = [self.file]
        if self.row is not None:
            parts.append(f"row {self.row}")
        if self.column is not None:
            parts.append(f"column '{self.column}'")
        return ", ".join(parts)

    def __str__(self) -> str:
        return f"{self.severity}: {self.where()}: {self.message}"


class SheetbuilderError(Exception):
    """Base of every error sheetbuilder raises on purpose."""


class InputProblems(SheetbuilderError):
    """The inputs have at least one error; carries every problem found."""

    def __init__(self, problems: list[Problem]):
        self.problems = list(problems)
        errors = [p for p in self.problems if p.severity == ERROR]
        super().__init__(f"{len(errors)} problem(s) in the inputs; first: {errors[0] if errors else '-'}")


class OutputExists(SheetbuilderError):
    """The output file exists and --force was not given."""


class UnsafeOutput(SheetbuilderError):
    """The output path would overwrite one of the inputs."""


class AnotherAccount(SheetbuilderError):
    """The previous workbook was built for another account's exports (too little in common)."""


class FormulaNotPortable(SheetbuilderError):
    """A formula template uses a function outside the portable whitelist."""


class UnknownName(SheetbuilderError):
    """A formula reads a name that no defined name of the workbook holds (a setting missing from the settings table)."""
