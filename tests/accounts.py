"""Generated accounts for property tests: a hypothesis strategy writing small export folders."""
from __future__ import annotations

import csv
import json
import subprocess
import sys
from pathlib import Path

from hypothesis import strategies as st

cents = st.integers(0, 60000).map(lambda c: c / 100)


def _unique(rows: list[dict]) -> list[dict]:
    """The rows in order, each row equal in every cell to an earlier one left out."""
    seen, out = set(), []
    for row in rows:
        key = tuple(row.items())
        if key not in seen:
            seen.add(key)
            out.append(row)
    return out


@st.composite
def accounts(draw, max_products: int = 8, max_ad_rows: int = 18, max_targets: int = 12, max_terms: int = 14):
    """A dict of table name -> list of row dicts, plus 'settings' (a TOML text)."""
    n = draw(st.integers(1, max_products))
    ids = [f"P{i:03d}" for i in range(1, n + 1)]
    catalog, sales, ads = [], [], []
    for pid in ids:
        if draw(st.booleans()) or pid == ids[0] or draw(st.booleans()):
            price = draw(st.sampled_from([0.0]) | st.integers(100, 15000).map(lambda c: c / 100))
            cost = draw(st.integers(0, 6000).map(lambda c: c / 100))
            fees = draw(st.integers(0, 3000).map(lambda c: c / 100))
            margin = draw(st.none() | st.integers(-20, 70).map(lambda p: f"{p}%"))
            target = draw(st.none() | st.integers(5, 80).map(lambda p: f"{p}%"))
            catalog.append({"product_id": pid, "product_name": f"Thing {pid}", "price": price,
                            "unit_cost": cost, "fees_per_unit": fees,
                            "target_acos": target or "", "margin": margin or ""})
        for _ in range(draw(st.integers(0, 2))):
            units = draw(st.integers(0, 400))
            sales.append({"product_id": pid, "units": units,
                          "revenue": 0.0 if units == 0 else draw(st.integers(1, 2_000_000).map(lambda c: c / 100))})
    for _ in range(draw(st.integers(0, max_ad_rows))):
        clicks = draw(st.integers(0, 400))
        ads.append({"campaign": f"C{draw(st.integers(1, 4))}", "ad_group": f"G{draw(st.integers(1, 3))}",
                    "product_id": draw(st.sampled_from(ids)), "ad_type": "product ads",
                    "impressions": clicks * draw(st.integers(1, 60)), "clicks": clicks,
                    "spend": 0.0 if clicks == 0 else draw(cents),
                    "ad_sales": 0.0 if clicks == 0 else draw(st.integers(0, 300000).map(lambda c: c / 100)),
                    "orders": 0 if clicks == 0 else draw(st.integers(0, clicks))})
    groups = sorted({(a["campaign"], a["ad_group"]) for a in ads}) or [("C1", "G1")]
    targets, seen = [], set()
    for i in range(draw(st.integers(0, max_targets))):
        campaign, group = draw(st.sampled_from(groups)) if draw(st.integers(0, 9)) else ("C9", "G9")
        clicks = draw(st.integers(0, 120))
        orders = 0 if clicks == 0 or draw(st.booleans()) else draw(st.integers(0, clicks))
        text = draw(st.sampled_from([f"kw {i}", f"kw {i}", "pot", "plant pot", "seed tray", "big plant pot"]))
        targets.append({"campaign": campaign, "ad_group": group, "target": text,  # some already run as keywords
                        "match_type": draw(st.sampled_from(["exact", "phrase", "broad", "product", "auto"])),
                        "state": draw(st.sampled_from(["enabled"] * 6 + ["paused", "archived"])),
                        "bid": draw(st.integers(5, 600)) / 100, "impressions": clicks * draw(st.integers(1, 40)),
                        "clicks": clicks, "spend": 0.0 if clicks == 0 else draw(st.integers(0, 40000)) / 100,
                        "ad_sales": 0.0 if orders == 0 else draw(st.integers(0, 200000)) / 100, "orders": orders})
        key = tuple(targets[-1][k] for k in ("campaign", "ad_group", "target", "match_type"))
        if key in seen:  # one row per keyword: a repeat without dates is refused by the readers
            targets.pop()
        seen.add(key)
    campaigns = [{"campaign": f"C{i}", "ad_type": "product ads",
                  "state": draw(st.sampled_from(["enabled", "enabled", "paused", "archived"])),
                  "daily_budget": draw(st.integers(100, 10000)) / 100,
                  "targeting": draw(st.sampled_from(["manual", "manual", "automatic"]))} for i in range(1, 5)]
    bid_settings = {
        "prior_clicks": draw(st.integers(0, 40)), "min_clicks": draw(st.integers(0, 20)),
        "zero_order_confidence": draw(st.integers(80, 99)) / 100, "max_bid_cut": draw(st.integers(5, 60)) / 100,
        "max_bid_raise": draw(st.integers(5, 60)) / 100, "bid_floor": draw(st.integers(5, 40)) / 100,
        "bid_ceiling": draw(st.integers(150, 600)) / 100,
    }
    thin = draw(st.integers(0, 15)) / 100
    strong = thin + draw(st.integers(0, 30)) / 100
    default_target = draw(st.integers(5, 60)) / 100
    settings = f"thin_margin = {thin}\nstrong_margin = {strong}\ndefault_target_acos = {default_target}\n"
    settings += "".join(f"{k} = {v}\n" for k, v in bid_settings.items())
    if not catalog:
        catalog.append({"product_id": ids[0], "product_name": "Only", "price": 10.0, "unit_cost": 2.0,
                        "fees_per_unit": 1.0, "target_acos": "", "margin": ""})
    vocabulary = ["pot", "plant pot", "Plant  Pot", "big plant pot", "free pot", "seed tray", "p002", "hose*", "tray?",
                  "big pot"]
    terms = []
    for _ in range(draw(st.integers(0, max_terms))):
        campaign, group = draw(st.sampled_from(groups))
        clicks = draw(st.integers(0, 80))
        orders = 0 if clicks == 0 or draw(st.booleans()) else draw(st.integers(0, min(clicks, 5)))
        terms.append({"campaign": campaign, "ad_group": group, "target": draw(st.sampled_from(["pot", "kw 0", "auto"])),
                      "match_type": draw(st.sampled_from(["exact", "phrase", "broad", "auto"])),
                      "search_term": draw(st.sampled_from(vocabulary)), "impressions": clicks * 10, "clicks": clicks,
                      "spend": 0.0 if clicks == 0 else draw(st.integers(0, 9000)) / 100,
                      "ad_sales": 0.0 if orders == 0 else draw(st.integers(100, 20000)) / 100, "orders": orders})
    negatives = [{"campaign": c, "ad_group": draw(st.sampled_from(["", g])), "term": draw(st.sampled_from(vocabulary)),
                  "match_type": draw(st.sampled_from(["negative exact", "negative phrase"]))}
                 for c, g in draw(st.lists(st.sampled_from(groups), max_size=3))]
    term_settings = {"min_promote_orders": draw(st.integers(1, 3)),
                     "block_spend_multiple": draw(st.integers(0, 20)) / 10,
                     "phrase_below_words": draw(st.integers(0, 3)),
                     "negative_level": draw(st.sampled_from(["ad group", "campaign"])),
                     "starting_bid": draw(st.sampled_from(["lower", "cpc", "value"])),
                     "source_negative": draw(st.sampled_from(["yes", "no"]))}
    settings += "".join(f"{k} = {v!r}\n" if isinstance(v, str) else f"{k} = {v}\n"
                        for k, v in term_settings.items()).replace("'", '"')
    # Where some products' promoted terms go (another ad group, sometimes in a paused campaign).
    destinations = {p: draw(st.sampled_from(groups)) for p in draw(st.lists(st.sampled_from(ids), max_size=3))}
    if destinations:
        settings += "[destinations]\n" + "".join(f'{p} = {{ campaign = "{c}", ad_group = "{g}" }}\n'
                                                 for p, (c, g) in destinations.items())
    # A row repeated in every cell is refused by the readers as pasted twice: keep the first of each.
    sales, ads, terms = (_unique(rows) for rows in (sales, ads, terms))
    account = {"catalog": catalog, "store_sales": sales, "ad_products": ads, "settings": settings}
    if terms:
        account["search_terms"] = terms
        if negatives:
            account["negatives"] = negatives
    if targets:
        account["targets"] = targets
    if (targets or terms) and draw(st.integers(0, 3)):
        account["campaigns"] = campaigns  # with paused and archived campaigns, and automatic ones
    # Drawn last, so the accounts drawn before these settings existed stay the same; written first, above any table.
    account["settings"] = (f"waste_confidence = {draw(st.integers(50, 99)) / 100}\n"
                           f"exploration_orders = {draw(st.integers(0, 30)) / 10}\n") + account["settings"]
    return account


