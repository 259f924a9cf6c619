"""The renderer: the only module that touches the workbook writer.

It takes a WorkbookSpec and writes it, row by row in xlsxwriter's constant_memory
mode, with every formula's cached value. Formulas go through a narrow fast path (see
:func:`put_formula`) because every formula this project writes has been checked
against the portable-function whitelist, which excludes every function that
xlsxwriter's stock write_formula would rewrite.
"""
from __future__ import annotations

import datetime as dt
import math
import re
import zipfile
from contextlib import contextmanager
from pathlib import Path
from typing import Any, Callable, Iterator

import pandas as pd
import xlsxwriter
import xlsxwriter.workbook
from xlsxwriter.exceptions import FileCreateError
from xlsxwriter.packager import Packager
from xlsxwriter.utility import xl_rowcol_to_cell_fast
from xlsxwriter.worksheet import CellFormulaTuple, CellRichStringTuple, Worksheet
from xlsxwriter.xmlwriter import XMLwriter

from sheetbuilder.values import ERROR_VALUES
from sheetbuilder.version import __version__
from sheetbuilder.workbook.columns import EXPORT_STYLE
from sheetbuilder.workbook.formula import cell_ref, check_portable, col_number
from sheetbuilder.workbook.palette import STATES, STYLES, shows_when_blank, style_properties
from sheetbuilder.workbook.spec import FORMULA, Cell, Chart, PageSetup, Sheet, Table, Validation, WorkbookSpec

CELL_TEXT_LIMIT = 32_767  # Microsoft, "Excel specifications and limits": characters in a cell
TRUNCATION_MARK = " [cut: longer than a cell holds]"

Progress = Callable[[str, int, int], None]


def workbook_options(tmpdir: Path | None = None) -> dict:
    """The writer's options: text stays text, no URL or number guessing, lean memory.

    tmpdir is where the writer keeps its temporary files (constant_memory writes each
    sheet to one); None leaves them in the system temporary folder.
    """
    options = {"constant_memory": True, "strings_to_formulas": False, "strings_to_numbers": False,
               "strings_to_urls": False, "use_future_functions": False}
    if tmpdir is not None:
        options["tmpdir"] = str(tmpdir)
    return options


def _utf16_len(text: str) -> int:
    """Length of text in UTF-16 units, as spreadsheets count it."""
    return len(text.encode("utf-16-le")) // 2


def fit_text(text: str) -> str:
    """text unchanged if a cell can hold it, else cut with a visible mark."""
    if len(text) <= CELL_TEXT_LIMIT // 2 or _utf16_len(text) <= CELL_TEXT_LIMIT:
        return text
    room = CELL_TEXT_LIMIT - _utf16_len(TRUNCATION_MARK)
    out, used = [], 0
    for ch in text:
        size = 2 if ord(ch) > 0xFFFF else 1
        if used + size > room:
            break
        out.append(ch)
        used += size
    return "".join(out) + TRUNCATION_MARK


def stored_text(text: str) -> str:
    """Text as a cell of ours stores it and a reader gives it back: cut to fit, control characters escaped."""
    return XMLwriter._escape_control_characters(fit_text(text))


def put_formula(ws, row: int, col: int, formula: str, fmt, value: Any) -> None:
    """Store a whitelisted formula as write_formula would, minus its function rewriting.

    Equivalent to Worksheet.write_formula for formulas that call none of the functions
    xlsxwriter expands (dynamic arrays, newer functions) and are not array formulas;
    tests check the sheet XML is byte-identical to the stock method's.
    """
    if ws._check_dimensions(row, col):
        raise ValueError(f"cell {row},{col} is outside the sheet")
    if ws.constant_memory and row > ws.previous_row:
        ws._write_single_row(row)
    ws.table[row][col] = CellFormulaTuple(formula[1:] if formula.startswith("=") else formula, fmt, value)


