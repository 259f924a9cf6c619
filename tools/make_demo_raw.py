#!/usr/bin/env python3
"""Write demo_inputs_raw/: the demo seller's exports (demo_inputs/) in the shapes real downloads have.

The figures are exactly the canonical demo's, only written differently:

- catalog.xlsx: a notes sheet first, then a sheet with a title block above the header,
  headers with units (`Price (USD)`) and typed number cells.
- store_sales.ods (written by LibreOffice headless from a CSV): a title row and a totals row.
- ad_products.csv: a title block, a `Start Date` and `End Date` for the whole period, headers
  with units (`Spend (USD)`) and a `Total` row.
- targets.csv: one row per keyword per day for the 30 days ending 2026-11-29 (each figure
  split so that the days sum exactly to the canonical one), the bid raised or lowered on day
  21 so that the last day's bid is the canonical one, headers such as `Keyword Text`.
- search_terms.csv: `Start Date` / `End Date` columns and a `Grand total` row.
- campaigns.csv and negatives.csv: headers as people write them (`Campaign Name`, `Status`).
- inventory.csv: a title row, a `Warehouse` column (one warehouse), headers with units
  (`Units available (units)`, `Restock lead time (days)`) and a `Total` row.
- no settings.toml: the period comes from the dates; every other demo setting is a default.

Usage: python3 tools/make_demo_raw.py [demo_inputs] [demo_inputs_raw]   (needs soffice for the .ods)
"""
from __future__ import annotations

import csv
import datetime as dt
import os
import subprocess
import sys
import tempfile
from decimal import Decimal
from pathlib import Path

import openpyxl

ROOT = Path(__file__).resolve().parent.parent
END = dt.date(2026, 11, 29)
DAYS = [END - dt.timedelta(days=29 - i) for i in range(30)]
START, FINISH = DAYS[0].isoformat(), DAYS[-1].isoformat()


def read(folder: Path, name: str) -> tuple[list[str], list[list[str]]]:
    """(header, rows) of a canonical CSV."""
    with open(folder / name, encoding="utf-8-sig", newline="") as fh:
        rows = list(csv.reader(fh))
    return rows[0], rows[1:]


def write_csv(path: Path, rows: list[list[str]]) -> None:
    """rows as a comma-separated UTF-8 file."""
    with open(path, "w", encoding="utf-8", newline="") as fh:
        csv.writer(fh, lineterminator="\n").writerows(rows)


def money(text: str) -> Decimal:
    """A canonical money cell ($24.65 or 24.65) as an exact Decimal."""
    return Decimal(text.replace("$", "").replace(",", "") or "0")


def split(total: int, parts: int, offset: int) -> list[int]:
    """total split into parts whole numbers that sum exactly to it, the remainder spread from offset."""
    base, rest = divmod(total, parts)
    return [base + (1 if (i - offset) % parts < rest else 0) for i in range(parts)]


def totals_row(label: str, header: list[str], rows: list[list[str]], numeric: set[str], width: int) -> list[str]:
    """A totals row: label in the first column, each numeric column's exact sum."""
    out = [label] + [""] * (width - 1)
    for i, h in enumerate(header):
        if h in numeric:
            s = sum(money(r[i]) for r in rows)
            out[i] = f"{s:.2f}" if any("." in r[i] for r in rows) else str(int(s))
    return out


def catalog(src: Path, dst: Path) -> None:
    header, rows = read(src, "catalog.csv")
    names = {"product_id": "SKU", "product_name": "Product Name", "price": "Price (USD)",
             "unit_cost": "Unit Cost (USD)", "fees_per_unit": "Fees per Unit (USD)", "target_acos": "Target ACoS",
             "margin": "Margin"}
    wb = openpyxl.Workbook()
    notes = wb.active
    notes.title = "Notes"
    notes.append(["Product costs, kept by hand. Prices in US dollars."])
    sheet = wb.create_sheet("Products")
    sheet.append(["Larkfield product list"])
    sheet.append(["Updated every month"])
    sheet.append([])
    sheet.append([names[h] for h in header])
    for r in rows:
        cells = []
        for h, v in zip(header, r):
            if h in ("price", "unit_cost", "fees_per_unit") and v:
                cells.append(float(v))
            elif h in ("target_acos", "margin") and v:
                cells.append(float(v.rstrip("%")) / 100)  # a share, as a spreadsheet stores 25%
            else:
                cells.append(v or None)
        sheet.append(cells)
    wb.save(dst / "catalog.xlsx")


def store_sales(src: Path, dst: Path) -> None:
    header, rows = read(src, "store_sales.csv")
    shaped = [["Store sales report"], [], ["SKU", "Units Ordered", "Product Sales (USD)"], *rows,
              totals_row("Total", header, rows, {"units", "revenue"}, 3)]
    with tempfile.TemporaryDirectory(prefix="sb-demo-") as tmp:
        write_csv(Path(tmp) / "store_sales.csv", shaped)
        profile = Path(tmp) / "profile"
        cmd = ["soffice", f"-env:UserInstallation=file://{profile}", "--headless", "--norestore",
               "--convert-to", "ods", "--outdir", str(dst), str(Path(tmp) / "store_sales.csv")]
        subprocess.run(cmd, check=True, capture_output=True, timeout=600, env={**os.environ, "HOME": tmp})