COLUMNS = {
    "catalog": ["product_id", "product_name", "price", "unit_cost", "fees_per_unit", "target_acos", "margin"],
    "store_sales": ["product_id", "units", "revenue"],
    "ad_products": ["campaign", "ad_group", "product_id", "ad_type", "impressions", "clicks", "spend",
                    "ad_sales", "orders"],
    "targets": ["campaign", "ad_group", "target", "match_type", "state", "bid", "impressions", "clicks", "spend",
                "ad_sales", "orders"],
    "campaigns": ["campaign", "ad_type", "state", "daily_budget", "targeting"],
    "search_terms": ["campaign", "ad_group", "target", "match_type", "search_term", "impressions", "clicks", "spend",
                     "ad_sales", "orders"],
    "negatives": ["campaign", "ad_group", "term", "match_type"],
}


def write_account(account: dict, folder: Path) -> Path:
    """Write an account from the strategy as CSV files plus settings.toml into folder."""
    folder.mkdir(parents=True, exist_ok=True)
    for table, columns in COLUMNS.items():
        if table not in account:
            continue
        with open(folder / f"{table}.csv", "w", newline="", encoding="utf-8") as fh:
            w = csv.DictWriter(fh, fieldnames=columns)
            w.writeheader()
            w.writerows(account[table])
    (folder / "settings.toml").write_text(account["settings"], encoding="utf-8")
    return folder


