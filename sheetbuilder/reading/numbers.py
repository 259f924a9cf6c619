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
# The letters written before a dollar or other currency sign: US$, R$, A$, C$, NZ$, HK$, S$, MX$, NT$.
_SIGN_PREFIXES = {"US", "R", "A", "AU", "C", "CA", "NZ", "HK", "S", "SG", "MX", "NT", "Z"}
# ISO 4217 active alphabetic codes (ISO 4217:2015, list one, as published by the maintenance agency).
ISO_4217 = frozenset("""
AED AFN ALL AMD ANG AOA ARS AUD AWG AZN BAM BBD BDT BGN BHD BIF BMD BND BOB BOV BRL BSD BTN BWP BYN BZD
CAD CDF CHE CHF CHW CLF CLP CNY COP COU CRC CUC CUP CVE CZK DJF DKK DOP DZD EGP ERN ETB EUR FJD FKP GBP
GEL GHS GIP GMD GNF GTQ GYD HKD HNL HTG HUF IDR ILS INR IQD IRR ISK JMD JOD JPY KES KGS KHR KMF KPW KRW
KWD KYD KZT LAK LBP LKR LRD LSL LYD MAD MDL MGA MKD MMK MNT MOP MRU MUR MVR MWK MXN MXV MYR MZN NAD NGN
NIO NOK NPR NZD OMR PAB PEN PGK PHP PKR PLN PYG QAR RON RSD RUB RWF SAR SBD SCR SDG SEK SGD SHP SLE SLL
SOS SRD SSP STN SVC SYP SZL THB TJS TMT TND TOP TRY TTD TWD TZS UAH UGX USD USN UYI UYU UYW UZS VED VES
VND VUV WST XAF XCD XOF XPF YER ZAR ZMW ZWL
""".split())
# Digits separated by spaces or apostrophes must group thousands in threes.
_SPACED_RUN = re.compile(r"\d+(?:[\s\u00a0\u202f']+\d+)+")
_SPACED_GROUPS = re.compile(r"\d{1,3}(?:[\s\u00a0\u202f']\d{3})+")
# What may group thousands in a count besides the comma (or the point with decimal_comma).
_COUNT = re.compile(r"(?P<sign>[-+]?)(?P<body>\d+|\d{1,3}(?:(?P<sep>[,.\s\u00a0\u202f'])\d{3})"
                    r"(?:(?P=sep)\d{3})*)(?P<frac>[.,]0{1,2})?")


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


def is_currency(affix: str) -> bool:
    """Whether text written before or after an amount is a currency mark (or nothing).

    A currency mark is a currency sign ($, €, ₹), a sign with the letters that name its
    country (US$, R$, NZ$), an ISO 4217 code in capitals (USD, EUR) or one of a few currency
    words (kr, zł, Ft). Anything else (12K, 1.5M, 10 PCS, the letter O in 12O) is not.
    """
    rest = "".join(ch for ch in affix if unicodedata.category(ch) != "Sc")
    if not rest:
        return True
    if rest != affix:
        return rest in _SIGN_PREFIXES
    if rest in ISO_4217:
        return True
    return rest.casefold().rstrip(".") in _CURRENCY_WORDS


def parse_count(text: str, decimal_comma: bool = False) -> float:
    """Read a count (impressions, clicks, orders, units): a whole number, nothing else.

    Accepts 1234, 1,234 (1.234 with decimal_comma), thousands grouped by a space, a
    no-break space or an apostrophe (1 234, 1'234), and a whole number written with one
    or two zero decimals (12.0, 12.00). A sign is read (the caller refuses negatives).
    Refuses letters (12O, 12K, 1.5M, 10 PCS), currency marks, percent signs, exponents,
    and 1.000 without decimal_comma (it may mean one thousand).

    Raises:
        NotANumber: the text is not a whole number so written.
    """
    s = str(text).strip()
    m = _COUNT.fullmatch(s)
    group, point = (".", ",") if decimal_comma else (",", ".")
    if m is None or (m["sep"] == point) or (m["frac"] and m["frac"][0] != point):
        hint = ""
        if re.fullmatch(r"[-+]?\d+[.,]\d+", s):
            hint = "a count is a whole number"
            if re.fullmatch(r"[-+]?\d{1,3}[.,]\d{3}", s):
                hint = ("a count is a whole number; if the file groups thousands with a point, set "
                        "decimal_comma = true in settings.toml" if not decimal_comma else
                        "a count is a whole number; settings.toml has decimal_comma = true, so a comma "
                        "marks decimals")
        raise NotANumber(text, hint)
    digits = re.sub(r"\D", "", m["body"])
    value = float(digits)
    if not math.isfinite(value):
        raise NotANumber(text)
    return -value if m["sign"] == "-" else value


def parse_number(text: str, decimal_comma: bool = False, money: bool | None = None) -> tuple[float, bool]:
    """Read a number written as an export writes it.

    Accepts 1234.56, $1,234.56, 12.50 USD, 36%, (12.50) for minus 12.50, -€3, $-3,
    1.234,56 with decimal_comma, and scientific notation. A comma (a point with
    decimal_comma) must group thousands in threes, so 12,50 is not read as 1250.
    Text beside the amount must be a currency mark: 12abc and 5 kg are not numbers.
    Blank text must be handled by the caller. money=True refuses a percent sign, money=False
    refuses a currency mark; None (the default) accepts either.

    Returns:
        (value, had_percent_sign). A percent sign divides the value by 100.

    Raises:
        NotANumber: the text is not a number.
    """
    for run in _SPACED_RUN.findall(str(text)):
        if not _SPACED_GROUPS.fullmatch(run.strip()):
            raise NotANumber(text)  # 12 34 is not twelve hundred and thirty-four
    s = _SPACES.sub("", str(text))
    negative = False
    if s.startswith("(") and s.endswith(")"):
        negative, s = True, s[1:-1]
    m = _SHAPE.fullmatch(s)
    if m is None or (m["sign1"] and m["sign2"]) or not (is_currency(m["pre"]) and is_currency(m["post"])):
        raise NotANumber(text)
    if (money is True and m["pct"]) or (money is False and (m["pre"] or m["post"])):
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


def cents(value: float) -> float:
    """A money difference to the cent, as cents_formula computes it: an unchanged figure is 0, never -5.7e-14.

    The nudge goes away from zero, so a half cent rounds away from zero in every engine (see ROUNDING_NUDGE).
    """
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return value
    return round_half_away(value + (-ROUNDING_NUDGE if value < 0 else ROUNDING_NUDGE), 2) + 0.0


def cents_formula(expr: str, never_negative: bool = False) -> str:
    """Formula text of a money difference expr to the cent (cents is its value); never_negative where expr cannot be
    below zero (an ABS), so the nudge's sign needs no test."""
    if never_negative:
        return f"ROUND({expr}+{ROUNDING_NUDGE:g},2)"
    return f"ROUND({expr}+IF({expr}<0,-{ROUNDING_NUDGE:g},{ROUNDING_NUDGE:g}),2)"