def ad_products(src: Path, dst: Path) -> None:
    header, rows = read(src, "ad_products.csv")
    names = ["Campaign Name", "Ad Group Name", "Advertised SKU", "Ad Type", "Impressions", "Clicks", "Spend (USD)",
             "Ad Sales (USD)", "Orders"]
    plain = [[v.replace("$", "") for v in r] for r in rows]
    total = totals_row("Total", ["", "", "", "", "impressions", "clicks", "spend", "ad_sales", "orders"], plain,
                       {"impressions", "clicks", "spend", "ad_sales", "orders"}, 9)
    shaped = [["Advertised product report"], ["Invented seller account"], [],
              ["Start Date", "End Date", *names], *[[START, FINISH, *r] for r in plain], ["", "", *total]]
    write_csv(dst / "ad_products.csv", shaped)


def targets(src: Path, dst: Path) -> None:
    header, rows = read(src, "targets.csv")
    at = {h: i for i, h in enumerate(header)}
    names = ["Date", "Campaign Name", "Ad Group Name", "Keyword Text", "Match Type", "Status", "Bid (USD)",
             "Impressions", "Clicks", "Spend (USD)", "Ad Sales (USD)", "Orders"]
    per_day: list[list[list[str]]] = [[] for _ in DAYS]
    for k, r in enumerate(rows):
        counts = {h: split(int(r[at[h]]), len(DAYS), k) for h in ("impressions", "clicks", "orders")}
        cents = {h: split(int(money(r[at[h]]) * 100), len(DAYS), k) for h in ("spend", "ad_sales")}
        bid = money(r[at["bid"]])
        early = bid + Decimal("0.05") if k % 2 else max(bid - Decimal("0.05"), Decimal("0.02"))
        for d, day in enumerate(DAYS):
            per_day[d].append([day.isoformat(), r[at["campaign"]], r[at["ad_group"]], r[at["target"]],
                               r[at["match_type"]], r[at["state"]] if d == len(DAYS) - 1 else "enabled",
                               f"{bid if d >= 20 else early:.2f}",
                               *(str(counts[h][d]) for h in ("impressions", "clicks")),
                               *(f"{Decimal(cents[h][d]) / 100:.2f}" for h in ("spend", "ad_sales")),
                               str(counts["orders"][d])])
    write_csv(dst / "targets.csv", [["Keyword report, daily"], [], names, *[r for day in per_day for r in day]])


def search_terms(src: Path, dst: Path) -> None:
    header, rows = read(src, "search_terms.csv")
    names = ["Start Date", "End Date", "Campaign Name", "Ad Group Name", "Targeting", "Match Type",
             "Customer Search Term", "Impressions", "Clicks", "Spend (USD)", "Ad Sales (USD)", "Orders"]
    total = totals_row("Grand total", ["", "", "", "", "", "impressions", "clicks", "spend", "ad_sales", "orders"],
                       rows, {"impressions", "clicks", "spend", "ad_sales", "orders"}, 10)
    write_csv(dst / "search_terms.csv", [names, *[[START, FINISH, *r] for r in rows], ["", "", *total]])


def inventory(src: Path, dst: Path) -> None:
    _, rows = read(src, "inventory.csv")
    names = ["SKU", "Warehouse", "Units available (units)", "Units inbound (units)", "Restock lead time (days)"]
    shaped = [[pid, "Main warehouse", units, inbound, lead] for pid, units, inbound, lead in rows]
    total = ["Total", "", str(sum(int(r[2]) for r in shaped)), str(sum(int(r[3]) for r in shaped)), ""]
    write_csv(dst / "inventory.csv", [[f"Inventory snapshot, {FINISH}"], [], names, *shaped, total])


def renamed(src: Path, dst: Path, name: str, headers: list[str]) -> None:
    _, rows = read(src, name)
    write_csv(dst / name, [headers, *rows])


def main(argv: list[str]) -> int:
    src = Path(argv[1]) if len(argv) > 1 else ROOT / "demo_inputs"
    dst = Path(argv[2]) if len(argv) > 2 else ROOT / "demo_inputs_raw"
    dst.mkdir(parents=True, exist_ok=True)
    catalog(src, dst)
    store_sales(src, dst)
    ad_products(src, dst)
    targets(src, dst)
    search_terms(src, dst)
    inventory(src, dst)
    renamed(src, dst, "campaigns.csv", ["Campaign Name", "Ad Type", "Status", "Daily Budget (USD)", "Targeting Type"])
    renamed(src, dst, "negatives.csv", ["Campaign Name", "Ad Group Name", "Negative Keyword", "Match Type"])
    print(f"wrote {dst}")
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv))
