"""Reading numbers as exports write them, and rounding as spreadsheets do."""
from __future__ import annotations

import math
import re
import unicodedata
from decimal import ROUND_HALF_UP, Decimal

_SPACES = re.compile(r"[\s\u00a0\u202f']+")
_SHAPE = re.compile(r"(?P<sign1>[-+]?)(?P<pre>[^\d.,+\-%]*)(?P<sign2>[-+]?)(?P<body>[\d.,]+)"
                    r"(?P<exp>[eE][+-]?\d+)?(?P<pct>%?)(?P<post>[^\d.,+\-%]*)")
_POINT_BODY = re.compile(r"(?:\d{1,3}(?:,\d{3})+|\d+)(?:\.\d*)?|\.\d+")   # 1,234.56
_COMMA_BODY = re.compile(r"(?:\d{1,3}(?:\.\d{3})+|\d+)(?:,\d*)?|,\d+")     # 1.234,56
# Currency words written beside amounts besides ISO codes (USD) and symbols ($, €, R$).
_CURRENCY_WORDS = {"kr", "zł", "zl", "kč", "kc", "ft", "rs", "fr", "lei", "rm"}


# Spreadsheets keep 15 significant digits; the readers refuse amounts and counts this large.
MAX_MAGNITUDE = 1e15


class NotANumber(ValueError):
    """The text is not a number in any form the readers accept.

    hint, when not empty, says in plain English what would make it read (for example
    the decimal_comma setting).
    """

    def __init__(self, text: str, hint: str = ""):
        super().__init__(text)
        self.hint = hint


def _is_currency(affix: str) -> bool:
    """Whether text written before or after an amount is a currency mark (or nothing)."""
    rest = "".join(ch for ch in affix if unicodedata.category(ch) != "Sc")
    if not rest:
        return True
    if rest.isascii() and rest.isalpha() and rest.isupper() and len(rest) <= 3:
        return True  # USD, EUR, and the R of R$, the US of US$
    return rest.casefold().rstrip(".") in _CURRENCY_WORDS


def parse_number(text: str, decimal_comma: bool = False) -> tuple[float, bool]:
    """Read a number written as an export writes it.

    Accepts 1234.56, $1,234.56, 12.50 USD, 36%, (12.50) for minus 12.50, -€3, $-3,
    1.234,56 with decimal_comma, and scientific notation. A comma (a point with
    decimal_comma) must group thousands in threes, so 12,50 is not read as 1250.
    Text beside the amount must be a currency mark: 12abc and 5 kg are not numbers.
    Blank text must be handled by the caller.

    Returns:
        (value, had_percent_sign). A percent sign divides the value by 100.

    Raises:
        NotANumber: the text is not a number.
    """
    s = _SPACES.sub("", str(text))
    negative = False
    if s.startswith("(") and s.endswith(")"):
        negative, s = True, s[1:-1]
    m = _SHAPE.fullmatch(s)
    if m is None or (m["sign1"] and m["sign2"]) or not (_is_currency(m["pre"]) and _is_currency(m["post"])):
        raise NotANumber(text)
    if "-" in (m["sign1"], m["sign2"]):
        negative = not negative
    body, point = m["body"], (_COMMA_BODY if decimal_comma else _POINT_BODY)
    if not point.fullmatch(body):
        other = _POINT_BODY if decimal_comma else _COMMA_BODY
        hint = ""
        if other.fullmatch(body):
            hint = ("settings.toml has decimal_comma = true, so a point only groups thousands"
                    if decimal_comma else "if the file writes decimals with a comma, set decimal_comma = true "
                                          "in settings.toml")
        raise NotANumber(text, hint)
    plain = body.replace(".", "").replace(",", ".") if decimal_comma else body.replace(",", "")
    value = float(plain + (m["exp"] or ""))
    if not math.isfinite(value):
        raise NotANumber(text)
    percent = bool(m["pct"])
    if percent:
        value /= 100
    return (-value if negative else value), percent


def round_half_away(value: float, digits: int = 2) -> float:
    """Round as Excel and LibreOffice do: half away from zero on the value's 15-digit decimal form.

    A value of 1e15 or more has no digits after the point in that form and is returned as
    it is (Decimal's 28-digit context cannot quantize 1e308 to cents); so are infinities.
    """
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return value
    if not math.isfinite(value) or abs(value) >= MAX_MAGNITUDE:
        return value
    quantum = Decimal(1).scaleb(-digits)
    d = Decimal(format(float(value), ".15g")).quantize(quantum, rounding=ROUND_HALF_UP)
    return float(d)


# Added before rounding a bid to the cent, in the formula and in its reference alike, so that
# a half cent whose binary value sits just below the half (0.15 x 0.7) rounds up in every
# spreadsheet program: the `formulas` library rounds the binary value, Excel and LibreOffice
# the decimal one.
ROUNDING_NUDGE = 1e-9
