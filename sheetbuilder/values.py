"""One helper per question asked of a cell value, shared by every layer.

A value here is what a reader gives back for one cell: None, text, a number (int, float or a
NumPy number), a bool, a date, or a formula error's text.
"""
from __future__ import annotations

import math
import numbers
from typing import Any

# Two numbers within this of each other (relative or absolute) are the same value: far below a
# cent, and below the 15 significant digits a spreadsheet program keeps.
TOLERANCE = 1e-9


def is_blank(value: Any) -> bool:
    """Whether value reads as an empty cell: None, NaN, or text of spaces only."""
    return value is None or (isinstance(value, str) and value.strip() == "") or (
        isinstance(value, float) and math.isnan(value))


def is_number(value: Any) -> bool:
    """Whether value is a real number: not a bool, not NaN."""
    return isinstance(value, numbers.Real) and not isinstance(value, bool) and not (
        isinstance(value, float) and math.isnan(value))


def same_value(a: Any, b: Any) -> bool:
    """Whether two cell values are the same: both blank, numbers within TOLERANCE, or equal."""
    if is_blank(a) and is_blank(b):
        return True
    if is_number(a) and is_number(b):
        return math.isclose(float(a), float(b), rel_tol=TOLERANCE, abs_tol=TOLERANCE)
    return a == b


def shown(value: Any) -> str:
    """A value as a message shows it: blank, a number in short form, or the text quoted."""
    return "blank" if is_blank(value) else f"{value:g}" if is_number(value) else repr(value)
