"""Reading numbers as exports write them, and rounding as spreadsheets do."""
from __future__ import annotations

import math
import re
from decimal import ROUND_HALF_UP, Decimal

_SPACES = re.compile(r"[\s\u00a0\u202f']+")
_CURRENCY = re.compile(r"^[^\d\-+.,(]*|[^\d%.,)]*$")
_PLAIN = re.compile(r"^[+-]?(\d+(\.\d*)?|\.\d+)([eE][+-]?\d+)?$")


class NotANumber(ValueError):
    """The text is not a number in any form the readers accept."""


def parse_number(text: str, decimal_comma: bool = False) -> tuple[float, bool]:
    """Read a number written as an export writes it.

    Accepts 1234.56, $1,234.56, 36%, (12.50) for minus 12.50, -€3, 1.234,56 with
    decimal_comma, and scientific notation. Blank text must be handled by the caller.

    Returns:
        (value, had_percent_sign). A percent sign divides the value by 100.

    Raises:
        NotANumber: the text is not a number.
    """
    s = _SPACES.sub("", str(text))
    negative = False
    if s.startswith("(") and s.endswith(")"):
        negative, s = True, s[1:-1]
    if s.startswith("-"):
        negative, s = not negative, s[1:]
    elif s.startswith("+"):
        s = s[1:]
    signed = negative
    s = _CURRENCY.sub("", s)
    if s.startswith("-") and not signed:  # $-12.00
        negative, s = True, s[1:]
    percent = s.endswith("%")
    if percent:
        s = s[:-1]
    if decimal_comma:
        s = s.replace(".", "").replace(",", ".")
    else:
        s = s.replace(",", "")
    if not _PLAIN.match(s):
        raise NotANumber(text)
    value = float(s)
    if not math.isfinite(value):
        raise NotANumber(text)
    if percent:
        value /= 100
    return (-value if negative else value), percent


def round_half_away(value: float, digits: int = 2) -> float:
    """Round as Excel and LibreOffice do: half away from zero on the decimal value."""
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return value
    quantum = Decimal(1).scaleb(-digits)
    d = Decimal(repr(float(value))).quantize(quantum, rounding=ROUND_HALF_UP)
    return float(d)
