#!/usr/bin/env python3
"""Write the demo input folder for sheetbuilder.

Everything here is invented: the seller "Larkfield Home & Garden", its products,
its campaigns and every search term. Output is deterministic for a given seed.

Usage: python3 tools/make_demo.py [output_dir]   (default: demo_inputs/ next to tools/)
"""
import csv
import math
import random
import sys
from pathlib import Path

SEED = 20261129
rng = random.Random(SEED)

# (id, name, price, pre-ad margin, ad profile, keyword seeds)
# Profiles: "lose" = expensive clicks and weak conversion, "strong" = cheap and converting,
# "mid" = somewhere in between.
PRODUCTS = [
    ("LF-1001", "Cedar Raised Garden Bed 4ft", 64.99, 0.45, "strong",
     ["raised garden bed", "cedar garden bed", "raised planter box", "wooden garden bed", "garden bed kit"]),
    ("LF-1002", "Galvanized Raised Bed Kit", 79.99, 0.38, "mid",
     ["metal raised garden bed", "galvanized garden bed", "raised bed kit", "steel planter bed"]),
    ("LF-1003", "Ergonomic Hand Trowel Set", 19.99, 0.34, "mid",
     ["garden trowel", "hand trowel set", "garden hand tools", "gardening tool set"]),
    ("LF-1004", "Padded Garden Kneeler Bench", 39.99, 0.27, "mid",
     ["garden kneeler", "kneeler and seat", "garden kneeling pad", "garden bench seat"]),
    ("LF-1005", "Expandable Garden Hose 50ft", 29.99, 0.12, "lose",
     ["expandable garden hose", "garden hose 50 ft", "lightweight hose", "flexible water hose"]),
    ("LF-1006", "Brass Hose Nozzle 8-Pattern", 12.99, 0.41, "mid",
     ["hose nozzle", "spray nozzle"]),
    ("LF-1007", "Compost Bin Tumbler 37gal", 74.99, 0.22, "mid",
     ["compost tumbler", "compost bin outdoor", "rotating compost bin", "backyard composter"]),
    ("LF-1008", "Ceramic Planter Pot 8in Set of 3", 34.99, 0.52, "strong",
     ["ceramic planter", "ceramic plant pots", "indoor planter set", "plant pot with drainage", "white ceramic pot"]),
    ("LF-1009", "Self-Watering Window Box", 24.99, 0.30, "mid",
     ["window box planter", "self watering planter", "balcony planter", "railing planter box"]),
    ("LF-1010", "Hanging Macrame Plant Holder", 14.99, 0.20, "lose",
     ["macrame plant hanger", "hanging planter", "boho plant hanger", "plant hanger indoor"]),
    ("LF-1011", "Terracotta Herb Pot Trio", 17.99, 0.36, "mid",
     ["terracotta pots", "herb pots", "clay pots set", "kitchen herb planter"]),
    ("LF-1012", "Fabric Grow Bags 10gal 5-Pack", 21.99, 0.48, "strong",
     ["grow bags", "fabric pots", "potato grow bag", "10 gallon grow bags"]),
    ("LF-1013", "Wooden Plant Stand 3-Tier", 44.99, 0.31, "mid",
     ["plant stand", "tiered plant shelf"]),
    ("LF-1014", "Solar Path Lights 8-Pack", 32.99, 0.46, "strong",
     ["solar path lights", "solar garden lights", "outdoor pathway lights", "solar stake lights"]),
    ("LF-1015", "Outdoor String Lights 48ft", 39.99, 0.33, "mid",
     ["outdoor string lights", "patio lights", "bistro lights", "string lights 48 ft", "backyard lights"]),
    ("LF-1016", "Solar Lantern Hanging Pair", 27.99, 0.29, "lose",
     ["solar lantern", "hanging lantern outdoor", "solar lanterns set", "garden lanterns"]),
    ("LF-1017", "Motion Sensor Flood Light", 49.99, 0.24, "mid",
     ["motion sensor light", "flood light outdoor", "security light", "led flood light"]),
    ("LF-1018", "LED Fairy Lights Jar Set", 9.99, 0.15, "mid",
     ["fairy lights", "mason jar lights"]),
    ("LF-1019", "Glass Food Storage Set 10pc", 36.99, 0.40, "mid",
     ["glass food storage containers", "meal prep containers", "glass containers with lids", "food storage set"]),
    ("LF-1020", "Bamboo Drawer Organizer", 22.99, 0.08, "lose",
     ["drawer organizer", "bamboo drawer organizer", "utensil organizer", "silverware tray"]),
    ("LF-1021", "Stainless Spice Rack 20 Jars", 42.99, 0.55, "strong",
     ["spice rack", "spice jars with labels", "spice organizer", "countertop spice rack"]),
    ("LF-1022", "Airtight Pantry Canister Set", 29.99, 0.26, "mid",
     ["pantry canisters", "airtight containers", "flour container", "kitchen canister set"]),
    ("LF-1023", "Over-Sink Dish Drying Rack", 54.99, 0.06, "lose",
     ["dish drying rack", "over sink dish rack", "dish rack", "kitchen drying rack"]),
    ("LF-1024", "Beeswax Food Wraps 6-Pack", 15.99, 0.44, "mid",
     ["beeswax wraps", "reusable food wrap"]),
    ("LF-1025", "Cast Iron Herb Planter Trough", 59.99, 0.18, "mid",
     ["herb trough", "cast iron planter"]),
]
P = {p[0]: p for p in PRODUCTS}
NO_SALES = {"LF-1013", "LF-1025"}            # in the catalog, nothing sold this period
TARGET_ACOS = {"LF-1001": "25%", "LF-1005": "15%", "LF-1008": "30%", "LF-1012": "35%",
               "LF-1015": "20%", "LF-1019": "25%", "LF-1021": "40%", "LF-1023": "10%"}
