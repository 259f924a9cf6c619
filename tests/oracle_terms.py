"""An independent reference for the Terms, Harvest and Negatives sheets, written from the
rules in the README in plain Python loops over the input rows.

It shares with sheetbuilder only the readers' frames and the normalisation functions
(tested on their own against named examples).
"""
from __future__ import annotations

import math
from collections import defaultdict
from decimal import ROUND_HALF_UP, Decimal

from sheetbuilder.reading.normalise import contains_phrase, looks_like_product_id, normalise, words

BLANK = None


def _round_cents(x):
    return float(Decimal(f"{x:.15g}").quantize(Decimal("0.01"), rounding=ROUND_HALF_UP))


def _account(ads):
    clicks, orders, sales = defaultdict(float), defaultdict(float), defaultdict(float)
    for r in ads:
        clicks[r["product_id"]] += r["clicks"]
        orders[r["product_id"]] += r["orders"]
        sales[r["product_id"]] += r["ad_sales"]
    c, o = sum(clicks.values()), sum(orders.values())
    cvr = o / c if c else 0.0
    aov = sum(sales.values()) / o if o else 0.0
    product_cvr = {p: (orders[p] / clicks[p] if clicks[p] and orders[p] else cvr) for p in clicks}
    product_aov = {p: (sales[p] / orders[p] if orders[p] else aov) for p in clicks}
    return cvr, aov, product_cvr, product_aov


