"""Generated accounts for property tests: a hypothesis strategy writing small export folders."""
from __future__ import annotations

import csv
from pathlib import Path

from hypothesis import strategies as st

cents = st.integers(0, 60000).map(lambda c: c / 100)


@st.composite
def accounts(draw, max_products: int = 8, max_ad_rows: int = 18):
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
    thin = draw(st.integers(0, 15)) / 100
    strong = thin + draw(st.integers(0, 30)) / 100
    default_target = draw(st.integers(5, 60)) / 100
    settings = f"thin_margin = {thin}\nstrong_margin = {strong}\ndefault_target_acos = {default_target}\n"
    if not catalog:
        catalog.append({"product_id": ids[0], "product_name": "Only", "price": 10.0, "unit_cost": 2.0,
                        "fees_per_unit": 1.0, "target_acos": "", "margin": ""})
    return {"catalog": catalog, "store_sales": sales, "ad_products": ads, "settings": settings}


COLUMNS = {
    "catalog": ["product_id", "product_name", "price", "unit_cost", "fees_per_unit", "target_acos", "margin"],
    "store_sales": ["product_id", "units", "revenue"],
    "ad_products": ["campaign", "ad_group", "product_id", "ad_type", "impressions", "clicks", "spend",
                    "ad_sales", "orders"],
}


def write_account(account: dict, folder: Path) -> Path:
    """Write an account from the strategy as CSV files plus settings.toml into folder."""
    folder.mkdir(parents=True, exist_ok=True)
    for table, columns in COLUMNS.items():
        with open(folder / f"{table}.csv", "w", newline="", encoding="utf-8") as fh:
            w = csv.DictWriter(fh, fieldnames=columns)
            w.writeheader()
            w.writerows(account[table])
    (folder / "settings.toml").write_text(account["settings"], encoding="utf-8")
    return folder


def draw_accounts(count: int, **kwargs) -> list[dict]:
    """count accounts drawn deterministically from the strategy (for batch recalculation)."""
    from hypothesis import given, settings, HealthCheck

    drawn: list[dict] = []

    @settings(max_examples=count, database=None, derandomize=True, deadline=None,
              suppress_health_check=list(HealthCheck))
    @given(accounts(**kwargs))
    def collect(account):
        drawn.append(account)

    collect()
    return drawn[:count]
