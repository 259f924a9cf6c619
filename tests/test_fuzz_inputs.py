"""Fuzzing the readers: whatever the files hold, `build` writes a workbook openpyxl opens or
raises a SheetbuilderError whose problems name a file, and leaves no output behind.

The strategies live in benchmarks/soak.py; `python -m benchmarks.soak` runs them with
thousands of examples. Here each runs with few, so the file takes well under a minute.
Also: zip bombs and external links in .xlsx inputs are refused before calamine opens
them, and search_terms longer than a sheet are merged.
"""
from __future__ import annotations

import io
import zipfile
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings

from benchmarks.soak import BASE, STRATEGIES, base_rows, check_case, to_csv, valid_xlsx, write_case, zip_bytes
from sheetbuilder.reading import guard, readers
from sheetbuilder.errors import ERROR, WARNING, InputProblems
from sheetbuilder.pipeline import build, load

pytestmark = pytest.mark.slow  # each strategy builds dozens of fuzzed folders
FUZZ = settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow,
                                                                      HealthCheck.data_too_large])


@pytest.mark.parametrize("strategy", sorted(STRATEGIES))
def test_fuzzed_inputs_build_or_raise_problems_naming_a_file(strategy):
    @FUZZ
    @given(STRATEGIES[strategy])
    def run(case):
        check_case(case)

    run()


@pytest.mark.parametrize("value", ["1e308", "1e400", str(10 ** 30), "NaN", "nan", "inf", "-Infinity", "1e999"])
@pytest.mark.parametrize("file, column", [("ad_products.csv", "spend"), ("targets.csv", "bid"),
                                          ("ad_products.csv", "clicks"), ("catalog.csv", "target_acos")])
def test_huge_and_non_finite_numbers_are_a_problem_on_their_cell(tmp_path, file, column, value):
    rows = base_rows(file)
    rows[1][rows[0].index(column)] = value
    write_case(tmp_path / "in", {file: to_csv(rows).encode()})
    with pytest.raises(InputProblems) as caught:
        load(tmp_path / "in")
    assert [(file, 2, column)] == [(p.file, p.row, p.column) for p in caught.value.problems if p.severity == ERROR]
    assert check_case({file: to_csv(rows).encode()}) == "refused"


@pytest.mark.parametrize("codec", ["utf-16", "utf-32", "utf-8-sig", "cp1252"])
def test_a_file_in_utf16_or_utf32_with_a_bom_reads_like_utf8(tmp_path, codec):
    write_case(tmp_path / "a", {})
    write_case(tmp_path / "b", {"catalog.csv": BASE["catalog.csv"].encode(codec)})
    plain, _, _ = load(tmp_path / "a")
    other, _, _ = load(tmp_path / "b")
    assert plain.get("catalog").equals(other.get("catalog"))
    assert "Caf\u00e9 Mug" == other.get("catalog")["product_name"].iloc[0]


def test_utf16_without_a_bom_is_one_problem_saying_so(tmp_path):
    write_case(tmp_path / "in", {"catalog.csv": BASE["catalog.csv"].encode("utf-16-le")})
    with pytest.raises(InputProblems) as caught:
        load(tmp_path / "in")
    assert [("catalog.csv", 1, None)] == [(p.file, p.row, p.column) for p in caught.value.problems]
    assert "NUL characters" in caught.value.problems[0].message


def test_a_header_only_file_builds_with_an_empty_table(tmp_path):
    header = BASE["targets.csv"].splitlines()[0] + "\n"
    assert "built" == check_case({"targets.csv": header.encode()})


# .xlsx inputs refused before they are opened

def _xlsx_problem(tmp_path: Path, data: bytes) -> str:
    write_case(tmp_path / "in", {"catalog.csv": None, "catalog.xlsx": data})
    with pytest.raises(InputProblems) as caught:
        load(tmp_path / "in")
    assert [("catalog.xlsx", None, None)] == [(p.file, p.row, p.column) for p in caught.value.problems]
    return caught.value.problems[0].message


def _workbook_entries() -> dict[str, bytes]:
    with zipfile.ZipFile(io.BytesIO(valid_xlsx("catalog.csv"))) as z:
        return {e: z.read(e) for e in z.namelist()}


def test_a_valid_xlsx_passes_the_zip_checks(tmp_path):
    assert "built" == check_case({"catalog.csv": None, "catalog.xlsx": valid_xlsx("catalog.csv")})


def test_xlsx_that_unpacks_beyond_the_total_limit_is_refused_as_a_zip_bomb(tmp_path, monkeypatch):
    monkeypatch.setattr(guard, "MAX_ZIP_TOTAL", 1024 * 1024)
    entries = _workbook_entries()
    entries["xl/media/zeros.bin"] = bytes(2 * 1024 * 1024)
    message = _xlsx_problem(tmp_path, zip_bytes(entries))
    assert message.startswith("refused: the workbook would unpack to 2 MiB, more than 1 MiB; it may be a zip bomb")


