"""Which account a set of exports belongs to, and whether last week's workbook is the same account's.

An account is known by its products and its campaigns. A workbook records them (its in_ sheets
hold both) with a short fingerprint, so ``--previous`` can tell last week's workbook of the same
seller from another seller's. The rule (ours, stated in the README): the two share too little
when fewer than half of the products are shared, or, where both have campaigns, fewer than half
of the campaigns, each counted against the smaller of the two sets (a catalog that grew or
shrank keeps its old products in common).
"""
from __future__ import annotations

import hashlib
from dataclasses import dataclass

import pandas as pd

from sheetbuilder.errors import WARNING, AnotherAccount, Problem
from sheetbuilder.reading.readers import Inputs

ACCOUNT_NAME = "sb_account"  # the defined name over the Settings cell that holds the account's name
SHARED_AT_LEAST = 0.5  # the share of products (and of campaigns) two weeks of one account have in common
CAMPAIGN_TABLES = ("ad_products", "targets", "search_terms", "campaigns")


@dataclass(frozen=True)
class Account:
    """The products and campaigns a workbook was built for."""

    name: str
    products: frozenset[str]
    campaigns: frozenset[str]

    @property
    def fingerprint(self) -> str:
        """Twelve hex digits of SHA-256 over the sorted products and campaigns: equal sets, equal fingerprint."""
        text = "\n".join(sorted(self.products)) + "\n\n" + "\n".join(sorted(self.campaigns))
        return hashlib.sha256(text.encode("utf-8")).hexdigest()[:12]

    def describe(self) -> str:
        """'name' (N products, M campaigns, fingerprint F)."""
        return (f"'{self.name}' ({len(self.products)} products, {len(self.campaigns)} campaigns, "
                f"fingerprint {self.fingerprint})")


def _column(frame: pd.DataFrame | None, column: str) -> set[str]:
    if frame is None or column not in frame.columns:
        return set()
    return {str(v) for v in frame[column].dropna() if str(v) != ""}


def account_of(name: str, tables: dict[str, pd.DataFrame | None]) -> Account:
    """The account of a set of read tables: products from the catalog and sales, campaigns from the ad tables."""
    products = _column(tables.get("catalog"), "product_id") | _column(tables.get("store_sales"), "product_id")
    campaigns: set[str] = set()
    for table in CAMPAIGN_TABLES:
        campaigns |= _column(tables.get(table), "campaign")
    return Account(name, frozenset(products), frozenset(campaigns))


def account_of_inputs(inputs: Inputs) -> Account | None:
    """The account of a build's inputs, named for the folder its exports came from; None without sources."""
    if not inputs.sources:
        return None
    return account_of(next(iter(inputs.sources.values())).parent.name, inputs.tables)


@dataclass(frozen=True)
class Overlap:
    """What two accounts share, and whether it is too little to be the same account."""

    products: int
    campaigns: int
    previous: Account
    current: Account

    @staticmethod
    def _share(shared: int, a: frozenset, b: frozenset) -> float:
        smaller = min(len(a), len(b))
        return 1.0 if smaller == 0 else shared / smaller

    @property
    def too_little(self) -> bool:
        """Under half the products shared, or (both having campaigns) under half the campaigns."""
        p, c = self.previous, self.current
        few_products = self._share(self.products, p.products, c.products) < SHARED_AT_LEAST
        few_campaigns = bool(p.campaigns and c.campaigns) and (
            self._share(self.campaigns, p.campaigns, c.campaigns) < SHARED_AT_LEAST)
        return few_products or few_campaigns

    @property
    def complete(self) -> bool:
        """The same products and the same campaigns."""
        p, c = self.previous, self.current
        return p.products == c.products and p.campaigns == c.campaigns

    def counts(self) -> str:
        """'shares 20 of 26 products (26 this week) and 7 of 8 campaigns (9 this week)'."""
        p, c = self.previous, self.current
        return (f"shares {self.products} of its {len(p.products)} products ({len(c.products)} this week) and "
                f"{self.campaigns} of its {len(p.campaigns)} campaigns ({len(c.campaigns)} this week)")


def overlap(previous: Account, current: Account) -> Overlap:
    """What previous and current share."""
    return Overlap(len(previous.products & current.products), len(previous.campaigns & current.campaigns),
                   previous, current)


def check_previous(previous: Account, current: Account, file: str, anyway: bool = False) -> tuple[list[Problem], bool]:
    """Whether last week's workbook (file) is this account's: (notes, too little in common).

    Raises:
        AnotherAccount: too little in common and not anyway, naming both accounts and the way on.
    """
    found = overlap(previous, current)
    if found.complete:
        return [], False
    if found.too_little and not anyway:
        raise AnotherAccount(
            f"{file} was built for another account: {previous.describe()}; these exports are {current.describe()}. "
            f"It {found.counts()}, under half of either. Pass last week's workbook of this account, or add "
            "--previous-anyway to carry what matches (its Follow-up and History are then not read)")
    if found.too_little:
        return [Problem(file, None, None, f"built for another account, {previous.describe()}: it {found.counts()}; "
                        "carried what matches because of --previous-anyway; its Follow-up and History were not read",
                        WARNING)], True
    return [Problem(file, None, None, f"last week's workbook {found.counts()}: products or campaigns came or went; "
                    "edits on rows that are gone are listed on Unmatched edits", WARNING)], False
