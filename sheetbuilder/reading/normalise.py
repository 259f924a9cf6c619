"""Search-term and keyword normalisation: pure functions, no state.

Two texts that a shopper would call the same search should normalise to the same
string. :func:`normalise` applies, in order:

1. Unicode normalisation form NFKC (Unicode Standard Annex #15, "Unicode
   Normalization Forms"): compatibility characters become their plain form
   (full-width "ＧＡＲＤＥＮ" -> "GARDEN", the ligature "ﬁ" -> "fi", NBSP -> space)
   and composed / decomposed accents become one form ("é" == "e" + U+0301).
2. Case folding with :meth:`str.casefold`, which follows Unicode default case
   folding (Unicode Standard, chapter 3.13; CaseFolding.txt): "Straße" -> "strasse".
3. Trimming, and collapsing every run of whitespace (spaces, tabs, CR/LF, NBSP
   U+00A0 and the other characters :meth:`str.isspace` accepts) into one ASCII space.
4. Optionally (``fold_plurals=True``) folding simple English plurals word by word;
   see :func:`fold_plural` for the rules.
"""
from __future__ import annotations

import functools
import re
import unicodedata


def fold_plural(word: str) -> str:
    """One word with a simple English plural folded to its singular.

    Only words made of letters alone are folded (a code such as "ab12s" is kept).
    The first rule that applies wins:

    - "ies" -> "y" when the word is longer than 4 letters: "berries" -> "berry"
      ("ties" is 4 letters, so it falls through to the last rule: "tie").
    - "sses" -> "ss": "glasses" -> "glass".
    - "xes", "ches", "shes", "zes" drop "es": "boxes" -> "box", "benches" -> "bench",
      "dishes" -> "dish", "quizzes" -> "quizz".
    - otherwise a trailing "s" is dropped when the word is longer than 3 letters and
      does not end in "ss", "us" or "is": "pots" -> "pot", while "glass", "cactus",
      "analysis" and "gas" stay as they are.

    These are deliberately simple rules, not a stemmer: irregular plurals ("mice")
    are kept, and a few singulars are cut ("sizes" -> "siz", "series" -> "sery").
    """
    if not word.isalpha():
        return word
    if word.endswith("ies") and len(word) > 4:
        return word[:-3] + "y"
    if word.endswith("sses"):
        return word[:-2]
    if word.endswith(("xes", "ches", "shes", "zes")):
        return word[:-2]
    if word.endswith("s") and len(word) > 3 and not word.endswith(("ss", "us", "is")):
        return word[:-1]
    return word


def normalise(text: str, fold_plurals: bool = False) -> str:
    """text normalised for comparing search terms (see the module docstring for the steps).

    Args:
        text: a search term, keyword or phrase as exported.
        fold_plurals: also fold simple English plurals word by word (off by default).

    Returns:
        NFKC-normalised, case-folded text, trimmed, with single ASCII spaces between words.
    """
    folded = unicodedata.normalize("NFKC", str(text)).casefold()
    parts = folded.split()  # no argument: splits on every run of Unicode whitespace
    if fold_plurals:
        parts = [fold_plural(w) for w in parts]
    return " ".join(parts)


def words(text: str) -> int:
    """The number of words of text once normalised (0 for blank text)."""
    norm = normalise(text)
    return len(norm.split(" ")) if norm else 0


@functools.lru_cache(maxsize=64)
def _compiled(pattern: str) -> re.Pattern:
    """pattern compiled case-insensitively, or ValueError saying why it is not valid."""
    try:
        return re.compile(pattern, re.IGNORECASE)
    except re.error as exc:
        raise ValueError(f"the product-id pattern {pattern!r} is not a valid regular expression: {exc}") from None


def looks_like_product_id(text: str, pattern: str) -> bool:
    """Whether the whole normalised text matches pattern (a regular expression, case-insensitive).

    Args:
        text: a search term.
        pattern: the user's regular expression for product ids, e.g. ``b0[a-z0-9]{8}``.

    Raises:
        ValueError: pattern is not a valid regular expression.
    """
    return _compiled(pattern).fullmatch(normalise(text)) is not None


def contains_phrase(term_norm: str, phrase_norm: str) -> bool:
    """Whether the phrase's words appear in the term's words, contiguously and in order.

    This is the phrase-match rule of the trade, on whole words: "plant pot" is in
    "big plant pot set", but "pot" is not in "teapot holder". Both arguments should
    already be normalised (:func:`normalise`). An empty phrase is in no term.
    """
    phrase = phrase_norm.split(" ") if phrase_norm else []
    term = term_norm.split(" ") if term_norm else []
    n = len(phrase)
    if n == 0 or n > len(term):
        return False
    return any(term[i:i + n] == phrase for i in range(len(term) - n + 1))
