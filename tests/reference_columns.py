"""Which planned columns the three-way tests compare with the independent reference, in one place.

The three-way tests take their column lists from here (Profit, Bids, Terms, Harvest and
Negatives through their *_io modules). tests/test_reference_coverage.py fails when a planned
formula column is in no list and not named in UNCOVERED with its reason, and
workbook_io.mismatches fails when the reference has no value for a listed column, so a
column without a reference check can no longer be skipped in silence.
"""
from __future__ import annotations

from bids_io import CHECKED as BIDS_CHECKED
from profit_io import PROFIT_CHECKED
from terms_io import HARVEST_HEADERS, NEGATIVE_HEADERS, TERMS_CHECKED

MIX_TYPES = ["Spend", "Ad sales", "Orders", "Clicks", "ACoS", "CPC", "CVR", "Share of spend", "Benchmark share", "Gap",
             "Note"]
MIX_TOP = ["Spend share", "Sales share"]
MIX_BY_MATCH = ["Spend", "Ad sales", "ACoS"]
MIX_PRODUCTS = ["Targets (enabled)", "Spend", "Ad sales", "Orders", "Clicks", "ACoS", "CPC", "CVR",
                "Share of product spend", "Others' ACoS", "Signal", "Keywords to add"]
BUDGET_PRODUCTS = ["Direction", "Revenue", "Current spend", "Proposed spend", "Change", "Final spend"]
BUDGET_CAMPAIGNS = ["Daily budget", "Ad spend", "Spend change", "Proposed budget", "Change", "Final budget"]

# {planned table (Plan.tables' name): headers compared with the reference on the demo and generated accounts}
COMPARED = {
    "Profit": PROFIT_CHECKED, "Bids": BIDS_CHECKED, "Terms": TERMS_CHECKED, "Harvest": HARVEST_HEADERS,
    "Negatives": NEGATIVE_HEADERS, "Mix ad types": MIX_TYPES, "Mix top products": MIX_TOP,
    "Mix match types": MIX_BY_MATCH, "Mix products": MIX_PRODUCTS, "Budget products": BUDGET_PRODUCTS,
    "Budget campaigns": BUDGET_CAMPAIGNS,
}

_HELPER = ("hidden working column; its value reaches a compared column (the engines check its cached value "
           "against `formulas`, LibreOffice and Gnumeric, but no reference computes it on its own)")
_LIST_KEY = ("hidden binary-search key of a live list (its whole part the running count); what it selects is compared row by row "
             "(the list's rows and their order equal the reference's)")
_BLENDS = ("the ad-group blends table, computed once per ad group; compared through every Bids and Terms row that "
           "fetches it (Target ACoS, Product CVR, Zero-order clicks, Target check, Product price, Low stock) or uses it "
           "(Value bid, Starting bid)")
_NO_ORACLE = "no independent reference exists for this table yet; only the planner's pandas twin and the engines check it"

_ROW_NOW = ("hidden row helper: the row a sort may have moved a product or term to, equal to the build position "
            "while unsorted (the engines compare it with that planned value); the sort tests in "
            "tests/test_survives_real_hands.py check every figure it feeds after LibreOffice sorts the sheet")

# {(planned table, header): why no reference compares it today}. Shrink this list by adding references.
UNCOVERED = {
    **{("Profit", h): _HELPER for h in ("Ad clicks", "Ad orders", "Product CVR", "Product order value",
                                        "Product price", "Gross profit before ads", "Revenue with a margin")},
    ("Bids", "Rule"): _HELPER,
    ("Bids", "Changes key"): _LIST_KEY,
    **{("Blends", h): _BLENDS for h in ("Aim ACoS", "Product CVR", "Product order value", "Product price",
                                        "Zero-order clicks", "Target check", "Low stock")},
    ("Blends", "Group weight"): _NO_ORACLE,
    **{("Terms", h): _LIST_KEY for h in ("Promoted terms key", "Blocked terms key")},
    **{("Harvest", h): _HELPER for h in ("Value bid", "Terms row")},
    ("Harvest", "Source negatives key"): _LIST_KEY,
    ("Negatives", "Terms row"): _HELPER,
    **{("Mix products", h): _HELPER for h in ("Product spend", "Product sales")},
    ("Budget products", "Change %"): "shown beside Change; the reference does not compute the percentage yet",
    **{("Budget products", h): _HELPER for h in ("Spend to cut", "Revenue to grow", "Final / current")},
    ("Budget campaigns", "Changes key"): _LIST_KEY,
    **{("Budget links", h): _NO_ORACLE for h in ("Ad spend", "Spend change", "Spend x change")},
    **{("Groups", h): _NO_ORACLE for h in ("Ad spend", "Blend weight", "Weight x aim ACoS", "Weight x CVR",
                                           "Weight x order value", "Weight x price")},
    **{("Actions", h): "compared with the independent tests/oracle_actions.py in tests/test_change_list.py "
                       "(cached and LibreOffice values, rows matched by the change they make)"
       for h in ("Kind", "Campaign", "Ad group", "Target or term", "Match type", "Current", "New", "Reason",
                 "Product ID", "Money at stake", "Source row")},
    ("Groups", "Above break-even"): _NO_ORACLE,
    ("Groups", "Low stock"): ("Profit's Low stock fetched per product (Profit's is compared); its ad group's "
                              "blend is compared through every Bids and Terms row's Low stock"),
    ("Profit", "Catalog row now"): _ROW_NOW, ("Groups", "Profit row now"): _ROW_NOW,
    **{("Keys table 1 (not in Plan.tables)", h): _ROW_NOW for h in ("Negative from term row now",
                                                                  "Blocked term row now")},
    **{("Terms", h): "working column of the safe-change rules; checked through the Harvest, Negatives and "
                     "Actions lists it feeds (oracle_terms, oracle_actions) and the change-list properties"
       for h in ("Adds a keyword", "Negative in source", "Would block another term")},
    ("Keys table 1 (not in Plan.tables)", "Blocks"): "the Clashes table: checked through the Terms columns and "
                                                     "lists it feeds and the change-list properties",
}


def formula_columns(plan) -> dict[str, list[str]]:
    """{table name: headers of its formula and export-only columns} for every table on every sheet of the plan.

    An export-only column is written as a value (no input can change it), but is computed like a
    formula column, so it needs its reference check just the same (reference = written value).
    """
    names = {id(t.columns): name for name, t in plan.tables.items()}
    out = {}
    for sheet in plan.spec.sheets:
        for i, table in enumerate(([sheet.table] if sheet.table else []) + sheet.more):
            name = names.get(id(table.columns), f"{sheet.name} table {i + 1} (not in Plan.tables)")
            out[name] = [c.header for c in table.columns if c.formula is not None or c.style.endswith("_export")]
    return out
