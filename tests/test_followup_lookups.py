"""The follow-up looks each of last week's changes up in both periods' exports through tables indexed once; every
figure is what a mask over the whole table gives (the rows it names summed, the bid of the last row matched).

Expected values: the follow-up's rules as its docstrings state them (a target matched by campaign, ad group, match
type and its folded text; a negative stopping a search term exact or as a phrase, its words in order, within its
campaign and ad group unless that is blank; a budget's campaign), computed here with pandas masks over every row,
on a synthetic account (benchmarks/accounts.py) and its next week (benchmarks/history.make_next_week).
"""
from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest

from benchmarks.accounts import make_account
from benchmarks.history import make_next_week
from sheetbuilder.reading.readers import read_inputs
from sheetbuilder.reading.settings import Settings
from sheetbuilder.sheets.followup import fold
from sheetbuilder.weekly.applied import METRICS, followup_rows


def _words_in_order(words: list[str], term: str) -> bool:
    have = fold(term).split()
    return any(have[i:i + len(words)] == words for i in range(len(have) - len(words) + 1))


def _expected(change: dict, tables: dict) -> dict[str, float]:
    """A change's metrics in one period, by masks over the whole table."""
    kind = change["kind"]
    if kind == "add negative":
        t = tables["search_terms"]
        words = fold(change["target"]).split()
        stops = t["search_term"].map(lambda s: fold(s).split() == words if change["match_type"].endswith("exact")
                                     else _words_in_order(words, s))
        mask = (t["campaign"] == change["campaign"]) & stops
        if change["ad_group"] != "":
            mask &= t["ad_group"] == change["ad_group"]
    elif kind == "budget":
        t = tables["ad_products"]
        mask = t["campaign"] == change["campaign"]
    else:
        t = tables["targets"]
        mask = ((t["campaign"] == change["campaign"]) & (t["ad_group"] == change["ad_group"])
                & (t["target"].map(fold) == fold(change["target"])) & (t["match_type"] == change["match_type"]))
    return {m: float(t.loc[mask, m].astype(float).sum()) for m in METRICS}


def _changes(tables: dict, rng) -> list[dict]:
    """Changes of every kind: bids of targets (some spelled in another case), negatives from search terms (exact
    and phrase, with and without an ad group), budgets, and a change naming nothing in the exports."""
    targets, terms = tables["targets"], tables["search_terms"]
    out = []
    for r in targets.iloc[rng.choice(len(targets), 60, replace=False)].to_dict("records"):
        out.append({"kind": "bid", "campaign": r["campaign"], "ad_group": r["ad_group"],
                    "target": r["target"].upper() if rng.random() < 0.3 else r["target"],
                    "match_type": r["match_type"], "product_id": "", "current": r["bid"], "new": r["bid"] + 0.1})
    for r in terms.iloc[rng.choice(len(terms), 60, replace=False)].to_dict("records"):
        words = r["search_term"].split()
        phrase = rng.random() < 0.5 and len(words) > 1
        out.append({"kind": "add negative", "campaign": r["campaign"],
                    "ad_group": "" if rng.random() < 0.3 else r["ad_group"],
                    "target": " ".join(words[1:]) if phrase else r["search_term"],
                    "match_type": "negative phrase" if phrase else "negative exact", "product_id": ""})
    for campaign in targets["campaign"].drop_duplicates().head(5):
        out.append({"kind": "budget", "campaign": campaign, "ad_group": "", "target": "", "match_type": "",
                    "product_id": "", "current": 10.0, "new": 12.0})
    out.append({"kind": "bid", "campaign": "no such campaign", "ad_group": "g", "target": "t", "match_type": "exact",
                "product_id": "", "current": 1.0, "new": 2.0})
    return out


@pytest.fixture(scope="module")
def two_weeks(tmp_path_factory):
    base = tmp_path_factory.mktemp("weeks")
    make_account(base / "one", 200)
    make_next_week(base / "one", base / "two")
    return tuple(read_inputs(base / week, Settings())[0].tables for week in ("one", "two"))


def test_each_changes_figures_are_those_of_the_rows_a_mask_over_the_whole_table_names(two_weeks):
    before, now = two_weeks
    changes = _changes(before, np.random.default_rng(3))
    rows = followup_rows(changes, before, now, {})
    assert len(changes) == len(rows)
    matched = 0
    for change, row in zip(changes, rows):
        for suffix, tables in (("_b", before), ("_n", now)):
            expected = _expected(change, tables)
            assert expected == {m: row[m + suffix] for m in METRICS}, (change, suffix)
            matched += expected["clicks"] > 0
    assert matched > 40  # the look-ups found rows, not only zeros


def test_a_bids_applied_value_is_the_last_matching_targets_bid_this_week(two_weeks):
    before, now = two_weeks
    changes = [c for c in _changes(before, np.random.default_rng(4)) if c["kind"] == "bid"]
    t = now["targets"]
    for change in changes[::2]:  # half of them applied: this week's bid is the new one
        same = t.loc[(t["campaign"] == change["campaign"]) & (t["target"].map(fold) == fold(change["target"]))
                     & (t["ad_group"] == change["ad_group"]) & (t["match_type"] == change["match_type"]), "bid"]
        if len(same):
            change["new"] = float(same.iloc[-1])
    yes = 0
    for change, row in zip(changes, followup_rows(changes, before, now, {})):
        mask = ((t["campaign"] == change["campaign"]) & (t["ad_group"] == change["ad_group"])
                & (t["target"].map(fold) == fold(change["target"])) & (t["match_type"] == change["match_type"]))
        bids = t.loc[mask, "bid"]
        expected = None if bids.empty or pd.isna(bids.iloc[-1]) else float(bids.iloc[-1])
        assert (expected is None and row["now"] is None) or math.isclose(expected, row["now"]), change
        applied = not bids.empty and round(expected * 100) == round(change["new"] * 100)
        assert ("yes" if applied else "no") == row["applied"], change
        yes += applied
    assert yes > 10


def test_a_negatives_applied_is_yes_exactly_when_a_mask_over_this_weeks_negatives_finds_it(two_weeks):
    before, now = two_weeks
    negatives = now["negatives"]
    assert len(negatives) > 5
    changes = []
    for r in negatives.head(6).to_dict("records"):  # held: spelled in another case and spacing, or as exported
        changes.append({"kind": "add negative", "campaign": r["campaign"], "ad_group": r["ad_group"],
                        "target": "  " + str(r["term"]).upper(), "match_type": r["match_type"], "product_id": ""})
        changes.append({**changes[-1], "target": r["term"] + " more"})  # another term: not held
        changes.append({**changes[-2], "match_type": "negative phrase" if r["match_type"] == "negative exact"
                        else "negative exact"})  # another match type: not held
        changes.append({**changes[-3], "ad_group": "" if r["ad_group"] else "a group"})  # another ad group
    rows = followup_rows(changes, before, now, {})
    for change, row in zip(changes, rows):
        group = change["ad_group"]
        mask = ((negatives["campaign"] == change["campaign"])
                & (negatives["ad_group"].map(lambda g: "" if pd.isna(g) else g) == group)
                & (negatives["term"].map(fold) == fold(change["target"]))
                & (negatives["match_type"] == change["match_type"]))
        assert ("yes" if mask.any() else "no") == row["applied"], change
    assert ["yes", "no", "no", "no"] * 6 == [row["applied"] for row in rows]