def test_xlsx_with_a_part_compressed_too_well_is_refused_as_a_zip_bomb(tmp_path, monkeypatch):
    monkeypatch.setattr(guard, "RATIO_ENTRY_MIN", 1024 * 1024)
    entries = _workbook_entries()
    entries["xl/worksheets/sheet1.xml"] = entries["xl/worksheets/sheet1.xml"] + b" " * (2 * 1024 * 1024)
    message = _xlsx_problem(tmp_path, zip_bytes(entries))
    assert "'xl/worksheets/sheet1.xml' unpacks" in message and "it may be a zip bomb" in message


def test_ods_with_a_part_compressed_too_well_is_refused_as_a_zip_bomb(tmp_path, monkeypatch):
    # An .ods is a zip too (OpenDocument v1.2, part 3: packages); the same limits apply before calamine opens it.
    monkeypatch.setattr(guard, "RATIO_ENTRY_MIN", 1024 * 1024)
    entries = {"mimetype": b"application/vnd.oasis.opendocument.spreadsheet",
               "content.xml": b"<office:document-content/>" + b" " * (2 * 1024 * 1024)}
    write_case(tmp_path / "in", {"catalog.csv": None, "catalog.ods": zip_bytes(entries)})
    with pytest.raises(InputProblems) as caught:
        load(tmp_path / "in")
    assert [("catalog.ods", None, None)] == [(p.file, p.row, p.column) for p in caught.value.problems]
    assert "'content.xml' unpacks" in caught.value.problems[0].message


def test_xlsx_with_too_many_parts_is_refused(tmp_path, monkeypatch):
    monkeypatch.setattr(guard, "MAX_ZIP_ENTRIES", 20)
    entries = _workbook_entries()
    entries.update({f"xl/media/x{i}.bin": b"x" for i in range(20)})
    assert "more than 20; it may be a zip bomb" in _xlsx_problem(tmp_path, zip_bytes(entries))


def test_xlsx_with_an_external_links_part_is_refused(tmp_path):
    entries = _workbook_entries()
    entries["xl/externalLinks/externalLink1.xml"] = b"<externalLink/>"
    message = _xlsx_problem(tmp_path, zip_bytes(entries))
    assert message.startswith("refused: the workbook has external links (xl/externalLinks/externalLink1.xml)")


@pytest.mark.parametrize("part", ["xl/_rels/workbook.xml.rels", "xl/worksheets/_rels/sheet1.xml.rels"])
def test_xlsx_with_an_external_relationship_target_is_refused(tmp_path, part):
    entries = _workbook_entries()
    entries[part] = (b'<?xml version="1.0"?><Relationships xmlns="http://schemas.openxmlformats.org/package/2006/'
                     b'relationships"><Relationship Id="rId9" Type="http://schemas.openxmlformats.org/officeDocument/'
                     b'2006/relationships/externalLinkPath" Target="file:///C:/secret.xlsx" TargetMode="External"/>'
                     b'</Relationships>')
    message = _xlsx_problem(tmp_path, zip_bytes(entries))
    assert f"refused: the workbook links to an external target in '{part}'" in message


@pytest.mark.parametrize("data, words", [
    (b"not a zip at all", "not an .xlsx workbook (a zip file)"),
    (valid_xlsx("catalog.csv")[:300], "not an .xlsx workbook (a zip file)"),
    (zip_bytes({"word/document.xml": b"<w/>"}), "a zip file without a workbook"),
], ids=["random_bytes", "truncated_zip", "zip_but_not_a_workbook"])
def test_an_xlsx_that_is_not_a_workbook_is_one_problem(tmp_path, data, words):
    assert words in _xlsx_problem(tmp_path, data)


def test_a_refused_xlsx_writes_nothing(tmp_path):
    entries = _workbook_entries()
    entries["xl/externalLinks/externalLink1.xml"] = b"<externalLink/>"
    assert "refused" == check_case({"catalog.csv": None, "catalog.xlsx": zip_bytes(entries)})


# Tables longer than a sheet

ST_HEADER = BASE["search_terms.csv"].splitlines()[0]


