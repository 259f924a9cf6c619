"""An independent reference for the Actions list, assembled from the Bids, Terms and Budget
references (tests/oracle.py, oracle_terms.py, oracle_mix.py) by the rules in the README:
every bid whose final differs from the current bid, every promoted term to add (with its
destination, or the reason to choose one), the negatives in source ad groups, the
negatives to add, and the daily budget changes of enabled campaigns; each row with its
product and the money at stake (the target's or term's spend, or the size of the budget
change). Within a kind the rows come largest money first; ties are left to the sheet, so
the reference is compared per kind as a sorted list plus that ordering rule.
"""
from __future__ import annotations

from collections import defaultdict

from oracle import bids_oracle, profit_oracle
from oracle_mix import budget_oracle, to_cents
from oracle_terms import terms_oracle

KINDS = ("bid", "add", "source negative", "add negative", "budget")


def actions_oracle(tables, settings) -> dict[str, list[tuple]]:
    """{kind group: [(kind, campaign, ad group, target, match type, current, new, reason, product, money)]}."""
    profit, _ = profit_oracle(tables, settings)
    out: dict[str, list[tuple]] = defaultdict(list)
    if tables.get("targets") is not None:
        for r in bids_oracle(tables, settings, profit).values():
            if r["Final bid"] != r["Current bid"]:
                out["bid"].append(("bid", r["Campaign"], r["Ad group"], r["Target"], r["Match type"],
                                   r["Current bid"], r["Final bid"], r["Reason"], r["Product ID"], r["Spend"]))
    if tables.get("search_terms") is not None and len(tables["search_terms"]):
        _, harvest, blocked = terms_oracle(tables, settings, profit)
        for h in harvest:
            kind = "add product target" if h["Kind"] == "product target" else "add keyword"
            reason = ("search term that sells" if h["Destination campaign"]
                      else "choose destination: a live campaign and ad group for this product")
            out["add"].append((kind, h["Destination campaign"], h["Destination ad group"], h["Search term"],
                               h["Match type"], None, h["Starting bid"], reason, h["Product ID"], h["Spend"]))
            if h["Negative in source"]:
                out["source negative"].append((
                    "add negative", h["Source campaign"], h["Source ad group"], h["Search term"], "negative exact",
                    None, None, "so the new keyword does not compete with its source", h["Product ID"], h["Spend"]))
        for b in blocked:
            out["add negative"].append(("add negative", b["Campaign"], b["Ad group"], b["Search term"],
                                        b["Negative match type"], None, None, b["Rule"], b["Product ID"],
                                        b["Spend"]))
    if tables.get("campaigns") is not None:
        _, campaigns = budget_oracle(tables, settings, profit)
        state, products = {}, defaultdict(set)
        for c in tables["campaigns"].to_dict("records"):
            state.setdefault(c["campaign"], c["state"])
        for a in tables["ad_products"].to_dict("records"):
            products[a["campaign"]].add(a["product_id"])
        for name, c in campaigns.items():
            if state[name] == "enabled" and c["Final budget"] != c["Daily budget"]:
                out["budget"].append(("budget", name, None, None, None, c["Daily budget"], c["Final budget"],
                                      "follows its products' spend", ", ".join(sorted(products[name])),
                                      # no money at stake where the Final is not a number (an invalid Decision)
                                      to_cents(abs(c["Final budget"] - c["Daily budget"]))
                                      if isinstance(c["Final budget"], (int, float)) else None))
    return out
