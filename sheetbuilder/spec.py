"""The sheet specification: what the planning layer hands the renderer.

Plain data only: no workbook objects. Row and column numbers are 0-based here, as
the renderer writes them; formula text uses spreadsheet (1-based) addresses.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any, Sequence

DATA = "data"        # imported or computed-in-Python values, locked
INPUT = "input"      # values the user may edit: unlocked and styled as inputs
FORMULA = "formula"  # live formula with its cached value


@dataclass(frozen=True)
class Cell:
    """One cell outside a table: a value, or a formula with its cached value."""

    value: Any = None
    formula: str | None = None
    style: str = "text"
    kind: str = DATA
    note: str | None = None  # a cell note (comment), e.g. where a carried value came from


@dataclass
class Column:
    """One column of a table.

    Args:
        header: the header text.
        style: the style key of the body cells (see palette.STYLES).
        kind: DATA, INPUT or FORMULA.
        values: one value per row (the cached result for a formula column).
        formula: for FORMULA columns, the formula with '{r}' standing for the row number (and '{p}'
            for the previous row); or a list of one formula per row.
        width: column width in characters.
        hidden: hide the column (helper columns holding row indexes).
        cell_styles: {row index: style key} for body cells styled apart (a value carried from last week).
        notes: {row index: text} of cell notes (comments) on body cells.
    """

    header: str
    style: str
    kind: str
    values: Sequence[Any]
    formula: str | list[str] | None = None
    width: float = 12
    hidden: bool = False
    cell_styles: dict = field(default_factory=dict)
    notes: dict = field(default_factory=dict)


@dataclass(frozen=True)
class Highlight:
    """Colour a column's cells by their text: state is a palette state name."""

    column: int
    text: str
    state: str
    begins: bool = False


@dataclass(frozen=True)
class Rule:
    """What a typed cell accepts (the renderer turns it into the writer's data validation).

    kind: 'number or words' (a number, or one of words), 'one of' (one of words, offered as a list),
    or 'decimal', 'integer', 'date' (between low and high). A blank cell is always accepted.
    """

    kind: str
    words: tuple[str, ...] = ()
    low: Any = None
    high: Any = None


@dataclass(frozen=True)
class Validation:
    """Data validation on one cell, or a column of cells down to last_row: its rule and the messages shown.

    Empty messages are not written.
    """

    row: int
    col: int
    rule: Rule
    last_row: int | None = None
    error_title: str = ""
    error_message: str = ""
    input_title: str = ""
    input_message: str = ""


@dataclass
class Table:
    """A header row, body rows and an optional totals row, written from first_row down."""

    first_row: int
    columns: list[Column]
    totals: list[Cell | None] | None = None
    highlights: list[Highlight] = field(default_factory=list)
    autofilter: bool = True
    title: str | None = None  # written in the row above the header (for tables after the first)

    @property
    def n_rows(self) -> int:
        """The number of body rows."""
        return len(self.columns[0].values) if self.columns else 0

    @property
    def last_row(self) -> int:
        """The 0-based row of the last body row (the header row when there is none)."""
        return self.first_row + self.n_rows


@dataclass(frozen=True)
class Series:
    """One chart series: its name and the ranges of its categories and values (formula text)."""

    name: str
    categories: str
    values: str
    color: str


@dataclass(frozen=True)
class Chart:
    """A native chart, live with the cells it plots, anchored at a cell of its sheet."""

    kind: str  # 'bar' or 'column'
    title: str
    series: tuple[Series, ...]
    anchor: tuple[int, int]
    x_title: str = ""
    y_title: str = ""
    percent: bool = True
    size: tuple[int, int] = (520, 300)


@dataclass
class Sheet:
    """One worksheet: rows of cells above the table, the table, more tables, rows below, charts."""

    name: str
    above: list[list[Cell | None]] = field(default_factory=list)
    table: Table | None = None
    more: list[Table] = field(default_factory=list)
    below: list[list[Cell | None]] = field(default_factory=list)
    charts: list[Chart] = field(default_factory=list)
    widths: dict[int, float] = field(default_factory=dict)
    freeze: tuple[int, int] | None = None
    validations: list[Validation] = field(default_factory=list)
    landscape: bool = True
    tab_color: str | None = None
    hidden: bool = False


@dataclass
class WorkbookSpec:
    """Everything the renderer needs: sheets in order and the workbook's defined names."""

    sheets: list[Sheet]
    names: list[tuple[str, str]] = field(default_factory=list)
    currency_symbol: str = "$"
    properties: dict = field(default_factory=dict)

    def sheet(self, name: str) -> Sheet:
        """The sheet called name."""
        return next(s for s in self.sheets if s.name == name)
