"""Make next week's exports from this week's, with a chosen part of the change list applied.

Used by the two-week scenario tests and to make ``demo_inputs_week2/`` from the demo:

    python tools/make_week2.py demo_inputs changes.csv demo_inputs_week2

where changes.csv is what ``sheetbuilder changes`` wrote for the demo's workbook. Every
second bid change, the first two keywords, the first two negatives and the first budget
change are applied; one more bid is moved to another value than planned (so it reads as
not applied). Clicks on every keyword or target rise by a fifth plus one (spend unchanged,
so cost per click falls), an applied negative's search terms stop spending, an added
keyword gets its first clicks and orders, every product's revenue rises by a tenth,
the inventory's inbound units arrive while a week of the period's sales leaves it,
and settings.toml's period_end moves on by seven days. Files are written as the exports arrive (CSV,
same headers); the source folder is only read.
"""
from __future__ import annotations

import csv
import datetime as dt
import re
import shutil
import sys
from pathlib import Path

NEW_KEYWORD = {"state": "enabled", "impressions": "240", "clicks": "14", "spend": "7.00", "ad_sales": "59.90",
               "orders": "2"}


def _fold(text: str) -> str:
    return " ".join(str(text).casefold().split())


def _read(path: Path) -> tuple[list[str], list[dict]]:
    with path.open(newline="", encoding="utf-8-sig") as f:  # the changes CSV starts with a byte-order mark
        reader = csv.DictReader(f)
        return list(reader.fieldnames or []), list(reader)


def _write(path: Path, header: list[str], rows: list[dict]) -> None:
    with path.open("w", newline="", encoding="utf-8") as f:
        w = csv.DictWriter(f, header)
        w.writeheader()
        w.writerows(rows)


def choose(changes: list[dict]) -> tuple[list[dict], list[dict]]:
    """(applied, moved elsewhere): every second bid, two keywords, two negatives, one budget; one other bid."""
    def of(kind):
        return [c for c in changes if c["kind"] == kind]
    bids = of("bid")
    applied = bids[::2] + of("add keyword")[:2] + of("add negative")[:2] + of("budget")[:1]
    elsewhere = bids[1:2]
    return applied, elsewhere


def _same_target(row: dict, change: dict) -> bool:
    return (row["campaign"], row["ad_group"], _fold(row["target"]), row["match_type"]) == (
        change["campaign"], change["ad_group"], _fold(change["target_or_term"]), change["match_type"])


def _stopped(row: dict, change: dict) -> bool:
    """Whether a negative (exact: the same term; phrase: its words in order) stops a search-term row."""
    if row["campaign"] != change["campaign"] or (change["ad_group"] and row["ad_group"] != change["ad_group"]):
        return False
    words, got = _fold(change["target_or_term"]).split(), _fold(row["search_term"]).split()
    if change["match_type"].endswith("exact"):
        return got == words
    return any(got[i:i + len(words)] == words for i in range(len(got) - len(words) + 1))


def make_week2(src: Path, dst: Path, applied: list[dict], elsewhere: list[dict]) -> Path:
    """Copy the exports in src to dst with the applied changes made and the metrics moved (see the module)."""
    src, dst = Path(src), Path(dst)
    shutil.copytree(src, dst)
    header, targets = _read(dst / "targets.csv")
    for row in targets:
        row["clicks"] = str(int(float(row["clicks"] or 0) * 1.2) + 1)
        for ch in applied + elsewhere:
            if ch["kind"] == "bid" and _same_target(row, ch):
                bid = float(ch["new"]) + (0.05 if ch in elsewhere else 0.0)
                row["bid"] = f"{bid:.2f}"
    for ch in applied:
        if ch["kind"] in ("add keyword", "add product target"):
            like = {h: (targets[0][h] if targets else "") for h in header}  # dates and other columns as its rows have
            targets.append({**like, **NEW_KEYWORD, "campaign": ch["campaign"],
                            "ad_group": ch["ad_group"], "target": ch["target_or_term"],
                            "match_type": ch["match_type"], "bid": f"{float(ch['new']):.2f}"})
    _write(dst / "targets.csv", header, targets)
    negatives = [c for c in applied if c["kind"] == "add negative"]
    if negatives and (dst / "negatives.csv").exists():
        header, rows = _read(dst / "negatives.csv")
        rows += [{"campaign": c["campaign"], "ad_group": c["ad_group"], "term": c["target_or_term"],
                  "match_type": c["match_type"]} for c in negatives]
        _write(dst / "negatives.csv", header, rows)
        header, terms = _read(dst / "search_terms.csv")
        for row in terms:
            if any(_stopped(row, c) for c in negatives):
                row.update(impressions="0", clicks="0", spend="0.00", ad_sales="0.00", orders="0")
        _write(dst / "search_terms.csv", header, terms)
    header, sales = _read(dst / "store_sales.csv")
    for row in sales:
        row["revenue"] = f"{float(row['revenue'] or 0) * 1.1:.2f}"
    _write(dst / "store_sales.csv", header, sales)
    if (dst / "inventory.csv").exists():
        sold = {row["product_id"]: float(row["units"] or 0) for row in sales}
        header, stock = _read(dst / "inventory.csv")
        for row in stock:
            left = float(row["units_available"]) + float(row.get("units_inbound") or 0)
            row["units_available"] = str(max(0, round(left - sold.get(row["product_id"], 0) * 7 / 30)))
            row["units_inbound"] = "0"
        _write(dst / "inventory.csv", header, stock)
    settings = dst / "settings.toml"
    if settings.exists():  # the period moves on by a week
        text = settings.read_text(encoding="utf-8")
        text = re.sub(r"^(period_end\s*=\s*)(\d{4}-\d{2}-\d{2})", lambda m: m[1] + (
            dt.date.fromisoformat(m[2]) + dt.timedelta(days=7)).isoformat(), text, flags=re.M)
        settings.write_text(text, encoding="utf-8")
    budgets = {c["campaign"]: c["new"] for c in applied if c["kind"] == "budget"}
    if budgets:
        header, rows = _read(dst / "campaigns.csv")
        for row in rows:
            if row["campaign"] in budgets:
                row["daily_budget"] = f"{float(budgets[row['campaign']]):.2f}"
        _write(dst / "campaigns.csv", header, rows)
    return dst


def main(argv: list[str]) -> int:
    """python tools/make_week2.py EXPORTS CHANGES_CSV OUT_FOLDER"""
    if len(argv) != 3:
        print(main.__doc__)
        return 2
    src, changes, dst = (Path(a) for a in argv)
    if dst.exists():
        print(f"{dst} exists; remove it first")
        return 1
    applied, elsewhere = choose(_read(changes)[1])
    make_week2(src, dst, applied, elsewhere)
    print(f"{dst}: {len(applied)} changes applied, {len(elsewhere)} bid moved elsewhere")
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
