"""Fuzzing the readers: the strategies, the property, and the long soak.

Each example starts from a valid minimal account and corrupts one file (random bytes,
random CSV shapes, wrong encodings, odd numbers, broken or dangerous .xlsx files). The
property: `build` either writes a workbook openpyxl opens, or raises a SheetbuilderError
(InputProblems with every problem naming a file) and leaves nothing at the output path,
and no *.partial.xlsx beside it.

The workbook-reading fuzz (`damaged_saved`) does the same for `changes` and `--previous`:
a built workbook with damaged parts is exported or carried, or refused with a message.

tests/test_fuzz_inputs.py and tests/test_hardened.py run these strategies with few examples in CI. The soak runs
them with many more, for the benchmark script (not in CI; needs the test extra; run from the repository root):

    python -m benchmarks.soak [--examples N]
"""
from __future__ import annotations

import argparse
import csv
import datetime as dt
import functools
import io
import sys
import tempfile
import time
import zipfile
from pathlib import Path

from hypothesis import HealthCheck, given, settings, strategies as st

from sheetbuilder.reading import contract as c
from sheetbuilder.errors import ERROR, InputProblems, SheetbuilderError
from sheetbuilder.pipeline import build

BUILT_ON = dt.date(2026, 12, 2)

# The valid minimal account every example starts from (the style of tests/test_bad_inputs.py),
# with every optional table so that every reader and planner runs.
BASE: dict[str, str] = {
    "catalog.csv": "product_id,product_name,price,unit_cost,fees_per_unit,target_acos\n"
                   "P1,Caf\u00e9 Mug,20.00,8.00,2.00,25%\nP2,Gadget \u20ac,10.00,4.00,1.00,\n",
    "store_sales.csv": "product_id,units,revenue\nP1,10,200.00\nP2,5,50.00\n",
    "ad_products.csv": "campaign,ad_group,product_id,ad_type,impressions,clicks,spend,ad_sales,orders\n"
                       "C1,G1,P1,product ads,1000,50,25.00,100.00,5\nC1,G1,P2,product ads,500,20,10.00,30.00,2\n",
    "targets.csv": "campaign,ad_group,target,match_type,state,bid,impressions,clicks,spend,ad_sales,orders\n"
                   "C1,G1,widget,exact,enabled,0.50,100,10,5.00,20.00,1\n"
                   "C1,G1,gadget,broad,paused,0.40,80,12,6.00,0.00,0\n",
    "search_terms.csv": "campaign,ad_group,target,match_type,search_term,impressions,clicks,spend,ad_sales,orders\n"
                        "C1,G1,widget,exact,blue widget,50,5,2.50,10.00,1\n"
                        "C1,G1,gadget,broad,cheap gadget,40,6,3.00,0.00,0\n",
    "campaigns.csv": "campaign,ad_type,state,daily_budget,targeting\nC1,product ads,enabled,10.00,manual\n",
    "negatives.csv": "campaign,ad_group,term,match_type\nC1,G1,free,negative exact\n",
}
TABLE_OF_FILE = {name: name.removesuffix(".csv") for name in BASE}
FILES = tuple(BASE)

SPECIAL_NUMBERS = ("1e308", "-1e308", "1e400", "1e999", "-1e999", str(10 ** 30), str(10 ** 30 + 1) + ".5",
                   "9" * 400, "NaN", "nan", "inf", "-inf", "Infinity", "-Infinity", "1.7976931348623157e308",
                   "5e-324", "0", "-0", "0.0000001", "1e-400", "99999999999999999999", "1,000,000,000,000,000",
                   "$1e308", "(1e308)", "1e308%", "", " ", "1e15", "4294967296", "9007199254740993")
VALID_CELLS = ("P1", "P2", "C1", "G1", "widget", "exact", "broad", "enabled", "paused", "manual", "product ads",
               "negative exact", "10", "0.50", "25%", "200.00", "1", "0")


def base_rows(name: str) -> list[list[str]]:
    """The rows of one base file, header first."""
    return list(csv.reader(io.StringIO(BASE[name])))


def to_csv(rows: list[list[str]], delimiter: str = ",", quoting: int = csv.QUOTE_MINIMAL) -> str:
    """Rows as CSV text."""
    out = io.StringIO()
    csv.writer(out, delimiter=delimiter, quoting=quoting, lineterminator="\n").writerows(rows)
    return out.getvalue()


