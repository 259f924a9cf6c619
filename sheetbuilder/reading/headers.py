"""Header matching as people write headers, and finding the header row below a title block.

A header matches a canonical column by its own name or a synonym, ignoring case, spaces and
punctuation (contract.header_key), a trailing unit or currency in brackets or parentheses
(`Spend (USD)`, `Bid [EUR]`, `Cost ($)`), and, when nothing matches otherwise, the filler
words name, text and total around the column's words (`Campaign Name`, `Keyword Text`,
`Total Clicks`).
"""
from __future__ import annotations

import difflib
import re

from sheetbuilder.reading import contract as c
from sheetbuilder.errors import WARNING, Problem
from sheetbuilder.reading.numbers import ISO_4217
from sheetbuilder.reading.settings import Settings

MAX_TITLE_ROWS = 20  # rows of title or notes a header may sit below
FILLER = {"name", "text", "total", "totals"}
_UNIT = re.compile(r"^(?P<base>.*?)\s*[(\[](?P<unit>[^()\[\]]*)[)\]]\s*$")
# The currency signs a currency code may be written as (for the currency_symbol check only).
_SIGN_OF = {"USD": "$", "CAD": "$", "AUD": "$", "NZD": "$", "MXN": "$", "SGD": "$", "HKD": "$", "EUR": "€",
            "GBP": "£", "JPY": "¥", "CNY": "¥", "INR": "₹", "KRW": "₩", "TRY": "₺", "BRL": "R$", "PLN": "zł",
            "SEK": "kr", "NOK": "kr", "DKK": "kr"}


def split_unit(text: str) -> tuple[str, str | None]:
    """A header without its trailing bracketed unit, and the unit (None when there is none)."""
    m = _UNIT.match(str(text))
    if m and m["base"].strip():
        return m["base"], m["unit"].strip()
    return str(text), None


def _without_filler(text: str) -> str:
    """Header text without the filler words at its start or end."""
    words = re.findall(r"[^\W_]+", text.casefold())
    while len(words) > 1 and words[0] in FILLER:
        words.pop(0)
    while len(words) > 1 and words[-1] in FILLER:
        words.pop()
    return "".join(words)


def header_keys(header: list[str]) -> tuple[list[str], list[str]]:
    """Each header's key without its unit, and the same without filler words."""
    bases = [split_unit(h)[0] for h in header]
    return [c.header_key(b) for b in bases], [c.header_key(_without_filler(b)) for b in bases]


def _column_line(table: str, name: str, header: str) -> str:
    """The exact settings.toml lines that map a header to a canonical column."""
    text = header.replace("\\", "\\\\").replace('"', '\\"')
    return f'[columns.{table}] {name} = "{text}"'


def map_headers(header: list[str], table: c.TableRule, settings: Settings, file: str, row: int = 1
                ) -> tuple[dict[str, int], list[Problem]]:
    """Which file column holds each canonical column: explicit mapping, then name, then synonym.

    Args:
        header: the header row's cells.
        table: the table's rule.
        settings: for the explicit [columns] mapping.
        file: the file's name, for problems.
        row: the header's 1-based row, for problems.
    """
    keys, loose = header_keys(header)
    full = [c.header_key(h) for h in header]
    explicit = settings.columns.get(table.name, {})
    found: dict[str, int] = {}
    problems: list[Problem] = []
    for rule in table.columns:
        if rule.name in explicit:
            want = c.header_key(explicit[rule.name])
            if rule.name == "orders" and "unit" in want:
                problems.append(Problem(file, row, explicit[rule.name],
                                        f"settings.toml maps 'orders' to this header, which counts units: "
                                        f"{_UNITS_NOT_ORDERS}"))
            elif want in full:
                found[rule.name] = full.index(want)
            else:
                problems.append(Problem(file, row, explicit[rule.name],
                                        f"settings.toml maps '{rule.name}' to this header, but the file has no such column"))
            continue
        own = c.header_key(rule.name)
        if own in keys:
            found[rule.name] = keys.index(own)
            if keys.count(own) > 1:
                names = ", ".join(f"'{header[i]}'" for i, k in enumerate(keys) if k == own)
                problems.append(Problem(file, row, header[found[rule.name]],
                                        f"several columns could be '{rule.name}' ({names}); keep one, or map one in "
                                        f"settings.toml [columns.{table.name}]"))
            continue
        taken = set(found.values()) | {i for i, k in enumerate(keys) if k in _OWN_NAMES[table.name] - {own}}
        hits = [i for i, k in enumerate(keys) if k in rule.synonyms and i not in taken]
        if not hits:
            hits = [i for i, k in enumerate(loose) if (k == own or k in rule.synonyms) and i not in taken]
        if len(hits) == 1:
            found[rule.name] = hits[0]
        elif len(hits) > 1:
            names = ", ".join(f"'{header[i]}'" for i in hits)
            problems.append(Problem(file, row, header[hits[0]],
                                    f"several columns could be '{rule.name}' ({names}); map one in settings.toml "
                                    f"[columns.{table.name}]"))
        elif rule.required:
            problems.append(Problem(file, row, rule.name, _missing(rule, table, header, set(found.values()))))
    twice = {i for i in found.values() if list(found.values()).count(i) > 1}
    for i in sorted(twice):
        names = " and ".join(f"'{n}'" for n, j in found.items() if j == i)
        problems.append(Problem(file, row, header[i], f"this one column is mapped to {names}; each column holds "
                                                      f"one field. Map one of them to another column in "
                                                      f"settings.toml [columns.{table.name}]"))
    return found, problems


