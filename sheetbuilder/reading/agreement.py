"""What must agree across an export's rows and across the exports: one currency per account (ISO 4217),
digit-only product IDs compared as numbers, and repeated problems told once."""
from __future__ import annotations

import re

import pandas as pd

from sheetbuilder.errors import WARNING, Problem
from sheetbuilder.reading import contract as c
from sheetbuilder.reading.evidence import SIGN_CODES, codes_of, currency_label
from sheetbuilder.reading.headers import split_unit
from sheetbuilder.reading.numbers import ISO_4217
from sheetbuilder.reading.settings import Settings


def grouped_problems(problems: list[Problem], first: int = 5) -> list[Problem]:
    """Problems repeating one message (after its quoted text) in one file and column, as one line each
    once there are more than `first`: the count and the first rows."""
    groups: dict[tuple, list[Problem]] = {}
    for p in problems:
        key = (p.file, p.column, p.severity, re.sub(r"'[^']*'", "''", p.message))
        groups.setdefault(key, []).append(p)
    out = []
    for same in groups.values():
        if len(same) <= first:
            out.extend(same)
            continue
        rows = ", ".join(str(p.row) for p in same[:first])
        out.append(Problem(same[0].file, same[0].row, same[0].column,
                           f"{len(same)} cells alike (first rows {rows}, ...): {same[0].message}", same[0].severity))
    return out

def currency_of(file: str, marks: dict[str, dict[str, int]], header: list[str], found: dict[str, int],
                 table: c.TableRule) -> tuple[tuple[frozenset, tuple] | None, list[Problem]]:
    """The currency a file's money columns hold (ISO 4217 codes it may be, and the marks seen), and an
    error for a column, or a file, mixing currency marks that cannot be one currency."""
    problems: list[Problem] = []
    seen: dict[str, tuple[str, int | None]] = {}
    for rule in table.columns:
        unit = split_unit(header[found[rule.name]])[1] if rule.name in found and rule.kind in (c.MONEY, c.AMOUNT) else None
        if unit and (unit.upper() in ISO_4217 or unit in SIGN_CODES):
            seen.setdefault(unit, (header[found[rule.name]], None))
    for name, found_marks in marks.items():
        codes = [codes_of(m) for m in found_marks]
        if frozenset.intersection(*codes):
            for m, row in found_marks.items():
                seen.setdefault(m, (header[found[name]], row))
            continue
        listed = " and ".join(f"'{m}' (row {row})" for m, row in found_marks.items())
        problems.append(Problem(file, max(found_marks.values()), header[found[name]],
                                f"the column mixes currencies: {listed}; an account holds one currency (ISO 4217), "
                                "and amounts in two are not added up. Split the file by marketplace, or convert the "
                                "amounts to one currency"))
    if problems or not seen:
        return None, problems
    codes = frozenset.intersection(*(codes_of(m) for m in seen))
    if not codes:
        listed = " and ".join(f"'{m}' ({col}" + (f", row {row})" if row else ")") for m, (col, row) in seen.items())
        return None, [Problem(file, None, None, f"the file's amounts are in different currencies: {listed}; an "
                                                "account holds one currency (ISO 4217). Export one marketplace per "
                                                "folder")]
    return (codes, tuple(sorted(seen))), []

ID_TABLES = ("catalog", "store_sales", "ad_products", "inventory")  # the tables whose product IDs are matched to each other
_DIGITS_ID = r"\d+(?:\.0+)?"  # digits only, or a number a spreadsheet wrote back as 101.0


def _id_key(text: str) -> str:
    """A digit-only product ID compared as its number: without leading zeros and without a stored '.0'."""
    return text.split(".")[0].lstrip("0") or "0"


def same_product_ids(tables: dict[str, pd.DataFrame | None]) -> list[Problem]:
    """Digit-only product IDs made one across files (in place): 00101, 101 and 101.0 are one product.

    IDs are compared as text; a digit-only ID loses its leading zeros in a spreadsheet and gains
    '.0' when a spreadsheet stores it as a number, so such IDs are compared by their number and
    written as the catalog writes them (else as the first file that holds them does). Two
    spellings of one number in one file are refused: which product each means cannot be known.
    """
    problems: list[Problem] = []
    spelling: dict[str, str] = {}
    for name in ID_TABLES:
        frame = tables.get(name)
        if frame is None or not len(frame):
            continue
        ids = frame["product_id"].astype(str)
        digits = ids.str.fullmatch(_DIGITS_ID)
        if not digits.any():
            continue
        keys = ids[digits].map(_id_key)
        forms = pd.DataFrame({"key": keys, "id": ids[digits], "row": frame.loc[digits, "_row"]})
        clash = forms.groupby("key")["id"].nunique()
        file, header = frame.attrs["file"], frame.attrs["headers"]["product_id"]
        for key in clash[clash > 1].index:
            group = forms[forms["key"] == key].drop_duplicates("id")
            written = ", ".join(f"'{i}' (row {r})" for i, r in zip(group["id"], group["row"]))
            problems.append(Problem(file, int(group["row"].iloc[1]), header,
                                    f"the product IDs {written} are one number written two ways; digit-only IDs "
                                    "are compared without leading zeros (a spreadsheet drops them), so these would "
                                    "be one product. Write each product's ID one way"))
        for key, text in zip(keys, ids[digits]):
            spelling.setdefault(key, text)
        rewritten = keys.map(spelling)
        changed = int((rewritten != ids[digits]).sum())
        frame.loc[digits, "product_id"] = rewritten
        frame.attrs["id_note"] = ("digit-only IDs compared as numbers, without leading zeros or a stored '.0'" +
                                  (f"; {changed} written as {'the catalog' if name != 'catalog' else 'here'} "
                                   "writes them" if changed else ""))
        if changed:
            first = rewritten[rewritten != ids[digits]].index[0]
            problems.append(Problem(file, int(frame.loc[first, "_row"]), header,
                                    f"{changed} digit-only product ID(s) are written differently from an earlier file "
                                    f"(first: '{ids[first]}', read as '{rewritten[first]}'); compared without "
                                    "leading zeros", WARNING))
    return problems

