"""The Bids sheet's layout as the tests read it, and the oracle for a built account."""
from __future__ import annotations

from pathlib import Path

from oracle import bids_oracle, profit_oracle
from workbook_io import open_values, read_table
from sheetbuilder.pipeline import load

BIDS_HEADERS = ["Campaign", "Ad group", "Target", "Match type", "Product ID", "Impressions", "Clicks", "Spend",
                "Ad sales", "Orders", "CPC", "CVR", "ACoS", "Aim ACoS", "Current bid", "Value bid",
                "Waste probability", "Proposed bid", "Change", "Reason", "Decision", "Final bid"]
# The pooled conversion rates' working columns (values computed from the exports and the keyword history).
POOLED = ["History clicks", "History orders", "History spend", "History ad sales", "CPC-to-bid ratio", "Ratio source",
          "Prior a", "Prior b", "Never-converting share", "Converts probability", "Posterior CVR"]
# The zero-order clicks the Rule reads (the ad group's blend on Groups) are compared through the Reason's text.
# The working values the long formulas share (order value, the prior's shapes in use, the step bid before the floor
# and ceiling), each computed by the oracle on its own.
SHARED = ["Order value", "Prior a in use", "Prior b in use", "Step bid"]
CHECKED = [h for h in BIDS_HEADERS if h != "Decision"] + POOLED + ["Product CVR", "Target check", "Low stock"] + SHARED
HEADER_ROW = 4  # 1-based: title, note, blank, header


def bids_table(path: Path):
    """(rows by their target's row in targets.csv, coordinates) of the Bids sheet's stored values."""
    wb = open_values(path)
    rows, _, coords = read_table(wb["Bids"], HEADER_ROW, "Target row", stop=None)
    source, _, _ = read_table(wb["in_targets"], 1, "source_row", stop=None)
    position = {i: row for i, row in enumerate(source, start=1)}  # in_targets position -> file row
    return ({position[k]: r for k, r in rows.items()}, {position[k]: c for k, c in coords.items()})


def bids_oracle_for(folder: Path, settings_changes=None, target_overrides=None, decisions=None):
    """The oracle's Bids rows for the account in folder."""
    inputs, settings, _ = load(folder)
    if settings_changes:
        settings = settings.replace(**settings_changes)
    profit, _ = profit_oracle(inputs.tables, settings, target_overrides=target_overrides)
    return bids_oracle(inputs.tables, settings, profit, decisions)


def blends_table(path: Path) -> dict[int, dict]:
    """The ad-group blends table on Groups (below its first table, from its header row), rows by their position."""
    rows = list(open_values(path)["Groups"].iter_rows(values_only=True))
    header = next(i for i, r in enumerate(rows) if r and r[0] == "Campaign" and "Group first row" in r)
    names = rows[header]
    out = {}
    for k, r in enumerate(rows[header + 1:], start=1):
        if r is None or r[0] is None:
            break
        out[k] = dict(zip(names, r))
    return out