GIVEN_MARGIN = {"LF-1009": "32%", "LF-1017": "21%"}   # margin typed in by the seller
# Stock at the period's end (invented): units fixed for two products, else days of cover at the sales rate.
STOCK_UNITS = {"LF-1002": 2,       # a product to grow with two units left: low stock
               "LF-1019": 0,       # sold out while its ads still spend: a loss
               "LF-1013": 40, "LF-1025": 25}  # nothing sold this period
LOW_DAYS = {"LF-1014": 12}        # low on stock, below the 30-day minimum
INBOUND = {"LF-1002": 120, "LF-1019": 60, "LF-1014": 200}

# Campaign -> (ad type, state, daily budget, targeting, {ad group: [product ids]})
CAMPAIGNS = {
    "LF - Garden Beds - Manual": ("product ads", "enabled", 40, "manual", {
        "Raised Beds": ["LF-1001"], "Hand Tools": ["LF-1003", "LF-1004"],
        "Hoses": ["LF-1005"], "Composting": ["LF-1007"]}),
    "LF - Planters & Pots - Manual": ("product ads", "enabled", 35, "manual", {
        "Ceramic Pots": ["LF-1008"], "Window Boxes": ["LF-1009"],
        "Hanging Planters": ["LF-1010"], "Grow Bags": ["LF-1012"]}),
    "LF - Outdoor Lighting - Manual": ("product ads", "enabled", 50, "manual", {
        "Path Lights": ["LF-1014"], "String Lights": ["LF-1015"],
        "Lanterns": ["LF-1016"], "Flood Lights": ["LF-1017"]}),
    "LF - Kitchen Storage - Manual": ("product ads", "paused", 25, "manual", {
        "Glass Storage": ["LF-1019"], "Drawer Organizers": ["LF-1020"],
        "Spice Racks": ["LF-1021"], "Canisters": ["LF-1022"]}),
    "LF - Catch All - Auto": ("product ads", "enabled", 30, "automatic", {
        "Garden Auto": ["LF-1002"], "Kitchen Auto": ["LF-1023"], "Herb Auto": ["LF-1011"]}),
    "LF - Seasonal - Auto": ("product ads", "enabled", 20, "automatic", {
        "Lighting Auto": ["LF-1015"], "Planter Auto": ["LF-1008"], "Compost Auto": ["LF-1007"]}),
    "LF - Brand Showcase": ("brand ads", "enabled", 60, "manual", {
        "Garden Collection": ["LF-1001", "LF-1002", "LF-1007"], "Lighting Collection": ["LF-1014"],
        "Kitchen Collection": ["LF-1019"], "Planter Collection": ["LF-1008"]}),
    "LF - Display Retargeting": ("display ads", "enabled", 15, "manual", {
        "Retarget Garden": ["LF-1005"], "Retarget Lights": ["LF-1017"],
        "Retarget Kitchen": ["LF-1023"], "Retarget Planters": ["LF-1012"]}),
}
AUTO_TARGETS = ["auto: close", "auto: loose", "auto: related", "auto: alike"]
CATEGORY_TARGETS = {"LF-1001": "category: raised garden beds", "LF-1003": "category: garden hand tools",
                    "LF-1008": "category: indoor planters", "LF-1014": "category: outdoor lighting",
                    "LF-1019": "category: food storage", "LF-1021": "category: spice storage"}