# A case is {file name: bytes, or None to delete the base file}, applied over BASE.
Case = dict


def write_case(folder: Path, case: Case) -> None:
    """The base account with the case's files replaced, added or removed."""
    folder.mkdir(parents=True, exist_ok=True)
    files: dict[str, bytes | None] = {k: v.encode("utf-8") for k, v in BASE.items()}
    files.update(case)
    for name, data in files.items():
        if data is not None:
            (folder / name).write_bytes(data)


def check_case(case: Case) -> str:
    """Build the account the case describes and assert the property. Returns 'built' or 'refused'."""
    import openpyxl  # a test dependency, as is hypothesis

    with tempfile.TemporaryDirectory(prefix="sheetbuilder-fuzz-") as tmp:
        folder, out_dir = Path(tmp) / "in", Path(tmp) / "out"
        write_case(folder, case)
        out_dir.mkdir()
        out = out_dir / "book.xlsx"
        try:
            build(folder, out, built_on=BUILT_ON)
        except InputProblems as exc:
            assert exc.problems, "InputProblems without problems"
            assert any(p.severity == ERROR for p in exc.problems), f"InputProblems without an error: {exc.problems}"
            for p in exc.problems:
                assert isinstance(p.file, str) and p.file.strip(), f"a problem names no file: {p!r}"
                assert isinstance(p.message, str) and p.message.strip(), f"a problem has no message: {p!r}"
            left = sorted(x.name for x in out_dir.iterdir())
            assert [] == left, f"a failed build left {left}"
            return "refused"
        except SheetbuilderError:
            left = sorted(x.name for x in out_dir.iterdir())
            assert [] == left, f"a failed build left {left}"
            return "refused"
        assert ["book.xlsx"] == sorted(x.name for x in out_dir.iterdir())
        openpyxl.load_workbook(out).close()
        return "built"


# ---- strategies -------------------------------------------------------------------------

def random_bytes() -> st.SearchStrategy[Case]:
    """One CSV file replaced by random bytes."""
    return st.builds(lambda name, data: {name: data}, st.sampled_from(FILES), st.binary(max_size=800))


def _vocabulary(table: c.TableRule) -> list[str]:
    words: list[str] = []
    for rule in table.columns:
        words.append(rule.name)
        words.extend(rule.synonyms[:3])
    return words


_cell = st.one_of(st.sampled_from(VALID_CELLS), st.sampled_from(SPECIAL_NUMBERS),
                  st.text(max_size=12), st.text(alphabet="\"\n\r,;\t x", max_size=6),
                  st.integers(-10 ** 40, 10 ** 40).map(str),
                  st.floats(allow_nan=True, allow_infinity=True).map(repr))


@st.composite
def csv_shapes(draw) -> Case:
    """One file with a random header (subset, order, duplicates, unknown names) and ragged rows."""
    name = draw(st.sampled_from(FILES))
    table = c.TABLE_BY_NAME[TABLE_OF_FILE[name]]
    valid = base_rows(name)[0]
    vocab = _vocabulary(table)
    header_kind = draw(st.sampled_from(["permuted", "subset", "random", "duplicated"]))
    if header_kind == "permuted":
        header = draw(st.permutations(valid))
    elif header_kind == "subset":
        header = draw(st.lists(st.sampled_from(valid), min_size=1, max_size=len(valid) + 2))
    elif header_kind == "duplicated":
        header = list(valid)
        for _ in range(draw(st.integers(1, 3))):
            header.insert(draw(st.integers(0, len(header))), draw(st.sampled_from(vocab)))
    else:
        header = draw(st.lists(st.one_of(st.sampled_from(vocab), st.text(max_size=10)), max_size=14))
    width = len(header)
    rows = draw(st.lists(st.lists(_cell, min_size=max(0, width - 3), max_size=width + 3), max_size=6))
    rows = [header] + rows
    delimiter = draw(st.sampled_from([",", ";", "\t"]))
    if draw(st.booleans()):
        text = to_csv(rows, delimiter, draw(st.sampled_from([csv.QUOTE_MINIMAL, csv.QUOTE_ALL])))
    else:  # joined by hand: stray quotes and newlines break the rows as they like
        text = "\n".join(delimiter.join(r) for r in rows)
    return {name: text.encode("utf-8", "surrogatepass")}


ENCODINGS = ("utf-16", "utf-16-le", "utf-16-be", "utf-32", "latin-1", "cp1252", "utf-8-sig", "utf-8", "cp1251",
             "shift_jis", "utf-7")
