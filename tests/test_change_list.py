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
import pytest
from hypothesis import HealthCheck, given, settings as hsettings

from accounts import accounts, write_account
from conftest import BUILT_ON, DEMO, require_libreoffice
from oracle_actions import actions_oracle
from sheetbuilder.reading.normalise import contains_phrase, normalise
from sheetbuilder.pipeline import build, load
from sheetbuilder.sheets.actions import HEADER_ROW, HEADERS, SPAN

ADDS = ("add keyword", "add product target")
KEYS = {"Kind": "kind", "Campaign": "campaign", "Ad group": "ad_group", "Target or term": "target",
        "Match type": "match_type", "Current": "current", "New": "new", "Reason": "reason",
        "Product ID": "product_id", "Money at stake": "money", "Source row": "pos"}
GROUPS = {1: "bid", 2: "add", 3: "source negative", 4: "add negative", 5: "budget"}


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
            row["seg"] = int(row["pos"] // SPAN) + 1  # Source row: (kind's number - 1) x SPAN + its source row
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


def _plain(v):
    if v is None or v == "" or (isinstance(v, float) and math.isnan(v)):
        return None
    return round(float(v), 6) if isinstance(v, (int, float)) else v


def reference_mismatches(actions: list[dict], folder) -> list[str]:
    """Where the Actions rows differ from tests/oracle_actions.py, kind by kind, and where a kind is out of order."""
    inputs, s, _ = load(folder)
    expected = actions_oracle(inputs.tables, s)
    got = defaultdict(list)
    for a in actions:
        got[GROUPS[int(a["seg"])]].append(a)
    out = []
    for group in GROUPS.values():
        rows = [tuple(_plain(a[k]) for k in ("kind", "campaign", "ad_group", "target", "match_type", "current", "new",
                                               "reason", "product_id", "money")) for a in got[group]]
        want = [tuple(_plain(v) for v in row) for row in expected.get(group, [])]
        if sorted(want, key=repr) != sorted(rows, key=repr):
            out.append(f"{group}: expected {sorted(want, key=repr)}, got {sorted(rows, key=repr)}")
        money = [round(r[-1], 2) for r in rows]
        if money != sorted(money, reverse=True):
            out.append(f"{group}: not largest money first: {money}")
    return out


def _check(result, folder) -> None:
    inputs, s, _ = load(folder)
    assert [] == violations(frame_actions(result), inputs.tables, s.fold_plurals), "reference frame"
    cached = workbook_actions(result.output)
    assert [] == violations(cached, inputs.tables, s.fold_plurals), "cached values"
    assert [] == reference_mismatches(cached, folder), "cached values against the reference"


@pytest.mark.libreoffice
def test_demo_and_generated_actions_libreoffice_equal_reference(libreoffice, demo_build, generated, work):
    require_libreoffice()
    assert [] == reference_mismatches(workbook_actions(libreoffice["demo"]), DEMO), "demo LibreOffice"
    for i, (_, result) in enumerate(generated):
        assert [] == reference_mismatches(workbook_actions(libreoffice[result.output.stem]), work / f"gen{i}"), i


@pytest.mark.slow  # builds 30 workbooks; the fast lane checks the same on the generated accounts (below)
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


def test_generated_actions_cached_values_equal_reference(generated, work):
    for i, (_, result) in enumerate(generated):
        _check(result, work / f"gen{i}")


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


TERMS_CLASH = """campaign,ad_group,target,match_type,search_term,impressions,clicks,spend,ad_sales,orders
C1,G1,pot,broad,red pot,900,60,45.00,0.00,0
C1,G2,pot,broad,red pot,50,3,1.50,0.00,0
"""


@pytest.mark.libreoffice
def test_a_typed_promotion_takes_a_clashing_campaign_negative_off_the_list_live(tmp_path):
    """Typing promote on a term in a built file, saved through LibreOffice: the campaign-level
    negative that would block the new keyword leaves the Negatives and Actions lists."""
    require_libreoffice()
    from minimal import write_account as write_minimal
    from tools.recalc import libreoffice_convert
    folder = write_minimal(tmp_path / "acct", {"search_terms.csv": TERMS_CLASH,
                                                "settings.toml": 'negative_level = "campaign"\n'})
    result = build(folder, tmp_path / "book.xlsx", built_on=BUILT_ON)
    before = frame_actions(result)
    assert [("add negative", "C1", "", "red pot")] == [(a["kind"], a["campaign"], a["ad_group"], a["target"])
                                                       for a in before if a["kind"] != "bid"]
    wb = openpyxl.load_workbook(result.output)
    ws = wb["Terms"]
    header = [c.value for c in ws[4]]
    for row in ws.iter_rows(min_row=5):
        if [row[header.index(h)].value for h in ("Campaign", "Ad group", "Search term")] == ["C1", "G2", "red pot"]:
            row[header.index("Decision")].value = "promote"
    wb.save(tmp_path / "edited.xlsx")
    saved = libreoffice_convert([tmp_path / "edited.xlsx"], tmp_path / "saved")[0]
    after = [(a["kind"], a["campaign"], a["ad_group"], a["target"]) for a in workbook_actions(saved)
             if a["kind"] != "bid"]
    assert [("add keyword", "C1", "G2", "red pot")] == after
    inputs, s, _ = load(folder)
    assert [] == violations(workbook_actions(saved), inputs.tables, s.fold_plurals)
