"""The sheet specification: what the planning layer hands the renderer.

Plain data only: no workbook objects. Row and column numbers are 0-based here, as
the renderer writes them; formula text uses spreadsheet (1-based) addresses.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any, Iterator, Sequence

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
    link: str | None = None  # a place in this workbook the cell links to, e.g. "'Profit'!A12"


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


@dataclass(frozen=True)
class PrintArea:
    """The rows (and columns) a sheet prints, 0-based and inclusive; last_col None: every column written."""

    first_row: int
    last_row: int
    first_col: int = 0
    last_col: int | None = None


@dataclass(frozen=True)
class PageSetup:
    """How a sheet prints.

    Args:
        area: what prints; None prints every cell written.
        repeat_rows: the first and last row printed again at the top of each page after the one they
            start on (spreadsheets repeat title rows only from their own page on).
        breaks: rows that begin a new page.
        landscape: landscape (True) or portrait paper.
        fit_width: scale the columns to one page wide (pages run down as far as needed).
    """

    area: PrintArea | None = None
    repeat_rows: tuple[int, int] | None = None
    breaks: tuple[int, ...] = ()
    landscape: bool = True
    fit_width: bool = True


def stacked_pages(tables: list[Table], breaks_before: list[Table] | None = None, last_row: int | None = None,
                  landscape: bool = True) -> PageSetup:
    """Tables stacked down a sheet, printed so that every page's title rows belong to its table.

    Each table in breaks_before (by default every table after the first) starts a new page at its
    title, and the last table's header repeats on its pages: pages of an earlier table never show
    another table's header (one that runs onto a second page continues without its header).
    last_row ends the print area (a live list's rows filled when built).
    """
    tables = [t for t in tables if t is not None]
    if not tables:
        return PageSetup(landscape=landscape)
    later = tables[1:] if breaks_before is None else breaks_before
    breaks = tuple(t.first_row - (1 if t.title else 0) for t in later)
    last = tables[-1]
    area = None if last_row is None else PrintArea(0, last_row)
    return PageSetup(area, (last.first_row, last.first_row), breaks, landscape)


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
    heights: dict[int, float] = field(default_factory=dict)  # {row: height in points} of rows above the tables
    freeze: tuple[int, int] | None = None
    validations: list[Validation] = field(default_factory=list)
    page: PageSetup | None = None  # None: stacked_pages over its tables
    tab_color: str | None = None
    hidden: bool = False
    # The user may sort its tables (the lookups into them find their rows by key): their cells are written
    # unlocked, since LibreOffice and Excel both refuse to sort locked cells on a protected sheet whatever the
    # protection allows; the sheet stays protected, so rows cannot be deleted (type skip or keep instead).
    sortable: bool = False
    # Columns right of its main table left unlocked, where the user may add columns of their own (carried by key).
    open_columns: int = 0
    # Rows below its main table left unlocked, where the user may add rows of their own (in_catalog: products).
    open_rows: int = 0

    def page_setup(self) -> PageSetup:
        """How this sheet prints: its declared page setup, or its tables stacked (see stacked_pages)."""
        return self.page if self.page is not None else stacked_pages([self.table, *self.more])


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

    def formulas(self) -> Iterator[tuple[str, str]]:
        """(sheet, formula) of every formula: each cell's, and each column's (its first row's when written per row)."""
        for s in self.sheets:
            tables = [t for t in (s.table, *s.more) if t is not None]
            cells = [c for row in (*s.above, *s.below) for c in row if c is not None]
            cells += [c for t in tables for c in (t.totals or []) if c is not None]
            for formula in [c.formula for c in cells] + [col.formula for t in tables for col in t.columns]:
                if isinstance(formula, list):  # one per row: the rows differ only in the numbers written into them
                    formula = formula[0] if formula else None
                if formula:
                    yield s.name, formula
