"""Charts that show without recalculation: every series carries its categories and values cached.

A reader that draws a chart from its caches without recalculating (Apache POI 4.0.1 cannot
read a text category range written as an uncached numeric reference, as reported in issue 13)
sees the workbook's own cached values. No series is named exactly like an axis title: Gnumeric
1.12.55 crashes re-opening an .ods converted from such a chart (reported in issue 13).
"""
from __future__ import annotations

import re
import zipfile
from xml.etree import ElementTree

from openpyxl.utils import range_boundaries

from sheetbuilder.workbook.render import chart_names
from sheetbuilder.workbook.spec import Chart, Series
from workbook_io import open_values

C = "{http://schemas.openxmlformats.org/drawingml/2006/chart}"
A = "{http://schemas.openxmlformats.org/drawingml/2006/main}"


def _charts(path):
    with zipfile.ZipFile(path) as z:
        names = sorted((n for n in z.namelist() if re.fullmatch(r"xl/charts/chart\d+\.xml", n)),
                       key=lambda n: int(re.search(r"\d+", n).group()))
        return [ElementTree.fromstring(z.read(n)) for n in names]


def _cells(book, ref):
    """The cached values of a chart range, in order."""
    sheet, cells = ref.rsplit("!", 1)
    min_col, min_row, max_col, max_row = range_boundaries(cells.replace("$", ""))
    ws = book[sheet.strip("'").replace("''", "'")]
    return [ws.cell(r, c).value for r in range(min_row, max_row + 1) for c in range(min_col, max_col + 1)]


def _cache(ref_element):
    """(cache tag, point count, {index: text}) of a c:strRef or c:numRef."""
    cache = ref_element.find(f"{C}strCache")
    if cache is None:
        cache = ref_element.find(f"{C}numCache")
    assert cache is not None, "a series range without a data cache"
    points = {int(pt.get("idx")): pt.find(f"{C}v").text for pt in cache.findall(f"{C}pt")}
    return cache.tag.removeprefix(C), int(cache.find(f"{C}ptCount").get("val")), points


def _same(cached, text):
    if isinstance(cached, (int, float)) and not isinstance(cached, bool):
        return float(text) == float(cached)
    return text == str(cached)


def test_every_demo_chart_series_caches_the_cells_it_plots(demo_build):
    book = open_values(demo_build.output)
    charts = _charts(demo_build.output)
    assert 3 == len(charts)  # the Mix charts of the demo
    checked = 0
    for chart in charts:
        for ser in chart.iter(f"{C}ser"):
            for part in ("cat", "val"):
                ref = ser.find(f"{C}{part}")[0]
                formula = ref.find(f"{C}f").text
                cells = _cells(book, formula)
                tag, count, points = _cache(ref)
                assert len(cells) == count, formula
                if part == "cat" and any(isinstance(v, str) for v in cells):
                    assert "strCache" == tag, formula
                expected = {i: v for i, v in enumerate(cells) if v is not None and v != ""}
                assert sorted(expected) == sorted(points), formula
                assert all(_same(expected[i], points[i]) for i in expected), formula
                checked += 1
    assert checked >= 10


def test_no_demo_chart_series_is_named_like_an_axis_title(demo_build):
    for chart in _charts(demo_build.output):
        names = [ser.find(f"{C}tx/{C}v").text for ser in chart.iter(f"{C}ser")]
        titles = ["".join(t.text or "" for t in ax.iter(f"{A}t"))
                  for tag in ("catAx", "valAx") for ax in chart.iter(f"{C}{tag}")]
        assert set() == set(names) & set(titles)
        assert all(names)


def _chart(*names, x="Match type", y="ACoS"):
    return Chart("column", "ACoS by match type", tuple(Series(n, "=Mix!$A$2:$A$3", "=Mix!$B$2:$B$3", "#000000")
                                                      for n in names), (0, 0), x_title=x, y_title=y)


def test_a_lone_series_named_like_its_axis_takes_the_chart_title():
    assert (["ACoS by match type"], "Match type", "ACoS") == chart_names(_chart("ACoS"))


def test_among_several_series_the_axis_title_a_series_repeats_is_left_off():
    assert (["ACoS", "Target ACoS"], "Match type", "") == chart_names(_chart("ACoS", "Target ACoS"))


def test_series_named_apart_from_the_axes_keep_their_names_and_titles():
    assert (["Spend share", "Sales share"], "Product", "Share") == chart_names(
        _chart("Spend share", "Sales share", x="Product", y="Share"))