def _put_shared(ws, row: int, col: int, formula: SharedFormula, fmt, value: Any) -> None:
    """Store one cell of a shared formula group (its formula already checked and stripped of '=')."""
    if ws._check_dimensions(row, col):
        raise ValueError(f"cell {row},{col} is outside the sheet")
    if ws.constant_memory and row > ws.previous_row:
        ws._write_single_row(row)
    ws.table[row][col] = CellFormulaTuple(formula, fmt, value)


class SharedFormula(str):
    """A formula of a shared group (ECMA-376 Part 1, 18.3.1.40 f, t="shared"): the group's first cell holds the
    text and the range (ref); every other cell holds only the group's number (si) and is the first cell's formula
    with its relative references moved down by the rows between them."""

    def __new__(cls, text: str, si: int, ref: str | None) -> "SharedFormula":
        out = super().__new__(cls, text)
        out.si, out.ref = si, ref
        return out


class _SharedString(tuple):
    """A text cell stored once in the workbook's shared strings (the writer stores text inline in its
    constant_memory mode): (index in the table, format)."""


class _Worksheet(Worksheet):
    """The writer's worksheet, which also writes a shared formula's <f> element and a shared string's cell
    in constant_memory mode (the writer has neither)."""

    shared_groups = 0  # shared formula groups written so far: the next group's number (si)

    def _write_cell(self, row: int, col: int, cell) -> None:
        if type(cell) is not _SharedString:
            super()._write_cell(row, col, cell)
            return
        self._xml_string_element(cell[0], [("r", xl_rowcol_to_cell_fast(row, col)), ("s", cell[1]._get_xf_index())])

    def _xml_formula_element(self, formula, result, attributes=[]) -> None:
        if type(formula) is not SharedFormula:
            super()._xml_formula_element(formula, result, attributes)
            return
        attr = "".join(f' {key}="{self._escape_attributes(value)}"' for key, value in attributes)
        if formula.ref:
            f = f'<f t="shared" ref="{formula.ref}" si="{formula.si}">{self._escape_data(str(formula))}</f>'
        else:
            f = f'<f t="shared" si="{formula.si}"/>'
        self.fh.write(f"<c{attr}>{f}<v>{self._escape_data(result)}</v></c>")


_QUOTED = re.compile(r'"(?:[^"]|"")*"')
_THIS_ROW = re.compile(r"(?<![A-Za-z0-9_.])\$?[A-Za-z]{1,3}\{[rp]\}")
_RELATIVE_ROW = re.compile(r"(?<![A-Za-z0-9_.])\$?[A-Za-z]{1,3}[0-9]+(?![0-9A-Za-z_(])|"
                           r"(?<![A-Za-z0-9_.$])[0-9]+:\$?[0-9]+")


def shareable(template: str) -> bool:
    """True when a column's formula template may be written as one shared formula: every reference whose row
    is relative is to the cell's own row ({r}) or the row above ({p}), so moving the first row's formula down
    gives each row's own; any other relative row, or {r} or {p} used as a number or inside text, says no."""
    bare = _QUOTED.sub('""', template)
    if bare.count("{r}") + bare.count("{p}") != template.count("{r}") + template.count("{p}"):
        return False
    rest = _THIS_ROW.sub("", bare)
    return "{r}" not in rest and "{p}" not in rest and _RELATIVE_ROW.search(rest) is None


def _cached(value: Any) -> Any:
    """A cached result as the file stores it: NaN and None become blank text."""
    if value is None or value is pd.NA or (isinstance(value, float) and math.isnan(value)):
        return ""
    if isinstance(value, dt.datetime):
        return (value - dt.datetime(1899, 12, 30)).total_seconds() / 86400
    if isinstance(value, dt.date):
        return (value - dt.date(1899, 12, 30)).days
    if hasattr(value, "item"):  # numpy scalars
        return value.item()
    if isinstance(value, str):  # a formula's text result: escaped as xlsxwriter escapes cell text
        text = XMLwriter._escape_control_characters(fit_text(value))
        return CachedText(text) if text in ERROR_VALUES else text  # else the writer would type it an error (t="e")
    return value




