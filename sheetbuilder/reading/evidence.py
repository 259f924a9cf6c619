"""Deciding, from a file's own cells, how it writes decimals and which currency it holds.

Decimal separator. Locales write 1234.5 as 1,234.5 or 1.234,5 (Unicode CLDR, the number symbols
"decimal" and "group" of each locale), so `3,911` alone is three thousand nine hundred and eleven
or three point nine one one. A value shows its file's form when it holds both separators (the
last one is the decimal), a separator followed by other than three digits (12,5; 0.25), a separator
after a lone zero (0,125) or two group separators (1.234.567). Each numeric column is decided by its
own values, else by the file's other columns, else by decimal_comma when settings.toml sets it,
else by a `;` delimiter (common practice: CSV files of decimal-comma locales separate fields with
`;`). A value that stays ambiguous is refused with both readings.

Currency. A money column whose cells carry currency marks that cannot be one currency ($ and €,
USD and EUR; ISO 4217 codes, and the signs each may be written as) is refused naming its rows.
"""
from __future__ import annotations

import re
from collections.abc import Iterable
from dataclasses import dataclass, field
from itertools import islice

POINT, COMMA = "point", "comma"
SAMPLE = 1000  # values of a column looked at for its decimal separator
_BODY = re.compile(r"\d[\d.,]*")
_NOT_MARK = re.compile(r"[\d.,\s()+\-%'\u00a0\u202f]+")
_DOLLAR = frozenset({"USD", "CAD", "AUD", "NZD", "MXN", "SGD", "HKD", "TWD"})
# The ISO 4217 codes each sign or word may stand for (common practice; several countries share $, ¥ and kr).
SIGN_CODES = {
    "$": _DOLLAR, "US$": {"USD"}, "C$": {"CAD"}, "CA$": {"CAD"}, "A$": {"AUD"}, "AU$": {"AUD"}, "NZ$": {"NZD"},
    "HK$": {"HKD"}, "S$": {"SGD"}, "SG$": {"SGD"}, "MX$": {"MXN"}, "NT$": {"TWD"}, "R$": {"BRL"}, "€": {"EUR"},
    "£": {"GBP"}, "¥": {"JPY", "CNY"}, "₹": {"INR"}, "₩": {"KRW"}, "₺": {"TRY"}, "₽": {"RUB"}, "₱": {"PHP"},
    "₫": {"VND"}, "₪": {"ILS"}, "฿": {"THB"}, "zł": {"PLN"}, "zl": {"PLN"}, "kč": {"CZK"}, "kc": {"CZK"},
    "kr": {"SEK", "NOK", "DKK", "ISK"}, "ft": {"HUF"}, "lei": {"RON"}, "rm": {"MYR"}, "fr": {"CHF"},
    "rs": {"INR", "PKR", "LKR", "NPR"},
}


def separator_form(text: str) -> str | None:
    """What one value shows: POINT or COMMA (its decimal separator), 'ambiguous' (3,911 or 3.911),
    or None (no separator: 12, $5)."""
    m = _BODY.search(text)
    if m is None:
        return None
    body = m.group().rstrip(".,")
    commas, points = body.count(","), body.count(".")
    if commas and points:
        return POINT if body.rfind(".") > body.rfind(",") else COMMA
    if not commas and not points:
        return None
    sep = "," if commas else "."
    if commas + points > 1:
        return POINT if sep == "," else COMMA  # two group separators: the other one is the decimal
    whole, frac = body.split(sep)
    if len(frac) != 3 or whole in ("", "0"):
        return COMMA if sep == "," else POINT
    return "ambiguous"


@dataclass
class Decision:
    """How one file's numeric columns are read: the decimal comma per column, and why."""

    comma: dict[str, bool]
    undecided: set[str]  # columns whose ambiguous values are refused
    why: str
    by_setting: set[str] = field(default_factory=set)  # columns decided by decimal_comma alone: their 3,911 are named


def decide_separators(columns: dict[str, list[str]], delimiter: str, setting: bool | None) -> Decision:
    """Each column's decimal separator from the evidence (see the module docstring).

    Args:
        columns: each numeric column's cell texts (spreadsheet numbers left out), read only as far as needed.
        delimiter: the CSV's field delimiter ("" for a spreadsheet).
        setting: decimal_comma when settings.toml sets it, else None.
    """
    seen: dict[str, set[str]] = {}
    looked = 0
    for name, texts in columns.items():
        kinds: set[str] = set()
        for t in islice(texts, SAMPLE):  # a value written the other way after these fails to read: refused too
            looked += bool(t.strip())
            form = separator_form(t)
            if form in (POINT, COMMA):
                kinds.add(form)
                if len(kinds) == 2:
                    break
        seen[name] = kinds
    file_kinds = set().union(*seen.values()) if seen else set()  # a column writing both ways follows the file
    if len(file_kinds) == 1:
        fallback, why = next(iter(file_kinds)) == COMMA, f"the file's values write a decimal {next(iter(file_kinds))}"
    elif setting is not None:
        fallback, why = setting, f"decimal_comma = {'true' if setting else 'false'} in settings.toml"
    elif delimiter == ";":
        fallback, why = True, "a ';' delimiter (common practice in decimal-comma locales)"
    elif not looked:
        return Decision({name: False for name in columns}, set(),
                        "numbers stored as numbers (nothing to decide)" if columns else "")
    else:
        fallback, why = False, "no value shows a decimal separator"
    comma, undecided, by_setting = {}, set(), set()
    for name, kinds in seen.items():
        if len(kinds) == 1:
            comma[name] = next(iter(kinds)) == COMMA
        else:
            comma[name] = fallback
            if not file_kinds and setting is None and delimiter != ";":
                undecided.add(name)
            elif not file_kinds and setting is not None:
                by_setting.add(name)
    form = "decimal comma" if fallback else "decimal point"
    differ = sorted(n for n in comma if comma[n] != fallback)
    why = f"{form} ({why})" + (f"; {', '.join(differ)} by their own values" if differ else "") + (
        "; a value such as 3,911 is refused" if undecided else "")
    return Decision(comma, undecided, why, by_setting)


def both_readings(text: str) -> str:
    """The two readings of an ambiguous value, for the refusal."""
    body = _BODY.search(text).group()
    sep = "," if "," in body else "."
    whole, frac = body.split(sep)
    return f"{whole}{frac} (a {'comma' if sep == ',' else 'point'} grouping thousands) or {whole}.{frac} (a decimal " \
           f"{'comma' if sep == ',' else 'point'})"


def currency_mark(text: str) -> str:
    """The currency mark written beside an amount ('' when none): $, €, USD, US$."""
    if text[:1].isdigit() and text[-1:].isdigit():
        return ""
    return _NOT_MARK.sub("", text)


def codes_of(mark: str) -> frozenset[str]:
    """The ISO 4217 codes a currency mark may stand for."""
    if mark.upper() in SIGN_CODES or mark.upper() == mark and len(mark) == 3 and mark.isalpha():
        return frozenset(SIGN_CODES.get(mark.upper(), {mark.upper()}))
    return frozenset(SIGN_CODES.get(mark, SIGN_CODES.get(mark.casefold(), {mark})))


def currency_label(codes: frozenset[str], marks: set[str]) -> str:
    """The currency found, as shown on the Guide and by inspect."""
    if len(codes) == 1:
        return next(iter(codes))
    return " ".join(sorted(marks)) + " (a sign several currencies write)"
