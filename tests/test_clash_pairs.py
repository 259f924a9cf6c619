"""The clash search finds exactly the term pairs of its definition, and its work grows with the matches.

Definition (README, Terms: "Clash"): a negative from term i could block term j when i's words
appear in j's words contiguously and in order (the phrase-match rule of the trade, common
practice) and either j's destination campaign is i's campaign, or j is in i's campaign and sold.
The reference below compares every pair, which is what the index must never do.
"""
from __future__ import annotations

import pandas as pd
from hypothesis import given, settings as hsettings, strategies as st

from sheetbuilder.sheets import terms as terms_module
from sheetbuilder.sheets.terms import clash_pairs


def _frame(rows):
    return pd.DataFrame(rows, columns=["campaign", "ad_group", "dest_campaign", "dest_ad_group", "term_key",
                                       "orders"]).assign(pos=lambda f: [float(k + 1) for k in range(len(f))])


def _words_in_order(inner: str, outer: str) -> bool:
    a, b = inner.split(), outer.split()
    return bool(a) and any(b[k:k + len(a)] == a for k in range(len(b) - len(a) + 1))


def _every_pair(frame):
    rows = []
    f = frame.to_dict("records")
    for i, ti in enumerate(f):
        for j, tj in enumerate(f):
            if i == j or not _words_in_order(ti["term_key"], tj["term_key"]):
                continue
            kw_in = tj["dest_campaign"] == ti["campaign"]
            sold_in = tj["campaign"] == ti["campaign"] and tj["orders"] > 0
            if kw_in or sold_in:
                rows.append((i + 1.0, j + 1.0, float(kw_in), float(kw_in and tj["dest_ad_group"] == ti["ad_group"]),
                             float(sold_in), float(tj["campaign"] == ti["campaign"] and tj["ad_group"] == ti["ad_group"]),
                             float(tj["term_key"] == ti["term_key"])))
    return sorted(rows)


WORDS = st.sampled_from(["lamp", "desk", "led", "warm", "white", "a", "b"])
TERM = st.lists(WORDS, min_size=1, max_size=4).map(" ".join)
ROW = st.tuples(st.sampled_from(["C1", "C2"]), st.sampled_from(["G1", "G2"]), st.sampled_from(["", "C1", "C2"]),
                st.sampled_from(["", "G1", "G2"]), TERM, st.sampled_from([0.0, 0.0, 1.0, 3.0]))


@hsettings(max_examples=150, deadline=None)
@given(st.lists(ROW, max_size=14))
def test_clash_pairs_equal_every_pair_compared(rows):
    frame = _frame(rows)
    found = clash_pairs(frame)
    assert _every_pair(frame) == sorted(map(tuple, found.to_numpy().tolist()))


def test_terms_sharing_a_leading_word_are_not_compared_pairwise(monkeypatch):
    # 300 terms "lamp model k" sold in one campaign: each is only in itself, so no pair clashes;
    # indexed by the leading word, each would be compared with all 299 others (89,700 comparisons).
    frame = _frame([("C1", "G1", "", "", f"lamp model k{k}", 1.0) for k in range(300)])
    calls = []
    real = terms_module.contains_phrase
    monkeypatch.setattr(terms_module, "contains_phrase", lambda t, p: calls.append(1) or real(t, p))
    assert 0 == len(clash_pairs(frame))
    assert len(calls) <= 300


def test_many_terms_sharing_a_leading_word_give_every_pair_compared():
    # 300 generated terms, every one starting with "lamp", most of them holding another's words in order
    # ("lamp desk" in "lamp desk led"): the index must find exactly the pairs the brute force finds.
    import random
    rnd = random.Random(24)
    tails = ["desk", "led", "warm", "white", "desk led", "warm white", "led desk", "white desk led"]
    rows = [(rnd.choice(["C1", "C2"]), rnd.choice(["G1", "G2"]), rnd.choice(["", "C1", "C2"]),
             rnd.choice(["", "G1", "G2"]), "lamp " + rnd.choice(tails) + rnd.choice(["", "", " k%d" % rnd.randrange(40)]),
             rnd.choice([0.0, 1.0])) for _ in range(300)]
    frame = _frame(rows)
    expected = _every_pair(frame)
    assert len(expected) > 1000  # the set really clashes a lot
    assert expected == sorted(map(tuple, clash_pairs(frame).to_numpy().tolist()))
