"""Writing CSV files that a spreadsheet program cannot turn into formulas.

A text cell that begins with ``=``, ``+``, ``-``, ``@``, tab or carriage return may be
run as a formula when the file is opened in a spreadsheet program ("CSV Injection",
OWASP). Following OWASP's recommendation, such a text cell is written with a single
quote ``'`` in front, and every text cell is wrapped in double quotes (the csv
module doubles any quote inside). :func:`unescape_cell` strips the leading quote
back, so :func:`write_csv` then :func:`read_csv_rows` gives the texts back exactly.

Numbers are written as plain numbers: a negative number is a number, not text, so it
is never escaped; only text cells are.
"""
from __future__ import annotations

import csv
import numbers
from pathlib import Path
from typing import Any, Iterable, Sequence

from sheetbuilder.values import is_nan, is_number
from sheetbuilder.workbook.atomic import atomic_output
from sheetbuilder.errors import OutputExists

DANGEROUS_FIRST = ("=", "+", "-", "@", "\t", "\r")  # OWASP, "CSV Injection"
QUOTE = "'"


def _needs_quote(text: str) -> bool:
    """Whether text, once any leading quotes are set aside, begins with a dangerous character.

    Counting the leading quotes keeps the escape reversible: "'=x" is written "''=x",
    so that reading it back gives "'=x" and not "=x".
    """
    return text.lstrip(QUOTE)[:1] in DANGEROUS_FIRST


def escape_cell(value: Any) -> str:
    """The text to write for one cell.

    Text beginning with ``=``, ``+``, ``-``, ``@``, tab or carriage return gets a
    leading single quote (the OWASP recommendation); readers strip it back with
    :func:`unescape_cell`. Numbers are written as plain numbers and never escaped
    (-2 stays -2); None and NaN become the empty string.
    """
    if value is None or is_nan(value):
        return ""
    if is_number(value):
        return str(int(value)) if isinstance(value, numbers.Integral) else repr(float(value))
    text = str(value)
    return QUOTE + text if _needs_quote(text) else text


def unescape_cell(text: str) -> str:
    """text as it was before :func:`escape_cell`: the added leading quote removed."""
    if text.startswith(QUOTE) and _needs_quote(text[1:]):
        return text[1:]
    return text


def _cell(value: Any) -> Any:
    """What the csv writer gets: numbers as numbers (left unquoted), everything else escaped text."""
    if is_number(value):
        return int(value) if isinstance(value, numbers.Integral) else float(value)
    return escape_cell(value)


def write_csv(path: Path, header: Sequence[Any], rows: Iterable[Sequence[Any]], force: bool = False) -> Path:
    """Write header and rows to path as UTF-8 CSV with every text cell escaped, atomically.

    The file starts with a byte-order mark so that spreadsheet programs detect UTF-8.
    Text cells are quoted and numbers are not (csv.QUOTE_NONNUMERIC). The rows go to a
    temporary file beside path, which is renamed into place only once complete; on any
    error the temporary file is removed and path is left as it was.

    Args:
        path: the CSV file to write.
        header: the column headers.
        rows: the data rows.
        force: overwrite path if it exists.

    Returns:
        path.

    Raises:
        OutputExists: path exists and force is False.
    """
    path = Path(path)
    if path.exists() and not force:
        raise OutputExists(f"{path} exists; add --force to overwrite it")
    with atomic_output(path, ".csv", force) as tmp:
        with open(tmp, "w", encoding="utf-8-sig", newline="") as fh:
            writer = csv.writer(fh, quoting=csv.QUOTE_NONNUMERIC)
            writer.writerow([escape_cell(h) for h in header])
            for row in rows:
                writer.writerow([_cell(v) for v in row])
    return path


def read_csv_rows(path: Path) -> list[list[str]]:
    """Every row of a CSV file written by :func:`write_csv` (header first), unescaped.

    Cells come back as text: text cells exactly as they were written, numbers as
    the text of the number ("-2", "2.5").
    """
    with open(path, encoding="utf-8-sig", newline="") as fh:
        return [[unescape_cell(cell) for cell in row] for row in csv.reader(fh)]