def test_search_terms_longer_than_a_sheet_are_merged_losslessly(tmp_path, monkeypatch):
    monkeypatch.setattr(readers, "MAX_SHEET_ROWS", 51)  # 50 data rows below the header
    # Impressions differ on every row: a row equal to another in every cell would be a copy, refused.
    rows = [f"C1,G1,widget,exact,term {i % 30},{10 + i},{i % 3},0.10,0.20,{min(1, i % 3)}" for i in range(80)]
    rows.insert(5, "C1,G1,widget,Exact Match,term 1,10,1,0.10,0.20,0")  # the same match type, written otherwise
    text = (ST_HEADER + "\n" + "\n".join(rows) + "\n").encode()
    write_case(tmp_path / "in", {"search_terms.csv": text})
    inputs, _, problems = load(tmp_path / "in")
    frame = inputs.get("search_terms")
    assert 30 == len(frame)
    assert [("search_terms.csv", None, None, WARNING)] == [(p.file, p.row, p.column, p.severity) for p in problems]
    assert "has 81 data rows, more than a sheet holds (50); merged 51 rows" in problems[0].message
    assert sum(10 + i for i in range(80)) + 10 == frame["impressions"].sum()
    assert sum(i % 3 for i in range(80)) + 1 == frame["clicks"].sum()
    assert sum(min(1, i % 3) for i in range(80)) == frame["orders"].sum()
    term1 = frame.loc[frame["search_term"] == "term 1"].iloc[0]
    assert (11 + 41 + 71 + 10, 4.0, 3.0) == (term1["impressions"], term1["clicks"], term1["orders"])  # rows 1, 31, 61, insert
    assert (0.4, 0.8) == (term1["spend"], term1["ad_sales"])  # 0.1 four times, without float noise
    assert [2, 3] == frame["_row"].head(2).tolist()  # each merged row keeps its first source row
    assert "search_terms.csv" == frame.attrs["file"] and "search_term" in frame.attrs["headers"]
    assert "built" == check_case({"search_terms.csv": text})


def test_search_terms_within_a_sheet_are_not_merged(tmp_path, monkeypatch):
    monkeypatch.setattr(readers, "MAX_SHEET_ROWS", 51)
    rows = [f"C1,G1,widget,exact,same term,{10 + i},1,0.10,0.20,0" for i in range(50)]  # no row a copy of another
    write_case(tmp_path / "in", {"search_terms.csv": (ST_HEADER + "\n" + "\n".join(rows) + "\n").encode()})
    inputs, _, problems = load(tmp_path / "in")
    assert 50 == len(inputs.get("search_terms")) and [] == problems


def test_search_terms_that_do_not_fit_even_merged_are_refused(tmp_path, monkeypatch):
    monkeypatch.setattr(readers, "MAX_SHEET_ROWS", 51)
    rows = [f"C1,G1,widget,exact,term {i},10,1,0.10,0.20,0" for i in range(60)]
    write_case(tmp_path / "in", {"search_terms.csv": (ST_HEADER + "\n" + "\n".join(rows) + "\n").encode()})
    with pytest.raises(InputProblems) as caught:
        load(tmp_path / "in")
    [problem] = caught.value.problems
    assert ("search_terms.csv", None, None, ERROR) == (problem.file, problem.row, problem.column, problem.severity)
    assert "has 60 data rows, 60 even after merging" in problem.message


def test_a_row_error_is_reported_before_merging_could_hide_it(tmp_path, monkeypatch):
    monkeypatch.setattr(readers, "MAX_SHEET_ROWS", 51)
    rows = [f"C1,G1,widget,exact,term {i % 10},{10 + i},5,0.10,0.20,1" for i in range(60)]
    rows[3] = "C1,G1,widget,exact,term 3,10,1,0.10,0.20,4"  # orders above clicks; merged it would not be
    write_case(tmp_path / "in", {"search_terms.csv": (ST_HEADER + "\n" + "\n".join(rows) + "\n").encode()})
    with pytest.raises(InputProblems) as caught:
        load(tmp_path / "in")
    assert [("search_terms.csv", 5, "orders")] == [(p.file, p.row, p.column) for p in caught.value.problems]


@pytest.mark.parametrize("file", ["ad_products.csv", "targets.csv"])
def test_other_tables_longer_than_a_sheet_are_refused(tmp_path, monkeypatch, file):
    monkeypatch.setattr(readers, "MAX_SHEET_ROWS", 51)
    header, row = BASE[file].splitlines()[:2]
    write_case(tmp_path / "in", {file: (header + "\n" + "\n".join([row] * 60) + "\n").encode()})
    with pytest.raises(InputProblems) as caught:
        load(tmp_path / "in")
    assert [(file, None, None)] == [(p.file, p.row, p.column) for p in caught.value.problems]
    assert "has 60 data rows; a sheet holds at most 50 below its header" in caught.value.problems[0].message


def test_build_with_merged_search_terms_writes_a_workbook(tmp_path, monkeypatch):
    monkeypatch.setattr(readers, "MAX_SHEET_ROWS", 51)
    rows = [f"C1,G1,widget,exact,term {i % 5},{10 + i},1,0.10,0.20,0" for i in range(60)]
    write_case(tmp_path / "in", {"search_terms.csv": (ST_HEADER + "\n" + "\n".join(rows) + "\n").encode()})
    result = build(tmp_path / "in", tmp_path / "out.xlsx")
    assert 5 == result.rows["search_terms"]
    assert any("merged 55 rows" in w.message for w in result.warnings)
