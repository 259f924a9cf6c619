"""Finding each sheet we built in a saved workbook, whatever its tab is called now, and the copies of our tables.

A user may rename a tab, or copy one (a spreadsheet program's Copy sheet makes "Bids (2)" or "Bids_2").
Spreadsheet programs rewrite workbook-level defined names when a tab is renamed, and keep them on the
original when a tab is copied, so a sheet is found, in this order:

1. by the defined names the build writes on it (:data:`HOMES`: each name and the sheet it was written on);
2. by its own name, when no name says otherwise and no other sheet claimed it;
3. by its header row (:data:`SIGNATURES`: the headers a sheet's table starts with), among the sheets
   nothing else claimed: the in_ sheets (whose row 1 names their columns), Settings, Actions, History
   and each sheet with a typed column.

A sheet left over whose header row is that of a sheet with a typed column (Profit, Bids, Terms, Budget,
in_catalog) is a copy of it: its typed cells are compared with the original's by the reader
(:mod:`sheetbuilder.weekly.carry`), never read as edits.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any, Callable

from sheetbuilder.reading import contract as c
from sheetbuilder.reading.account import ACCOUNT_NAME
from sheetbuilder.reading.settings import SETTINGS
from sheetbuilder.sheets.actions import HEADER_ROW as ACTIONS_HEADER_ROW, HEADERS as ACTIONS_HEADERS, SHEET as ACTIONS
from sheetbuilder.sheets.followup import NAME as FOLLOWUP_NAME, SHEET as FOLLOWUP
from sheetbuilder.sheets.history import COLUMNS as HISTORY_COLUMNS, NAME as HISTORY_NAME, SHEET as HISTORY
from sheetbuilder.sheets.inputs import CATALOG_NAME, EDITABLE, EXPORTED, sheet_name
from sheetbuilder.sheets.settings_sheet import (DESTINATIONS_NAME, HEADERS as SETTINGS_HEADERS,
                                                SHEET as SETTINGS_SHEET)
from sheetbuilder.sheets.typed import ACTIONS_NAME, CARRIED_NAME, EDITABLE_TABLES, SCAN_ROWS, key_text
from sheetbuilder.sheets.unmatched import CARRIED_SHEET, SHEET as UNMATCHED

CATALOG = sheet_name("catalog")


def _homes() -> dict[str, str]:
    """{defined name: the sheet the build writes it on}."""
    out = {spec.key: SETTINGS_SHEET for spec in SETTINGS}
    out.update({"built_on": SETTINGS_SHEET, ACCOUNT_NAME: SETTINGS_SHEET, DESTINATIONS_NAME: SETTINGS_SHEET, ACTIONS_NAME: ACTIONS,
                FOLLOWUP_NAME: FOLLOWUP, HISTORY_NAME: HISTORY, f"{CARRIED_NAME}_sheet": CARRIED_SHEET})
    for decl in EDITABLE_TABLES:
        out.update({decl.name_of(k): decl.sheet for k in (*decl.keys, decl.value)})
    out.update({f"{CATALOG_NAME}_{col}": CATALOG
                for col in ("product_id", *EDITABLE["catalog"], *(EXPORTED + k for k in EDITABLE["catalog"]))})
    return out


HOMES = _homes()


@dataclass(frozen=True)
class Signature:
    """The headers one row near the top of a sheet holds (all of them), and how many top rows to look in."""

    sheet: str
    headers: tuple[str, ...]
    scan: int = SCAN_ROWS
    typed: bool = False  # the sheet holds a typed column: a copy of it is named, never read


def _signatures() -> tuple[Signature, ...]:
    out = [Signature(sheet_name(rule.name), tuple(col.name for col in rule.columns if col.required), 1,
                     rule.name == "catalog") for rule in c.TABLES]
    out += [Signature(SETTINGS_SHEET, SETTINGS_HEADERS), Signature(ACTIONS, ACTIONS_HEADERS, ACTIONS_HEADER_ROW + 1),
            Signature(HISTORY, tuple(h for _, h, _, _ in HISTORY_COLUMNS))]
    seen: set[str] = set()
    for decl in EDITABLE_TABLES:  # one table per sheet: the first declared (Budget's products, not its campaigns)
        if decl.sheet not in seen:
            seen.add(decl.sheet)
            out.append(Signature(decl.sheet, tuple(decl.headers[k] for k in (*decl.keys, decl.value)), typed=True))
    return tuple(out)


SIGNATURES = _signatures()
# Our other sheets: claimed by their own names, so that only sheets a user added are read for a header.
OTHER_SHEETS = ("Guide", "Profit", "Bids", "Terms", "Harvest", "Negatives", "Mix", "Budget", "Groups", "Keys",
                UNMATCHED, CARRIED_SHEET, FOLLOWUP)


@dataclass
class Tabs:
    """Where our sheets are in a saved workbook.

    Attributes:
        found: {sheet as built: sheet now} for every sheet found.
        copies: {sheet as built: [sheets now]} of the sheets a user copied from one with a typed column.
    """

    found: dict[str, str] = field(default_factory=dict)
    copies: dict[str, list[str]] = field(default_factory=dict)

    def renamed(self) -> dict[str, str]:
        """{sheet as built: sheet now} of the sheets whose tab was renamed."""
        return {built: now for built, now in self.found.items() if built != now}


def _matches(rows: list[list[Any]], sig: Signature) -> bool:
    """Whether one of the first rows holds every header of the signature."""
    return any(all(h in {key_text(v) for v in row} for h in sig.headers) for row in rows[:sig.scan])


def find_tabs(sheetnames: list[str], name_sheet: Callable[[str], str | None],
              head: Callable[[str, int], list[list[Any]]]) -> Tabs:
    """Where each sheet we build is in a saved workbook (see the module's docstring).

    Args:
        sheetnames: the workbook's sheets, in order.
        name_sheet: the sheet a workbook-level defined name points at (None when it is missing or broken).
        head: the first n rows of a sheet.
    """
    tabs = Tabs()
    for name, home in HOMES.items():
        if home not in tabs.found and (now := name_sheet(name)) is not None and now in sheetnames:
            tabs.found[home] = now
    claimed = set(tabs.found.values())
    for sheet in (*(s.sheet for s in SIGNATURES), *OTHER_SHEETS):
        if sheet not in tabs.found and sheet in sheetnames and sheet not in claimed:
            tabs.found[sheet] = sheet
            claimed.add(sheet)
    deepest = max(s.scan for s in SIGNATURES)
    for sheet in (s for s in sheetnames if s not in claimed):
        rows = head(sheet, deepest)
        matched = sorted((s for s in SIGNATURES if _matches(rows, s)), key=lambda s: -len(s.headers))
        if not matched:
            continue
        best = matched[0]
        if best.sheet not in tabs.found:
            tabs.found[best.sheet] = sheet
        elif best.typed:
            tabs.copies.setdefault(best.sheet, []).append(sheet)
    return tabs