_UNITS_NOT_ORDERS = ("an order may hold several units, so units are never read as orders (conversion rates count "
                     "orders per click); export with an orders column")
_OWN_NAMES = {t.name: {c.header_key(r.name) for r in t.columns} for t in c.TABLES}


def _missing(rule: c.ColumnRule, table: c.TableRule, header: list[str], used: set[int]) -> str:
    """The message for a missing required column: what is accepted, the closest headers, the line to add."""
    also = ", ".join(rule.synonyms[:5])
    message = f"missing column '{rule.name}'" + (f" (also accepted: {also})" if also else "")
    units = [h for h in header if rule.name == "orders" and "unit" in c.header_key(h)]
    if units:
        return message + f"; the file has '{units[0]}', which counts units: {_UNITS_NOT_ORDERS}"
    free = {c.header_key(h): h for i, h in enumerate(header) if i not in used and str(h).strip()
            and not (rule.name == "orders" and "unit" in c.header_key(h))}
    wanted = [c.header_key(rule.name), *rule.synonyms]
    close: list[str] = []
    for want in wanted:
        for key in difflib.get_close_matches(want, list(free), n=3, cutoff=0.6):
            if free[key] not in close:
                close.append(free[key])
    if close:
        guesses = " or ".join(f"'{h}'" for h in close[:3])
        return (message + f"; did you mean {guesses}? If so, add to settings.toml: "
                + _column_line(table.name, rule.name, close[0]))
    return message + f"; or map it in settings.toml: {_column_line(table.name, rule.name, 'Your header')}"


def header_score(header: list[str], table: c.TableRule, settings: Settings) -> int:
    """How many of the table's required columns this row's cells would match (for finding the header)."""
    found, _ = map_headers(header, table, settings, "", 0)
    return sum(1 for r in table.columns if r.required and r.name in found)


def find_header(rows: list[list[str]], table: c.TableRule, settings: Settings) -> tuple[int | None, int]:
    """The 0-based index of the header row among the first rows, and its score.

    The header is the row, among the first MAX_TITLE_ROWS + 1 non-blank rows, that matches the
    most required columns (the first such row on a tie); with no row matching any, the first
    non-blank row (whose missing columns are then reported).
    """
    candidates = [i for i, r in enumerate(rows) if any(str(x).strip() for x in r)][:MAX_TITLE_ROWS + 1]
    if not candidates:
        return None, 0
    best, score = candidates[0], header_score(rows[candidates[0]], table, settings)
    for i in candidates[1:]:
        s = header_score(rows[i], table, settings)
        if s > score:
            best, score = i, s
    return best, score


def currency_warnings(header: list[str], found: dict[str, int], table: c.TableRule, settings: Settings,
                      file: str, row: int) -> list[Problem]:
    """One warning when money columns' headers name a currency other than currency_symbol."""
    symbol = settings.currency_symbol
    named = []
    for rule in table.columns:
        if rule.kind not in (c.MONEY, c.AMOUNT) or rule.name not in found:
            continue
        text = header[found[rule.name]]
        unit = split_unit(text)[1]
        if not unit:
            continue
        code = unit.upper()
        if code in ISO_4217:
            same = code == symbol.upper() or _SIGN_OF.get(code) == symbol
        elif unit in _SIGN_OF.values():
            same = unit == symbol
        else:
            continue  # a unit that is not a currency: (7 days), (%)
        if not same:
            named.append(text)
    if not named:
        return []
    listed = ", ".join(f"'{t}'" for t in named)
    return [Problem(file, row, named[0], f"the headers {listed} name a currency other than currency_symbol "
                                         f"'{symbol}'; amounts are read as written. Set currency_symbol in "
                                         "settings.toml if that is your currency", WARNING)]


def _matched(header: list[str], table: c.TableRule, settings: Settings) -> dict[str, int]:
    """The table's columns this header row would match, and where."""
    return map_headers(header, table, settings, "", 0)[0]


def two_row_header(upper: list[str], lower: list[str], table: c.TableRule, settings: Settings) -> list[str] | None:
    """One header read from two rows, when the upper row groups the lower row's columns.

    A group row holds labels above some columns only, the first of them not above the first column
    (a title starts there): `Cost per unit` merged above `Goods` and `Fees`. Each column's header is
    then its group label and its own (`Cost per unit Goods`), its upper cell alone where the lower
    one is blank (a label merged down), or its lower cell alone where that matches a column by
    itself and the joined text does not.

    Returns:
        The joined header, or None when the upper row is no group row or the joined header matches
        fewer of the table's columns than the lower row alone.
    """
    n = max(len(upper), len(lower))
    up = [str(x).strip() for x in upper] + [""] * (n - len(upper))
    lo = [str(x).strip() for x in lower] + [""] * (n - len(lower))
    labels = [j for j in range(n) if up[j]]
    if not labels or labels[0] == 0 or not any(up[j] and lo[j] and j + 1 < n and not up[j + 1] and lo[j + 1]
                                               for j in labels):
        return None
    out, group = [], ""
    for j in range(n):
        group = up[j] or (group if lo[j] else "")
        out.append(up[j] if not lo[j] else (f"{group} {lo[j]}" if group else lo[j]))
    joined, alone = _matched(out, table, settings), _matched(lo, table, settings)
    for name, j in alone.items():
        if name not in joined and j not in joined.values():
            out[j] = lo[j]
    return out if len(_matched(out, table, settings)) >= len(alone) else None