class CachedText(str):
    """A formula's cached text that reads like an error value: compares unequal to the plain error
    names, so that the writer's error test (``value in error_codes``) fails and it types the cell t="str".
    """

    def __eq__(self, other: object) -> bool:
        if type(other) is str and other in ERROR_VALUES:
            return False
        return str.__eq__(self, other)

    __hash__ = str.__hash__


def put_value(ws, row: int, col: int, value: Any, fmt) -> None:
    """Write a plain value: text always as text, numbers, dates, or a formatted blank."""
    if value is None or value is pd.NA or (isinstance(value, float) and math.isnan(value)):
        ws.write_blank(row, col, None, fmt)
    elif isinstance(value, str):
        text = fit_text(value)
        if text.startswith("<r>") and text.endswith("</r>"):
            # xlsxwriter copies a string shaped like "<r>...</r>" into the XML unescaped, as a
            # rich-text run (both inline and shared strings): store it as one escaped run instead.
            if ws._check_dimensions(row, col):
                raise ValueError(f"cell {row},{col} is outside the sheet")
            run = ('<r><t xml:space="preserve">' + text.replace("&", "&amp;").replace("<", "&lt;")
                   .replace(">", "&gt;") + "</t></r>")
            if ws.constant_memory and row > ws.previous_row:
                ws._write_single_row(row)
            ws.table[row][col] = CellRichStringTuple(
                run if ws.constant_memory else ws.str_table._get_shared_string_index(run), fmt, text)
        elif fmt is not None and type(ws) is _Worksheet:
            if ws._check_dimensions(row, col):
                raise ValueError(f"cell {row},{col} is outside the sheet")
            if ws.constant_memory and row > ws.previous_row:
                ws._write_single_row(row)
            ws.table[row][col] = _SharedString((ws.str_table._get_shared_string_index(text), fmt))
        else:
            ws.write_string(row, col, text, fmt)
    elif isinstance(value, bool):
        ws.write_boolean(row, col, value, fmt)
    elif isinstance(value, (dt.date, dt.datetime)):
        ws.write_datetime(row, col, value if isinstance(value, dt.datetime) else
                          dt.datetime.combine(value, dt.time()), fmt)
    else:
        ws.write_number(row, col, float(value), fmt)


def _unwritten(value: Any, empty_text: bool) -> bool:
    """A body value left unwritten: a blank, or (empty_text) empty text."""
    if value is None or value is pd.NA or (isinstance(value, float) and math.isnan(value)):
        return True
    return empty_text and isinstance(value, str) and value == ""


def _column_formats(sheet: Sheet, formats: dict) -> dict[int, Any]:
    """The column formats of a sortable sheet's table: each column unlocked in its body style (a cell left unwritten
    then sorts as the written ones do, and looks as they would blank); an input box's column unlocked and plain."""
    if not sheet.sortable or sheet.table is None:
        return {}
    return {col: formats["own"] if shows_when_blank(c.style) else formats["unlocked"][c.style]
            for col, c in enumerate(sheet.table.columns)}


def _put_cell(ws, row: int, col: int, cell: Cell | None, formats: dict) -> None:
    """Write one free-standing cell."""
    if cell is None:
        return
    fmt = formats[cell.style]
    if cell.link is not None:  # the link first: the cell's own value or formula is then written over its text
        ws.write_url(row, col, "internal:" + cell.link, fmt, str(cell.value if cell.value is not None else ""))
    if cell.formula is not None:
        check_portable(cell.formula)
        put_formula(ws, row, col, cell.formula, fmt, _cached(cell.value))
    else:
        put_value(ws, row, col, cell.value, fmt)
    if cell.note:
        ws.write_comment(row, col, cell.note)


def _write_rows(ws, first: int, rows: list[list[Cell | None]], formats: dict, heights: dict | None = None) -> int:
    """Write rows of cells from row first (with the heights given by row); return the next free row."""
    for i, cells in enumerate(rows):
        if heights and first + i in heights:
            ws.set_row(first + i, heights[first + i])
        for col, cell in enumerate(cells):
            _put_cell(ws, first + i, col, cell, formats)
    return first + len(rows)


class OverlappingBlocks(RuntimeError):
    """Two blocks of a sheet were planned over the same rows (an internal error, never the user's)."""