MODIFIERS = ["large", "small", "outdoor", "for patio", "set of 2", "black", "white", "heavy duty",
             "for beginners", "cheap", "best", "gift", "2 pack", "for balcony", "indoor",
             "waterproof", "wooden", "metal", "easy assembly", "replacement", "modern", "rustic"]
NEGATIVES = [  # (campaign, ad group or blank for the whole campaign, term, match type)
    ("LF - Garden Beds - Manual", "", "free", "negative phrase"), ("LF - Garden Beds - Manual", "Hoses", "hose reel cart", "negative exact"),
    ("LF - Planters & Pots - Manual", "", "artificial plants", "negative phrase"),
    ("LF - Planters & Pots - Manual", "Ceramic Pots", "plastic pots bulk", "negative exact"),
    ("LF - Outdoor Lighting - Manual", "", "replacement bulbs", "negative phrase"), ("LF - Catch All - Auto", "", "used", "negative phrase"),
    ("LF - Catch All - Auto", "Kitchen Auto", "dishwasher", "negative exact"),
    ("LF - Seasonal - Auto", "Lighting Auto", "christmas tree", "negative phrase")]
SETTINGS = """# Demo settings for the invented seller. Every value here has a default; see README.
currency_symbol = "$"
period_days = 30
period_end = 2026-11-29
attribution_days = 7
thin_margin = 0.08
strong_margin = 0.20
default_target_acos = 0.30
"""

# Cost per click and conversion rate ranges per ad profile.
PROFILE = {"lose": ((1.40, 2.30), (0.02, 0.05)),
           "mid": ((0.70, 1.40), (0.07, 0.13)),
           "strong": ((0.40, 0.90), (0.15, 0.24))}


def cents_down(x):
    """Round a money amount down to whole cents (keeps sums at or below totals)."""
    return math.floor(x * 100 + 1e-9) / 100


def money(x):
    return f"${x:,.2f}"


def split_int(total, weights):
    """Split an integer total across weights (largest remainder method)."""
    s = sum(weights)
    if total <= 0 or s <= 0:
        return [0] * len(weights)
    raw = [total * w / s for w in weights]
    out = [int(r) for r in raw]
    order = sorted(range(len(raw)), key=lambda i: raw[i] - out[i], reverse=True)
    for i in order[:total - sum(out)]:
        out[i] += 1
    return out


def spread_orders(total, clicks, weights):
    """Hand out orders one at a time; a row never gets more orders than clicks."""
    out = [0] * len(clicks)
    for _ in range(total):
        room = [i for i in range(len(clicks)) if out[i] < clicks[i] and weights[i] > 0]
        if not room:
            break
        i = rng.choices(room, [weights[j] * clicks[j] for j in room])[0]
        out[i] += 1
    return out


def share_down(rows, totals):
    """Fill impressions/spend/sales for child rows that already have clicks and orders.

    rows: dicts with clicks, orders, cpc; totals: parent dict. Child sums stay <= parent.
    """
    iw = [0.7 * r["clicks"] / max(1, totals["clicks"]) + 0.3 / len(rows) for r in rows]
    imp = split_int(int(totals["impressions"] * rng.uniform(0.9, 0.98)), iw)
    for r, n in zip(rows, imp):
        r["impressions"] = max(n, r["clicks"])
    raw = [r["clicks"] * r["cpc"] for r in rows]
    scale = min(1.0, totals["spend"] * 0.995 / max(sum(raw), 1e-9))
    per_order = totals["ad_sales"] / totals["orders"] if totals["orders"] else 0
    for r, x in zip(rows, raw):
        r["spend"] = cents_down(x * scale)
        r["ad_sales"] = cents_down(r["orders"] * per_order * rng.uniform(0.97, 1.0))
    over = sum(r["impressions"] for r in rows) - totals["impressions"]
    if over > 0:   # give back impressions from the row with the most slack
        big = max(rows, key=lambda r: r["impressions"] - r["clicks"])
        big["impressions"] -= over


