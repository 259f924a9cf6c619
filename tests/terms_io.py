"""The Terms, Harvest and Negatives sheets as the tests read them, and their oracle."""
from __future__ import annotations

from pathlib import Path

from oracle import profit_oracle
from oracle_terms import terms_oracle
from workbook_io import open_values, read_table
from sheetbuilder.pipeline import load

TERMS_HEADERS = ["Campaign", "Ad group", "From target", "From match type", "Search term", "Product ID",
                 "Impressions", "Clicks", "Spend", "Ad sales", "Orders", "CPC", "CVR", "ACoS", "Already targeted",
                 "Already negated", "Verdict", "Decision", "Final"]
# Starting bid is compared on Harvest, the list that computes it.
# The blended price and zero-order clicks the Verdict reads are compared through the Negatives' Rule and Threshold.
# What the long formulas test of the exported figures alone, each a plain value the oracle computes on its own.
TERMS_CHECKED = [h for h in TERMS_HEADERS if h != "Decision"] + ["Low stock", "New keyword", "Source negative fits"]
HARVEST_HEADERS = ["Number", "Search term", "Kind", "Match type", "Destination campaign", "Destination ad group",
                   "Starting bid", "Negative in source", "Source campaign", "Source ad group", "Product ID", "Orders",
                   "Spend", "ACoS", "Reason"]
NEGATIVE_HEADERS = ["Number", "Search term", "Campaign", "Ad group", "Level", "Negative match type", "Rule",
                    "Threshold", "Spend", "Clicks", "Product ID"]
TERMS_HEADER_ROW = 4
LIST_HEADER_ROW = 4


def terms_table(path: Path):
    """Terms rows by position, and their coordinates."""
    rows, _, coords = read_table(open_values(path)["Terms"], TERMS_HEADER_ROW, "Position", stop=None)
    return rows, coords


def list_table(path: Path, sheet: str):
    """The filled rows of a live list, by number (empty rows have a blank Search term)."""
    rows, _, _ = read_table(open_values(path)[sheet], LIST_HEADER_ROW, "Number", stop=None)
    return {k: r for k, r in rows.items() if r.get("Search term") not in (None, "")}


def terms_oracle_for(folder: Path, settings_changes=None, decisions=None):
    """(terms by position, harvest by number, negatives by number) from the oracle."""
    inputs, settings, _ = load(folder)
    if settings_changes:
        settings = settings.replace(**settings_changes)
    profit, _ = profit_oracle(inputs.tables, settings)
    rows, harvest, blocked = terms_oracle(inputs.tables, settings, profit, decisions)
    return ({r["Position"]: r for r in rows}, {r["Number"]: r for r in harvest}, {r["Number"]: r for r in blocked})
