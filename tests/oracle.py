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


def _is_blank(v) -> bool:
    """A blank cell as the readers give it: None or NaN."""
    return v is None or (isinstance(v, float) and math.isnan(v))


def _div(a, b):
    if a is BLANK or b is BLANK or b == 0:
        return BLANK
    return a / b


def profit_oracle(tables, settings, catalog_edits=None, target_overrides=None):
    """{product_id: {header: value}} and the totals row {header: value}.

    catalog_edits: {(product_id, column): value} applied to the catalog first, as a user
    typing into in_catalog would. target_overrides: {product_id: target ACoS} typed into
    Profit's 'Your target ACoS' column.
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
    stock = None  # units available per product, every location summed (None: no inventory export)
    if tables.get("inventory") is not None:
        stock = defaultdict(float)
        for row in tables["inventory"].to_dict("records"):
            stock[row["product_id"]] += row["units_available"]
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
            elif not _is_blank(cat["price"]) and cat["price"] != 0 and not _is_blank(cat["unit_cost"]):
                # a blank price (a row to fill) or a blank unit cost (missing, never 0) gives no margin
                margin = (cat["price"] - cat["unit_cost"] - cat["fees_per_unit"]) / cat["price"]
            t = cat.get("target_acos")
            if t is not None and not (isinstance(t, float) and math.isnan(t)):
                target = t
        if pid in (target_overrides or {}):
            target = target_overrides[pid]
        rev, sp = revenue[pid], spend[pid]
        tacos = _div(sp, rev)
        net_margin = BLANK if margin is BLANK or tacos is BLANK else margin - tacos
        sales_share = _div(rev, total_revenue)
        spend_share = _div(sp, total_spend)
        ratio = _div(spend_share, sales_share)
        available = stock[pid] if stock is not None and pid in stock else BLANK
        # Days of cover: how long the units available last at the period's rate of units sold per day.
        cover = BLANK if available is BLANK else ("no sales" if units[pid] == 0
                                                  else available / (units[pid] / settings.period_days))
        low = isinstance(cover, float) and cover < settings.min_days_of_cover
        if (rev == 0 or available == 0) and sp > 0:  # spend with no sales, or on clicks no stock can convert
            status = "loss"
        elif rev == 0:
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
        if sp == 0:  # nothing to cut or to grow: a product to consider launching
            direction = "no ads"
        elif rev == 0:
            direction = "cut"
        elif ratio is not BLANK and status in ("loss", "thin") and ratio > 1:
            direction = "cut"
        elif low:  # never told to grow while its stock runs short
            direction = "low stock"
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
            "Status": status, "Direction": direction, "Days of cover": cover,
            "Units available": available, "Low stock": 1.0 if low else 0.0,
            # Break-even rule, common practice in the trade (no single source): above a target ACoS equal to
            # the margin before ads, each ad-driven sale loses money before any other cost.
            "Target check": "" if margin is BLANK or target <= margin else (
                "above break-even: bids use the aim" if settings.seek_profit == "yes" else
                "above break-even: bids use break-even" if settings.cap_target_at_break_even == "yes"
                else "above break-even: each ad sale loses money"),
            **aim_oracle(margin, target, settings),
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


def aim_oracle(margin, target, settings) -> dict:
    """{"Aim ACoS": ..., "Why this aim": ...} of one product, from the README's rule.

    Profit after ads at a bid b, with clicks k b^e, each click worth v in sales and costing about the bid
    (cost per click proportional to the bid), is pi(b) = m v k b^e - k b^(e+1), m the margin before ads.
    pi'(b) = k b^(e-1) (m v e - (e+1) b) = 0 at b* = m v e / (1 + e), and the ACoS there is spend / sales =
    b* / v = m e / (1 + e) (the inverse-elasticity rule; tests/test_aim.py checks it numerically with
    scipy.optimize). seek_profit yes aims at the lowest of target, break-even (m) and m e / (1 + e), never below
    0; no: at the target, capped at break-even (never below 0) when cap_target_at_break_even is yes.
    """
    e = settings.click_elasticity
    if margin is BLANK:
        return {"Aim ACoS": target, "Why this aim": "your target (no margin known)"}
    if settings.seek_profit == "yes":
        seeking = margin * e / (1 + e)
        aim = max(0.0, min(target, margin, seeking))
        if margin <= 0:
            why = "no positive margin: aim 0, bids cut"
        else:
            why = "your target" if target <= seeking else "profit-seeking (click elasticity on Settings)"
        return {"Aim ACoS": aim, "Why this aim": why}
    capped = settings.cap_target_at_break_even == "yes"
    if capped and margin <= 0:
        return {"Aim ACoS": max(0.0, margin) if target > margin else target,
                "Why this aim": "no positive margin: aim 0, bids cut"}
    if capped and target > margin:
        return {"Aim ACoS": margin, "Why this aim": "break-even"}
    return {"Aim ACoS": target, "Why this aim": "your target"}


def _half_away(x, digits=2):
    """Round half away from zero on the 15-significant-digit decimal value, as Excel and
    LibreOffice do (from memory of their documented behaviour: ROUND(2.675, 2) = 2.68)."""
    from decimal import ROUND_HALF_UP, Decimal
    return float(Decimal(f"{x:.15g}").quantize(Decimal(1).scaleb(-digits), rounding=ROUND_HALF_UP))


def bids_oracle(tables, settings, profit_rows, decisions=None, history=None):
    """{target's row in targets.csv: {header: value}} for every live target.

    Written from the method in the README: each keyword's history summed over its weeks; its
    product's Beta prior of keyword CVR (Kleinman's moments, zero-inflated: tests/oracle_pooled.py),
    or the product's CVR worth k clicks; the posterior mean CVR; value per click (Varian 2007) x
    target ACoS / CPC-to-bid ratio; the waste probability from the posterior (scipy.stats.beta);
    the zero-order click threshold n = ceil(ln(1 - confidence) / ln(1 - CVR)); steps capped per run
    except the cut on evidence.
    profit_rows: the Profit oracle's rows (for each product's target ACoS).
    decisions: {target's row in targets.csv: typed Decision}.
    history: {(campaign, ad group, target, match type), texts trimmed: [(clicks, orders, spend, ad sales, bid)
        per week]} over every recorded week, this week included; None: each keyword's history is this week's row.
    """
    from oracle_pooled import converts, waste, zero_inflated_prior

    s = settings
    ads = tables["ad_products"].to_dict("records")
    clicks_p, orders_p, sales_p = defaultdict(float), defaultdict(float), defaultdict(float)
    group_spend = defaultdict(lambda: defaultdict(float))
    for r in ads:
        clicks_p[r["product_id"]] += r["clicks"]
        orders_p[r["product_id"]] += r["orders"]
        sales_p[r["product_id"]] += r["ad_sales"]
        group_spend[(r["campaign"], r["ad_group"])][r["product_id"]] += r["spend"]
    all_clicks, all_orders = sum(clicks_p.values()), sum(orders_p.values())
    account_cvr = all_orders / all_clicks if all_clicks else 0.0
    account_aov = sum(sales_p.values()) / all_orders if all_orders else 0.0

    def product_cvr(p):
        return orders_p[p] / clicks_p[p] if clicks_p[p] and orders_p[p] else account_cvr

    def product_aov(p):
        return sales_p[p] / orders_p[p] if orders_p[p] else account_aov

    campaign_state = {}
    if tables.get("campaigns") is not None:
        for r in tables["campaigns"].to_dict("records"):
            campaign_state.setdefault(r["campaign"], r["state"])
    live = []
    for t in tables["targets"].to_dict("records"):
        if t["state"] != "enabled" or campaign_state.get(t["campaign"], "enabled") != "enabled":
            continue
        weeks = (history or {}).get(tuple(str(t[k]).strip() for k in ("campaign", "ad_group", "target", "match_type")))
        if weeks is None:  # no history: this week's row is the keyword's history
            weeks = [(t["clicks"], t["orders"], t["spend"], t["ad_sales"], t["bid"])]
        products = sorted(group_spend.get((t["campaign"], t["ad_group"]), {}))
        label = "" if not products else (products[0] if len(products) == 1 else "shared: " + ", ".join(products))
        live.append((t, weeks, products, label))
    priors = {}
    for label in {x[3] for x in live}:
        n = [sum(w[0] for w in x[1]) for x in live if x[3] == label]
        o = [sum(w[1] for w in x[1]) for x in live if x[3] == label]
        priors[label] = zero_inflated_prior(n, o)
    out = {}
    for t, weeks, products, label in live:
        i = t["_row"]
        weights = group_spend.get((t["campaign"], t["ad_group"]), {})
        if not products:
            target, cvr_p, aov_p = s.default_target_acos, account_cvr, account_aov
        else:
            total = sum(weights.values())
            if total:
                target = sum(weights[p] * profit_rows[p]["Aim ACoS"] for p in products) / total
                cvr_p = sum(weights[p] * product_cvr(p) for p in products) / total
                aov_p = sum(weights[p] * product_aov(p) for p in products) / total
            else:
                target = sum(profit_rows[p]["Aim ACoS"] for p in products) / len(products)
                cvr_p = sum(product_cvr(p) for p in products) / len(products)
                aov_p = sum(product_aov(p) for p in products) / len(products)
        clicks, orders, spend, sales, bid = t["clicks"], t["orders"], t["spend"], t["ad_sales"], t["bid"]
        n = sum(w[0] for w in weeks)
        o = sum(w[1] for w in weeks)
        h_spend = sum(w[2] for w in weeks)
        h_sales = sum(w[3] for w in weeks)
        priced = [w for w in weeks if not _is_blank(w[4])]
        at_bids = sum(w[0] * w[4] for w in priced)
        if at_bids > 0 and sum(w[2] for w in priced) > 0:
            ratio, source = sum(w[2] for w in priced) / at_bids, "history"
        elif clicks * bid > 0 and spend > 0:
            ratio, source = spend / (clicks * bid), "this week"
        else:
            ratio, source = 1.0, "none: 1 assumed"
        prior = priors[label]
        if prior is None:  # the fallback: the product's CVR worth k clicks
            k = s.prior_clicks
            a0, b0 = k * cvr_p, k * (1 - cvr_p)
        else:
            a0, b0 = prior[0], prior[1]
        w = converts(prior, n, o)
        post_cvr = w * (a0 + o) / (a0 + b0 + n) if a0 + b0 + n else BLANK
        order_value = h_sales / o if o > 0 else aov_p
        value = BLANK if post_cvr is BLANK or post_cvr * order_value == 0 else \
            post_cvr * order_value * target / ratio
        a, b = a0 + o, b0 + n - o
        p_waste = BLANK if value is BLANK or target <= 0 or a <= 0 or b <= 0 else \
            waste(w, a, b, ratio * bid / (order_value * target))
        evidence = p_waste is not BLANK and p_waste >= s.waste_confidence and value < bid
        n0 = math.ceil(math.log(1 - s.zero_order_confidence) / math.log(1 - cvr_p)) if 0 < cvr_p < 1 else BLANK
        cut_to, raise_to = bid * (1 - s.max_bid_cut), bid * (1 + s.max_bid_raise)
        low = any(profit_rows[p]["Low stock"] == 1 for p in products)
        moved = None  # the unrounded new bid where a rule moves it
        if n == 0:
            reason = "no clicks"
        elif o == 0 and evidence:  # the history has decided: cut before any allowance (study/gap.md)
            reason, moved = "cut on evidence: likely waste", value
        elif o == 0 and h_spend < s.exploration_orders * target * order_value:
            reason = "exploring: within allowance"
        elif o == 0 and n0 is not BLANK and n >= n0:
            reason, moved = f"no orders after {n0} clicks", cut_to
        elif value is BLANK:
            reason = "no order value yet"
        elif value < bid:
            if evidence:
                reason, moved = "cut on evidence: likely waste", value
            elif value < cut_to:
                reason, moved = "lower, capped at maximum cut", cut_to
            else:
                reason, moved = "lower to value bid", value
        elif o == 0:
            reason = "no orders yet: not raised"
        elif value > bid and low:
            reason = "low stock: not raised"  # a product of the ad group runs short: no raise, whatever its spend
        elif value > bid:
            if value > raise_to:
                reason, moved = "raise, capped at maximum raise", raise_to
            else:
                reason, moved = "raise to value bid", value
        else:
            reason = "at value bid"
        step = BLANK  # the moved bid rounded to the cent, before the floor and the ceiling
        if moved is None:
            proposed = bid
        else:
            rounded = step = _half_away(moved)
            if reason.startswith("raise"):  # a raise stops at the ceiling (or at the bid, if already above it)
                proposed = max(s.bid_floor, min(rounded, max(s.bid_ceiling, bid)))
            else:  # a cut stops at the floor (or at the bid, if already below it)
                proposed = min(s.bid_ceiling, max(rounded, min(s.bid_floor, bid)))
            if proposed != rounded:
                reason += " (stopped at the bid ceiling)" if rounded > proposed else " (stopped at the bid floor)"
        decision = (decisions or {}).get(i)
        if decision is None or decision == "":
            final = proposed
        elif isinstance(decision, (int, float)) and not isinstance(decision, bool):
            final = float(decision)
        elif isinstance(decision, str) and decision.lower() == "keep":
            final = bid
        else:
            final = "invalid"  # any other typed value is shown as invalid, never as the proposal
        out[i] = {
            "Campaign": t["campaign"], "Ad group": t["ad_group"], "Target": t["target"],
            "Match type": t["match_type"], "Product ID": label,
            "Impressions": t["impressions"], "Clicks": clicks, "Spend": spend, "Ad sales": sales, "Orders": orders,
            "CPC": spend / clicks if clicks else BLANK, "CVR": orders / clicks if clicks else BLANK,
            "ACoS": spend / sales if sales else BLANK,
            "Aim ACoS": target, "Current bid": bid, "Value bid": value, "Waste probability": p_waste,
            "Proposed bid": proposed,
            "Change": proposed / bid - 1 if bid else BLANK, "Reason": reason, "Final bid": final,
            "Target check": "" if not any(profit_rows[p]["Target check"] for p in products) else (
                "target above break-even: aim used" if s.seek_profit == "yes" else "target capped at break-even"
                if s.cap_target_at_break_even == "yes" else "target above break-even"),
            "History clicks": n, "History orders": o, "History spend": h_spend, "History ad sales": h_sales,
            "CPC-to-bid ratio": ratio, "Ratio source": source,
            "Prior a": BLANK if prior is None else prior[0], "Prior b": BLANK if prior is None else prior[1],
            "Never-converting share": 0.0 if prior is None else prior[2], "Converts probability": w,
            "Posterior CVR": post_cvr, "Zero-order clicks": n0, "Product CVR": cvr_p,
            "Low stock": 1.0 if low else 0.0,
            "Order value": order_value, "Prior a in use": a0, "Prior b in use": b0, "Step bid": step,
        }
    return out