def ad_product_rows():
    rows = []
    for camp, (ad_type, _, _, _, groups) in CAMPAIGNS.items():
        for group, pids in groups.items():
            for pid in pids:
                _, _, price, _, prof, _ = P[pid]
                (c_lo, c_hi), (v_lo, v_hi) = PROFILE[prof]
                clicks = rng.randint(140, 360) if prof == "lose" else rng.randint(40, 260)
                ctr = rng.uniform(0.004, 0.015)
                if ad_type == "display ads":       # display: weaker clicks and conversion
                    clicks, ctr, v_lo, v_hi = clicks // 2, ctr / 4, v_lo / 2, v_hi / 2
                elif ad_type == "brand ads":
                    clicks = clicks * 2 // 3
                cpc = rng.uniform(c_lo, c_hi)
                orders = min(clicks, round(clicks * rng.uniform(v_lo, v_hi)))
                rows.append({"campaign": camp, "ad_group": group, "product_id": pid,
                             "ad_type": ad_type, "impressions": int(clicks / ctr),
                             "clicks": clicks, "spend": round(clicks * cpc, 2),
                             "ad_sales": round(orders * price * rng.uniform(0.95, 1.0), 2),
                             "orders": orders, "profile": prof})
    return rows


def keyword_targets(pids, n):
    """Pick n distinct (target, match_type) pairs for a manual ad group."""
    kws = [k for pid in pids for k in P[pid][5]]
    pool = [(k, m) for k in kws for m in ("exact", "phrase", "broad")]
    rng.shuffle(pool)
    picks = []
    n_prod = rng.randint(0, 2)
    for pid in pids:
        if pid in CATEGORY_TARGETS and n_prod:
            picks.append((CATEGORY_TARGETS[pid], "product"))
            n_prod -= 1
    others = [p for p in P if p not in pids and p not in NO_SALES]
    for other in rng.sample(others, n_prod):
        picks.append((f"item={other}", "product"))
    return picks + pool[:max(0, n - len(picks))]


def target_rows(ad_rows):
    out, groups = [], {}
    for r in ad_rows:
        if r["ad_type"] == "product ads":
            groups.setdefault((r["campaign"], r["ad_group"]), []).append(r)
    for (camp, group), rs in groups.items():
        tot = {k: sum(r[k] for r in rs) for k in ("impressions", "clicks", "spend", "ad_sales", "orders")}
        pids = [r["product_id"] for r in rs]
        losing = any(r["profile"] == "lose" for r in rs)
        if CAMPAIGNS[camp][3] == "automatic":
            picks = [(t, "auto") for t in AUTO_TARGETS]
        else:
            picks = keyword_targets(pids, rng.randint(5, 8))
        n = len(picks)
        w = [rng.lognormvariate(0, 0.8) for _ in range(n)]
        zero = rng.randrange(n) if n > 4 or rng.random() < 0.5 else None
        dud = rng.choice([i for i in range(n) if i != zero])    # gets clicks, never orders
        if zero is not None:
            w[zero] = 0
        w[dud] = (max(w) * 1.5) if losing else 0.15             # big dud in losing groups
        clicks = split_int(int(tot["clicks"] * rng.uniform(0.9, 1.0)), w)
        quality = [0 if i == dud else rng.lognormvariate(0, 0.9) for i in range(n)]
        orders = spread_orders(int(tot["orders"] * rng.uniform(0.85, 1.0)), clicks, quality)
        cpc = tot["spend"] / max(1, tot["clicks"])
        rows = []
        for (target, match), c, o in zip(picks, clicks, orders):
            t_cpc = min(2.49, max(0.31, cpc * rng.uniform(0.85, 1.15)))
            state = "paused" if rng.random() < 0.06 else "enabled"
            rows.append({"campaign": camp, "ad_group": group, "target": target,
                         "match_type": match, "state": state,
                         "bid": round(min(3.0, max(0.25, t_cpc * rng.uniform(1.0, 1.5))), 2),
                         "clicks": c, "orders": o, "cpc": t_cpc, "pids": pids})
        share_down(rows, tot)
        out.extend(rows)
    # exactly one archived target, picked among the zero-click ones
    rng.choice([r for r in out if r["clicks"] == 0])["state"] = "archived"
    return out


