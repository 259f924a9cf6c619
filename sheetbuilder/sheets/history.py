"""The History sheet: every change found applied, week after week, carried by ``--previous``.

Each build with ``--previous`` copies every row of the previous workbook's History (found
through the defined name over its body, by header text when the name is gone) and appends
the changes its Follow-up found applied this week. A row is never dropped: a History the
build cannot read is reported, not silently started afresh. The rows are plain values
(records of what happened), so filtering by a keyword shows its bid history over months.
"""
from __future__ import annotations

import datetime as dt
import math

from sheetbuilder.values import is_blank
from sheetbuilder.workbook.formula import col_letter, quote_sheet
from sheetbuilder.workbook.spec import DATA, Cell, Column, Sheet, Table

SHEET = "History"
NAME = "sb_history"
COLUMNS = (("week", "Week", "text", 12), ("kind", "Kind", "text", 16), ("campaign", "Campaign", "text", 26),
           ("ad_group", "Ad group", "text", 18), ("target", "Target or term", "text", 28),
           ("match_type", "Match type", "text", 14), ("from", "From", "money", 9), ("to", "To", "money", 9))
HEADER_ROW = 3  # 0-based: title, note, blank, then the header
NUMBERS = ("from", "to")


def week_of(period_end: dt.date | None, built_on: dt.date) -> str:
    """The Week a build's History rows read: the end of the period its exports cover (ISO date), or, when
    neither the exports' dates nor the settings give that end, the build date labelled as such."""
    if period_end is not None:
        return period_end.isoformat()
    return f"built {built_on.isoformat()} (no dates in the exports)"


def applied_rows(followup_rows: list[dict], week: str) -> list[dict]:
    """History rows for the follow-up rows found applied this week (from: last week's value, to: the planned).

    week is the text of the Week column (week_of).
    """
    out = []
    for r in followup_rows:
        if r["applied"] != "yes":
            continue
        out.append({"week": week, "kind": r["kind"], "campaign": r["campaign"],
                    "ad_group": r["ad_group"], "target": r["target"], "match_type": r["match_type"],
                    "from": None if r.get("was") is None or is_blank(r.get("was")) else float(r["was"]),
                    "to": None if r.get("planned") is None or is_blank(r.get("planned")) else float(r["planned"])})
    return out


def plan_history(rows: list[dict]) -> tuple[Sheet, list[tuple[str, str]]]:
    """The History sheet and the defined name over its body."""
    columns = [Column(header, style, DATA, [r[key] if r[key] is not None else math.nan for r in rows] if
                      key in NUMBERS else [r[key] for r in rows], width=width)
               for key, header, style, width in COLUMNS]
    above = [[Cell("History: every change found applied, week by week", style="title")],
             [Cell("Week is the last day of the period whose exports showed the change applied (the build date, "
                   "labelled, when the exports carry no dates); rows are carried into every "
                   "rebuild with --previous and never dropped. Filter by Target or term for a keyword's history.",
                   style="note")]]
    sheet = Sheet(SHEET, above=above, table=Table(HEADER_ROW, columns), freeze=(HEADER_ROW + 1, 0),
                  tab_color="#5A5A5A")
    last = HEADER_ROW + max(len(rows), 1) + 1  # 1-based row of the last body row
    return sheet, [(NAME, f"={quote_sheet(SHEET)}!$A${HEADER_ROW + 2}:${col_letter(len(COLUMNS) - 1)}${last}")]
