"""A change list that can be applied as it stands: properties of the Actions list over
generated accounts (campaigns, ad groups, existing negatives and keywords, paused and
archived campaigns, products without ads and with spend but no sales), checked on the
reference frames and on the cached values of the built workbook.

The properties are written from the rules, not from the formulas: a negative never blocks
a keyword the same list adds (same ad group, or campaign level in the same campaign; exact
= the same normalised term, phrase = its words in order); no negative cuts off a term that
sold in the period unless the same list adds it in another ad group; nothing the account
already has is proposed again; nothing is proposed in a paused or archived campaign.
"""
from __future__ import annotations

import math
from collections import defaultdict

import openpyxl
from hypothesis import HealthCheck, given, settings as hsettings

from accounts import accounts, write_account
from conftest import BUILT_ON, DEMO
from sheetbuilder.normalise import contains_phrase, normalise
from sheetbuilder.pipeline import build, load
from sheetbuilder.plan_actions import HEADER_ROW, HEADERS

ADDS = ("add keyword", "add product target")
KEYS = {"Kind": "kind", "Campaign": "campaign", "Ad group": "ad_group", "Target or term": "target",
        "Match type": "match_type", "Current": "current", "New": "new", "Reason": "reason",
        "Product ID": "product_id", "Money at stake": "money"}


def _text(v) -> str:
    return "" if v is None or (isinstance(v, float) and math.isnan(v)) else str(v)


def frame_actions(result) -> list[dict]:
    """The Actions rows of the reference frame, keyed as the frame is."""
    return [r for r in result.plan.tables["Actions"].frame.to_dict("records") if r["kind"]]


def workbook_actions(path) -> list[dict]:
    """The Actions rows as the built file caches them (header row from plan_actions)."""
    ws = openpyxl.load_workbook(path, data_only=True, read_only=True)["Actions"]
    rows = ws.iter_rows(min_row=HEADER_ROW + 1, values_only=True)
    header = [_text(h) for h in next(rows)]
    assert list(HEADERS) == header[:len(HEADERS)]
    out = []
    for values in rows:
        row = {KEYS[h]: v for h, v in zip(header, values) if h in KEYS}
        if _text(row.get("kind")):
            out.append(row)
    return out


def violations(actions: list[dict], tables: dict, fold: bool) -> list[str]:
    """Every way the change list fails to be safe to apply, as readable lines (none when safe)."""
    def norm(text) -> str:
        return normalise(_text(text), fold)

    state = {}
    if tables.get("campaigns") is not None:
        for c in tables["campaigns"].to_dict("records"):
            state.setdefault(c["campaign"], c["state"])
    adds = [(a["campaign"], a["ad_group"], norm(a["target"])) for a in actions
            if a["kind"] in ADDS and _text(a["campaign"])]
    negatives = [a for a in actions if a["kind"] == "add negative"]
    sold = defaultdict(float)
    if tables.get("search_terms") is not None:
        for r in tables["search_terms"].to_dict("records"):
            sold[(r["campaign"], r["ad_group"], norm(r["search_term"]))] += r["orders"]
    have_negative = set()
    if tables.get("negatives") is not None:
        have_negative = {(n["campaign"], n["ad_group"] or "", n["match_type"], norm(n["term"]))
                         for n in tables["negatives"].to_dict("records")}
    have_keyword = set()
    if tables.get("targets") is not None:
        have_keyword = {(t["campaign"], t["ad_group"], t["match_type"], norm(t["target"]))
                        for t in tables["targets"].to_dict("records") if t["state"] != "archived"}
    out = []
    for a in actions:
        if state.get(a["campaign"], "enabled") != "enabled":
            out.append(f"{a['kind']} in the {state[a['campaign']]} campaign {a['campaign']}: {a['target']}")
        if a["kind"] in ADDS and (a["campaign"], a["ad_group"], a["match_type"], norm(a["target"])) in have_keyword:
            out.append(f"the keyword {a['target']!r} already runs in {a['campaign']} / {a['ad_group']}")
    for n in negatives:
        campaign, group, term = n["campaign"], _text(n["ad_group"]), norm(n["target"])
        phrase = n["match_type"] == "negative phrase"

        def blocks(c, g, k) -> bool:
            return c == campaign and (group == "" or g == group) and (contains_phrase(k, term) if phrase else k == term)

        if (campaign, group, n["match_type"], term) in have_negative:
            out.append(f"the negative {n['target']!r} already exists in {campaign} / {group or '(campaign)'}")
        for c, g, k in adds:
            if blocks(c, g, k):
                out.append(f"the negative {n['target']!r} in {campaign} / {group or '(campaign)'} blocks the keyword "
                           f"{k!r} the list adds in {c} / {g}")
        for (c, g, k), orders in sold.items():
            if orders > 0 and blocks(c, g, k) and not any(k == ak and (ac, ag) != (c, g) for ac, ag, ak in adds):
                out.append(f"the negative {n['target']!r} cuts off {k!r}, which sold in {c} / {g}, without adding "
                           "it elsewhere")
    return out