def account_currency(tables: dict[str, pd.DataFrame | None], settings: Settings) -> tuple[str, list[Problem]]:
    """The one currency of the account's amounts, as their marks and headers show it (ISO 4217; shown on
    the Guide and by inspect); an error when files hold different currencies, a warning when
    currency_symbol names another."""
    marked = {f.attrs["file"]: f.attrs["currency"] for f in tables.values()
              if f is not None and f.attrs.get("currency")}
    if not marked:
        return "", []
    codes = frozenset.intersection(*(codes for codes, _ in marked.values()))
    files = ", ".join(marked)
    if not codes:
        listed = "; ".join(f"{file} {' '.join(marks)}" for file, (_, marks) in marked.items())
        return "", [Problem(files, None, None, f"the exports hold amounts in different currencies ({listed}); an "
                                               "account holds one currency (ISO 4217). Put each marketplace's "
                                               "exports in a folder of its own")]
    marks = {m for _, found in marked.values() for m in found}
    label = currency_label(codes, marks)
    if codes & codes_of(settings.currency_symbol):
        return label, []
    return label, [Problem(files, None, None, f"the amounts are in {label}, as their currency marks and headers "
                                              f"show, but currency_symbol is '{settings.currency_symbol}'; set it "
                                              "in settings.toml so the workbook labels amounts rightly", WARNING)]


# Ad types whose orders may outnumber clicks: display and video ads credit orders to views (view-through).
VIEWED_AD_TYPES = ("display", "video", "viewthrough")


def view_through_campaigns(tables: dict[str, pd.DataFrame | None]) -> set[str]:
    """The campaigns whose ad type (on campaigns or ad_products) is display, video or view-through."""
    found: set[str] = set()
    for name in ("campaigns", "ad_products"):
        frame = tables.get(name)
        if frame is not None and "ad_type" in frame:
            viewed = frame["ad_type"].map(lambda t: any(v in c.header_key(t) for v in VIEWED_AD_TYPES))
            found |= set(frame.loc[viewed, "campaign"])
    return found


def orders_above_clicks(name: str, frame: pd.DataFrame, viewed: set[str], settings: Settings) -> list[Problem]:
    """Rows with more orders than clicks: an error, except on display, video and view-through campaigns
    (or anywhere with orders_above_clicks = "accept"), where the orders are read as the clicks so that
    conversion rates stay at most one order per click (in place), with a warning saying so."""
    over = frame["orders"] > frame["clicks"]
    if not over.any():
        return []
    file, header = frame.attrs["file"], frame.attrs["headers"]["orders"]
    allowed = over if settings.orders_above_clicks == "accept" else over & frame["campaign"].isin(viewed)
    problems = grouped_problems([Problem(file, int(row), header, f"orders ({orders:g}) are more than clicks "
                                                                 f"({clicks:g}); expected at most one order per click "
                                                                 "outside display and video ads (set "
                                                                 "orders_above_clicks = \"accept\" in settings.toml "
                                                                 "if this export counts view-through orders)")
                                 for row, orders, clicks in zip(frame.loc[over & ~allowed, "_row"],
                                                                frame.loc[over & ~allowed, "orders"],
                                                                frame.loc[over & ~allowed, "clicks"])])
    if allowed.any():
        rows = ", ".join(str(r) for r in frame.loc[allowed, "_row"].head(5))
        frame.loc[allowed, "orders"] = frame.loc[allowed, "clicks"]
        why = ("orders_above_clicks = \"accept\"" if settings.orders_above_clicks == "accept"
               else "display, video or view-through ads, which credit orders to views")
        problems.append(Problem(file, int(frame.loc[allowed, "_row"].iloc[0]), header,
                                f"{int(allowed.sum())} row(s) have more orders than clicks ({why}; rows {rows}"
                                f"{', ...' if allowed.sum() > 5 else ''}): their orders are read as their clicks, so "
                                "conversion rates stay at most one order per click; their ad sales are kept as "
                                "written", WARNING))
    return problems
