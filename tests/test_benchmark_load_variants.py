"""The benchmark's load variants (benchmarks/load_variants.py): each is the built workbook with one thing changed."""
from __future__ import annotations

import re
import zipfile

import pytest

from benchmarks.load_variants import column_twins, feature_variants, names_as_references
from benchmarks.twin import count_cells, sheet_parts


def _sheets(path) -> dict[str, str]:
    with zipfile.ZipFile(path) as z:
        return {name: z.read(part).decode("utf-8") for name, part in sheet_parts(z).items()}


@pytest.mark.slow  # a few seconds: the fast lane stays under two minutes
def test_each_feature_variant_lacks_its_feature_and_keeps_every_formula_cell(demo_build, tmp_path):
    variants = feature_variants(demo_build.output, tmp_path)
    whole = count_cells(demo_build.output)["formula_cells"]
    assert any("<conditionalFormatting" in x for x in _sheets(demo_build.output).values())
    assert not any("<conditionalFormatting" in x for x in _sheets(variants["no conditional formats"]).values())
    assert not any("<dataValidations" in x for x in _sheets(variants["no data validations"]).values())
    assert not any("<autoFilter" in x for x in _sheets(variants["no autofilters"]).values())
    zeros = "".join(_sheets(variants["every formula 0"]).values())
    assert set(re.findall(r"<f\b[^>]*>([^<]*)</f>", zeros)) == {"0"}
    for name, path in variants.items():
        assert whole == count_cells(path)["formula_cells"], name


def test_names_as_references_writes_each_setting_name_as_its_cell(demo_build, tmp_path):
    with zipfile.ZipFile(demo_build.output) as z:
        book = z.read("xl/workbook.xml").decode("utf-8")
    cell = re.search(r'<definedName name="min_promote_orders">([^<]*)</definedName>', book).group(1)
    before = "".join(_sheets(demo_build.output).values())
    after = "".join(_sheets(names_as_references(demo_build.output, tmp_path)["names as references"]).values())
    assert "min_promote_orders" in before
    assert "min_promote_orders" not in after
    assert before.count("min_promote_orders") <= after.count(cell.replace("'", "&apos;"))


@pytest.mark.slow
def test_a_column_twin_turns_one_shared_column_into_values(demo_build, tmp_path):
    twins = column_twins(demo_build.output, tmp_path, "Terms")
    whole = count_cells(demo_build.output)["formulas_by_sheet"]
    assert len(twins) > 3
    for name, path in list(twins.items())[:2]:
        left = count_cells(path)["formulas_by_sheet"]
        assert 0 < left["Terms"] < whole["Terms"], name
        assert {k: v for k, v in whole.items() if k != "Terms"} == {k: v for k, v in left.items() if k != "Terms"}
