"""Readers: a folder of CSV or .xlsx exports in, validated frames and problem records out.

Every cell is read as text first, so that a bad cell is reported with its file, row
and column instead of being silently coerced. Nothing here raises on bad data.
"""
from __future__ import annotations

import csv
import hashlib
import math
from dataclasses import dataclass, field
from pathlib import Path

import pandas as pd

from . import contract as c
from .errors import ERROR, WARNING, Problem
from .guard import UnsafeWorkbook, check_csv, check_workbook, read_delimited, text_problem
from .numbers import MAX_MAGNITUDE, NotANumber, parse_number
from .settings import Settings

SUFFIXES = (".csv", ".tsv", ".txt", ".xlsx", ".xlsm")
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

    def get(self, name: str) -> pd.DataFrame | None:
        """The frame of table name, or None when the file was not given."""
        return self.tables.get(name)


def find_file(folder: Path, table: c.TableRule, settings: Settings) -> tuple[Path | None, Problem | None]:
    """The file that holds table in folder (by settings [files] or by its name)."""
    if table.name in settings.files:
        path = folder / settings.files[table.name]
        if not path.is_file():
            return None, Problem(str(path.name), None, None,
                                 f"settings.toml [files] names this file for '{table.name}' but it does not exist")
        return path, None
    want = c.file_key(table.name)
    found = sorted(p for p in folder.iterdir()
                   if p.is_file() and p.suffix.lower() in SUFFIXES and c.file_key(p.stem) == want)
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


_BOMS = ((b"\xff\xfe\x00\x00", "utf-32"), (b"\x00\x00\xfe\xff", "utf-32"),
         (b"\xff\xfe", "utf-16"), (b"\xfe\xff", "utf-16"))


def _decode(data: bytes) -> str:
    """Text of a CSV file: UTF-16/32 with a BOM, UTF-8 with or without BOM, else cp1252.

    Raises:
        UnicodeDecodeError: none of these reads the bytes.
        NotText: the bytes decode but hold NUL characters.
    """
    for bom, codec in _BOMS:
        if data.startswith(bom):
            return data.decode(codec)  # the codec reads and drops its BOM
    try:
        text = data.decode("utf-8-sig")
    except UnicodeDecodeError:
        text = data.decode("cp1252")
    if "\x00" in text:
        raise NotText("holds NUL characters, so it is not a text export (UTF-16 without a byte-order mark, or "
                      "a binary file); save it as a UTF-8 CSV")
    return text


class NotText(ValueError):
    """A CSV file whose bytes are not text in any encoding the readers accept."""


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


def read_rows(path: Path) -> list[list[str]]:
    """All rows of a CSV or .xlsx file as lists of text, header first; blank rows kept."""
    if path.suffix.lower() in (".xlsx", ".xlsm"):
        check_workbook(path)
        frame = pd.read_excel(path, engine="calamine", header=None, dtype=object)
        return [[_cell_text(v) for v in row] for row in frame.itertuples(index=False)]
    check_csv(path)
    text = _decode(path.read_bytes())
    first = next((line for line in text.splitlines() if line.strip()), "")
    delimiter = max((",", ";", "\t"), key=first.count) if first else ","
    return read_delimited(text, delimiter)


def map_headers(header: list[str], table: c.TableRule, settings: Settings, file: str
                ) -> tuple[dict[str, int], list[Problem]]:
    """Which file column holds each canonical column: explicit mapping, then name, then synonym."""
    keys = [c.header_key(h) for h in header]
    explicit = settings.columns.get(table.name, {})
    found: dict[str, int] = {}
    problems: list[Problem] = []
    for rule in table.columns:
        if rule.name in explicit:
            want = c.header_key(explicit[rule.name])
            if want in keys:
                found[rule.name] = keys.index(want)
            else:
                problems.append(Problem(file, 1, explicit[rule.name],
                                        f"settings.toml maps '{rule.name}' to this header, but the file has no such column"))
            continue
        own = c.header_key(rule.name)
        if own in keys:
            found[rule.name] = keys.index(own)
            if keys.count(own) > 1:
                names = ", ".join(f"'{header[i]}'" for i, k in enumerate(keys) if k == own)
                problems.append(Problem(file, 1, header[found[rule.name]],
                                        f"several columns could be '{rule.name}' ({names}); keep one, or map one in "
                                        f"settings.toml [columns.{table.name}]"))
            continue
        hits = [i for i, k in enumerate(keys) if k in rule.synonyms and i not in found.values()]
        if len(hits) == 1:
            found[rule.name] = hits[0]
        elif len(hits) > 1:
            names = ", ".join(f"'{header[i]}'" for i in hits)
            problems.append(Problem(file, 1, header[hits[0]],
                                    f"several columns could be '{rule.name}' ({names}); map one in settings.toml "
                                    f"[columns.{table.name}]"))
        elif rule.required:
            also = ", ".join(rule.synonyms[:5])
            problems.append(Problem(file, 1, rule.name,
                                    f"missing column '{rule.name}'" + (f" (also accepted: {also})" if also else "")
                                    + f"; or map it in settings.toml [columns.{table.name}]"))
    return found, problems


_SIGNED = {"margin"}  # a product sold below its costs has a negative margin before ads
_NON_BLANK = {"product_id", "campaign", "target", "search_term", "term", "match_type", "state"}