def term_candidates(t, exact_kws):
    """Plausible customer search terms for a target, most likely first."""
    kws = [k for pid in t["pids"] for k in P[pid][5]]
    m, target = t["match_type"], t["target"]
    cands = []
    if m == "exact":
        cands = [target, target + "s" if not target.endswith("s") else target[:-1]]
    elif m == "phrase":
        cands = [f"{target} {rng.choice(MODIFIERS)}" for _ in range(4)] + \
                [f"{rng.choice(MODIFIERS)} {target}" for _ in range(3)]
    elif m == "broad":
        words = target.split()
        cands = [" ".join(rng.sample(words, len(words))) + " " + rng.choice(MODIFIERS) for _ in range(3)]
        cands += [rng.choice(kws) for _ in range(2)] + [f"{rng.choice(MODIFIERS)} {words[-1]}"]
    else:   # auto and product targets: anything near the product
        cands = [rng.choice(kws) for _ in range(3)] + \
                [f"{rng.choice(kws)} {rng.choice(MODIFIERS)}" for _ in range(4)]
        if rng.random() < 0.4:
            cands.insert(0, rng.choice(sorted(exact_kws)))   # overlaps an exact keyword elsewhere
    seen, out = set(), []
    for c in cands:
        if c not in seen:
            seen.add(c), out.append(c)
    return out


def search_term_rows(targets):
    exact_kws = {t["target"] for t in targets if t["match_type"] == "exact"}
    out = []
    for t in targets:
        if t["clicks"] == 0:
            continue
        cands = term_candidates(t, exact_kws)
        k = min(len(cands), t["clicks"], rng.randint(1, 2) if t["match_type"] == "exact" else rng.randint(1, 5))
        w = [rng.lognormvariate(0, 0.7) for _ in range(k)]
        w[0] *= 2.5                                    # one term usually dominates
        clicks = [1 + c for c in split_int(int(t["clicks"] * rng.uniform(0.85, 1.0)) - k, w)]
        if sum(clicks) > t["clicks"]:
            clicks = [1] * k
        orders = spread_orders(t["orders"], clicks, [rng.lognormvariate(0, 0.8) for _ in range(k)])
        rows = [{"campaign": t["campaign"], "ad_group": t["ad_group"], "target": t["target"],
                 "match_type": t["match_type"], "search_term": s, "clicks": c, "orders": o,
                 "cpc": t["spend"] / t["clicks"] * rng.uniform(0.9, 1.1), "exact_kw": s in exact_kws}
                for s, c, o in zip(cands, clicks, orders)]
        share_down(rows, t)
        out.extend(rows)
    return out


def plant_odd_terms(terms):
    """Overwrite a few rows with the awkward terms the tool must survive."""
    used = set()

    def pick(cond):
        i = rng.choice([i for i, r in enumerate(terms)
                        if i not in used and not r["exact_kw"] and r["match_type"] != "exact" and cond(r)])
        used.add(i)
        return terms[i]

    pick(lambda r: r["clicks"] == 1 and r["orders"] == 0)["search_term"] = \
        '=HYPERLINK("http://example.invalid","click")'
    pick(lambda r: r["orders"] == 0 and r["clicks"] <= 3)["search_term"] = "+plus size garden gloves"
    pick(lambda r: r["orders"] == 0 and r["clicks"] <= 3)["search_term"] = "@home herb planter"
    pick(lambda r: r["match_type"] in ("auto", "product"))["search_term"] = "lf-1007"
    pick(lambda r: r["match_type"] in ("auto", "product"))["search_term"] = "lf-1014"
    r = pick(lambda r: r["match_type"] in ("phrase", "broad") and len(r["search_term"].split()) >= 3)
    w = r["search_term"].split()
    r["search_term"] = w[0].capitalize() + "  " + " ".join(w[1:-1]) + "  " + w[-1].upper()
    pick(lambda r: r["ad_group"] in ("Ceramic Pots", "Planter Auto"))["search_term"] = "crème ceramic planter"
    # Terms that negatives already in place block: a campaign-level phrase and an ad-group exact.
    pick(lambda r: r["campaign"] == "LF - Garden Beds - Manual" and r["orders"] == 0)["search_term"] = \
        "free garden hose nozzle"
    pick(lambda r: r["ad_group"] == "Hoses" and r["orders"] == 0)["search_term"] = "Hose Reel Cart"