def _runs(formula: str | list[str], n: int) -> Iterator[tuple[int, int, str]]:
    """(first row index, rows, template) of each run of rows sharing one formula template: the whole column for
    one template, each stretch of equal templates for a list (a table of blocks, such as Actions)."""
    if isinstance(formula, str):
        yield 0, n, formula
        return
    start = 0
    for i in range(1, n + 1):
        if i == n or formula[i] != formula[start]:
            yield start, i - start, formula[start]
            start = i


def _shared_groups(ws, columns: list, row: int, n: int) -> dict[int, dict[int, SharedFormula]]:
    """{column: {row index: its cell's shared formula}} for the table's body of n rows from row: one group per run
    of two or more rows with one shareable template (LibreOffice then compiles the run's formula once)."""
    shared: dict[int, dict[int, SharedFormula]] = {}
    if n < 2 or ws._check_dimensions(row + n - 1, len(columns) - 1, True, True) != 0:
        return shared
    for col, c, _, formula, _ in columns:
        if c.kind != FORMULA or not formula:
            continue
        letter = cell_ref(row, col).rstrip("0123456789")
        for start, length, template in _runs(formula, n):
            if length < 2 or not shareable(template):
                continue
            si, ws.shared_groups = ws.shared_groups, ws.shared_groups + 1
            top = row + start
            text = template.replace("{r}", str(top + 1)).replace("{p}", str(top))
            cells = shared.setdefault(col, {})
            cells[start] = SharedFormula(text[1:] if text.startswith("=") else text, si,
                                         f"{letter}{top + 1}:{letter}{top + length}")
            later = SharedFormula("", si, None)
            for i in range(start + 1, start + length):
                cells[i] = later
    return shared