_BAD_UTF8 = (b"\xff", b"\xfe", b"\xc3\x28", b"\x80", b"\xed\xa0\x80", b"\xf4\x90\x80\x80", b"\xe2\x82", b"\x00",
             b"\x81\x8d\x8f\x90\x9d")


@st.composite
def wrong_encodings(draw) -> Case:
    """One valid file written in another encoding, or with invalid UTF-8 bytes spliced in."""
    name = draw(st.sampled_from(FILES))
    data = BASE[name].encode(draw(st.sampled_from(ENCODINGS)), "replace")
    for _ in range(draw(st.integers(0, 3))):
        at = draw(st.integers(0, len(data)))
        data = data[:at] + draw(st.sampled_from(_BAD_UTF8)) + data[at:]
    return {name: data}


@st.composite
def odd_numbers(draw) -> Case:
    """Numeric cells of one file replaced by huge, tiny, non-finite or spelled-out numbers."""
    name = draw(st.sampled_from([n for n in FILES if n != "negatives.csv"]))
    table = c.TABLE_BY_NAME[TABLE_OF_FILE[name]]
    rows = base_rows(name)
    numeric = [i for i, h in enumerate(rows[0]) if table.column(h).kind in c.NUMERIC_KINDS]
    for _ in range(draw(st.integers(1, 4))):
        r = draw(st.integers(1, len(rows) - 1))
        col = draw(st.sampled_from(numeric))
        rows[r][col] = draw(st.one_of(st.sampled_from(SPECIAL_NUMBERS),
                                      st.floats().map(repr), st.floats(min_value=0).map(lambda f: f"{f:f}"),
                                      st.integers(0, 10 ** 400).map(str)))
    return {name: to_csv(rows).encode("utf-8")}


@st.composite
def header_only(draw) -> Case:
    """One file with its header and no data rows, or with a header written twice."""
    name = draw(st.sampled_from(FILES))
    rows = base_rows(name)
    kind = draw(st.sampled_from(["header_only", "header_twice", "duplicate_column"]))
    if kind == "header_only":
        rows = rows[:1] + [[]] * draw(st.integers(0, 3))
    elif kind == "header_twice":
        rows = [rows[0]] + rows
    else:
        col = draw(st.integers(0, len(rows[0]) - 1))
        rows = [r[:col + 1] + [r[col] if i else draw(st.sampled_from([r[col], r[col].upper(), r[col] + " "]))]
                + r[col + 1:] for i, r in enumerate(rows)]
    return {name: to_csv(rows).encode("utf-8")}


_XLSX_CACHE: dict[str, bytes] = {}


def valid_xlsx(name: str) -> bytes:
    """The base file as an .xlsx made by openpyxl (numbers as numbers)."""
    if name not in _XLSX_CACHE:
        _XLSX_CACHE[name] = xlsx_bytes([[_typed(x) for x in r] for r in base_rows(name)])
    return _XLSX_CACHE[name]


def _typed(text: str) -> object:
    try:
        return float(text)
    except ValueError:
        return text


def xlsx_bytes(rows: list[list[object]]) -> bytes:
    """An .xlsx holding rows on its first sheet."""
    import openpyxl

    wb = openpyxl.Workbook()
    ws = wb.active
    for row in rows:
        ws.append(row)
    out = io.BytesIO()
    wb.save(out)
    return out.getvalue()


def zip_bytes(entries: dict[str, bytes], method: int = zipfile.ZIP_DEFLATED) -> bytes:
    """A zip of entries."""
    out = io.BytesIO()
    with zipfile.ZipFile(out, "w", method) as z:
        for entry, data in entries.items():
            z.writestr(entry, data)
    return out.getvalue()


def _as_xlsx(name: str, data: bytes) -> Case:
    return {name: None, name.removesuffix(".csv") + ".xlsx": data}


_entry_names = st.one_of(st.sampled_from(["[Content_Types].xml", "xl/workbook.xml", "xl/worksheets/sheet1.xml",
                                          "_rels/.rels", "xl/_rels/workbook.xml.rels", "xl/sharedStrings.xml",
                                          "xl/styles.xml", "docProps/app.xml", "mimetype", "word/document.xml"]),
                         st.text(alphabet="abcxyz/._", min_size=1, max_size=12))

