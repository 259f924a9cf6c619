"""Readers: a folder of CSV or .xlsx exports in, validated frames and problem records out.

Every cell is read as text first, so that a bad cell is reported with its file, row
and column instead of being silently coerced. Nothing here raises on bad data.
"""
from __future__ import annotations

import csv
import hashlib
import math
import re
from dataclasses import dataclass, field
from itertools import islice
from pathlib import Path

import pandas as pd

from sheetbuilder.reading import contract as c
from sheetbuilder.reading.encodings import NotText, decode, is_legacy
from sheetbuilder.errors import ERROR, WARNING, Problem
from sheetbuilder.reading.guard import UnsafeWorkbook, check_csv, check_workbook, read_delimited, text_problem
from sheetbuilder.reading.agreement import (account_currency, currency_of, grouped_problems, orders_above_clicks,
                                            same_product_ids, view_through_campaigns)
from sheetbuilder.reading.evidence import COMMA, Decision, both_readings, currency_mark, decide_separators, separator_form
from sheetbuilder.reading.headers import MAX_TITLE_ROWS, currency_warnings, find_header, map_headers, two_row_header
from sheetbuilder.reading.ours import built_by_us, our_workbook_message
from sheetbuilder.reading.numbers import MAX_MAGNITUDE, NotANumber, parse_count, parse_number
from sheetbuilder.reading.periods import (DATE_RULES, DATED_TABLES, Period, combine_repeats, declared_period,
                                          overall_period, stem_without_dates, parse_dates, repeated_rows, table_period)
from sheetbuilder.reading.settings import Settings
from sheetbuilder.reading.stored_values import formulas_without_values, hidden_parts
from sheetbuilder.reading.totals import RunningSums, totals_label

SPREADSHEETS = (".xlsx", ".xlsm", ".xls", ".xlsb", ".ods")
SUFFIXES = (".csv", ".tsv", ".txt", ".xlsx", ".xlsm", ".xls", ".xlsb", ".ods")
ZIPPED = (".xlsx", ".xlsm", ".xlsb")  # Office Open XML workbooks, checked before they are opened
MAX_STRAY_BYTES = 20 * 1024 * 1024  # a file matching no table larger than this is named, not read
MAX_SHEET_ROWS = 1_048_576  # Microsoft, "Excel specifications and limits"; the header takes one

# search_terms rows repeating these are merged when the table is longer than a sheet.
SEARCH_TERM_KEYS = ("campaign", "ad_group", "target", "match_type", "search_term")
SEARCH_TERM_SUMS = ("impressions", "clicks", "spend", "ad_sales", "orders")


@dataclass
class Inputs:
    """The validated input tables. Absent optional tables are None.

    Each frame has the canonical columns and `_row`, the row number in the file.
    """

    tables: dict[str, pd.DataFrame | None]
    sources: dict[str, Path] = field(default_factory=dict)
    checksums: dict[str, str] = field(default_factory=dict)
    encodings: dict[str, str] = field(default_factory=dict)
    period: Period | None = None  # the days the dated exports cover, when they carry dates
    currency: str = ""  # the currency the exports' amounts are marked with ("" when none is marked)

    def get(self, name: str) -> pd.DataFrame | None:
        """The frame of table name, or None when the file was not given."""
        return self.tables.get(name)


NOT_A_FILE = "is named like an export but is not a plain file (a folder, a pipe or a device); put the export itself here"


def find_file(folder: Path, table: c.TableRule, settings: Settings) -> tuple[Path | None, Problem | None]:
    """The file that holds table in folder (by settings [files] or by its name)."""
    if table.name in settings.files:
        path = folder / settings.files[table.name]
        if not path.exists():
            return None, Problem(str(path.name), None, None,
                                 f"settings.toml [files] names this file for '{table.name}' but it does not exist")
        if not path.is_file():
            return None, Problem(str(path.name), None, None, NOT_A_FILE)
        return path, None
    want = c.file_key(table.name)
    named = sorted(p for p in folder.iterdir() if p.suffix.lower() in SUFFIXES
                   and want in (c.file_key(p.stem), c.file_key(stem_without_dates(p.stem))))
    odd = [p for p in named if not p.is_file()]
    if odd:  # a pipe, device or folder named like the export is never skipped without a word
        return None, Problem(odd[0].name, None, None, NOT_A_FILE)
    found = named
    if len(found) > 1:
        names = ", ".join(p.name for p in found)
        return None, Problem(folder.name, None, None,
                             f"several files could hold '{table.name}': {names}; keep one or name it in [files]")
    if not found:
        if table.required:
            return None, Problem(folder.name or str(folder), None, None,
                                 f"missing file '{table.name}.csv' (or .xlsx): {table.label}")
        return None, None
    return found[0], None




class CellNumber(str):
    """The text of a spreadsheet cell that holds a number (not text that looks like one).

    Such text is always written with a decimal point, whatever decimal_comma says.
    """


