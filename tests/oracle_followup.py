"""Independent reference of the Follow-up sheet, written from issue 12's rules (not from the formulas).

It reads the two weeks' export folders with the csv module (not the package's readers) and,
for each change of last week's list, says whether this week's exports show it applied and
what its target, term or campaign did in each period.

Rules (issue 12): a bid is applied when this week's export shows the planned bid to the cent;
a keyword or product target when it exists in that ad group with that match type; a negative
when it is in this week's negatives export ("cannot tell" without one); a budget when the
campaign's daily budget equals the planned one ("cannot tell" without a campaigns export).
Outcome: a bid cut intends CPC and ACoS down; a raise intends clicks up and ACoS at or under
target; a negative intends the term's spend gone; a new keyword shows its first clicks and
orders; "too few clicks" where the before or after sample is under min_clicks. The words
for one, both or neither intended effect are the project's own ("mixed", "as intended",
"not as intended").
"""
from __future__ import annotations

import csv
from pathlib import Path


# The demo's ad_products.csv uses an ad platform's report headers (README, "Inputs").
HEADERS = {"Campaign Name": "campaign", "Ad Group": "ad_group", "Cost": "spend", "Ad Sales": "ad_sales",
           "Clicks": "clicks", "Orders": "orders"}


def rows_of(folder: Path, name: str) -> list[dict] | None:
    """The rows of an export file (report headers renamed to ours), or None when the folder has none."""
    path = Path(folder) / f"{name}.csv"
    if not path.exists():
        return None
    with path.open(newline="", encoding="utf-8") as f:
        return [{HEADERS.get(k, k): v for k, v in r.items()} for r in csv.DictReader(f)]


def _words(text: str) -> list[str]:
    return str(text).casefold().split()


def _num(text) -> float:
    """A number as the demo's exports write it (a currency sign and thousands commas allowed)."""
    t = str(text).strip().replace("$", "").replace(",", "")
    return float(t) if t else 0.0


def _total(rows: list[dict] | None, keep) -> dict:
    out = {"clicks": 0.0, "spend": 0.0, "orders": 0.0, "ad_sales": 0.0}
    for r in rows or []:
        if keep(r):
            for k in out:
                out[k] += _num(r[k])
    return out


def _target_is(change: dict):
    return lambda r: (r["campaign"] == change["campaign"] and r["ad_group"] == change["ad_group"]
                      and _words(r["target"]) == _words(change["target"]) and r["match_type"] == change["match_type"])


def _stopped_by(change: dict):
    words = _words(change["target"])

    def keep(r):
        if r["campaign"] != change["campaign"] or (change["ad_group"] and r["ad_group"] != change["ad_group"]):
            return False
        got = _words(r["search_term"])
        if change["match_type"] == "negative exact":
            return got == words
        return any(got[i:i + len(words)] == words for i in range(len(got) - len(words) + 1))
    return keep


def metrics(folder: Path, change: dict) -> dict:
    """Clicks, spend, orders and ad sales of the change's target, term or campaign in one folder's exports."""
    if change["kind"] == "add negative":
        return _total(rows_of(folder, "search_terms"), _stopped_by(change))
    if change["kind"] == "budget":
        return _total(rows_of(folder, "ad_products"), lambda r: r["campaign"] == change["campaign"])
    return _total(rows_of(folder, "targets"), _target_is(change))


def applied(folder: Path, change: dict) -> str:
    """yes, no or cannot tell, by this week's exports in folder."""
    kind = change["kind"]
    if kind == "add negative":
        negatives = rows_of(folder, "negatives")
        if negatives is None:
            return "cannot tell"
        return "yes" if any(r["campaign"] == change["campaign"] and (r["ad_group"] or "") == (change["ad_group"] or "")
                            and _words(r["term"]) == _words(change["target"])
                            and r["match_type"] == change["match_type"] for r in negatives) else "no"
    if kind == "budget":
        campaigns = rows_of(folder, "campaigns")
        if campaigns is None:
            return "cannot tell"
        return "yes" if any(r["campaign"] == change["campaign"] and
                            round(_num(r["daily_budget"]) * 100) == round(change["planned"] * 100)
                            for r in campaigns) else "no"
    hits = [r for r in rows_of(folder, "targets") or [] if _target_is(change)(r)]
    if kind == "bid":
        return "yes" if any(round(_num(r["bid"]) * 100) == round(change["planned"] * 100) for r in hits) else "no"
    return "yes" if hits else "no"


def _ratio(a: float, b: float):
    return a / b if b else ""


def expected_row(before: Path, now: Path, change: dict, min_clicks: int, target_acos) -> dict:
    """Every computed figure of one Follow-up row, by the rules above.

    change holds kind, campaign, ad_group, target, match_type, planned and was (last week's current).
    """
    b, n = metrics(before, change), metrics(now, change)
    out = {"Applied": applied(now, change),
           "Clicks before": b["clicks"], "Clicks now": n["clicks"], "Spend before": b["spend"],
           "Spend now": n["spend"], "Orders before": b["orders"], "Orders now": n["orders"],
           "CPC before": _ratio(b["spend"], b["clicks"]), "CPC now": _ratio(n["spend"], n["clicks"]),
           "ACoS before": _ratio(b["spend"], b["ad_sales"]), "ACoS now": _ratio(n["spend"], n["ad_sales"])}
    out["Outcome"] = _outcome(change, out, min_clicks, target_acos)
    return out


def _outcome(change: dict, f: dict, min_clicks: int, target_acos) -> str:
    kind = change["kind"]
    if f["Applied"] == "no":
        return "not applied"
    if kind == "add negative":
        return "as intended: no spend" if f["Spend now"] == 0 else "still spending"
    if kind in ("add keyword", "add product target"):
        if f["Clicks now"] == 0:
            return "no clicks yet"
        if f["Orders now"] > 0:
            return "first orders"
        return "too few clicks" if f["Clicks now"] < min_clicks else "clicks, no orders yet"
    if f["Clicks before"] < min_clicks or f["Clicks now"] < min_clicks:
        return "too few clicks"
    up = change["planned"] > change["was"]
    if kind == "budget":
        moved_up = f["Spend now"] > f["Spend before"]
        moved_down = f["Spend now"] < f["Spend before"]
        return "as intended" if (up and moved_up) or (not up and moved_down) else "not as intended"
    if up:
        effects = [f["Clicks now"] > f["Clicks before"],
                   f["ACoS now"] != "" and target_acos not in (None, "") and f["ACoS now"] <= target_acos]
    else:
        effects = [f["CPC before"] != "" and f["CPC now"] != "" and f["CPC now"] < f["CPC before"],
                   f["ACoS before"] != "" and f["ACoS now"] != "" and f["ACoS now"] < f["ACoS before"]]
    return {0: "not as intended", 1: "mixed", 2: "as intended"}[sum(effects)]