def draw_accounts(count: int, **kwargs) -> list[dict]:
    """count accounts drawn deterministically from the strategy (for batch recalculation).

    The draw runs in a fresh Python process that imports nothing of ours but this module.
    Hypothesis (6.131 and later) mixes the literals of every local module already imported
    into the values it draws, so drawn here, inside pytest, "generated account 3" would
    change with every edited constant in the package and with which test files were
    collected; a failure on it could then not be reproduced. Test files are not mined, and
    the child process imports no other local module, so the accounts depend only on this
    file and the hypothesis version. To look at one: python tests/accounts.py 3 some/folder
    """
    code = ("import json, sys; sys.path.insert(0, sys.argv[1]); import accounts; "
            "print(json.dumps(accounts._draw_here(int(sys.argv[2]), json.loads(sys.argv[3]))))")
    done = subprocess.run([sys.executable, "-c", code, str(Path(__file__).parent), str(count), json.dumps(kwargs)],
                          capture_output=True, text=True, check=False)
    if done.returncode != 0:
        raise RuntimeError(f"drawing the generated accounts failed: {done.stderr}")
    return json.loads(done.stdout)


def _draw_here(count: int, kwargs: dict) -> list[dict]:
    """count accounts drawn in this process (its imported local modules shape the draw; see draw_accounts)."""
    from hypothesis import given, settings, HealthCheck

    drawn: list[dict] = []

    @settings(max_examples=count, database=None, derandomize=True, deadline=None,
              suppress_health_check=list(HealthCheck))
    @given(accounts(**kwargs))
    def collect(account):
        drawn.append(account)

    collect()
    return drawn[:count]


if __name__ == "__main__":  # python tests/accounts.py INDEX FOLDER: write one generated account's exports
    index, folder = int(sys.argv[1]), Path(sys.argv[2])
    print(write_account(draw_accounts(index + 1)[index], folder))
