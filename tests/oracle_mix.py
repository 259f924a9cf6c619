"""An independent reference for the Mix and Budget sheets, in plain Python from the README's rules.

The benchmark shares (product 85%, brand 10%, display 5%) are the trade's rule of thumb:
common practice, no source.
"""
from __future__ import annotations

from collections import defaultdict
from decimal import ROUND_HALF_UP, Decimal

from sheetbuilder.reading.contract import header_key
from sheetbuilder.reading.normalise import normalise

BLANK = None
MATCHES = ["exact", "phrase", "broad", "product", "auto"]


def to_cents(value):
    """A money difference to the cent as a spreadsheet's ROUND(value, 2) gives it: half away from zero on the
    value's 15-digit decimal form (Excel's ROUND documentation; LibreOffice Calc the same)."""
    return float(Decimal(f"{value:.15g}").quantize(Decimal("0.01"), rounding=ROUND_HALF_UP)) + 0.0


def _div(a, b):
    return BLANK if b == 0 or b is BLANK or a is BLANK else a / b


def mix_oracle(tables, settings, profit_rows):
    """{'types': {label: row}, 'products': {(product, match): row}, 'top': {product: row}, 'by_match': {...}}."""
    ads = tables["ad_products"].to_dict("records")
    types = {}
    labels = {}
    for r in ads:
        key = header_key(r["ad_type"])
        labels.setdefault(key, r["ad_type"])
        t = types.setdefault(key, defaultdict(float))
        for k in ("spend", "ad_sales", "orders", "clicks"):
            t[k] += r[k]
    total = sum(t["spend"] for t in types.values())
    bench = {header_key(k): (k, v) for k, v in settings.ad_type_benchmarks.items()}
    for key, (label, _) in bench.items():  # a benchmark type that does not run: every sum is 0
        if key not in types:
            types[key], labels[key] = defaultdict(float), label
    out_types = {}
    for key in sorted(types):
        t = types[key]
        b = bench.get(key, (None, BLANK))[1]
        share = _div(t["spend"], total)
        out_types[labels[key]] = {"Spend": t["spend"], "Ad sales": t["ad_sales"], "Orders": t["orders"],
                                  "Clicks": t["clicks"], "ACoS": _div(t["spend"], t["ad_sales"]),
                                  "CPC": _div(t["spend"], t["clicks"]), "CVR": _div(t["orders"], t["clicks"]),
                                  "Share of spend": share, "Benchmark share": b,
                                  "Gap": BLANK if share is BLANK or b is BLANK else share - b,
                                  "Note": "not running" if t["spend"] == 0 else ""}
    first_product = {}
    for r in ads:
        g = (r["campaign"], r["ad_group"])
        first_product[g] = min(first_product.get(g, r["product_id"]), r["product_id"])
    campaign_state = {}
    if tables.get("campaigns") is not None:
        for c in tables["campaigns"].to_dict("records"):
            campaign_state.setdefault(c["campaign"], c["state"])
    blocks = {}
    keywords = defaultdict(set)
    by_match = {m: defaultdict(float) for m in MATCHES}
    targets = tables.get("targets")
    for t in ([] if targets is None else targets.to_dict("records")):
        by_match[t["match_type"]]["spend"] += t["spend"]
        by_match[t["match_type"]]["ad_sales"] += t["ad_sales"]
        p = first_product.get((t["campaign"], t["ad_group"]))
        if p is None:
            continue
        b = blocks.setdefault((p, t["match_type"]), defaultdict(float))
        live = t["state"] == "enabled" and campaign_state.get(t["campaign"], "enabled") == "enabled"
        b["live"] += 1 if live else 0
        for k in ("spend", "ad_sales", "orders", "clicks"):
            b[k] += t[k]
        if t["match_type"] in ("exact", "phrase", "broad"):
            keywords[(p, t["match_type"])].add(normalise(t["target"]))
    products = {}
    for (p, m), b in blocks.items():
        p_spend = sum(v["spend"] for (q, _), v in blocks.items() if q == p)
        p_sales = sum(v["ad_sales"] for (q, _), v in blocks.items() if q == p)
        acos = _div(b["spend"], b["ad_sales"])
        others = _div(p_spend - b["spend"], p_sales - b["ad_sales"])
        if others is BLANK:
            signal = "hold"
        elif acos is BLANK:
            signal = "trim" if b["spend"] > 0 else "hold"
        elif acos > others + settings.mix_margin:
            signal = "trim"
        elif acos < others - settings.mix_margin:
            signal = "expand"
        else:
            signal = "hold"
        to_add = BLANK
        if signal == "expand" and m in ("exact", "phrase", "broad"):
            elsewhere = set().union(*[keywords[(p, o)] for o in ("exact", "phrase", "broad") if o != m])
            to_add = len(keywords[(p, m)] - elsewhere)
        products[(p, m)] = {"Targets (enabled)": b["live"], "Spend": b["spend"], "Ad sales": b["ad_sales"],
                            "Orders": b["orders"], "Clicks": b["clicks"], "ACoS": acos,
                            "CPC": _div(b["spend"], b["clicks"]), "CVR": _div(b["orders"], b["clicks"]),
                            "Share of product spend": _div(b["spend"], p_spend), "Others' ACoS": others,
                            "Signal": signal, "Keywords to add": to_add}
    ranked = sorted((r for r in profit_rows.values() if r["Ad spend"] > 0), key=lambda r: (-r["Ad spend"], r["Product ID"]))
    top = {r["Product ID"]: {"Spend share": r["Spend share"], "Sales share": r["Sales share"]} for r in ranked[:8]}
    spend_total = sum(r["Ad spend"] for r in profit_rows.values())
    revenue_total = sum(r["Revenue"] for r in profit_rows.values())
    top["All others"] = {
        "Spend share": BLANK if spend_total == 0 else 1 - sum(v["Spend share"] for v in top.values()),
        "Sales share": BLANK if revenue_total == 0 else 1 - sum(v["Sales share"] or 0 for v in top.values())}
    match_rows = {m: {"Spend": v["spend"], "Ad sales": v["ad_sales"], "ACoS": _div(v["spend"], v["ad_sales"])}
                  for m, v in by_match.items()} if targets is not None else {}
    return {"types": out_types, "products": products, "top": top, "by_match": match_rows}