def write(path, header, rows):
    with open(path, "w", newline="", encoding="utf-8") as f:
        wr = csv.writer(f)
        wr.writerow(header)
        wr.writerows(rows)


def main():
    out = Path(sys.argv[1]) if len(sys.argv) > 1 else Path(__file__).resolve().parent.parent / "demo_inputs"
    out.mkdir(parents=True, exist_ok=True)

    cat = []
    for pid, name, price, m, _, _ in PRODUCTS:
        fees = round(price * 0.15 + 0.45, 2)                     # referral-style fee plus a flat part
        cost = round(price * (1 - m) - fees, 2)
        cat.append([pid, name, f"{price:.2f}", f"{cost:.2f}", f"{fees:.2f}",
                    TARGET_ACOS.get(pid, ""), GIVEN_MARGIN.get(pid, "")])
    write(out / "catalog.csv", ["product_id", "product_name", "price", "unit_cost",
                                "fees_per_unit", "target_acos", "margin"], cat)

    ads = ad_product_rows()
    write(out / "ad_products.csv", ["Campaign Name", "Ad Group", "Product ID", "Ad Type", "Impressions",
                                    "Clicks", "Cost", "Ad Sales", "Orders"],
          [[r["campaign"], r["ad_group"], r["product_id"], r["ad_type"], r["impressions"], r["clicks"],
            money(r["spend"]), money(r["ad_sales"]), r["orders"]] for r in ads])

    # Store sales = orders that came through ads plus organic orders.
    ad_units = {}
    for r in ads:
        ad_units[r["product_id"]] = ad_units.get(r["product_id"], 0) + r["orders"]
    sales = []
    for pid, _, price, _, _, _ in PRODUCTS:
        if pid in NO_SALES:
            continue
        units = ad_units.get(pid, 0) + rng.randint(8, 160)
        sales.append([pid, units, f"{units * price * rng.uniform(0.93, 1.0):.2f}"])
    sales.append(["LF-1999", 3, f"{3 * 18.99:.2f}"])     # discontinued, not in the catalog
    write(out / "store_sales.csv", ["product_id", "units", "revenue"], sales)

    targets = target_rows(ads)
    write(out / "targets.csv", ["campaign", "ad_group", "target", "match_type", "state", "bid", "impressions",
                                "clicks", "spend", "ad_sales", "orders"],
          [[t["campaign"], t["ad_group"], t["target"], t["match_type"], t["state"], f"{t['bid']:.2f}",
            t["impressions"], t["clicks"], f"{t['spend']:.2f}", f"{t['ad_sales']:.2f}", t["orders"]]
           for t in targets])

    terms = search_term_rows(targets)
    plant_odd_terms(terms)
    write(out / "search_terms.csv", ["campaign", "ad_group", "target", "match_type", "search_term",
                                     "impressions", "clicks", "spend", "ad_sales", "orders"],
          [[s["campaign"], s["ad_group"], s["target"], s["match_type"], s["search_term"], s["impressions"],
            s["clicks"], f"{s['spend']:.2f}", f"{s['ad_sales']:.2f}", s["orders"]] for s in terms])

    write(out / "campaigns.csv", ["campaign", "ad_type", "state", "daily_budget", "targeting"],
          [[c, v[0], v[1], f"{v[2]:.2f}", v[3]] for c, v in CAMPAIGNS.items()])
    write(out / "negatives.csv", ["campaign", "ad_group", "term", "match_type"], NEGATIVES)
    (out / "settings.toml").write_text(SETTINGS, encoding="utf-8")

    # Inventory: no random draws (the files above stay as they were); LF-1999 is discontinued, not stocked.
    sold = {row[0]: row[1] for row in sales}
    stock = []
    for pid, _, _, _, _, _ in PRODUCTS:
        days = LOW_DAYS.get(pid, 45 + (int(pid[-2:]) * 37) % 150)
        units = STOCK_UNITS.get(pid, round(sold.get(pid, 0) / 30 * days))
        stock.append([pid, units, INBOUND.get(pid, 0), 21 if int(pid[-2:]) % 2 else 35])
    write(out / "inventory.csv", ["product_id", "units_available", "units_inbound", "lead_time_days"], stock)


if __name__ == "__main__":
    main()