def _cell_text(value: object) -> str:
    """A spreadsheet cell's value as the text a CSV export would hold."""
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return ""
    if isinstance(value, bool):
        return "TRUE" if value else "FALSE"
    if isinstance(value, float):
        return CellNumber(str(int(value)) if value.is_integer() and abs(value) < 1e15 else repr(value))
    if isinstance(value, int):
        return CellNumber(value)
    if hasattr(value, "isoformat"):
        return value.isoformat()
    return str(value)


def read_sheets(path: Path, found: dict | None = None) -> tuple[list[tuple[str, list[list[str]]]], str]:
    """Every sheet of a CSV or spreadsheet file as (sheet name, rows of text); blank rows kept.

    A CSV is one sheet named "". Spreadsheets (.xlsx .xlsm .xls .xlsb .ods) are read by calamine.

    Returns:
        The sheets and the file's encoding ("spreadsheet" for a workbook); found, when given,
        receives the CSV's delimiter ("" for a workbook).

    Raises:
        NotText: a CSV not decodable by encodings.decode, or a NUL character in any cell (with its row).
    """
    if path.suffix.lower() in SPREADSHEETS:
        if path.suffix.lower() in ZIPPED + (".ods",):
            check_workbook(path)
        else:
            check_csv(path)  # .xls is not a zip: its size is what can be checked before reading
        frames = pd.read_excel(path, engine="calamine", header=None, dtype=object, sheet_name=None)
        sheets = []
        for name, frame in frames.items():
            rows = [[_cell_text(v) for v in row] for row in frame.itertuples(index=False)]
            for i, row in enumerate(rows):
                if any("\x00" in x for x in row):
                    raise NotText("holds a NUL character in a cell; remove it and save again", i + 1)
            sheets.append((str(name), rows))
        return sheets, "spreadsheet"
    check_csv(path)
    decoded = decode(path.read_bytes())
    text = decoded.text
    # The delimiter the header shows most; a title block above it may hold none.
    lines = [line for line in islice((x for x in text.splitlines() if x.strip()), MAX_TITLE_ROWS + 1)]
    delimiter = max((",", ";", "\t", "|"), key=lambda d: max((line.count(d) for line in lines), default=0))
    if found is not None:
        found["delimiter"] = delimiter
    return [("", read_delimited(text, delimiter))], decoded.encoding


_SET_ASIDE = re.compile(r"archive|old|backup|copy|previous|template|draft|example", re.I)
_YEAR = re.compile(r"(?<!\d)(?:19|20)\d{2}(?!\d)")


def pick_sheet(sheets: list[tuple[str, list[list[str]]]], table: c.TableRule, settings: Settings
               ) -> tuple[str, list[list[str]], int | None, str | None]:
    """The sheet that holds table: the one whose header matches most required columns.

    When several match equally, the evidence in their names decides: a sheet named as set aside
    (archive, old, backup, copy, template...) yields to the others, then the latest year named wins.

    Returns:
        (sheet name, rows, header row's 0-based index or None when every sheet is empty, and None
        or the message refusing a choice the evidence cannot make).
    """
    scored = []
    for name, rows in sheets:
        start, score = find_header(rows, table, settings)
        if start is not None:
            scored.append((score, name, rows, start))
    if not scored:
        return (sheets[0][0], sheets[0][1], None, None) if sheets else ("", [], None, None)
    best = max(s for s, *_ in scored)
    tied = [t for t in scored if t[0] == best]
    if len(tied) > 1:
        kept = [t for t in tied if not _SET_ASIDE.search(t[1])] or tied
        years = [max(map(int, _YEAR.findall(t[1])), default=0) for t in kept]
        if len(kept) > 1 and max(years) and years.count(max(years)) == 1:
            kept = [kept[years.index(max(years))]]
        if len(kept) > 1:
            names = ", ".join(f"'{t[1]}'" for t in kept)
            return kept[0][1], kept[0][2], kept[0][3], (f"the sheets {names} could each hold this table (the same "
                                                         "columns) and nothing in their names says which is current; "
                                                         "keep one sheet in the file, or rename the other as an archive")
        tied = kept
    return tied[0][1], tied[0][2], tied[0][3], None


_SIGNED = {"margin"}  # a product sold below its costs has a negative margin before ads
_NON_BLANK = {"product_id", "campaign", "target", "search_term", "term", "match_type", "state"}


