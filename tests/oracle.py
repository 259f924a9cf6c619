"""An independent reference for the Profit sheet, written from the definitions in the
README (common practice in the trade), in plain Python loops over the input rows.

It shares nothing with sheetbuilder's planning code but the readers' frames, so a
mistake in a formula template or in the planner's pandas reference shows up as a
disagreement here.
"""
from __future__ import annotations

import math
from collections import defaultdict

BLANK = None


def _div(a, b):
    if a is BLANK or b is BLANK or b == 0:
        return BLANK
    return a / b


def profit_oracle(tables, settings, catalog_edits=None):
    """{product_id: {header: value}} and the totals row {header: value}.

    catalog_edits: {(product_id, column): value} applied to the catalog first, as a user
    typing into in_catalog would.
    """
    catalog = {}
    if tables.get("catalog") is not None:
        for row in tables["catalog"].to_dict("records"):
            catalog[row["product_id"]] = dict(row)
    for (pid, column), value in (catalog_edits or {}).items():
        catalog[pid][column] = value
    units, revenue, spend, ad_sales = (defaultdict(float) for _ in range(4))
    ids = set(catalog)
    for row in tables["store_sales"].to_dict("records"):
        units[row["product_id"]] += row["units"]
        revenue[row["product_id"]] += row["revenue"]
        ids.add(row["product_id"])
    for row in tables["ad_products"].to_dict("records"):
        spend[row["product_id"]] += row["spend"]
        ad_sales[row["product_id"]] += row["ad_sales"]
        ids.add(row["product_id"])
    total_revenue = sum(revenue[p] for p in ids)
    total_spend = sum(spend[p] for p in ids)
    out = {}
    for pid in sorted(ids):
        cat = catalog.get(pid)
        margin = BLANK
        target = settings.default_target_acos
        if cat is not None:
            given = cat.get("margin")
            if given is not None and not (isinstance(given, float) and math.isnan(given)):
                margin = given
            elif cat["price"] != 0:
                margin = (cat["price"] - cat["unit_cost"] - cat["fees_per_unit"]) / cat["price"]
            t = cat.get("target_acos")
            if t is not None and not (isinstance(t, float) and math.isnan(t)):
                target = t
        rev, sp = revenue[pid], spend[pid]
        tacos = _div(sp, rev)
        net_margin = BLANK if margin is BLANK or tacos is BLANK else margin - tacos
        sales_share = _div(rev, total_revenue)
        spend_share = _div(sp, total_spend)
        ratio = _div(spend_share, sales_share)
        if rev == 0:
            status = "no sales"
        elif margin is BLANK:
            status = "no margin"
        elif net_margin < 0:
            status = "loss"
        elif net_margin < settings.thin_margin:
            status = "thin"
        elif net_margin >= settings.strong_margin:
            status = "strong"
        else:
            status = "healthy"
        if ratio is not BLANK and status in ("loss", "thin") and ratio > 1:
            direction = "cut"
        elif ratio is not BLANK and status == "strong" and ratio < 1:
            direction = "grow"
        else:
            direction = "hold"
        out[pid] = {
            "Product ID": pid,
            "Product name": cat["product_name"] if cat else "",
            "Units": units[pid], "Revenue": rev, "Ad spend": sp, "Ad sales": ad_sales[pid],
            "TACoS": tacos, "ACoS": _div(sp, ad_sales[pid]),
            "Margin before ads": margin, "Break-even ACoS": margin, "Target ACoS": target,
            "Net margin after ads": net_margin,
            "Net profit after ads": BLANK if margin is BLANK else rev * margin - sp,
            "Sales share": sales_share, "Spend share": spend_share, "Spend-to-sales ratio": ratio,
            "Status": status, "Direction": direction,
        }
    with_margin = [r for r in out.values() if r["Margin before ads"] is not BLANK]
    rev_m = sum(r["Revenue"] for r in with_margin)
    totals = {
        "Product ID": "Total",
        "Units": sum(r["Units"] for r in out.values()),
        "Revenue": total_revenue, "Ad spend": total_spend,
        "Ad sales": sum(r["Ad sales"] for r in out.values()),
        "TACoS": _div(total_spend, total_revenue),
        "ACoS": _div(total_spend, sum(r["Ad sales"] for r in out.values())),
        "Margin before ads": _div(sum(r["Revenue"] * r["Margin before ads"] for r in with_margin), rev_m),
        "Net profit after ads": sum(r["Net profit after ads"] for r in with_margin),
        "Sales share": sum(r["Sales share"] or 0 for r in out.values()) if total_revenue else 0,
        "Spend share": sum(r["Spend share"] or 0 for r in out.values()) if total_spend else 0,
    }
    totals["Net margin after ads"] = _div(totals["Net profit after ads"], rev_m)
    return out, totals
