"""Formula text helpers: addresses, template resolution and the portable-function whitelist."""
from __future__ import annotations

import re

from typing import Iterable

from sheetbuilder.errors import FormulaNotPortable, UnknownName

# Functions that compute the same in Excel 2010+, LibreOffice 7.4, Google Sheets and
# the `formulas` library, as far as this project uses them.
PORTABLE_FUNCTIONS = frozenset({
    "SUM", "SUMIFS", "COUNTIFS", "SUMPRODUCT", "INDEX", "MATCH", "IF", "IFERROR", "AND", "OR", "NOT",
    "MIN", "MAX", "ROUND", "ROUNDUP", "ROUNDDOWN", "ABS", "LN", "EXP", "CEILING", "FLOOR", "INT", "COUNT",
    "COUNTA", "ISNUMBER", "ISBLANK", "LEN", "ROWS", "CHOOSE", "LOWER",
    "SMALL", "LARGE",  # k-th smallest and largest number of a range, text and blanks skipped, in all four
    # the beta distribution's cumulative probability (Excel 2010's BETA.DIST(x, a, b, TRUE) under its older name,
    # written without a prefix): equal in LibreOffice 7.4, Gnumeric 1.12 and `formulas` (tests/test_pooled_bids.py)
    "BETADIST",
})

_FUNCTION = re.compile(r"([A-Za-z_][A-Za-z0-9._]*)\(")
_STRING = re.compile(r'"(?:[^"]|"")*"')
_PLACEHOLDER = re.compile(r"\{(\w+):([\w.]+)\}")


def col_letter(col: int) -> str:
    """The letters of a 0-based column number: 0 -> A, 26 -> AA."""
    letters = ""
    col += 1
    while col:
        col, rem = divmod(col - 1, 26)
        letters = chr(65 + rem) + letters
    return letters


def col_number(letters: str) -> int:
    """The 0-based column number of column letters: A -> 0, AA -> 26 (the inverse of col_letter)."""
    n = 0
    for ch in letters:
        n = n * 26 + ord(ch) - 64
    return n - 1


def cell_ref(row: int, col: int, absolute: bool = False) -> str:
    """A1-style address of a 0-based (row, col)."""
    if absolute:
        return f"${col_letter(col)}${row + 1}"
    return f"{col_letter(col)}{row + 1}"


def quote_sheet(name: str) -> str:
    """A sheet name as a formula reference needs it."""
    return name if re.fullmatch(r"[A-Za-z_][A-Za-z0-9_]*", name) else "'" + name.replace("'", "''") + "'"


def range_ref(sheet: str, col: int, first_row: int, last_row: int) -> str:
    """An absolute single-column range on sheet, 0-based rows inclusive."""
    letter = col_letter(col)
    return f"{quote_sheet(sheet)}!${letter}${first_row + 1}:${letter}${max(last_row, first_row) + 1}"


def block_sum(rng: str, first: str, last: str) -> str:
    """SUM(INDEX(rng,first):INDEX(rng,last)): a block of rows of a sorted range, summed without a per-row search.

    The one definition of the block sum the planners write (templates such as '{rng:targets.spend}' and
    '{c:first}' are resolved later). Its cost grows with the rows summed, not rows x rows.
    """
    return f"SUM(INDEX({rng},{first}):INDEX({rng},{last}))"


def keyed_row(keys: str, row: str, key: str | None = None) -> str:
    """The row of a sortable table that holds key, trusting the build's row first: one INDEX and a comparison.

    IF(INDEX(keys,row)=key,row,MATCH(key,keys,0)): row is where the build wrote the row (written as
    data or a formula), keys the table's column of numeric keys (its build position or source row),
    which moves with the row when the user sorts the sheet. While the sheet is in build order the
    check holds and no search is made; after a sort only the rows that moved pay for the exact
    search. The key is a number, never text (MATCH reads * ? ~ in text as wildcards); a key no
    longer on the sheet (its row deleted) gives #N/A, never another row's value. key defaults to row.
    """
    key = row if key is None else key
    return f"IF(INDEX({keys},{row})={key},{row},MATCH({key},{keys},0))"


def functions_in(formula: str) -> set[str]:
    """The function names a formula calls (text inside string literals ignored)."""
    return {name.upper() for name in _FUNCTION.findall(_STRING.sub('""', formula))}


def check_portable(formula: str) -> None:
    """Raise FormulaNotPortable when formula calls a function outside the whitelist."""
    if formula.lstrip("=").startswith("{"):
        raise FormulaNotPortable(f"array formulas are not used: {formula}")
    bad = functions_in(formula) - PORTABLE_FUNCTIONS
    if bad:
        raise FormulaNotPortable(f"non-portable function(s) {sorted(bad)} in {formula}")


def resolve(template: str, lookup: dict[str, dict[str, str]]) -> str:
    """Replace {kind:key} placeholders by lookup[kind][key]; '{r}' is left for the row.

    kinds used by the planners: 'c' a same-row cell ('D{r}'), 'rng' an absolute
    range on another sheet, 'tot' an absolute cell of the totals row.
    """
    def sub(match: re.Match) -> str:
        kind, key = match.group(1), match.group(2)
        if kind == "row":  # filled per row by the planner
            return match.group(0)
        try:
            return lookup[kind][key]
        except KeyError:
            raise KeyError(f"unknown placeholder {{{kind}:{key}}} in {template}") from None
    out = _PLACEHOLDER.sub(sub, template)
    check_portable(out)
    return out


_NAME = re.compile(r"(?<![\w.$'!#])[A-Za-z_][A-Za-z0-9_.]*(?![\w.(!])")
_SHEET_PREFIX = re.compile(r"(?:'(?:[^']|'')*'|[A-Za-z_][\w.]*)!")
_CELL_OR_RANGE = re.compile(r"\$?[A-Za-z]{1,3}\$?\d+")
_ROW_MARK = re.compile(r"\{(?:r|p)\}|\{\w+:[\w.]+\}")  # a template's row marks and per-row placeholders
_ERROR_LITERAL = re.compile(r"#(?:DIV/0!|N/A|NAME\?|NULL!|NUM!|REF!|VALUE!)")
BOOLEANS = frozenset({"TRUE", "FALSE"})


def bare_names(formula: str) -> set[str]:
    """The defined names a formula reads: words that are not a function, a cell, a sheet, text or a boolean.

    Works on resolved formulas and on column templates (their '{r}' row marks read as row numbers).
    """
    text = _ERROR_LITERAL.sub("0", _ROW_MARK.sub("1", _STRING.sub('""', formula)))
    text = _CELL_OR_RANGE.sub("A1", _SHEET_PREFIX.sub("", text))
    return {w for w in _NAME.findall(text) if w.upper() not in BOOLEANS and not _CELL_OR_RANGE.fullmatch(w)}


def check_names(formulas: Iterable[tuple[str, str]], defined: set[str]) -> None:
    """Raise UnknownName when a formula reads a name outside defined (the workbook's defined names).

    A setting is read in formula text by its bare name (``thin_margin``); the Settings sheet defines
    one name per setting of the settings table, so a misspelt or undeclared setting fails the build
    here instead of showing #NAME? in every cell of its column.
    """
    for sheet, formula in formulas:
        unknown = bare_names(formula) - defined
        if unknown:
            raise UnknownName(f"{sheet}: the formula {formula} reads {', '.join(sorted(unknown))}, which no defined "
                              "name holds; declare the setting in reading/settings.py (SETTINGS) or fix the name")