def _parse_cell(rule: c.ColumnRule, text: str, settings: Settings, comma: bool | None = None,
                strict: bool = False) -> tuple[object, str | None]:
    """The value of one cell, or an error message saying what was expected.

    comma: the column's decimal comma as the file's evidence decided it (None: decimal_comma);
    strict: the column is undecided, so a value such as 3,911 is refused with both readings.
    """
    t = text.strip()
    if rule.kind == c.TEXT:
        if not t and rule.name in _NON_BLANK:
            return "", "is blank; expected a value"
        if (problem := text_problem(text)) is not None:
            return "", problem
        return (t if rule.name in ("product_id", "campaign", "ad_group", "location") else str(text)), None
    if rule.kind in c.CHOICES:
        synonyms, expected = c.CHOICES[rule.kind]
        value = synonyms.get(c.header_key(t)) if t != "-" else synonyms.get("-")
        if value is None:
            return "", f"'{text}' is not one of {expected}"
        return value, None
    if rule.name == "unit_cost" and not any(ch.isdigit() for ch in t):
        return math.nan, None  # blank or "n/a": missing, never zero (reported per product by _missing_costs)
    if not t:
        if rule.name == "lead_time_days":
            return math.nan, None  # a lead time not given is unknown, never 0 days
        if rule.kind in (c.COUNT, c.MONEY):
            return 0.0, None
        if rule.name == "bid":
            return math.nan, "is blank; expected the current bid"
        return math.nan, None
    if isinstance(text, CellNumber):
        comma = False
    else:
        comma = settings.decimal_comma if comma is None else comma
        if strict and rule.kind != c.COUNT and separator_form(t) == "ambiguous":
            return math.nan, (f"'{text}' could be {both_readings(t)} and nothing in the file says which; set "
                              "decimal_comma = true or false in settings.toml, or write it without the separator "
                              "or with more decimals")
    try:
        if rule.kind == c.COUNT:
            value, had_percent = (float(t) if isinstance(text, CellNumber) else parse_count(t, comma)), False
        else:
            value, had_percent = parse_number(t, comma, money=rule.kind != c.PERCENT)
    except NotANumber as exc:
        if rule.kind == c.COUNT:
            return math.nan, (f"'{text}' is not a whole number; expected a count such as 1234 or 1,234"
                              + (f" ({exc.hint})" if exc.hint else ""))
        expected = {c.MONEY: "an amount such as 1234.56 (a currency sign or code such as $ or USD may stand "
                             "before or after it)",
                    c.PERCENT: "a percentage such as 30% or 0.30", c.AMOUNT: "an amount such as 0.85"}[rule.kind]
        return math.nan, f"'{text}' is not a number; expected {expected}" + (f" ({exc.hint})" if exc.hint else "")
    if abs(value) >= MAX_MAGNITUDE:
        return math.nan, (f"'{text}' is too large; expected less than {MAX_MAGNITUDE:,.0f} "
                          "(a spreadsheet keeps 15 digits)")
    if value < 0 and rule.name not in _SIGNED:
        return value, f"'{text}' is negative; expected zero or more"
    if rule.kind == c.COUNT and not float(value).is_integer():
        return value, f"'{text}' is not a whole number"
    if rule.kind == c.PERCENT and not had_percent and abs(value) > 1:
        value = value / 100  # a bare 30 in a percent column means 30%
    return value, None


def with_dates(table: c.TableRule) -> c.TableRule:
    """The table's rule with the optional date columns its exports may carry."""
    extra = tuple(r for r in DATE_RULES if r.name in DATED_TABLES.get(table.name, ()))
    return c.TableRule(table.name, table.columns + extra, table.required, table.label) if extra else table


