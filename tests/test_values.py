"""The value helpers answer by their definitions on every kind of value a cell or a frame hands them.

Expected values: each helper's definition written out here with the numbers.Real ABC (Python's numeric tower,
PEP 3141: int, float and NumPy's numbers are Real, a bool is excluded by the definition) and NaN as the one value
unequal to itself (IEEE 754). The helpers answer the commonest types by their exact type first; these cases hold
every type that takes another path (subclasses, NumPy scalars, bools, Decimal, dates).
"""
from __future__ import annotations

import datetime as dt
import decimal
import fractions
import math
import numbers

import numpy as np
import pytest

from sheetbuilder.values import is_blank, is_nan, is_number


class _Text(str):
    pass


class _Float(float):
    pass


SAMPLES = [None, "", " ", "\t\n", "a", " a ", "\u00a0", "nan", _Text(""), _Text(" x "), 0, 1, -5, 10 ** 30, 0.0, -0.0,
           1.5, math.nan, math.inf, -math.inf, True, False, np.float64(1.0), np.float64("nan"), np.int64(3),
           np.bool_(True), np.float32("nan"), _Float("nan"), _Float(2.0), decimal.Decimal("1.5"),
           fractions.Fraction(1, 3), dt.date(2026, 1, 1), b"", []]


def _real(value) -> bool:
    return isinstance(value, numbers.Real) and not isinstance(value, bool)


@pytest.mark.parametrize("value", SAMPLES, ids=[repr(v) for v in SAMPLES])
def test_each_helper_answers_as_its_definition(value):
    nan = _real(value) and value != value
    assert nan == is_nan(value)
    assert (_real(value) and value == value) == is_number(value)
    assert (value is None or (isinstance(value, str) and value.strip() == "") or nan) == is_blank(value)


def test_the_commonest_values_give_the_expected_answers():
    # Written out by hand: a blank is None, NaN or spaces; a bool is not a number.
    assert [True, True, True, False, False] == [is_blank(v) for v in (None, math.nan, "  ", "x", 0)]
    assert [True, True, False, False, False] == [is_number(v) for v in (0, 2.5, math.nan, True, "1")]
