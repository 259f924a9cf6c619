"""Whether two builds read the same exports (no Follow-up then): the rule of weekly/applied.py, on small tables.

The rule, as the module states it: the same sales and ad tables, row for row in any order, numbers compared
rounded to 6 decimal places, blanks alike, everything else compared as its text. Tables held in the same order
with equal cells are told apart without rounding or sorting (the quick path), so each case is checked in the
same order and shuffled, and with numbers as floats (how the readers hold them) and as Python objects.
"""
from __future__ import annotations

import math

import pandas as pd
import pytest

from sheetbuilder.weekly.applied import same_exports


def _sales(units, revenue, products=("P1", "P2", "P3")) -> pd.DataFrame:
    return pd.DataFrame({"product_id": list(products), "units": [float(u) for u in units],
                         "revenue": [float(r) for r in revenue]})


def _as_objects(frame: pd.DataFrame) -> pd.DataFrame:
    """The same cells held as Python objects (ints where whole), not floats."""
    out = frame.astype(object)
    for col in ("units", "revenue"):
        out[col] = [int(v) if v == v and float(v).is_integer() else v for v in frame[col]]
    return out


def _reversed(frame: pd.DataFrame) -> pd.DataFrame:
    return frame.iloc[::-1].reset_index(drop=True)


BASE = _sales([3, 0, 5], [29.97, 0.0, math.nan])


@pytest.mark.parametrize("other", [BASE.copy(), _reversed(BASE), _as_objects(BASE), _reversed(_as_objects(BASE)),
                                   _sales([3, 0, 5], [29.97 + 4e-7, 0.0, math.nan]),
                                   _reversed(_sales([3, 0, 5], [29.9699996, 0.0, math.nan]))],
                         ids=["identical", "other order", "as objects", "as objects, other order",
                              "within the sixth decimal", "other order, rounded alike from below"])
def test_the_same_rows_are_the_same_exports(other):
    assert True is same_exports({"store_sales": BASE}, {"store_sales": other})


@pytest.mark.parametrize("other", [_sales([3, 0, 6], [29.97, 0.0, math.nan]),
                                   _sales([3, 0, 5], [29.97 + 2e-6, 0.0, math.nan]),
                                   _sales([3, 0, 5], [29.97, 0.0, 0.0]),
                                   _reversed(_sales([3, 0, 5], [29.97, 0.0, 1.0])),
                                   _sales([3, 0, 5], [29.97, 0.0, math.nan], ("P1", "P2", "P4"))],
                         ids=["a count differs", "beyond the sixth decimal", "a blank became 0",
                              "other order, one cell differs", "a product differs"])
def test_a_row_that_differs_is_not_the_same_exports(other):
    assert False is same_exports({"store_sales": BASE}, {"store_sales": other})


def test_equal_cells_that_read_as_other_texts_are_not_the_same_exports():
    # Python's 1 == 1.0, but a text column compares the texts '1' and '1.0': the quick path must not take them as
    # equal when the full comparison would not.
    a = pd.DataFrame({"product_id": pd.Series([1, "P2"], dtype=object), "units": [1.0, 2.0], "revenue": [1.0, 2.0]})
    b = pd.DataFrame({"product_id": pd.Series([1.0, "P2"], dtype=object), "units": [1.0, 2.0], "revenue": [1.0, 2.0]})
    assert False is same_exports({"store_sales": a}, {"store_sales": b})
