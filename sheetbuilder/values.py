"""One helper per question asked of a cell value, shared by every layer.

A value here is what a reader gives back for one cell: None, text, a number (int, float or a
NumPy number), a bool, a date, or a formula error's text.
"""
from __future__ import annotations

import math
import numbers
from typing import Any

# Two numbers are the same value when they differ by at most ABS_TOLERANCE, or by at most
# REL_TOLERANCE of the larger: far below a cent, and a thousand times coarser than the last of
# the 15 significant digits a spreadsheet program keeps, so a value saved and read back is the same.
ABS_TOLERANCE = 1e-9
REL_TOLERANCE = 1e-12
# The error values a cell can hold, as spreadsheet programs save them (and openpyxl reads them, as text).
ERROR_VALUES = frozenset(("#DIV/0!", "#N/A", "#NAME?", "#NULL!", "#NUM!", "#REF!", "#VALUE!"))


# The commonest values (text, a float, an int) are answered by their exact type first: a check against the
# numbers.Real ABC costs about ten times as much, and every helper below runs on each of a workbook's cells.


def is_blank(value: Any) -> bool:
    """Whether value reads as an empty cell: None, NaN, or text of spaces only."""
    kind = type(value)
    if kind is str:
        return value.strip() == ""
    if kind is float:
        return value != value
    if kind is int:
        return False
    return value is None or (isinstance(value, str) and value.strip() == "") or is_nan(value)


def is_empty(value: Any) -> bool:
    """Whether a formula's ``=""`` test sees value as empty: None, NaN or "" (spaces are text to a formula)."""
    return value is None or (isinstance(value, str) and value == "") or is_nan(value)


def is_nan(value: Any) -> bool:
    """Whether value is a NaN number (Python's or NumPy's)."""
    kind = type(value)
    if kind is float:
        return value != value
    if kind is str or kind is int or value is None:
        return False
    return isinstance(value, numbers.Real) and not isinstance(value, bool) and value != value


def is_number(value: Any) -> bool:
    """Whether value is a real number: not a bool, not NaN."""
    kind = type(value)
    if kind is float:
        return value == value
    if kind is int:
        return True
    if kind is str or value is None:
        return False
    return isinstance(value, numbers.Real) and not isinstance(value, bool) and value == value


def same_value(a: Any, b: Any) -> bool:
    """Whether two cell values are the same: both blank, numbers within the tolerance above, or equal."""
    if is_blank(a) and is_blank(b):
        return True
    if is_number(a) and is_number(b):
        return math.isclose(float(a), float(b), rel_tol=REL_TOLERANCE, abs_tol=ABS_TOLERANCE)
    return a == b


def shown(value: Any) -> str:
    """A value as a message shows it: blank, a number in short form, or the text quoted."""
    return "blank" if is_blank(value) else f"{value:g}" if is_number(value) else repr(value)