_xlsx_value = st.one_of(st.none(), st.booleans(), st.sampled_from(VALID_CELLS + SPECIAL_NUMBERS),
                        st.floats(allow_nan=False, allow_infinity=False), st.integers(-10 ** 20, 10 ** 20),
                        st.text(max_size=10).map(lambda t: "".join(ch for ch in t if ch >= " ")),
                        st.dates(), st.datetimes())


@st.composite
def broken_xlsx(draw) -> Case:
    """One table given as an .xlsx that is random bytes, truncated, a zip that is not a workbook,
    a workbook with odd cells, or a workbook whose parts are garbage."""
    name = draw(st.sampled_from(FILES))
    kind = draw(st.sampled_from(["random", "truncated", "not_a_workbook", "garbage_parts", "odd_cells",
                                 "flipped_bytes"]))
    if kind == "random":
        data = draw(st.one_of(st.binary(max_size=600), st.binary(max_size=200).map(lambda b: b"PK\x03\x04" + b)))
    elif kind == "truncated":
        full = valid_xlsx(name)
        data = full[:draw(st.integers(0, len(full) - 1))]
    elif kind == "flipped_bytes":
        data = bytearray(valid_xlsx(name))
        for _ in range(draw(st.integers(1, 8))):
            data[draw(st.integers(0, len(data) - 1))] = draw(st.integers(0, 255))
        data = bytes(data)
    elif kind == "not_a_workbook":
        data = zip_bytes(draw(st.dictionaries(_entry_names, st.binary(max_size=200), max_size=5)),
                         draw(st.sampled_from([zipfile.ZIP_STORED, zipfile.ZIP_DEFLATED])))
    elif kind == "garbage_parts":
        with zipfile.ZipFile(io.BytesIO(valid_xlsx(name))) as z:
            entries = {e: z.read(e) for e in z.namelist()}
        for entry in draw(st.lists(st.sampled_from(sorted(entries)), min_size=1, max_size=3, unique=True)):
            entries[entry] = draw(st.one_of(st.binary(max_size=200), st.just(entries[entry][:len(entries[entry]) // 2]),
                                            st.just(b"")))
        data = zip_bytes(entries)
    else:
        rows = base_rows(name)
        typed = [rows[0]] + [[_typed(x) for x in r] for r in rows[1:]]
        for _ in range(draw(st.integers(1, 4))):
            r = draw(st.integers(0, len(typed) - 1))
            typed[r][draw(st.integers(0, len(typed[r]) - 1))] = draw(_xlsx_value)
        data = xlsx_bytes(typed)
    return _as_xlsx(name, data)


STRATEGIES: dict[str, st.SearchStrategy[Case]] = {
    "random_bytes": random_bytes(),
    "csv_shapes": csv_shapes(),
    "wrong_encodings": wrong_encodings(),
    "odd_numbers": odd_numbers(),
    "header_only": header_only(),
    "broken_xlsx": broken_xlsx(),
}


# ---- saved workbooks: changes and --previous ---------------------------------------------
# Each example starts from a workbook built from BASE (with hostile texts) and damages its
# package: a part deleted, truncated, or overwritten with bytes, two sheets swapped, a huge
# cell. The property: `changes` writes its file or raises a SheetbuilderError, and a build
# with --previous writes a workbook (listing edits it cannot match) or raises a
# SheetbuilderError; a refusal leaves nothing behind; no other exception escapes.

@functools.lru_cache(maxsize=1)
def built_workbook() -> bytes:
    """The bytes of the workbook built from the base account (built once per process)."""
    with tempfile.TemporaryDirectory(prefix="sheetbuilder-fuzz-") as tmp:
        write_case(Path(tmp) / "in", {})
        out = Path(tmp) / "book.xlsx"
        build(Path(tmp) / "in", out, built_on=BUILT_ON)
        return out.read_bytes()


def _parts() -> dict[str, bytes]:
    with zipfile.ZipFile(io.BytesIO(built_workbook())) as z:
        return {name: z.read(name) for name in z.namelist()}


def _sheet_parts() -> list[str]:
    return sorted(n for n in _parts() if n.startswith("xl/worksheets/sheet"))


@st.composite
def damaged_workbooks(draw) -> bytes:
    """A built workbook with one to three parts damaged."""
    parts = _parts()
    names = sorted(parts)
    for _ in range(draw(st.integers(1, 3))):
        how = draw(st.sampled_from(("delete", "truncate", "bytes", "swap", "huge_cell", "bad_xml")))
        name = draw(st.sampled_from(sorted(parts) or names))
        if how == "delete":
            parts.pop(name, None)
        elif how == "truncate" and name in parts:
            parts[name] = parts[name][:draw(st.integers(0, max(len(parts[name]) - 1, 0)))]
        elif how == "bytes" and name in parts:
            at = draw(st.integers(0, len(parts[name])))
            parts[name] = parts[name][:at] + draw(st.binary(min_size=1, max_size=40)) + parts[name][at + 1:]
        elif how == "swap":
            a, b = draw(st.sampled_from(_sheet_parts())), draw(st.sampled_from(_sheet_parts()))
            if a in parts and b in parts:
                parts[a], parts[b] = parts[b], parts[a]
        elif how == "huge_cell":
            sheet = draw(st.sampled_from(_sheet_parts()))
            if sheet in parts:
                size = draw(st.sampled_from((32_768, 200_000, 2_000_000)))
                parts[sheet] = parts[sheet].replace(b"<v>", b"<v>" + b"9" * size, 1).replace(
                    b"<t>", b"<t>" + b"x" * size, 1)
        elif how == "bad_xml" and name in parts:
            parts[name] = parts[name].replace(b">", b"", 1)
    return zip_bytes(parts)


def check_saved_case(data: bytes) -> str:
    """Run changes and a build with --previous on the damaged workbook; assert the property."""
    from sheetbuilder.weekly.changes import export_changes  # noqa: PLC0415 (keeps the readers' fuzz free of openpyxl)

    with tempfile.TemporaryDirectory(prefix="sheetbuilder-fuzz-") as tmp:
        folder, out_dir = Path(tmp) / "in", Path(tmp) / "out"
        write_case(folder, {})
        out_dir.mkdir()
        saved = Path(tmp) / "saved.xlsx"
        saved.write_bytes(data)
        outcomes = []
        for run, out in ((lambda o: export_changes(saved, o), out_dir / "changes.csv"),
                         (lambda o: build(folder, o, built_on=BUILT_ON, previous=saved), out_dir / "book.xlsx")):
            try:
                run(out)
                outcomes.append("written")
                assert out.is_file(), f"{out.name} was not written"
                out.unlink()
            except SheetbuilderError as exc:
                assert str(exc).strip(), "a refusal without a message"
                outcomes.append("refused")
            left = sorted(x.name for x in out_dir.iterdir())
            assert [] == left, f"left {left}"
        return "/".join(outcomes)


SAVED_STRATEGIES: dict[str, st.SearchStrategy[bytes]] = {"damaged_saved": damaged_workbooks()}


# ---- the soak ---------------------------------------------------------------------------

def soak(examples: int, names: list[str] | None = None, seed: int | None = None) -> int:
    """Run every strategy with `examples` examples; print timings. Returns a process exit code."""
    failed = 0
    for name in names or [*STRATEGIES, *SAVED_STRATEGIES]:
        outcomes: dict[str, int] = {}
        check = check_saved_case if name in SAVED_STRATEGIES else check_case

        @settings(max_examples=examples, deadline=None, database=None, derandomize=seed is not None,
                  suppress_health_check=list(HealthCheck))
        @given({**STRATEGIES, **SAVED_STRATEGIES}[name])
        def run(case) -> None:
            outcome = check(case)
            outcomes[outcome] = outcomes.get(outcome, 0) + 1

        start = time.perf_counter()
        try:
            run()
            status = "ok"
        except Exception as exc:  # report and go on with the other strategies
            failed += 1
            status = f"FAILED: {type(exc).__name__}: {exc}"
        spent = time.perf_counter() - start
        counts = ", ".join(f"{k} {v}" for k, v in sorted(outcomes.items()))
        print(f"{name:16} {spent:7.1f} s  {counts}  {status}", flush=True)
    return 1 if failed else 0


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(prog="python -m benchmarks.soak", description=__doc__.split("\n\n")[0])
    parser.add_argument("--examples", type=int, default=2000, help="examples per strategy (default 2000)")
    parser.add_argument("--only", action="append", choices=sorted([*STRATEGIES, *SAVED_STRATEGIES]),
                        help="run only this strategy")
    parser.add_argument("--derandomize", action="store_true", help="the same examples every run")
    args = parser.parse_args(argv)
    return soak(args.examples, args.only, 0 if args.derandomize else None)


if __name__ == "__main__":
    sys.exit(main())