def _read_dates(frame: pd.DataFrame, texts: dict[str, list[str]], headers: dict[str, str], order: str
                ) -> list[Problem]:
    """Add _start and _end (each row's first and last day) to frame from its date columns' texts."""
    names = list(texts)
    n = len(frame)
    every, bad = parse_dates([t for name in names for t in texts[name]], order)  # one day/month order per file
    parsed = {name: every[k * n:(k + 1) * n] for k, name in enumerate(names)}
    problems = grouped_problems([Problem(frame.attrs["file"], int(frame["_row"].iloc[i % n]), headers[names[i // n]],
                                         message) for i, message in bad])
    first = parsed.get("date") or parsed.get("start_date") or parsed.get("end_date")
    last = parsed.get("date") or parsed.get("end_date") or first
    frame["_start"], frame["_end"] = pd.Series(first, dtype=object), pd.Series(last, dtype=object)
    for row, start, end in zip(frame["_row"], frame["_start"], frame["_end"]):
        if start is not None and end is not None and end < start:
            problems.append(Problem(frame.attrs["file"], int(row), headers.get("end_date"),
                                    f"the end date {end} is before the start date {start}"))
    return problems


def _decide_numbers(body: list[list[str]], found: dict[str, int], table: c.TableRule, settings: Settings,
                    delimiter: str) -> Decision:
    """How the file's amount and percent columns write decimals, decided from their cells (evidence.py)."""
    columns = {r.name: found[r.name] for r in table.columns
               if r.kind in (c.MONEY, c.PERCENT, c.AMOUNT) and r.name in found}
    def cells(i: int):
        return (row[i] for row in body if i < len(row) and not isinstance(row[i], CellNumber))

    texts = {name: cells(i) for name, i in columns.items()}
    setting = settings.decimal_comma if "decimal_comma" in settings.given else None
    return decide_separators(texts, delimiter, setting)


def _comma_note(body: list[list[str]], first_row: int, found: dict[str, int], header: list[str], numbers: Decision,
                file: str) -> list[Problem]:
    """Say plainly that amounts were read with a decimal comma: the first such value and what decided it.

    A value such as 2708,10 shows its decimal comma; one such as 2708,100 could group thousands, and is
    named with both readings unless decimal_comma in settings.toml decided it (that has its own note).
    """
    for name, comma in numbers.comma.items():
        if not comma:
            continue
        i = found[name]
        for n, row in enumerate(body):
            t = row[i] if i < len(row) else ""
            if isinstance(t, CellNumber):
                continue
            form = separator_form(t)
            if form == COMMA or (form == "ambiguous" and name not in numbers.by_setting):
                value, _ = parse_number(t, decimal_comma=True)
                shown = "" if "%" in t else f" is read as {value:g}"
                if form == "ambiguous":
                    shown += (f"; it could be {both_readings(t)}: set decimal_comma = true or false in settings.toml "
                              "to say which")
                elif "the file's values" not in numbers.why:
                    shown += "; if this file writes commas between thousands, set decimal_comma = false in settings.toml"
                return [Problem(file, first_row + n + 1, header[i],
                                f"amounts are read with a {numbers.why}: '{t.strip()}'{shown}", WARNING)]
    return []


def _map_visible_first(header: list[str], hidden: set[int], table: c.TableRule, settings: Settings, file: str,
                       row: int) -> tuple[dict[str, int], list[Problem]]:
    """map_headers on the visible columns; hidden ones only where no visible column holds a required field,
    each named in a note."""
    matched = [j for j in hidden if j < len(header) and str(header[j]).strip()]
    if not matched:
        return map_headers(header, table, settings, file, row)
    visible = [h if j not in hidden else "" for j, h in enumerate(header)]
    found, problems = map_headers(visible, table, settings, file, row)
    everything, all_problems = map_headers(header, table, settings, file, row)
    used = {n: j for n, j in everything.items() if j in hidden and n not in found}
    errors = sum(p.severity == ERROR for p in problems)
    if errors and sum(p.severity == ERROR for p in all_problems) < errors:
        found, problems = everything, all_problems
        return found, problems + [Problem(file, row, header[j], f"this column is hidden in the sheet; read as "
                                                                 f"'{n}' since no visible column holds it", WARNING)
                                  for n, j in used.items() if found.get(n) == j]
    skipped = ", ".join(f"'{header[j]}'" for j in sorted(matched))
    return found, problems + ([Problem(file, row, None, f"skipped the hidden column(s) {skipped}: visible columns "
                                                        "hold this table's fields", WARNING)] if used or any(
        j in everything.values() for j in matched) else [])


def _skip_hidden_rows(records: list[dict], raw: list[tuple], hidden: set[int], table: c.TableRule, file: str,
                      problems: list[Problem]) -> tuple[list[dict], list[tuple]]:
    """Hidden catalog rows whose product a visible row also holds are skipped (the visible one is current);
    other hidden rows are read. Either way a note names them."""
    rows = [r["_row"] for r in records if r["_row"] in hidden]
    if not rows:
        return records, raw
    visible = {r.get("product_id") for r in records if r["_row"] not in hidden}
    drop = {r["_row"] for r in records if r["_row"] in hidden and table.name == "catalog"
            and r.get("product_id") in visible}
    kept = [k for k, r in enumerate(records) if r["_row"] not in drop]
    read = [r for r in rows if r not in drop]
    if drop:
        problems.append(Problem(file, min(drop), None, f"skipped the hidden row(s) {', '.join(map(str, sorted(drop)))}: "
                                                       "a visible row holds the same product", WARNING))
    if read:
        problems.append(Problem(file, read[0], None, f"the row(s) {', '.join(map(str, read[:10]))}"
                                                     f"{', ...' if len(read) > 10 else ''} are hidden in the sheet; "
                                                     "read as data (delete them if they are not)", WARNING))
    return [records[k] for k in kept], [raw[k] for k in kept]


def _repeats_header(row: list[str], header: list[str], found: dict[str, int]) -> bool:
    """Whether a data row holds the header's text in every column read (at least two), case and spaces aside."""
    columns = [col for col in found.values() if col is not None and col < len(header) and header[col].strip()]
    return len(columns) >= 2 and all(col < len(row) and row[col].strip().casefold() == header[col].strip().casefold()
                                     for col in columns)


def _layout_notes(file: str, sheets: list, sheet: str, rows: list[list[str]], start: int) -> list[Problem]:
    """Notes saying which sheet was read and which row held the header, when not the obvious ones."""
    notes = []
    if len(sheets) > 1:
        notes.append(Problem(file, None, None, f"read the sheet '{sheet}', the one holding this table's columns "
                                               f"(the file has {len(sheets)} sheets)", WARNING))
    first = next(i for i, r in enumerate(rows) if any(x.strip() for x in r))
    if start != first:
        notes.append(Problem(file, start + 1, None, f"the header is row {start + 1}; rows {first + 1} to {start} "
                                                    "above it were skipped as a title or notes block", WARNING))
    return notes


def read_table(path: Path, table: c.TableRule, settings: Settings) -> tuple[pd.DataFrame | None, list[Problem]]:
    """Read and validate one table's file."""
    file = path.name
    try:
        meta: dict = {}
        sheets, encoding = read_sheets(path, meta)
    except NotText as exc:
        return None, [Problem(file, exc.row, None, str(exc))]
    except UnsafeWorkbook as exc:
        return None, [Problem(file, None, None, str(exc))]
    except csv.Error as exc:
        return None, [Problem(file, None, None, f"not a readable CSV file: {exc}")]
    except MemoryError:
        return None, [Problem(file, None, None, "not enough memory to read it; export a shorter period")]
    except Exception as exc:  # calamine raises its own types for broken workbooks
        return None, [Problem(file, None, None, f"not a readable spreadsheet: {exc}")]
    sheet, rows, start, undecided = pick_sheet(sheets, with_dates(table), settings)
    if start is None:
        return None, [Problem(file, None, None, "the file is empty; expected a header row and data rows")]
    if undecided:
        return None, [Problem(file, None, None, undecided)]
    header = rows[start]
    if start > 0 and (joined := two_row_header(rows[start - 1], header, with_dates(table), settings)):
        header = joined
    if path.suffix.lower() in (".xlsx", ".xlsm") and (empty := formulas_without_values(path, sheet)):
        return None, [Problem(file, None, None, f"the cells {', '.join(empty[:5])}{', ...' if len(empty) > 5 else ''} of "
                                                f"the sheet '{sheet}' hold formulas with no stored value ({len(empty)} "
                                                "cell(s)): the file was saved by a program that does not calculate, "
                                                "so their values are unknown. Open it in a spreadsheet program and "
                                                "save it again, or type the values")]
    hidden_columns, hidden_rows = (hidden_parts(path, sheet) if path.suffix.lower() in (".xlsx", ".xlsm")
                                   else (set(), set()))
    found, problems = _map_visible_first(header, hidden_columns, with_dates(table), settings, file, start + 1)
    problems = _layout_notes(file, sheets, sheet, rows, start) + problems
    if header is not rows[start]:
        problems.append(Problem(file, start + 1, None, f"rows {start} and {start + 1} were read as one header (the "
                                                       "upper row's labels group the columns below them): "
                                                       + ", ".join(f"'{h}'" for h in header if h), WARNING))
    dates = {n: found.pop(n) for n in [r.name for r in DATE_RULES] if n in found}
    if any(p.severity == ERROR for p in problems):
        return None, problems
    problems += currency_warnings(header, found, table, settings, file, start + 1)
    data_rows = sum(1 for r in rows[start + 1:] if any(x.strip() for x in r))
    too_long = data_rows > MAX_SHEET_ROWS - 1
    if too_long and table.name != "search_terms":
        return None, [Problem(file, None, None, f"has {data_rows:,} data rows; a sheet holds at most "
                                                f"{MAX_SHEET_ROWS - 1:,} below its header, so the workbook cannot "
                                                "hold this table. Export a shorter period")]
    numbers = _decide_numbers(rows[start + 1:], found, table, settings, meta.get("delimiter", ""))
    problems += _comma_note(rows[start + 1:], start + 1, found, header, numbers, file)
    marks: dict[str, dict[str, int]] = {}  # money column -> currency mark -> first row
    plan = [(rule, found.get(rule.name), numbers.comma.get(rule.name), rule.name in numbers.undecided,
             rule.kind in (c.MONEY, c.AMOUNT)) for rule in table.columns]
    settled: list[tuple[int, str, str, float]] = []  # lone-group values read by decimal_comma alone
    records: list[dict] = []
    date_texts: dict[str, list[str]] = {n: [] for n in dates}
    raw: list[tuple] = []  # each read row's cells as written, for finding rows pasted twice
    running, skipped, bad_cells = RunningSums(table, found), [], []
    for i in range(start + 1, len(rows)):
        row = rows[i]
        if not any(x.strip() for x in row):
            continue
        if _repeats_header(row, header, found):
            problems.append(Problem(file, i + 1, None, "this row repeats the header row: two exports pasted into one "
                                                       "file? Delete the row, and keep one export per period (the "
                                                       "rows below it may repeat rows above it, or cover other days)"))
            continue
        record: dict[str, object] = {"_row": i + 1}
        cell_problems = []
        for rule, col, comma, strict, money in plan:
            text = row[col] if col is not None and col < len(row) else ""
            value, message = _parse_cell(rule, text, settings, comma, strict)
            if (money and message is None and text and not (text[:1].isdigit() and text[-1:].isdigit())
                    and value == value):
                mark = currency_mark(text)
                if mark:
                    marks.setdefault(rule.name, {}).setdefault(mark, i + 1)
            if (rule.name in numbers.by_setting and message is None and rule.kind != c.COUNT
                    and separator_form(text) == "ambiguous"):
                settled.append((i + 1, header[col], text.strip(), value))
            if message:
                cell_problems.append(Problem(file, i + 1, header[col] if col is not None else rule.name, message))
            record[rule.name] = value
        label = totals_label(row, table, found)
        if label is not None:
            differs = running.mismatch(record, row, found)
            if differs is None:
                skipped.append(i + 1)
                continue
            if label == "total":
                problems.append(Problem(file, i + 1, None, f"the row says total but is not the sum of the rows "
                                                           f"above it ({differs}); read as data it would be "
                                                           "counted twice. Remove it"))
                continue
        bad_cells.extend(cell_problems)
        running.add(record)
        for name, col in dates.items():
            date_texts[name].append(row[col] if col < len(row) else "")
        records.append(record)
        raw.append(tuple(row))
    problems.extend(grouped_problems(bad_cells))
    if settled:
        row, column, text, value = settled[0]
        problems.append(Problem(file, row, column, f"read {len(settled)} value(s) such as '{text}' as {value:g} "
                                                   f"because settings.toml has decimal_comma = "
                                                   f"{'true' if settings.decimal_comma else 'false'}; nothing in the "
                                                   "file shows its decimal separator, so check them (rows "
                                                   + ", ".join(str(r) for r, *_ in settled[:5])
                                                   + (", ..." if len(settled) > 5 else "") + ")", WARNING))
    if hidden_rows:
        records, raw = _skip_hidden_rows(records, raw, hidden_rows, table, file, problems)
    currency, mixed = currency_of(file, marks, header, found, table)
    problems.extend(mixed)
    if skipped:
        problems.append(Problem(file, skipped[0], None, f"skipped {len(skipped)} totals row(s) (row "
                                + ", ".join(map(str, skipped)) + "): each is the sum of the rows above it",
                                WARNING))
    names = ["_row"] + [r.name for r in table.columns]
    frame = pd.DataFrame.from_records(records, columns=names)
    for rule in table.columns:
        if rule.kind in c.NUMERIC_KINDS:
            frame[rule.name] = frame[rule.name].astype(float)
        else:
            frame[rule.name] = frame[rule.name].astype(object)
    frame["_row"] = frame["_row"].astype(int)
    header_of = {rule.name: (header[found[rule.name]] if rule.name in found else rule.name) for rule in table.columns}
    frame.attrs["headers"] = header_of
    frame.attrs["file"] = file
    frame.attrs.update(layout=[p.message for p in problems if p.severity == WARNING and
                               ("hidden" in p.message or "read as one header" in p.message)],
                       currency=currency, numbers=numbers.why, encoding=encoding, header_row=start + 1, sheet=sheet, totals=len(skipped), rows_read=len(records),
                       columns={n: header[i] for n, i in {**found, **dates}.items()})
    if dates:
        problems.extend(_read_dates(frame, date_texts, {n: header[i] for n, i in dates.items()}, settings.date_order))
    frame.attrs["period"] = None
    stated, where, message = (declared_period(rows[:start], path.stem, settings.date_order)
                              if table.name in DATED_TABLES else (None, "", None))
    if message:
        problems.append(Problem(file, None, None, f"{where} states a period that does not read: {message}"))
    if not any(p.severity == ERROR for p in problems):  # a bad cell would make the sums meaningless
        repeats = repeated_rows(table.name, frame, raw)
        if not repeats:
            frame, repeats = combine_repeats(table.name, frame, bool(dates))
        problems.extend(repeats)
        if any(p.severity == ERROR for p in repeats):
            return None, problems
        frame.attrs["period"], frame.attrs["period_source"] = _period_of(frame, stated, where, problems)
    frame = frame.drop(columns=[n for n in ("_start", "_end") if n in frame])
    if is_legacy(encoding):
        problems.append(Problem(file, None, None, f"read as {encoding}: the file is not valid UTF-8 and holds no "
                                                  "UTF-8 text, so it was saved by an older Windows program; check "
                                                  "its accented text", WARNING))
    if too_long:
        # Check the rows as written before merging, which could hide a row's orders > clicks.
        problems.extend(_row_checks(table.name, frame) + orders_above_clicks(table.name, frame, set(), settings))
        if any(p.severity == ERROR for p in problems):
            return None, problems
        attrs = dict(frame.attrs)
        frame, problem = _merge_search_terms(frame, file, data_rows)
        frame.attrs.update(attrs)
        problems.append(problem)
        if problem.severity == ERROR:
            return None, problems
    return frame, problems


def _period_of(frame: pd.DataFrame, stated: Period | None, where: str, problems: list[Problem]
               ) -> tuple[Period | None, str]:
    """The file's period and where it was read: stated (title or file name) or from its dated rows.

    Dated rows outside a stated period are an error (problems gains it)."""
    rows = table_period(frame)
    if stated is None:
        return rows, ("" if rows is None else "the dates in its rows")
    if rows is not None and (rows.start < stated.start or rows.end > stated.end):
        problems.append(Problem(frame.attrs["file"], None, None,
                                f"{where} states {stated} but its rows are dated {rows}; download the export again "
                                "for one date range"))
    return stated, where


def _merge_search_terms(frame: pd.DataFrame, file: str, data_rows: int) -> tuple[pd.DataFrame, Problem]:
    """search_terms longer than a sheet: rows repeating campaign, ad group, target, match type and
    search term become one, their metrics summed (nothing is dropped).

    Returns:
        The merged frame (each row keeps the first source row of its group) and a WARNING
        saying how many rows were merged, or an ERROR when even merged it does not fit.
    """
    keys = list(SEARCH_TERM_KEYS)
    grouped = frame.groupby(keys, sort=False, dropna=False)
    merged = grouped[list(SEARCH_TERM_SUMS)].sum()
    merged["_row"] = grouped["_row"].min()
    merged = merged.reset_index().sort_values("_row", kind="stable").reset_index(drop=True)
    for name in ("spend", "ad_sales"):
        merged[name] = merged[name].round(9)  # the float noise of summing cents, not the cents
    merged = merged[list(frame.columns)]
    for name in frame.columns:
        merged[name] = merged[name].astype(frame[name].dtype)
    limit = MAX_SHEET_ROWS - 1
    if len(merged) > limit:
        return merged, Problem(file, None, None,
                               f"has {data_rows:,} data rows, {len(merged):,} even after merging rows that repeat "
                               f"the same campaign, ad group, target, match type and search term; a sheet holds at "
                               f"most {limit:,} below its header. Export a shorter period")
    return merged, Problem(file, None, None,
                           f"has {data_rows:,} data rows, more than a sheet holds ({limit:,}); merged "
                           f"{data_rows - len(merged):,} rows that repeat the same campaign, ad group, target, match "
                           f"type and search term into {len(merged):,} rows, summing impressions, clicks, spend, "
                           "ad sales and orders", WARNING)


def _row_checks(name: str, frame: pd.DataFrame) -> list[Problem]:
    """Checks across the cells of a row, and across rows, within one table."""
    problems: list[Problem] = []
    file, headers = frame.attrs["file"], frame.attrs["headers"]
    if name == "catalog":
        problems.extend(_missing_costs(frame))
        dup = frame[frame["product_id"].duplicated(keep=False) & (frame["product_id"] != "")]
        for pid, group in dup.groupby("product_id", sort=True):
            rows = ", ".join(str(x) for x in group["_row"])
            for r in group["_row"].iloc[1:]:
                problems.append(Problem(file, int(r), headers["product_id"],
                                        f"product '{pid}' appears more than once (rows {rows}); "
                                        "expected one row per product"))
    if name == "inventory":
        problems.extend(_stock_rows(frame))
    return problems


def _stock_rows(frame: pd.DataFrame) -> list[Problem]:
    """The rule for an inventory's repeated products: rows of one product at different locations (a location
    column) are per-warehouse stock, summed per product on Profit (noted); rows repeating a product with no
    location column, or a product and location, are refused, since which row holds the stock cannot be known."""
    file, headers = frame.attrs["file"], frame.attrs["headers"]
    located = "location" in frame.attrs.get("columns", {})
    keys = ["product_id", "location"] if located else ["product_id"]
    repeated = frame[frame.duplicated(keys, keep=False) & (frame["product_id"] != "")]
    problems = []
    for key, group in repeated.groupby(keys, sort=True):
        key = key if isinstance(key, tuple) else (key,)
        pid, where = key[0], (f" at the location '{key[1]}'" if located else "")
        rows = ", ".join(str(x) for x in group["_row"])
        problems.append(Problem(file, int(group["_row"].iloc[1]), headers["product_id"],
                                f"product '{pid}'{where} appears more than once (rows {rows}) and nothing says which "
                                "row holds its stock; keep one row per product" +
                                (" and location" if located else ", or export with a location (warehouse) column "
                                                                 "when each row is one warehouse's stock")))
    spread = frame.loc[frame["product_id"].duplicated(keep=False) & (frame["product_id"] != ""), "product_id"]
    if located and not problems and len(spread):
        problems.append(Problem(file, None, None, f"{spread.nunique()} product(s) are held at several locations "
                                                  f"(first: '{spread.iloc[0]}'); their units are summed per "
                                                  "product", WARNING))
    return problems


def _missing_costs(frame: pd.DataFrame) -> list[Problem]:
    """A warning per catalog product whose unit cost is blank or not a number and whose margin is not given."""
    missing = frame.loc[frame["unit_cost"].isna() & frame["margin"].isna() & (frame["product_id"] != "")]
    return grouped_problems([Problem(frame.attrs["file"], int(row), frame.attrs["headers"]["unit_cost"],
                                     f"product '{pid}' has no unit cost (blank or not a number), so it is built with "
                                     "its margin blank, as a product absent from the catalog; fill the cost on "
                                     "in_catalog (or in the catalog file) to see its profit", WARNING)
                             for row, pid in zip(missing["_row"], missing["product_id"])])


def _cross_checks(tables: dict[str, pd.DataFrame | None]) -> list[Problem]:
    """Checks between tables: products the catalog lacks, products sold or advertised the inventory lacks."""
    problems: list[Problem] = _unstocked(tables)
    catalog = tables.get("catalog")
    if catalog is None:
        return problems
    known = set(catalog["product_id"])
    for name in ("store_sales", "ad_products"):
        frame = tables.get(name)
        if frame is None:
            continue
        missing = frame.loc[~frame["product_id"].isin(known) & (frame["product_id"] != "")]
        for pid, group in missing.groupby("product_id", sort=True):
            problems.append(Problem(frame.attrs["file"], int(group["_row"].iloc[0]), frame.attrs["headers"]["product_id"],
                                    f"product '{pid}' is not in the catalog; it is built with its margin blank "
                                    "(add it to the catalog to see its profit)", WARNING))
    return problems


def _unstocked(tables: dict[str, pd.DataFrame | None]) -> list[Problem]:
    """A note naming the products sold or advertised that an inventory export does not list: their stock is
    unknown, so their Days of cover is blank and they are never read as low on stock."""
    stock = tables.get("inventory")
    if stock is None:
        return []
    known = set(stock["product_id"])
    missing = sorted({p for name in ("store_sales", "ad_products") if tables.get(name) is not None
                      for p in tables[name]["product_id"] if p != "" and p not in known})
    if not missing:
        return []
    listed = ", ".join(f"'{p}'" for p in missing[:5]) + (", ..." if len(missing) > 5 else "")
    return [Problem(stock.attrs["file"], None, None, f"{len(missing)} product(s) sold or advertised are not in it "
                                                     f"({listed}): their stock is unknown, so Days of cover is "
                                                     "blank and they are never read as low on stock", WARNING)]


def _unmatched_files(folder: Path, used: set[Path], settings: Settings) -> list[Problem]:
    """A note for each export-like file in folder that no table read, naming the table it most resembles."""
    notes = []
    for path in sorted(p for p in folder.iterdir() if p.is_file() and p.suffix.lower() in SUFFIXES and p not in used):
        built = built_by_us(path)
        if built is not None:
            notes.append(Problem(path.name, None, None, "was not read: it " + our_workbook_message(built), WARNING))
            continue
        try:
            sheets = read_sheets(path)[0] if path.stat().st_size <= MAX_STRAY_BYTES else []
        except Exception:  # an unreadable stray file is only worth its name
            sheets = []
        best, score = None, 0
        for table in c.TABLES:
            for _, rows in sheets:
                s = find_header(rows, table, settings)[1]
                if s > score:
                    best, score = table, s
        guess = (f"; it looks most like '{best.name}' ({best.label}: {score} of "
                 f"{sum(r.required for r in best.columns)} required columns). Name it {best.name}{path.suffix} "
                 f"or add to settings.toml: [files] {best.name} = \"{path.name}\"") if best else ""
        notes.append(Problem(path.name, None, None, "was not read: its name matches no table" + guess, WARNING))
    return notes


def read_inputs(folder: Path, settings: Settings, besides: tuple[Path, ...] = ()) -> tuple[Inputs, list[Problem]]:
    """Read every table of the contract from folder (besides: files the command reads otherwise, not strays).

    Returns:
        The inputs (tables that could not be read are None) and all problems found.
    """
    folder = Path(folder)
    if not folder.is_dir():
        return Inputs({}), [Problem(str(folder), None, None, "the input folder does not exist")]
    tables: dict[str, pd.DataFrame | None] = {}
    sources: dict[str, Path] = {}
    checksums: dict[str, str] = {}
    encodings: dict[str, str] = {}
    problems: list[Problem] = []
    refused: set[Path] = set()
    for table in c.TABLES:
        path, problem = find_file(folder, table, settings)
        if problem:
            problems.append(problem)
        built = built_by_us(path) if path is not None else None
        if built is not None:  # a workbook of ours is never read as an export
            problems.append(Problem(path.name, None, None, our_workbook_message(built)))
            refused.add(path)
        if path is None or built is not None:
            tables[table.name] = None
            continue
        sources[table.name] = path
        with open(path, "rb") as fh:
            checksums[table.name] = hashlib.file_digest(fh, "sha256").hexdigest()
        frame, found = read_table(path, table, settings)
        problems.extend(found)
        if frame is not None:
            problems.extend(_row_checks(table.name, frame))
            encodings[table.name] = frame.attrs["encoding"]
        tables[table.name] = frame
    viewed = view_through_campaigns(tables)
    for name, frame in tables.items():
        if frame is not None and "orders" in frame and "clicks" in frame:
            problems.extend(orders_above_clicks(name, frame, viewed, settings))
    problems.extend(same_product_ids(tables))
    problems.extend(_cross_checks(tables))
    elsewhere = {folder / b.name for b in besides if b.exists() and b.resolve().parent == folder.resolve()}
    problems.extend(_unmatched_files(folder, set(sources.values()) | refused | elsewhere, settings))
    periods = {sources[n].name: f.attrs["period"] for n, f in tables.items()
               if f is not None and f.attrs.get("period") is not None}
    undated = [sources[n].name for n, f in tables.items()
               if f is not None and n in DATED_TABLES and n != "campaigns" and f.attrs.get("period") is None]
    period, found = overall_period(periods, undated, settings.period_mismatch)
    problems.extend(found)
    currency, found = account_currency(tables, settings)
    said = any("currency other than currency_symbol" in p.message for p in problems)  # a header's unit said it
    problems.extend(p for p in found if p.severity == ERROR or not said)
    return Inputs(tables, sources, checksums, encodings, period, currency), problems

