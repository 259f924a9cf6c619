"""Terms, Harvest and Negatives: three-way truth against the independent reference in
tests/oracle_terms.py, and the list mechanism's behaviour.

The block rule's spend threshold (a term that spent its product's price without a sale is
suspect) is the trade's rule of thumb: common practice, no source. The click threshold is
the binomial zero-order threshold checked against scipy in test_bids.py.
"""
from __future__ import annotations

import pytest

from conftest import DEMO
from terms_io import (HARVEST_HEADERS, NEGATIVE_HEADERS, TERMS_CHECKED, TERMS_HEADER_ROW, TERMS_HEADERS,
                      list_table, terms_oracle_for, terms_table)
from workbook_io import mismatches, open_values


def _check(path, folder, label):
    terms, harvest, blocked = terms_oracle_for(folder)
    rows, _ = terms_table(path)
    assert sorted(terms) == sorted(rows), label
    assert [] == mismatches(terms, rows, TERMS_CHECKED, label + " Terms")
    got = list_table(path, "Harvest")
    assert sorted(harvest) == sorted(got), label + " Harvest rows"
    assert [] == mismatches(harvest, got, HARVEST_HEADERS, label + " Harvest")
    got = list_table(path, "Negatives")
    assert sorted(blocked) == sorted(got), label + " Negatives rows"
    assert [] == mismatches(blocked, got, NEGATIVE_HEADERS, label + " Negatives")


def test_terms_headers_are_the_documented_ones(demo_build):
    ws = open_values(demo_build.output)["Terms"]
    assert TERMS_HEADERS == [c.value for c in ws[TERMS_HEADER_ROW]][: len(TERMS_HEADERS)]


@pytest.mark.slow  # several seconds: the fast lane stays under two minutes
def test_demo_terms_and_lists_cached_values_equal_reference(demo_build):
    _check(demo_build.output, DEMO, "demo cached")


def test_demo_has_every_verdict_and_finds_targeted_and_negated_terms(demo_build):
    rows, _ = terms_table(demo_build.output)
    # low stock: the demo inventory leaves LF-1002 two units (demo_inputs/inventory.csv), which holds its terms
    assert {"promote", "block", "watch", "keep", "low stock"} == {r["Verdict"] for r in rows.values()}
    assert any(r["Already targeted"] for r in rows.values())
    assert {"negative phrase, campaign: free", "negative exact, ad group"} <= {r["Already negated"] for r in rows.values()}


def test_a_product_identifier_term_is_proposed_as_a_product_target(demo_build):
    harvest = list_table(demo_build.output, "Harvest")
    kinds = {r["Search term"]: (r["Kind"], r["Match type"]) for r in harvest.values()}
    assert ("product target", "product") == kinds["lf-1014"]


@pytest.mark.libreoffice
def test_demo_terms_and_lists_libreoffice_equal_reference(libreoffice):
    _check(libreoffice["demo"], DEMO, "demo LibreOffice")


@pytest.mark.slow  # moved out of the fast lane, which must stay under two minutes
def test_generated_terms_cached_values_equal_reference(generated, work):
    checked = 0
    for i, (account, result) in enumerate(generated):
        if "search_terms" in account:
            checked += 1
            _check(result.output, work / f"gen{i}", f"generated {i} cached")
    assert checked >= 3


@pytest.mark.libreoffice
def test_generated_terms_libreoffice_equal_reference(libreoffice, generated, work):
    for i, (account, result) in enumerate(generated):
        if "search_terms" in account:
            _check(libreoffice[result.output.stem], work / f"gen{i}", f"generated {i} LibreOffice")


@pytest.mark.slow  # moved out of the fast lane, which must stay under two minutes
def test_lists_are_sized_to_the_terms_and_say_when_the_cap_hides_rows(tmp_path):
    import shutil
    from sheetbuilder.pipeline import build
    folder = tmp_path / "capped"
    shutil.copytree(DEMO, folder)
    with open(folder / "settings.toml", "a", encoding="utf-8") as fh:
        fh.write("list_cap = 5\n")
    result = build(folder, tmp_path / "capped.xlsx")
    ws = open_values(result.output)["Harvest"]
    total = len(terms_oracle_for(folder)[1])
    assert total > 5
    assert f"Showing the first 5 of {total} terms to promote" in ws["A2"].value
    assert 5 == len(list_table(result.output, "Harvest"))