def _write_table(ws, table: Table, row: int, formats: dict, state_formats: dict, progress: Progress | None,
                 sheet_name: str, first: bool) -> int:
    """Write a table's title, header, body and totals at its planned first row; return the next free row.

    Raises:
        OverlappingBlocks: the rows written before reach the table's title or header row (a planning bug:
            moving the table down would leave its formulas pointing at the planned rows).
    """
    top = table.first_row - (1 if table.title else 0)
    if row > top:
        raise OverlappingBlocks(f"{sheet_name}: the table {table.title or table.columns[0].header!r} is planned "
                                f"from row {top + 1}, but the rows above it reach row {row}")
    row = table.first_row
    if table.title:
        ws.write_string(row - 1, 0, table.title, formats["subtitle"])
    for col, column in enumerate(table.columns):
        numeric = column.style.split("_")[0] in ("int", "money", "percent", "ratio")
        ws.write_string(row, col, column.header, formats["header_num" if numeric else "header"])
    ws.set_row(row, 30)
    row += 1
    columns = [(col, c, formats[c.style], c.formula, c.values) for col, c in enumerate(table.columns)]
    # A blank value of a plain style is not written (it would be a stored cell that looks like no cell): the
    # column's own format stands for it where it matters (the unlocked cells of a sortable sheet, _column_formats);
    # so is the empty text of a grey export figure. A blank input box, or a total's border, is written.
    unwritten = {col: c.style.endswith(EXPORT_STYLE) for col, c in enumerate(table.columns)
                 if c.kind != FORMULA and not shows_when_blank(c.style)}
    for _, c, _, formula, _ in columns:
        for text in ([formula] if isinstance(formula, str) else formula or []):
            check_portable(text)
    n = table.n_rows
    step = max(1, n // 50)
    marked = [(col, c) for col, c in enumerate(table.columns) if c.kind != FORMULA and (c.cell_styles or c.notes)]
    shared = _shared_groups(ws, columns, row, n)
    for i in range(n):
        r = row + i
        rs, ps = str(r + 1), str(r)
        for col, c, fmt, formula, values in columns:
            if col in shared and i in shared[col]:
                _put_shared(ws, r, col, shared[col][i], fmt, _cached(values[i]))
            elif c.kind == FORMULA:
                text = (formula[i] if isinstance(formula, list) else formula).replace("{r}", rs)
                if "{p}" in text:  # the previous row, for running counts
                    text = text.replace("{p}", ps)
                put_formula(ws, r, col, text, fmt, _cached(values[i]))
            elif col not in unwritten or not _unwritten(values[i], unwritten[col]):
                put_value(ws, r, col, values[i], fmt)
        for col, c in marked:  # cells styled apart (carried values) and their notes, rewritten in the same row
            if i in c.cell_styles:
                put_value(ws, r, col, c.values[i], formats[c.cell_styles[i]])
            if i in c.notes:
                ws.write_comment(r, col, c.notes[i])
        if progress and (i % step == 0 or i == n - 1):
            progress(sheet_name, i + 1, n)
    if table.autofilter and first:
        ws.autofilter(table.first_row, 0, table.first_row + max(n, 1), len(table.columns) - 1)
    for h in table.highlights:
        if n:
            rule = ({"type": "text", "criteria": "begins with", "value": h.text} if h.begins else
                    {"type": "cell", "criteria": "==", "value": '"' + h.text + '"'})
            ws.conditional_format(row, h.column, row + n - 1, h.column, {**rule, "format": state_formats[h.state]})
    row += n
    if table.totals:
        for col, cell in enumerate(table.totals):
            _put_cell(ws, row, col, cell, formats)
        row += 1
    return row


def _widths(sheet: Sheet) -> tuple[dict[int, float], set[int]]:
    """Column widths (the widest any table asks for) and the columns every table hides."""
    widths = dict(sheet.widths)
    tables = [t for t in [sheet.table, *sheet.more] if t]
    asked: dict[int, float] = {}
    shown: set[int] = set()
    hidden: set[int] = set()
    for t in tables:
        for i, column in enumerate(t.columns):
            asked[i] = max(asked.get(i, 0), column.width)
            (hidden if column.hidden else shown).add(i)
    for i, w in asked.items():
        widths.setdefault(i, w)
    return widths, hidden - shown


# A placed block of a sheet: ("rows", first row, rows of cells) or ("table", header row, table).
Placed = tuple[str, int, Any]
_RANGE = re.compile(r"^=?(?:'((?:[^']|'')+)'|([^'!]+))!\$?([A-Z]+)\$?(\d+):\$?([A-Z]+)\$?(\d+)$")


def _placed_value(placed: list[Placed], row: int, col: int) -> Any:
    """The cached value the sheet holds at (row, col), '' when nothing is written there."""
    for kind, first, block in placed:
        if kind == "rows":
            if first <= row < first + len(block) and col < len(block[row - first]):
                cell = block[row - first][col]
                return "" if cell is None else _cached(cell.value)
        else:
            table: Table = block
            if col >= len(table.columns) or row < first:
                continue
            if row == first:
                return table.columns[col].header
            if row <= first + table.n_rows:
                return _cached(table.columns[col].values[row - first - 1])
            if table.totals and row == first + table.n_rows + 1 and col < len(table.totals):
                cell = table.totals[col]
                return "" if cell is None else _cached(cell.value)
    return ""


def _range_data(ref: str, placed: dict[str, list[Placed]], numeric: bool) -> list | None:
    """The cached values a chart range plots, for its data cache; None when the range is not ours."""
    m = _RANGE.match(ref)
    if m is None:
        return None
    sheet = (m.group(1) or "").replace("''", "'") or m.group(2)
    if sheet not in placed:
        return None
    c1, r1, c2, r2 = col_number(m.group(3)), int(m.group(4)) - 1, col_number(m.group(5)), int(m.group(6)) - 1
    values = [_placed_value(placed[sheet], r, c) for r in range(r1, r2 + 1) for c in range(c1, c2 + 1)]
    if numeric:  # a blank or a text result is no point (a gap), as in the spreadsheet
        return [v if isinstance(v, (int, float)) and not isinstance(v, bool) else None for v in values]
    return [v if isinstance(v, (int, float)) and not isinstance(v, bool) else str(v) for v in values]


def chart_names(chart: Chart) -> tuple[list[str], str, str]:
    """The series' names and the x and y axis titles as written: no series is named exactly like an
    axis title (Gnumeric 1.12.55 crashes re-opening an .ods converted from such a chart). A lone
    series so named takes the chart's title; among several, the axis title is left off (the legend
    names the series)."""
    names = [s.name for s in chart.series]
    x_title, y_title = chart.x_title, chart.y_title
    if len(names) == 1 and names[0] in (x_title, y_title) and chart.title not in (x_title, y_title):
        names = [chart.title]
    x_title = "" if x_title in names else x_title
    y_title = "" if y_title in names else y_title
    return names, x_title, y_title


def _add_chart(wb, ws, chart: Chart, placed: dict[str, list[Placed]]) -> None:
    """Insert one native chart built from its spec, each series with its cached categories and values
    (a reader that does not recalculate shows them; constant_memory keeps no cells to cache from)."""
    c = wb.add_chart({"type": chart.kind})
    names, x_title, y_title = chart_names(chart)
    for s, name in zip(chart.series, names):
        c.add_series({"name": name, "categories": s.categories, "values": s.values,
                      "categories_data": _range_data(s.categories, placed, numeric=False),
                      "values_data": _range_data(s.values, placed, numeric=True),
                      "fill": {"color": s.color}, "border": {"color": s.color}, "gap": 80})
    c.set_title({"name": chart.title, "name_font": {"size": 11, "bold": True}})
    value_axis = {"num_format": "0%" if chart.percent else "General",
                  "major_gridlines": {"visible": True, "line": {"color": "#D9D9D9"}}}
    x_name, y_name = ({"name": x_title} if x_title else {}), ({"name": y_title} if y_title else {})
    category_axis = dict(x_name)
    value_axis.update(y_name)
    if chart.kind == "bar":  # horizontal bars: the value axis is x
        c.set_x_axis({**{k: v for k, v in value_axis.items() if k != "name"}, **x_name})
        c.set_y_axis({**y_name, "reverse": True})
    else:
        c.set_x_axis(category_axis)
        c.set_y_axis(value_axis)
    c.set_legend({"position": "bottom"})
    c.set_size({"width": chart.size[0], "height": chart.size[1]})
    ws.insert_chart(chart.anchor[0], chart.anchor[1], c, {"object_position": 1})


def validation_options(v: Validation) -> dict:
    """The writer's data-validation options of a planned Validation (a blank cell is always accepted)."""
    rule = v.rule
    if rule.kind == "number or words":
        cell = cell_ref(v.row, v.col)  # relative: the rule moves down the column with the cell
        tests = [f"ISNUMBER({cell})", *(f'{cell}="{w}"' for w in rule.words)]
        options = {"validate": "custom", "value": "=OR(" + ",".join(tests) + ")"}
    elif rule.kind == "one of":
        options = {"validate": "list", "source": list(rule.words)}
    elif rule.kind in ("decimal", "integer", "date"):
        options = {"validate": rule.kind, "criteria": "between", "minimum": rule.low, "maximum": rule.high}
    else:
        raise ValueError(f"unknown validation rule {rule.kind!r}")
    for key in ("error_title", "error_message", "input_title", "input_message"):
        if getattr(v, key):
            options[key] = getattr(v, key)
    return options


def _set_page(ws, page: PageSetup, last_row: int, last_col: int) -> None:
    """The sheet's print settings: area, title rows, page breaks, orientation, A4, fit to width, footer."""
    if page.area is not None:
        area = page.area
        ws.print_area(area.first_row, area.first_col, min(area.last_row, max(last_row, area.first_row)),
                      last_col if area.last_col is None else area.last_col)
    if page.repeat_rows is not None:
        ws.repeat_rows(*page.repeat_rows)
    if page.breaks:
        ws.set_h_pagebreaks(sorted(set(page.breaks)))
    if page.landscape:
        ws.set_landscape()
    else:
        ws.set_portrait()
    ws.set_paper(9)
    if page.fit_width:
        ws.fit_to_pages(1, 0)
    ws.set_margins(0.4, 0.4, 0.5, 0.5)


def _write_sheet(wb, sheet: Sheet, formats: dict, state_formats: dict, progress: Progress | None,
                 placed: list[Placed]) -> Any:
    """Write one sheet: widths, rows above, its tables, rows below, then its settings; return the worksheet.

    placed receives where each block went, for the charts' data caches.
    """
    ws = wb.add_worksheet(sheet.name, worksheet_class=_Worksheet)
    widths, hidden = _widths(sheet)
    column_formats = _column_formats(sheet, formats)
    for col, width in sorted(widths.items()):
        ws.set_column(col, col, width, column_formats.get(col), {"hidden": col in hidden})
    if sheet.open_columns and sheet.table:  # unlocked on the protected sheet: the user's own columns go there
        first = len(sheet.table.columns)
        ws.set_column(first, first + sheet.open_columns - 1, OPEN_WIDTH, formats["own"])
    placed.append(("rows", 0, sheet.above))
    row = _write_rows(ws, 0, sheet.above, formats, sheet.heights)
    open_format = formats["own"]
    if sheet.sortable:  # its tables' cells unlocked: sorting locked cells is refused even where sort is allowed
        formats = formats["unlocked"]
    last_col = max([len(cells) - 1 for cells in [*sheet.above, *sheet.below]] +
                   [len(t.columns) - 1 for t in [sheet.table, *sheet.more] if t] + [0])
    if sheet.table:
        placed.append(("table", sheet.table.first_row, sheet.table))
        row = _write_table(ws, sheet.table, row, formats, state_formats, progress, sheet.name, True)
        for r in range(row, row + sheet.open_rows):  # unlocked on the protected sheet: rows the user adds go there
            for c in range(len(sheet.table.columns)):  # blank cells written (constant_memory writes no bare row style)
                ws.write_blank(r, c, None, open_format)
    for table in sheet.more:
        placed.append(("table", table.first_row, table))
        row = _write_table(ws, table, row, formats, state_formats, progress, sheet.name, False)
    placed.append(("rows", row, sheet.below))
    last_row = _write_rows(ws, row, sheet.below, formats) - 1
    for v in sheet.validations:
        ws.data_validation(v.row, v.col, v.row if v.last_row is None else v.last_row, v.col, validation_options(v))
    if sheet.freeze:
        ws.freeze_panes(*sheet.freeze)
    _set_page(ws, sheet.page_setup(), last_row, last_col)
    ws.set_footer("&L&A&RPage &P of &N")
    if sheet.tab_color:
        ws.set_tab_color(sheet.tab_color)
    if sheet.hidden:
        ws.hide()
    ws.protect("", {"autofilter": True, "sort": True, "format_columns": True, "format_rows": True,
                    "select_locked_cells": True, "select_unlocked_cells": True, "objects": True})
    return ws


OPEN_WIDTH = 14  # the width of the empty unlocked columns right of a table

APPLICATION = f"sheetbuilder/{__version__}"  # the program that made the file, as its app.xml names it
_WRITERS_APPLICATION = "<Application>Microsoft Excel</Application>"  # what the writer's packager puts there


class _Packager(Packager):
    """The writer's packager, with this program named as the application that made the file (docProps/app.xml)."""

    def _write_app_file(self) -> None:
        super()._write_app_file()
        part, _, _ = self.filenames[-1]  # the app.xml just written: a temporary file, or text in memory
        if isinstance(part, str):
            with open(part, encoding="utf-8") as fh:
                xml = fh.read()
        else:
            xml = part.getvalue()
        if _WRITERS_APPLICATION not in xml:
            raise RuntimeError(f"the writer's app.xml no longer names {_WRITERS_APPLICATION}: update render.py")
        xml = xml.replace(_WRITERS_APPLICATION, f"<Application>{APPLICATION}</Application>")
        if isinstance(part, str):
            with open(part, "w", encoding="utf-8") as fh:
                fh.write(xml)
        else:
            part.seek(0)
            part.truncate()
            part.write(xml)


ZIP_LEVEL = 7  # deflate level of the package's parts: 3% smaller than the writer's 6 for a tenth more time (8: 6%, 6x)


class _Zip(zipfile.ZipFile):
    """The package's zip file, compressed at ZIP_LEVEL unless told otherwise."""

    def __init__(self, *args, **kwargs) -> None:
        kwargs.setdefault("compresslevel", ZIP_LEVEL)
        super().__init__(*args, **kwargs)


class _Workbook(xlsxwriter.Workbook):
    """The writer's workbook, packaged by :class:`_Packager` (the writer's documented way to replace its packager)
    into a zip file compressed at ZIP_LEVEL."""

    def _get_packager(self) -> Packager:
        return _Packager()

    def _store_workbook(self) -> None:
        writers_zip = xlsxwriter.workbook.ZipFile  # the name the writer's _store_workbook opens the package with
        xlsxwriter.workbook.ZipFile = _Zip
        try:
            super()._store_workbook()
        finally:
            xlsxwriter.workbook.ZipFile = writers_zip


@contextmanager
def _workbook(path: Path, tmpdir: Path | None) -> Iterator[xlsxwriter.Workbook]:
    """A writer for path, closed (written) when the block succeeds; on any failure its temporary
    files are closed and the writer is dropped, and the operating-system error it wrapped is raised as itself.
    """
    wb = _Workbook(str(path), workbook_options(tmpdir or Path(path).parent))
    try:
        yield wb
        wb.close()
    except BaseException as exc:
        for ws in wb.worksheets():
            if getattr(ws, "row_data_fh", None) is not None and not ws.row_data_fh.closed:
                ws.row_data_fh.close()
        wb.fileclosed = True  # nothing to close any more: the caller deletes the partial file
        if isinstance(exc, FileCreateError) and exc.args and isinstance(exc.args[0], OSError):
            raise exc.args[0] from None
        raise


def render(spec: WorkbookSpec, path: Path, progress: Progress | None = None, tmpdir: Path | None = None) -> None:
    """Write spec to path (the caller handles temporary names and renaming).

    Args:
        spec: the planned workbook.
        path: where to write the .xlsx file.
        progress: optional callback(sheet name, rows written, rows in the sheet).
        tmpdir: the folder for the writer's temporary files; path's own folder when None.
    """
    with _workbook(path, tmpdir) as wb:
        formats = {key: wb.add_format(style_properties(key, spec.currency_symbol)) for key in STYLES}
        if any(sheet.sortable for sheet in spec.sheets):
            formats["unlocked"] = {key: wb.add_format({**style_properties(key, spec.currency_symbol), "locked": False})
                                   for key in STYLES}
        state_formats = {name: wb.add_format({"bg_color": s.fill, "font_color": s.font})
                         for name, s in STATES.items()}
        placed: dict[str, list[Placed]] = {}
        written = [(sheet, _write_sheet(wb, sheet, formats, state_formats, progress,
                                        placed.setdefault(sheet.name, []))) for sheet in spec.sheets]
        for sheet, ws in written:  # after every sheet, so a chart may cache cells of any sheet
            for chart in sheet.charts:
                _add_chart(wb, ws, chart, placed)
        visible = [ws for ws, sheet in zip(wb.worksheets(), spec.sheets) if not sheet.hidden]
        if visible:
            visible[0].activate()
        for name, ref in spec.names:
            wb.define_name(name, ref)
        wb.set_properties({"title": "sheetbuilder workbook", "author": "sheetbuilder", **spec.properties})


def render_rows(path: Path, sheet: str, header: list[str], rows: list[list[Any]], tmpdir: Path | None = None) -> None:
    """Write one plain sheet: a header and rows of values, text always as text (for exports).

    tmpdir is the folder for the writer's temporary files; path's own folder when None.
    """
    with _workbook(path, tmpdir) as wb:
        ws = wb.add_worksheet(sheet)
        bold = wb.add_format({"bold": True})
        for c, h in enumerate(header):
            ws.write_string(0, c, h, bold)
        for r, row in enumerate(rows, start=1):
            for c, v in enumerate(row):
                if v is not None:
                    put_value(ws, r, c, v, None)
