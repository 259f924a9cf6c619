"""The Profit sheet's layout as the tests read it, and the oracle for a built account."""
from __future__ import annotations

from pathlib import Path

from oracle import profit_oracle
from workbook_io import open_values, read_table
from sheetbuilder.pipeline import load

PROFIT_HEADERS = ["Product ID", "Product name", "Units", "Revenue", "Ad spend", "Ad sales", "TACoS", "ACoS",
                  "Margin before ads", "Break-even ACoS", "Target ACoS", "Net margin after ads",
                  "Net profit after ads", "Sales share", "Spend share", "Spend-to-sales ratio", "Days of cover",
                  "Status", "Direction"]
PROFIT_CHECKED = PROFIT_HEADERS + ["Target check", "Aim ACoS", "Why this aim", "Units available", "Low stock"]
HEADER_ROW = 5  # 1-based: title, caution, warning, blank, header


def profit_table(path: Path):
    """(rows by product, totals, coordinates) of the Profit sheet's stored values."""
    return read_table(open_values(path)["Profit"], HEADER_ROW, "Product ID")


def oracle_for(folder: Path, settings_changes=None, catalog_edits=None):
    """The oracle's Profit rows and totals for the account in folder."""
    inputs, settings, _ = load(folder)
    if settings_changes:
        settings = settings.replace(**settings_changes)
    return profit_oracle(inputs.tables, settings, catalog_edits)