def _parse_cell(rule: c.ColumnRule, text: str, settings: Settings) -> tuple[object, str | None]:
    """The value of one cell, or an error message saying what was expected."""
    t = text.strip()
    if rule.kind == c.TEXT:
        if not t and rule.name in _NON_BLANK:
            return "", "is blank; expected a value"
        if (problem := text_problem(text)) is not None:
            return "", problem
        return (t if rule.name in ("product_id", "campaign", "ad_group") else str(text)), None
    if rule.kind in c.CHOICES:
        synonyms, expected = c.CHOICES[rule.kind]
        value = synonyms.get(c.header_key(t)) if t != "-" else synonyms.get("-")
        if value is None:
            return "", f"'{text}' is not one of {expected}"
        return value, None
    if not t:
        if rule.kind in (c.COUNT, c.MONEY):
            return 0.0, None
        if rule.name == "bid":
            return math.nan, "is blank; expected the current bid"
        return math.nan, None
    try:
        value, had_percent = parse_number(t, settings.decimal_comma and not isinstance(text, CellNumber))
    except NotANumber as exc:
        expected = {c.COUNT: "a whole number", c.MONEY: "an amount such as 1234.56",
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


def read_table(path: Path, table: c.TableRule, settings: Settings) -> tuple[pd.DataFrame | None, list[Problem]]:
    """Read and validate one table's file."""
    file = path.name
    try:
        rows = read_rows(path)
    except UnicodeDecodeError:
        return None, [Problem(file, None, None, "cannot be read as text: not UTF-8, UTF-16 with a byte-order mark, "
                                                "or cp1252; save it as a UTF-8 CSV")]
    except NotText as exc:
        return None, [Problem(file, None, None, str(exc))]
    except UnsafeWorkbook as exc:
        return None, [Problem(file, None, None, str(exc))]
    except csv.Error as exc:
        return None, [Problem(file, None, None, f"not a readable CSV file: {exc}")]
    except MemoryError:
        return None, [Problem(file, None, None, "not enough memory to read it; export a shorter period")]
    except Exception as exc:  # calamine raises its own types for broken workbooks
        return None, [Problem(file, None, None, f"not a readable spreadsheet: {exc}")]
    start = next((i for i, r in enumerate(rows) if any(x.strip() for x in r)), None)
    if start is None:
        return None, [Problem(file, None, None, "the file is empty; expected a header row and data rows")]
    header = rows[start]
    found, problems = map_headers(header, table, settings, file)
    if any(p.severity == ERROR for p in problems):
        return None, problems
    data_rows = sum(1 for r in rows[start + 1:] if any(x.strip() for x in r))
    too_long = data_rows > MAX_SHEET_ROWS - 1
    if too_long and table.name != "search_terms":
        return None, [Problem(file, None, None, f"has {data_rows:,} data rows; a sheet holds at most "
                                                f"{MAX_SHEET_ROWS - 1:,} below its header, so the workbook cannot "
                                                "hold this table. Export a shorter period")]
    records: list[dict] = []
    for i in range(start + 1, len(rows)):
        row = rows[i]
        if not any(x.strip() for x in row):
            continue
        record: dict[str, object] = {"_row": i + 1}
        for rule in table.columns:
            col = found.get(rule.name)
            text = row[col] if col is not None and col < len(row) else ""
            value, message = _parse_cell(rule, text, settings)
            if message:
                problems.append(Problem(file, i + 1, header[col] if col is not None else rule.name, message))
            record[rule.name] = value
        records.append(record)
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
    if too_long:
        # Check the rows as written before merging, which could hide a row's orders > clicks.
        problems.extend(_row_checks(table.name, frame))
        if any(p.severity == ERROR for p in problems):
            return None, problems
        frame, problem = _merge_search_terms(frame, file, data_rows)
        frame.attrs.update(headers=header_of, file=file)
        problems.append(problem)
        if problem.severity == ERROR:
            return None, problems
    return frame, problems


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
    if "orders" in frame and "clicks" in frame:
        over = frame.loc[frame["orders"] > frame["clicks"]]
        for row, orders, clicks in zip(over["_row"], over["orders"], over["clicks"]):
            problems.append(Problem(file, int(row), headers["orders"],
                                    f"orders ({orders:g}) are more than clicks ({clicks:g}); "
                                    "expected at most one order per click"))
    if name == "catalog":
        dup = frame[frame["product_id"].duplicated(keep=False) & (frame["product_id"] != "")]
        for pid, group in dup.groupby("product_id", sort=True):
            rows = ", ".join(str(x) for x in group["_row"])
            for r in group["_row"].iloc[1:]:
                problems.append(Problem(file, int(r), headers["product_id"],
                                        f"product '{pid}' appears more than once (rows {rows}); "
                                        "expected one row per product"))
    return problems


def _cross_checks(tables: dict[str, pd.DataFrame | None]) -> list[Problem]:
    """Checks between tables: products the catalog lacks."""
    problems: list[Problem] = []
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


def read_inputs(folder: Path, settings: Settings) -> tuple[Inputs, list[Problem]]:
    """Read every table of the contract from folder.

    Returns:
        The inputs (tables that could not be read are None) and all problems found.
    """
    folder = Path(folder)
    if not folder.is_dir():
        return Inputs({}), [Problem(str(folder), None, None, "the input folder does not exist")]
    tables: dict[str, pd.DataFrame | None] = {}
    sources: dict[str, Path] = {}
    checksums: dict[str, str] = {}
    problems: list[Problem] = []
    for table in c.TABLES:
        path, problem = find_file(folder, table, settings)
        if problem:
            problems.append(problem)
        if path is None:
            tables[table.name] = None
            continue
        sources[table.name] = path
        with open(path, "rb") as fh:
            checksums[table.name] = hashlib.file_digest(fh, "sha256").hexdigest()
        frame, found = read_table(path, table, settings)
        problems.extend(found)
        if frame is not None:
            problems.extend(_row_checks(table.name, frame))
        tables[table.name] = frame
    problems.extend(_cross_checks(tables))
    return Inputs(tables, sources, checksums), problems