def _check(result, folder) -> None:
    inputs, s, _ = load(folder)
    assert [] == violations(frame_actions(result), inputs.tables, s.fold_plurals), "reference frame"
    assert [] == violations(workbook_actions(result.output), inputs.tables, s.fold_plurals), "cached values"


@hsettings(max_examples=30, deadline=None, suppress_health_check=list(HealthCheck))
@given(account=accounts())
def test_any_generated_change_list_is_safe_to_apply(account, tmp_path_factory):
    folder = write_account(account, tmp_path_factory.mktemp("acct"))
    result = build(folder, folder / "book.xlsx", built_on=BUILT_ON)
    _check(result, folder)


def test_the_check_finds_a_self_blocking_negative():
    """The property above can fail: a negative exact beside the keyword it blocks is caught."""
    adds = {"kind": "add keyword", "campaign": "C1", "ad_group": "G1", "target": "Plant Pot", "match_type": "exact"}
    neg = {"kind": "add negative", "campaign": "C1", "ad_group": "G1", "target": "plant  pot",
           "match_type": "negative exact"}
    campaign_phrase = {**neg, "ad_group": "", "target": "pot", "match_type": "negative phrase"}
    paused = {**adds, "campaign": "C2"}
    import pandas as pd
    tables = {"campaigns": pd.DataFrame([{"campaign": "C2", "state": "paused"}])}
    found = violations([adds, neg, campaign_phrase, paused], tables, False)
    assert 3 == len(found), found
    assert any("paused" in f for f in found)


def test_the_demo_change_list_blocks_nothing_it_adds(demo_build):
    """Before this rule, 59 of the demo's 93 promoted terms were negated where they were added."""
    _check(demo_build, DEMO)
    actions = frame_actions(demo_build)
    added = {(a["campaign"], a["ad_group"], a["target"]) for a in actions if a["kind"] in ADDS}
    negated = {(a["campaign"], a["ad_group"], a["target"]) for a in actions if a["kind"] == "add negative"}
    assert set() == added & negated


def test_every_action_carries_its_product_and_money_ordered_by_money_within_kind(demo_build):
    actions = workbook_actions(demo_build.output)
    assert actions
    for a in actions:
        assert _text(a["product_id"]), a
        assert isinstance(a["money"], (int, float)) and a["money"] >= 0, a
    segments = [r["seg"] for r in frame_actions(demo_build)]
    money = [a["money"] for a in actions]
    for i in range(1, len(actions)):
        if segments[i] == segments[i - 1]:
            assert round(money[i - 1], 2) >= round(money[i], 2), (actions[i - 1], actions[i])


def test_a_promoted_term_without_a_live_destination_is_not_negated_and_says_so(demo_build):
    actions = frame_actions(demo_build)
    homeless = [a for a in actions if a["kind"] in ADDS and not a["campaign"]]
    assert homeless  # the demo has promoted terms from automatic and paused campaigns
    negated = {a["target"] for a in actions if a["kind"] == "add negative"}
    for a in homeless:
        assert a["reason"].startswith("choose destination"), a
        assert a["target"] not in negated, a
