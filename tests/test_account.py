"""Which account a workbook was built for: the products and campaigns, their fingerprint and the overlap rule.

The rule is ours (README, "Last week's workbook"): under half of the products shared, or (both
having campaigns) under half of the campaigns, counted against the smaller set, is too little
to be the same account.
"""
from __future__ import annotations

import hashlib

import pandas as pd

from sheetbuilder.reading.account import Account, account_of, overlap


def _account(products, campaigns=(), name="a"):
    return Account(name, frozenset(products), frozenset(campaigns))


def test_the_account_is_read_from_the_catalog_sales_and_every_ad_table():
    tables = {"catalog": pd.DataFrame({"product_id": ["P1", "P2"]}),
              "store_sales": pd.DataFrame({"product_id": ["P2", "P3"]}),
              "ad_products": pd.DataFrame({"campaign": ["C1", "C1"], "product_id": ["P1", "P1"]}),
              "search_terms": pd.DataFrame({"campaign": ["C2"]}), "targets": None}
    assert _account({"P1", "P2", "P3"}, {"C1", "C2"}, "shop") == account_of("shop", tables)


def test_the_fingerprint_is_sha256_of_the_sorted_products_then_campaigns():
    expected = hashlib.sha256("P1\nP2\n\nC1".encode()).hexdigest()[:12]   # hashlib is the outside reference
    assert expected == _account({"P2", "P1"}, {"C1"}).fingerprint
    assert _account({"P1", "P2"}, {"C1"}).fingerprint != _account({"P1", "P2"}, {"C2"}).fingerprint


def test_another_sellers_workbook_shares_too_little():
    assert overlap(_account({"P1", "P2"}, {"C1"}), _account({"Q1", "Q2"}, {"D1"})).too_little


def test_a_grown_catalog_is_the_same_account():
    found = overlap(_account({"P1", "P2"}, {"C1"}), _account({"P1", "P2", "P3", "P4", "P5"}, {"C1", "C2"}))
    assert (False, False) == (found.too_little, found.complete)
    assert "shares 2 of its 2 products (5 this week) and 1 of its 1 campaigns (2 this week)" == found.counts()


def test_renamed_campaigns_alone_are_too_little():
    assert overlap(_account({"P1", "P2"}, {"C1", "C2", "C3"}), _account({"P1", "P2"}, {"N1", "N2", "C3"})).too_little


def test_half_the_products_shared_is_enough_and_fewer_is_not():
    assert not overlap(_account({"P1", "P2"}), _account({"P1", "Q2"})).too_little
    assert overlap(_account({"P1", "P2", "P3"}), _account({"P1", "Q2", "Q3"})).too_little
