"""Totals rows under the data: recognised by their label and their sums, skipped and noted.

A row is a totals row when its key columns are blank, or the first non-blank one says
total (Total, Totals, Grand total, Subtotal, in any case) and the others are blank, and every
count and money cell it fills equals the sum of the data rows above it (to the cent). Such a
row is skipped. A row labelled total whose numbers are not those sums is an error: read as
data it would be counted twice; a blank-key row whose numbers are not the sums stays the
error its blank key is.
"""
from __future__ import annotations

import math

from sheetbuilder.reading import contract as c

TOTAL_LABELS = {"total", "totals", "grandtotal", "subtotal", "sum", "overalltotal"}
_KEY_NAMES = {"product_id", "campaign", "ad_group", "target", "search_term", "term"}


class RunningSums:
    """The sums of the count and money columns over the data rows read so far."""

    def __init__(self, table: c.TableRule, found: dict[str, int]):
        self.rules = [r for r in table.columns if r.kind in (c.COUNT, c.MONEY) and r.name in found]
        self.sums = {r.name: 0.0 for r in self.rules}
        self.rows = 0

    def add(self, record: dict) -> None:
        """Count one data row."""
        self.rows += 1
        for r in self.rules:
            value = record[r.name]
            if isinstance(value, float) and not math.isnan(value):
                self.sums[r.name] += value

    def mismatch(self, record: dict, row: list[str], found: dict[str, int]) -> str | None:
        """None when every filled count and money cell of record equals the sum above; else what differs."""
        if not self.rows:
            return "no rows above it"
        compared = 0
        for r in self.rules:
            col = found[r.name]
            if col >= len(row) or not row[col].strip():
                continue
            value = record[r.name]
            if not isinstance(value, float) or math.isnan(value):
                return f"{r.name} '{row[col]}' is not a number"
            if abs(value - self.sums[r.name]) > 0.005 + 1e-9 * abs(value):
                return f"{r.name} {value:g} where the rows above sum to {self.sums[r.name]:g}"
            compared += 1
        return None if compared else "no numbers"


def totals_label(row: list[str], table: c.TableRule, found: dict[str, int]) -> str | None:
    """'total' when the row's key columns say total, 'blank' when they are all blank, else None."""
    texts = [row[found[r.name]].strip() if found[r.name] < len(row) else ""
             for r in table.columns if r.name in _KEY_NAMES and r.name in found]
    filled = [t for t in texts if t]
    if not filled:
        return "blank"
    if len(filled) == 1 and c.header_key(filled[0]) in TOTAL_LABELS and texts[0] == filled[0]:
        return "total"
    return None