def terms_oracle(tables, settings, profit_rows, decisions=None):
    """(terms rows in sheet order, harvest rows, negatives rows); decisions: {position: typed}."""
    s, fold = settings, settings.fold_plurals
    ads = tables["ad_products"].to_dict("records")
    account_cvr, account_aov, p_cvr, p_aov = _account(ads)
    catalog = {r["product_id"]: r for r in tables["catalog"].to_dict("records")}
    weights = defaultdict(lambda: defaultdict(float))
    for r in ads:
        weights[(r["campaign"], r["ad_group"])][r["product_id"]] += r["spend"]

    def price(p):
        c = catalog.get(p)
        return c["price"] if c is not None and c["price"] > 0 else p_aov[p]

    def blend(group, value, fallback):
        w = weights.get(group)
        if not w:
            return fallback
        total = sum(w.values())
        if total == 0:
            return sum(value(p) for p in w) / len(w)
        return sum(w[p] * value(p) for p in w) / total

    exact_kw, exact_at = {}, set()
    targets = tables.get("targets")
    for t in ([] if targets is None else targets.to_dict("records")):
        if t["match_type"] == "exact" and t["state"] != "archived":
            exact_at.add((t["campaign"], t["ad_group"], normalise(t["target"], fold)))
            for p in sorted(weights.get((t["campaign"], t["ad_group"]), {})):
                exact_kw.setdefault((p, normalise(t["target"], fold)), f"{t['campaign']} / {t['ad_group']}")
    negatives = tables.get("negatives")
    negs = [] if negatives is None else negatives.to_dict("records")
    automatic, state = set(), {}
    if tables.get("campaigns") is not None:
        automatic = {c["campaign"] for c in tables["campaigns"].to_dict("records") if c["targeting"] == "automatic"}
        for c in tables["campaigns"].to_dict("records"):
            state.setdefault(c["campaign"], c["state"])

    def live(campaign):
        return state.get(campaign, "enabled") == "enabled"

    agg = {}
    for r in tables["search_terms"].to_dict("records"):
        key = (r["campaign"], r["ad_group"], normalise(r["search_term"], fold))
        a = agg.setdefault(key, {"term": r["search_term"], "rows": []})
        a["rows"].append(r)
    rows = []
    sums = {key: {k: sum(r[k] for r in agg[key]["rows"]) for k in ("impressions", "clicks", "spend", "ad_sales", "orders")}
            for key in agg}
    # Largest spend first (to the cent), then by campaign, ad group and term.
    for pos, key in enumerate(sorted(sorted(agg), key=lambda k: -round(sums[k]["spend"], 2)), start=1):
        campaign, ad_group, norm = key
        a = agg[key]
        m = sums[key]
        top = max(a["rows"], key=lambda r: r["clicks"])  # max keeps the first of equals
        group = (campaign, ad_group)
        products = sorted(weights.get(group, {}))
        label = "" if not products else (products[0] if len(products) == 1 else "shared: " + ", ".join(products))
        targeted = exact_kw.get((products[0], norm), "") if products else ""
        negated = ""
        for n in negs:
            if n["campaign"] != campaign or n["match_type"] != "negative exact" or n["ad_group"] not in ("", ad_group):
                continue
            if normalise(n["term"], fold) == norm:
                candidate = "negative exact, " + ("ad group" if n["ad_group"] else "campaign")
                if not negated or n["ad_group"]:
                    negated = candidate
        if not negated:
            for scope in (ad_group, ""):
                for n in negs:
                    if (n["campaign"] == campaign and n["match_type"] == "negative phrase" and n["ad_group"] == scope
                            and contains_phrase(norm, normalise(n["term"], fold))):
                        negated = f"negative phrase, {'ad group' if scope else 'campaign'}: {n['term']}"
                        break
                if negated:
                    break
        cvr_p = blend(group, lambda p: p_cvr[p], account_cvr)
        aov_p = blend(group, lambda p: p_aov[p], account_aov)
        price_p = blend(group, price, account_aov)
        target = blend(group, lambda p: profit_rows[p]["Aim ACoS"], s.default_target_acos)
        n0 = (math.ceil(math.log(1 - s.zero_order_confidence) / math.log(1 - cvr_p)) if 0 < cvr_p < 1 else BLANK)
        own_exact = top["match_type"] == "exact" and normalise(top["target"], fold) == norm
        spent = m["spend"] >= price_p * s.block_spend_multiple
        # Stock: any product of the source ad group low on stock (whatever its spend) holds what would be promoted.
        low = any(profit_rows[p]["Low stock"] == 1 for p in products)
        if m["orders"] >= s.min_promote_orders and not targeted and not own_exact:
            verdict = "low stock" if low else "promote"
        elif m["orders"] > 0:
            verdict = "keep" if targeted or own_exact else "watch"
        elif negated:
            verdict = "keep"
        elif spent or (n0 is not BLANK and m["clicks"] >= n0):
            verdict = "block"
        else:
            verdict = "watch"
        typed = (decisions or {}).get(pos)
        valid = ("promote", "block", "watch", "keep", "skip")  # any other typed value is shown as invalid
        final = verdict if typed in (None, "") else (
            typed.lower() if isinstance(typed, str) and typed.lower() in valid else "invalid")
        cpc = m["spend"] / m["clicks"] if m["clicks"] else BLANK
        k = s.prior_clicks
        order_value = m["ad_sales"] / m["orders"] if m["orders"] > 0 else aov_p
        value = BLANK if m["clicks"] + k == 0 else target * (m["orders"] + k * cvr_p) / (m["clicks"] + k) * order_value
        start = BLANK
        if cpc is not BLANK and value is not BLANK:
            base = {"cpc": cpc, "value": value}.get(s.starting_bid, min(cpc, value))
            start = min(s.bid_ceiling, max(s.bid_floor, _round_cents(base)))
        if campaign in automatic or top["match_type"] == "auto":
            dest = ("", "")
        else:
            dest = (campaign, ad_group)
        if products and products[0] in s.destinations:
            dest = s.destinations[products[0]]
        if dest[0] and not live(dest[0]):  # nothing goes into a paused or archived campaign
            dest = ("", "")
        rows.append({
            "Campaign": campaign, "Ad group": ad_group, "From target": top["target"],
            "From match type": top["match_type"], "Search term": a["term"], "Product ID": label, **{
                "Impressions": m["impressions"], "Clicks": m["clicks"], "Spend": m["spend"],
                "Ad sales": m["ad_sales"], "Orders": m["orders"]},
            "CPC": cpc, "CVR": m["orders"] / m["clicks"] if m["clicks"] else BLANK,
            "ACoS": m["spend"] / m["ad_sales"] if m["ad_sales"] else BLANK,
            "Already targeted": targeted, "Already negated": negated, "Verdict": verdict, "Final": final,
            "Position": pos, "Starting bid": start, "Zero-order clicks": n0, "Product price": price_p,
            "Low stock": 1.0 if low else 0.0,
            # 0 targeted or its own keyword; 1 new, but an exact keyword at its destination; 2 new, no destination;
            # 3 new, and promoting it adds a keyword there
            "New keyword": 0.0 if targeted or own_exact else 1.0 if (dest[0], dest[1], norm) in exact_at else
            2.0 if not dest[0] else 3.0,
            "Source negative fits": 1.0 if (top["match_type"] in ("broad", "phrase", "auto") and dest[0] != ""
                                            and dest != (campaign, ad_group) and live(campaign) and not negated)
            else 0.0,
            "_dest": dest, "_pid_like": looks_like_product_id(a["term"], s.product_id_pattern),
            "_words": words(a["term"]), "_spent": spent, "_norm": norm, "_live": live(campaign),
            "_new": not targeted and not own_exact and (dest[0], dest[1], norm) not in exact_at,
        })
    # The keywords the list adds: promoted, new for the product, with a destination.
    added = [(r["_dest"][0], r["_dest"][1], r["_norm"], r["Position"]) for r in rows
             if r["Final"] == "promote" and r["_new"] and r["_dest"][0]]

    # The terms that sold: a new negative must not cut them off where they sell.
    sold = [(r["Campaign"], r["Ad group"], r["_norm"], r["Position"]) for r in rows if r["Orders"] > 0]

    def blocks_added(campaign, ad_group, norm, phrase, skip, selling=False):
        """Whether a negative (ad_group '' = campaign level) blocks a keyword the list adds (or a term that sells)."""
        return any(c == campaign and (ad_group == "" or g == ad_group) and p != skip
                   and (contains_phrase(k, norm) if phrase else k == norm)
                   for c, g, k, p in added + (sold if selling else []))

    harvest, blocked = [], []
    for r in rows:
        if r["Final"] == "promote" and r["_new"]:
            kind = "product target" if r["_pid_like"] else "keyword"
            source_negative = (s.source_negative == "yes" and r["From match type"] in ("broad", "phrase", "auto")
                               and r["_dest"][0] != "" and r["_dest"] != (r["Campaign"], r["Ad group"])
                               and r["_live"] and not r["Already negated"]
                               and not blocks_added(r["Campaign"], r["Ad group"], r["_norm"], False, r["Position"]))
            harvest.append({
                "Number": len(harvest) + 1, "Search term": r["Search term"], "Kind": kind,
                "Match type": "product" if kind == "product target" else s.harvest_match_type,
                "Destination campaign": r["_dest"][0], "Destination ad group": r["_dest"][1],
                "Starting bid": r["Starting bid"],
                "Negative in source": "negative exact" if source_negative else "", "Spend": r["Spend"],
                "Source campaign": r["Campaign"], "Source ad group": r["Ad group"], "Product ID": r["Product ID"],
                "Orders": r["Orders"], "ACoS": r["ACoS"],
                "Reason": "choose destination" if not r["_dest"][0] else ""})
        level_group = "" if s.negative_level == "campaign" else r["Ad group"]
        phrase = r["_words"] < s.phrase_below_words
        if (r["Final"] == "block" and r["_live"] and not r["Already negated"]
                and not blocks_added(r["Campaign"], level_group, r["_norm"], phrase, r["Position"], selling=True)):
            if r["Verdict"] != "block":
                rule, threshold = "your decision", BLANK
            elif r["_spent"]:
                rule, threshold = "spend reached price x multiple", r["Product price"] * s.block_spend_multiple
            else:
                rule, threshold = f"no orders after {r['Zero-order clicks']} clicks", r["Zero-order clicks"]
            blocked.append({
                "Number": len(blocked) + 1, "Search term": r["Search term"], "Campaign": r["Campaign"],
                "Ad group": level_group, "Level": s.negative_level,
                "Negative match type": "negative phrase" if phrase else "negative exact",
                "Rule": rule, "Threshold": threshold, "Spend": r["Spend"], "Clicks": r["Clicks"],
                "Product ID": r["Product ID"]})
    return rows, harvest, blocked
