"""Search-term normalisation: one named example per rule.

Sources: Unicode Standard Annex #15, "Unicode Normalization Forms" (NFKC); Python's
str.casefold follows Unicode default case folding (The Unicode Standard, section 3.13,
and CaseFolding.txt).
"""
from __future__ import annotations

import pytest

from sheetbuilder.reading.normalise import contains_phrase, looks_like_product_id, normalise, words


# --- NFKC (Unicode Standard Annex #15) ---

def test_full_width_letters_become_plain_letters_by_nfkc():
    assert "garden" == normalise("ＧＡＲＤＥＮ")  # UAX #15: compatibility decomposition of U+FF27 etc.


def test_the_fi_ligature_becomes_two_letters_by_nfkc():
    assert "fi" == normalise("\ufb01")  # UAX #15: U+FB01 LATIN SMALL LIGATURE FI -> "fi"


def test_composed_and_decomposed_e_acute_are_equal_after_nfkc():
    composed, decomposed = "caf\u00e9", "cafe\u0301"
    assert composed != decomposed
    assert normalise(composed) == normalise(decomposed)  # UAX #15: canonical equivalence
    assert "caf\u00e9" == normalise(decomposed)


# --- case folding (str.casefold: Unicode default case folding) ---

def test_case_folding_lowers_letters():
    assert "raised bed" == normalise("Raised BED")


def test_case_folding_turns_sharp_s_into_ss():
    assert "strasse" == normalise("Straße")  # CaseFolding.txt: U+00DF -> "ss" (full folding)


# --- whitespace ---

def test_outer_whitespace_is_trimmed_and_a_tab_becomes_a_space():
    assert "raised bed" == normalise("  raised\tbed  ")


def test_line_breaks_and_runs_of_spaces_collapse_to_one_space():
    assert "raised bed kit" == normalise("raised\r\n  bed\n\nkit")


def test_a_no_break_space_is_a_space():
    assert "raised bed" == normalise("raised\u00a0bed")


def test_other_unicode_spaces_are_spaces():
    assert "raised bed kit" == normalise("raised\u2003bed\u3000kit")  # em space, ideographic space


def test_blank_text_normalises_to_the_empty_string():
    assert "" == normalise(" \t\u00a0\n")


# --- plural folding (off by default) ---

def test_plurals_are_kept_by_default():
    assert "plant pots" == normalise("Plant Pots")


def test_plural_ies_becomes_y_in_words_longer_than_four_letters():
    assert "berry" == normalise("berries", fold_plurals=True)


def test_plural_ies_in_a_four_letter_word_only_loses_its_s():
    assert "tie" == normalise("ties", fold_plurals=True)


def test_plural_sses_becomes_ss():
    assert "glass" == normalise("glasses", fold_plurals=True)


@pytest.mark.parametrize("plural, singular", [("boxes", "box"), ("benches", "bench"), ("dishes", "dish"),
                                              ("quizzes", "quizz")],
                         ids=["xes", "ches", "shes", "zes"])
def test_plurals_in_xes_ches_shes_zes_drop_es(plural, singular):
    assert singular == normalise(plural, fold_plurals=True)


def test_a_trailing_s_is_dropped_from_plain_plurals():
    assert "plant pot" == normalise("Plant Pots", fold_plurals=True)


@pytest.mark.parametrize("word", ["glass", "cactus", "analysis", "gas"],
                         ids=["ends_ss", "ends_us", "ends_is", "three_letters"])
def test_words_that_only_look_plural_are_kept(word):
    assert word == normalise(word, fold_plurals=True)


def test_plural_folding_leaves_codes_with_digits_alone():
    assert "ab12s" == normalise("AB12S", fold_plurals=True)


# --- words ---

def test_words_counts_the_words_of_the_normalised_text():
    assert 3 == words("  big\u00a0plant\tpot ")


def test_words_of_blank_text_is_zero():
    assert 0 == words("   ")


# --- product-id patterns ---

def test_a_search_term_matching_the_product_id_pattern_looks_like_a_product_id():
    assert looks_like_product_id(" B07XJ8C8F5 ", r"b0[a-z0-9]{8}")


def test_the_product_id_pattern_is_case_insensitive():
    assert looks_like_product_id("b07xj8c8f5", r"B0[A-Z0-9]{8}")


def test_the_product_id_pattern_must_match_the_whole_term():
    assert not looks_like_product_id("b07xj8c8f5 plant pot", r"b0[a-z0-9]{8}")


def test_an_invalid_product_id_pattern_raises_a_clear_value_error():
    with pytest.raises(ValueError, match=r"the product-id pattern 'b0\[a-z' is not a valid regular expression"):
        looks_like_product_id("b07xj8c8f5", "b0[a-z")


# --- phrase containment (phrase-match on whole words) ---

def test_a_phrase_inside_a_longer_term_is_contained():
    assert contains_phrase("big plant pot set", "plant pot")


def test_a_phrase_is_matched_on_whole_words_only():
    assert not contains_phrase("teapot holder", "pot")


def test_the_phrase_words_must_be_contiguous():
    assert not contains_phrase("plant big pot", "plant pot")


def test_the_phrase_words_must_be_in_order():
    assert not contains_phrase("pot plant", "plant pot")


def test_a_term_contains_itself():
    assert contains_phrase("plant pot", "plant pot")


def test_an_empty_phrase_is_in_no_term():
    assert not contains_phrase("plant pot", "")