def budget_oracle(tables, settings, profit_rows, product_decisions=None):
    """({product: row}, {campaign: row}): the budget-neutral shift and the campaign budgets."""
    share = settings.budget_shift_share
    cut = sum(r["Ad spend"] for r in profit_rows.values() if r["Direction"] == "cut")
    grow = sum(r["Revenue"] for r in profit_rows.values() if r["Direction"] == "grow")
    products = {}
    for pid, r in profit_rows.items():
        spend = r["Ad spend"]
        if cut == 0 or grow == 0 or r["Direction"] not in ("cut", "grow"):  # hold, and no ads: nothing moves
            proposed = spend
        elif r["Direction"] == "cut":
            proposed = spend * (1 - share)
        else:
            proposed = spend + share * cut * r["Revenue"] / grow
        typed = (product_decisions or {}).get(pid)
        if typed in (None, ""):
            final = proposed
        elif isinstance(typed, str):  # any text other than keep is shown as invalid
            final = spend if typed.lower() == "keep" else "invalid"
        else:
            final = float(typed)
        products[pid] = {"Direction": r["Direction"], "Revenue": r["Revenue"], "Current spend": spend,
                         "Proposed spend": proposed, "Change": to_cents(proposed - spend), "Final spend": final,
                         "_ratio": 1.0 if spend == 0 or final == "invalid" else final / spend}
    campaigns = {}
    if tables.get("campaigns") is not None:
        links = defaultdict(lambda: defaultdict(float))
        for a in tables["ad_products"].to_dict("records"):
            links[a["campaign"]][a["product_id"]] += a["spend"]
        for c in tables["campaigns"].to_dict("records"):
            if c["campaign"] not in links or c["daily_budget"] != c["daily_budget"]:
                continue
            w = links[c["campaign"]]
            total = sum(w.values())
            if total == 0:
                scale = sum(products[p]["_ratio"] for p in w) / len(w)
            else:
                scale = sum(w[p] * products[p]["_ratio"] for p in w) / total
            factor = min(1 + settings.max_budget_change, max(1 - settings.max_budget_change, scale))
            proposed = float(Decimal(f"{c['daily_budget'] * factor:.15g}").quantize(Decimal(1), rounding=ROUND_HALF_UP))
            campaigns[c["campaign"]] = {"Daily budget": c["daily_budget"], "Ad spend": total, "Spend change": scale,
                                        "Proposed budget": proposed, "Change": to_cents(proposed - c["daily_budget"]),
                                        "Final budget": proposed}
    return products, campaigns
