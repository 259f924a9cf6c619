"""A minimal valid account written inline, for tests that corrupt one file of it."""
from __future__ import annotations

from pathlib import Path

CATALOG = """product_id,product_name,price,unit_cost,fees_per_unit
P1,Widget,20.00,8.00,2.00
P2,Gadget,10.00,4.00,1.00
"""
STORE_SALES = """product_id,units,revenue
P1,10,200.00
P2,5,50.00
"""
AD_PRODUCTS = """campaign,ad_group,product_id,ad_type,impressions,clicks,spend,ad_sales,orders
C1,G1,P1,product ads,1000,50,25.00,100.00,5
C1,G1,P2,product ads,500,20,10.00,30.00,2
"""
TARGETS = """campaign,ad_group,target,match_type,state,bid,impressions,clicks,spend,ad_sales,orders
C1,G1,widget,exact,enabled,0.50,100,10,5.00,20.00,1
"""


def write_account(folder: Path, files: dict[str, str | bytes | None] | None = None) -> Path:
    """Write a minimal valid account into folder; files overrides a file's text (None leaves it out)."""
    folder.mkdir(parents=True, exist_ok=True)
    texts: dict[str, str | bytes | None] = {"catalog.csv": CATALOG, "store_sales.csv": STORE_SALES,
                                            "ad_products.csv": AD_PRODUCTS}
    texts.update(files or {})
    for name, text in texts.items():
        if text is None:
            continue
        if isinstance(text, bytes):
            (folder / name).write_bytes(text)
        else:
            (folder / name).write_text(text, encoding="utf-8")
    return folder
