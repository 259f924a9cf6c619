"""Hardened commands: no traceback, no leftover, no overwrite, bounded memory, the same text out as in.

Each test does what an unlucky user or an attacker does (a full disk, a read-only folder,
Ctrl-C or SIGTERM in the middle of a build, a hostile workbook given to `changes` or
`--previous`) and checks the one-line message, the exit code, the folders afterwards and,
for hostile workbooks, the peak memory of the process (resource.getrusage).
"""
from __future__ import annotations

import csv
import errno
import io
import json
import os
import shutil
import signal
import subprocess
import sys
import time
import zipfile
from pathlib import Path

import openpyxl
import pytest
from hypothesis import HealthCheck, given, settings as hsettings

from conftest import BUILT_ON, require_libreoffice
from benchmarks.accounts import make_account
from benchmarks.soak import BASE, check_saved_case, damaged_workbooks, valid_xlsx, write_case, zip_bytes
from sheetbuilder.workbook import atomic
from sheetbuilder.reading import guard
from sheetbuilder.weekly.changes import NotAWorkbook, export_changes
from sheetbuilder.weekly.carry import PreviousWorkbookUnreadable
from sheetbuilder.weekly.saved import SavedBook, saved_inputs
from sheetbuilder.cli import main
from sheetbuilder.workbook.csv_safe import read_csv_rows
from sheetbuilder.errors import InputProblems, OutputExists, SheetbuilderError, UnsafeOutput
from sheetbuilder.pipeline import build
from tools.recalc import libreoffice_convert
from sheetbuilder.reading.settings import SETTINGS, load_settings

ROOT = Path(__file__).resolve().parents[1]
MEMORY_LIMIT_MB = 500  # the bound for any hostile input of at most 10 MB

# Texts a search term may hold that a spreadsheet could run, misread or mangle; each must come
# back from `changes` exactly (csv module, openpyxl, LibreOffice).
HOSTILE_TERMS = ['=HYPERLINK("http://x","y")', "+1+2", "-2", "@SUM(A1)", "\tlead tab", "two\nlines",
                 "\U0001F331 tray", "\u05e2\u05e6\u05d9\u05e5", "<r>pots & trays</r>", "'=quoted", '"q"', "#N/A",
                 "a\u200bb", "\u0085nel", "_X0041_ upper x", "x" * 300]
# Texts refused on input: programs read their escapes back differently.
REFUSED_TERMS = {"cr": "a\rb", "bell": "bell\x07here", "escape": "_x0041_ look-alike", "nonchar": "a\uffffb"}


def _search_terms(terms: list[str]) -> bytes:
    out = io.StringIO()
    w = csv.writer(out, lineterminator="\n", quoting=csv.QUOTE_ALL)
    w.writerow(["campaign", "ad_group", "target", "match_type", "search_term", "impressions", "clicks", "spend",
                "ad_sales", "orders"])
    for t in terms:  # no orders and spend above the price: each becomes an "add negative" change
        w.writerow(["C1", "G1", "gadget", "broad", t, 100, 30, "30.00", "0.00", 0])
    return out.getvalue().encode("utf-8")


@pytest.fixture(scope="module")
def hostile_book(tmp_path_factory):
    """A workbook built from the base account whose search terms are the hostile texts."""
    work = tmp_path_factory.mktemp("hostile")
    write_case(work / "in", {"search_terms.csv": _search_terms(HOSTILE_TERMS)})
    build(work / "in", work / "book.xlsx", built_on=BUILT_ON)
    return work


def _cli(args: list[str], env: dict | None = None, **kw) -> subprocess.CompletedProcess:
    """The command as a person runs it, in a child process."""
    full = {**os.environ, "PYTHONPATH": str(ROOT), **(env or {})}
    return subprocess.run([sys.executable, "-m", "sheetbuilder", *args], capture_output=True, text=True, env=full,
                          timeout=600, **kw)


def _one_message(stderr: str, *words: str) -> None:
    """stderr is a message (no traceback) holding every word."""
    assert "Traceback" not in stderr, stderr
    for w in words:
        assert w in stderr, stderr


# ---- errors as messages ----------------------------------------------------------------------------

def _mount_tmpfs(where: Path, options: str) -> bool:
    """Mount a small tmpfs at where (root on Linux); False where the platform does not allow it."""
    where.mkdir(parents=True, exist_ok=True)
    if not sys.platform.startswith("linux") or os.geteuid() != 0 or not shutil.which("mount"):
        return False
    return subprocess.run(["mount", "-t", "tmpfs", "-o", options, "tmpfs", str(where)],
                          capture_output=True).returncode == 0


def test_a_full_disk_ends_in_one_message_exit_4_and_nothing_left(tmp_path, monkeypatch, capsys):
    folder = write_case(tmp_path / "in", {}) or tmp_path / "in"
    full = tmp_path / "full"
    if _mount_tmpfs(full, "size=64k"):
        try:
            (full / "filler").write_bytes(b"x" * 40_000)
            code = main(["build", str(folder), "-o", str(full / "book.xlsx")])
            left = sorted(p.name for p in full.iterdir())
        finally:
            subprocess.run(["umount", "-l", str(full)], check=False)
    else:  # no tmpfs here: the writer's disk reports it is full
        import xlsxwriter

        def no_space(self):
            raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC))

        monkeypatch.setattr(xlsxwriter.Workbook, "close", no_space)
        (full / "filler").write_bytes(b"x")
        code = main(["build", str(folder), "-o", str(full / "book.xlsx")])
        left = sorted(p.name for p in full.iterdir())
    assert (4, ["filler"]) == (code, left)
    _one_message(capsys.readouterr().err, "no space left on the disk", "Nothing was written")


def test_a_read_only_folder_ends_in_one_message_exit_4(tmp_path, monkeypatch, capsys):
    folder = write_case(tmp_path / "in", {}) or tmp_path / "in"
    ro = tmp_path / "ro"
    if _mount_tmpfs(ro, "ro,size=64k"):
        try:
            code = main(["build", str(folder), "-o", str(ro / "book.xlsx")])
            left = sorted(p.name for p in ro.iterdir())
        finally:
            subprocess.run(["umount", "-l", str(ro)], check=False)
    else:  # not root: the folder's permissions, or a patched create where permissions do not bind
        ro.mkdir(exist_ok=True)
        real_open = os.open

        def read_only(path, flags, *a, **k):
            if str(path).startswith(str(ro)) and flags & os.O_CREAT:
                raise OSError(errno.EROFS, os.strerror(errno.EROFS), str(path))
            return real_open(path, flags, *a, **k)

        monkeypatch.setattr(atomic.os, "open", read_only)
        code = main(["build", str(folder), "-o", str(ro / "book.xlsx")])
        left = sorted(p.name for p in ro.iterdir())
    assert (4, []) == (code, left)
    _one_message(capsys.readouterr().err, "the folder is read-only", str(ro))


@pytest.mark.parametrize("command", ["build", "changes"])
def test_a_folder_given_as_the_output_is_one_message(tmp_path, hostile_book, capsys, command):
    target = tmp_path / "out.xlsx"
    target.mkdir()
    args = (["build", str(hostile_book / "in")] if command == "build" else ["changes", str(hostile_book / "book.xlsx")])
    assert 1 == main([*args, "-o", str(target), "--force"])
    _one_message(capsys.readouterr().err, "is a folder")
    assert [] == list(target.iterdir())


def test_an_unexpected_error_is_one_line_and_the_traceback_only_with_debug(tmp_path, monkeypatch, capsys):
    import sheetbuilder.cli as cli

    def broken(*a, **k):
        raise ZeroDivisionError("division by zero")

    monkeypatch.setattr(cli, "build", broken)
    folder = write_case(tmp_path / "in", {}) or tmp_path / "in"
    assert 70 == main(["build", str(folder), "-o", str(tmp_path / "b.xlsx")])
    _one_message(capsys.readouterr().err, "internal error (ZeroDivisionError", "--debug")
    assert 70 == main(["build", str(folder), "-o", str(tmp_path / "b.xlsx"), "--debug"])
    assert "Traceback" in capsys.readouterr().err


# ---- nothing left behind -----------------------------------------------------------------------------

@pytest.fixture(scope="module")
def big_account(tmp_path_factory):
    """A generated account large enough that its build takes a few seconds."""
    folder = tmp_path_factory.mktemp("big") / "in"
    make_account(folder, 1500)
    return folder


def _start_build(folder: Path, out: Path, systmp: Path) -> subprocess.Popen:
    env = {**os.environ, "PYTHONPATH": str(ROOT), "TMPDIR": str(systmp)}
    return subprocess.Popen([sys.executable, "-m", "sheetbuilder", "build", str(folder), "-o", str(out)],
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True, env=env)


def _wait_until_writing(proc: subprocess.Popen, out_dir: Path, timeout: float = 300) -> None:
    """Return once the writer has put a temporary file in its scratch folder (the build is mid-write)."""
    end = time.monotonic() + timeout
    while time.monotonic() < end:
        if any(d.is_dir() and any(d.iterdir()) for d in out_dir.glob("*.partial.d")):
            return
        if proc.poll() is not None:
            pytest.fail(f"the build ended before it was interrupted: {proc.stderr.read()}")
        time.sleep(0.05)
    proc.kill()
    pytest.fail("the build never started writing")


@pytest.mark.slow
@pytest.mark.parametrize("sig", [signal.SIGTERM, signal.SIGINT, signal.SIGHUP], ids=lambda s: s.name)
def test_a_signal_mid_build_leaves_nothing_in_the_output_or_the_temp_folder(tmp_path, big_account, sig):
    out_dir, systmp = tmp_path / "out", tmp_path / "systmp"
    out_dir.mkdir()
    systmp.mkdir()
    proc = _start_build(big_account, out_dir / "book.xlsx", systmp)
    _wait_until_writing(proc, out_dir)
    proc.send_signal(sig)
    _, err = proc.communicate(timeout=120)
    assert (130, [], []) == (proc.returncode, sorted(p.name for p in out_dir.iterdir()),
                             sorted(p.name for p in systmp.iterdir()))
    _one_message(err, f"interrupted by {sig.name}", "Run the command again")


@pytest.mark.slow
def test_the_partials_of_a_killed_build_are_removed_by_the_next_run(tmp_path, big_account):
    out_dir, systmp = tmp_path / "out", tmp_path / "systmp"
    out_dir.mkdir()
    systmp.mkdir()
    proc = _start_build(big_account, out_dir / "book.xlsx", systmp)
    _wait_until_writing(proc, out_dir)
    proc.kill()  # kill -9: no cleanup can run
    proc.communicate(timeout=60)
    left = sorted(p.name for p in out_dir.iterdir())
    assert left and all(".partial." in name for name in left), left
    other = out_dir / f".book.{atomic._host()}-{os.getpid()}.live.partial.xlsx"  # a write still running
    other.write_bytes(b"")
    write_case(tmp_path / "small", {})
    build(tmp_path / "small", out_dir / "book.xlsx", built_on=BUILT_ON)
    assert sorted(["book.xlsx", other.name]) == sorted(p.name for p in out_dir.iterdir())


def test_stale_partials_are_recognised_by_name_and_live_ones_kept(tmp_path):
    dead = subprocess.run([sys.executable, "-c", "import os; print(os.getpid())"], capture_output=True, text=True)
    pid = int(dead.stdout)  # a process that has ended
    host = atomic._host()
    names = {f".book.{host}-{pid}.ab12.partial.xlsx": True, f".book.{host}-{pid}.ab12.partial.d": True,
             f".book.{host}-{os.getpid()}.cd34.partial.xlsx": False,  # this process: still writing
             f".book.otherhost-{pid}.ef56.partial.xlsx": False,  # another machine's write on a shared folder
             ".book.k3j_x9q2.partial.xlsx": True,  # an earlier version's, hours old
             ".book.zz11yy22.partial.xlsx": False,  # an earlier version's, just written
             ".other.x.partial.xlsx": False}
    for name in names:
        (tmp_path / name).mkdir() if name.endswith(".d") else (tmp_path / name).write_bytes(b"")
    hours_ago = time.time() - 3 * 3600
    os.utime(tmp_path / ".book.k3j_x9q2.partial.xlsx", (hours_ago, hours_ago))
    assert sorted(tmp_path / n for n, stale in names.items() if stale) == atomic.stale_partials(tmp_path / "book.xlsx")


@pytest.mark.slow  # several seconds: the fast lane stays under two minutes
def test_a_changes_export_writes_nothing_in_the_system_temp_folder(tmp_path, hostile_book):
    systmp = tmp_path / "systmp"
    systmp.mkdir()
    result = _cli(["changes", str(hostile_book / "book.xlsx"), "-o", str(tmp_path / "c.xlsx"), "--format", "xlsx"],
                  env={"TMPDIR": str(systmp)})
    assert (0, [], ["c.xlsx", "systmp"]) == (result.returncode, list(systmp.iterdir()),
                                             sorted(p.name for p in tmp_path.iterdir()))


# ---- nothing overwritten by surprise -----------------------------------------------------------------

def test_an_input_named_in_files_outside_the_folder_is_never_the_output(tmp_path, capsys):
    elsewhere = tmp_path / "elsewhere"
    elsewhere.mkdir()
    catalog = elsewhere / "catalog.xlsx"
    catalog.write_bytes(valid_xlsx("catalog.csv"))
    before = catalog.read_bytes()
    write_case(tmp_path / "in", {"catalog.csv": None,
                                 "settings.toml": b'[files]\ncatalog = "../elsewhere/catalog.xlsx"\n'})
    assert 1 == main(["build", str(tmp_path / "in"), "-o", str(catalog), "--force"])
    _one_message(capsys.readouterr().err, "is the input file for catalog")
    assert before == catalog.read_bytes()
    link = tmp_path / "link.xlsx"
    link.symlink_to(catalog)
    assert 1 == main(["build", str(tmp_path / "in"), "-o", str(link), "--force"])
    assert before == catalog.read_bytes()


def test_the_previous_workbook_is_never_the_output(tmp_path, hostile_book):
    old = tmp_path / "old.xlsx"
    shutil.copy(hostile_book / "book.xlsx", old)
    before = old.read_bytes()
    with pytest.raises(UnsafeOutput, match="the previous workbook"):
        build(hostile_book / "in", tmp_path / "." / "old.xlsx", force=True, built_on=BUILT_ON, previous=old)
    assert before == old.read_bytes()


def test_a_file_that_appears_during_the_build_is_not_replaced_without_force(tmp_path, monkeypatch):
    import sheetbuilder.pipeline as pipeline

    out = tmp_path / "out" / "book.xlsx"
    out.parent.mkdir()
    real = pipeline.render

    def someone_else_writes(spec, path, progress=None, tmpdir=None):
        out.write_bytes(b"theirs")
        real(spec, path, progress, tmpdir)

    monkeypatch.setattr(pipeline, "render", someone_else_writes)
    write_case(tmp_path / "in", {})
    with pytest.raises(OutputExists, match="appeared while this file was being written"):
        build(tmp_path / "in", out, built_on=BUILT_ON)
    assert (b"theirs", ["book.xlsx"]) == (out.read_bytes(), [p.name for p in out.parent.iterdir()])
    build(tmp_path / "in", out, built_on=BUILT_ON, force=True)
    assert out.read_bytes().startswith(b"PK")


def test_without_hard_links_the_final_step_is_an_exclusive_create(tmp_path, monkeypatch):
    def no_links(a, b):
        raise OSError(errno.EPERM, "no hard links here")

    monkeypatch.setattr(atomic.os, "link", no_links)
    target = tmp_path / "x.csv"
    with atomic.atomic_output(target, ".csv") as tmp:
        tmp.write_text("ours")
    assert "ours" == target.read_text()
    with pytest.raises(OutputExists):
        with atomic.atomic_output(target, ".csv") as tmp:
            tmp.write_text("second")
    assert ("ours", ["x.csv"]) == (target.read_text(), [p.name for p in tmp_path.iterdir()])


# ---- hostile workbooks for changes and --previous -------------------------------------------------------

def _parts(path: Path) -> dict[str, bytes]:
    with zipfile.ZipFile(path) as z:
        return {n: z.read(n) for n in z.namelist()}


def _zip_bomb(path: Path, base: dict[str, bytes]) -> None:
    """base with its first sheet padded by 32 MiB of spaces that store in about 32 KiB (a ratio near 1000)."""
    with zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED) as z:
        for name, data in base.items():
            if name == "xl/worksheets/sheet1.xml":
                info = zipfile.ZipInfo(name)
                info.compress_type = zipfile.ZIP_DEFLATED
                with z.open(info, "w", force_zip64=True) as fh:
                    fh.write(data[:data.index(b"<sheetData>")])
                    chunk = b" " * (16 * 2**20)
                    for _ in range(2):
                        fh.write(chunk)
                    fh.write(data[data.index(b"<sheetData>"):])
            else:
                z.writestr(zipfile.ZipInfo(name), data, zipfile.ZIP_DEFLATED)


LAUGHS = (b'<?xml version="1.0"?><!DOCTYPE lolz [<!ENTITY lol "lollollollollollollollollollol">'
          + b"".join(b'<!ENTITY lol%d "%s">' % (i, b"".join(b"&lol%s;" % (b"" if i == 1 else str(i - 1).encode())
                                                              for _ in range(10))) for i in range(1, 10))
          + b"]>")


def _hostile_workbooks(base_path: Path, work: Path) -> dict[str, tuple[Path, str]]:
    """{case: (workbook, words its refusal holds)}, each made from the built workbook."""
    base = _parts(base_path)
    cases: dict[str, tuple[Path, str]] = {}
    bomb = work / "zip_bomb.xlsx"
    _zip_bomb(bomb, base)
    cases["zip_bomb"] = (bomb, "it may be a zip bomb")
    many = dict(base)
    many.update({f"xl/media/p{i}.bin": b"" for i in range(guard.MAX_ZIP_ENTRIES + 1)})
    cases["many_parts"] = (work / "many_parts.xlsx", "more than 10000")
    cases["many_parts"][0].write_bytes(zip_bytes(many))
    laughs = dict(base)
    sheet = laughs["xl/worksheets/sheet1.xml"]
    laughs["xl/worksheets/sheet1.xml"] = LAUGHS + sheet[sheet.index(b"<worksheet"):].replace(
        b"<sheetData>", b"<sheetData>&lol9;", 1)
    cases["entity_expansion"] = (work / "entity_expansion.xlsx", "declares a document type (DTD)")
    cases["entity_expansion"][0].write_bytes(zip_bytes(laughs))
    linked = dict(base)
    linked["xl/_rels/workbook.xml.rels"] = linked["xl/_rels/workbook.xml.rels"].replace(
        b"</Relationships>", b'<Relationship Id="rId99" Type="http://schemas.openxmlformats.org/officeDocument/'
                             b'2006/relationships/oleObject" Target="file:///C:/secret.xlsx" '
                             b'TargetMode="&#69;xternal"/></Relationships>')
    cases["char_ref_external_link"] = (work / "external.xlsx", "links to an external target")
    cases["char_ref_external_link"][0].write_bytes(zip_bytes(linked))
    broken = {n: (d[: len(d) // 2] if n.startswith("xl/worksheets/sheet") else d) for n, d in base.items()}
    cases["malformed_xml"] = (work / "malformed.xlsx", "is not a workbook that can be read")
    cases["malformed_xml"][0].write_bytes(zip_bytes(broken))
    return cases


@pytest.fixture(scope="module")
def hostile_workbooks(hostile_book, tmp_path_factory):
    return _hostile_workbooks(hostile_book / "book.xlsx", tmp_path_factory.mktemp("hostile_workbooks"))


@pytest.mark.parametrize("case", ["zip_bomb", "many_parts", "entity_expansion", "char_ref_external_link",
                                  "malformed_xml"])
def test_a_hostile_workbook_is_refused_by_changes_and_previous_with_its_reason(tmp_path, hostile_book,
                                                                               hostile_workbooks, case):
    path, words = hostile_workbooks[case]
    with pytest.raises(NotAWorkbook) as changes:
        export_changes(path, tmp_path / "c.csv")
    with pytest.raises(PreviousWorkbookUnreadable) as previous:
        build(hostile_book / "in", tmp_path / "b.xlsx", built_on=BUILT_ON, previous=path)
    assert (words, words) == (words if words in str(changes.value) else str(changes.value),
                              words if words in str(previous.value) else str(previous.value))
    assert [] == sorted(p.name for p in tmp_path.iterdir())


_MEASURE = r"""
import json, sys
from benchmarks.children import peak_mb
from sheetbuilder.cli import main
codes = {}
for name, path in json.loads(sys.argv[1]).items():
    codes[name] = (main(["changes", path, "-o", sys.argv[2] + "/c.csv"]),
                   main(["build", sys.argv[3], "-o", sys.argv[2] + "/b.xlsx", "--previous", path, "-q"]))
print(json.dumps({"codes": codes, "peak_mb": peak_mb()}))  # its own peak, not pytest's (ru_maxrss inherits it)
"""


@pytest.mark.slow
def test_hostile_workbooks_are_refused_by_the_commands_under_the_memory_limit(tmp_path, hostile_book,
                                                                              hostile_workbooks):
    paths = {name: str(p) for name, (p, _) in hostile_workbooks.items()}
    assert all(Path(p).stat().st_size <= 10 * 2**20 for p in paths.values())
    proc = subprocess.run([sys.executable, "-c", _MEASURE, json.dumps(paths), str(tmp_path), str(hostile_book / "in")],
                          capture_output=True, text=True, env={**os.environ, "PYTHONPATH": str(ROOT)}, timeout=600)
    assert "Traceback" not in proc.stderr, proc.stderr
    result = json.loads(proc.stdout.strip().splitlines()[-1])
    assert {name: [1, 1] for name in paths} == result["codes"]
    print(f"peak memory of changes and --previous on the hostile workbooks: {result['peak_mb']:.0f} MB")
    assert result["peak_mb"] < MEMORY_LIMIT_MB, result


def test_a_hyperlink_in_a_saved_workbook_is_not_an_external_link(tmp_path):
    parts = _parts_of_valid_catalog()
    parts["xl/worksheets/_rels/sheet1.xml.rels"] = (
        b'<?xml version="1.0"?><Relationships xmlns="http://schemas.openxmlformats.org/package/2006/relationships">'
        b'<Relationship Id="rId1" Type="http://schemas.openxmlformats.org/officeDocument/2006/relationships/'
        b'hyperlink" Target="https://example.invalid/" TargetMode="External"/></Relationships>')
    path = tmp_path / "linked.xlsx"
    path.write_bytes(zip_bytes(parts))
    guard.check_workbook(path)  # no error: a web address in a cell is never fetched


def _parts_of_valid_catalog() -> dict[str, bytes]:
    with zipfile.ZipFile(io.BytesIO(valid_xlsx("catalog.csv"))) as z:
        return {n: z.read(n) for n in z.namelist()}


def test_a_part_that_inflates_beyond_its_declared_size_is_refused(tmp_path, monkeypatch):
    monkeypatch.setattr(guard, "CHUNK", 1024)
    parts = _parts_of_valid_catalog()
    path = tmp_path / "lying.xlsx"
    path.write_bytes(zip_bytes(parts))
    with zipfile.ZipFile(path) as z:
        entry = z.getinfo("xl/worksheets/sheet1.xml")
        with pytest.raises(guard.UnsafeWorkbook, match="inflates beyond"):
            guard._inflate(z, entry, limit=entry.file_size // 2, keep=False)


def test_a_csv_larger_than_the_limit_is_refused_before_it_is_read(tmp_path, monkeypatch):
    monkeypatch.setattr(guard, "MAX_FILE_BYTES", 1000)
    write_case(tmp_path / "in", {"search_terms.csv": _search_terms(["t"] * 50)})
    with pytest.raises(InputProblems) as caught:
        build(tmp_path / "in", tmp_path / "b.xlsx", built_on=BUILT_ON)
    assert ["search_terms.csv"] == [p.file for p in caught.value.problems if "more than" in p.message]


def test_a_csv_row_with_too_many_cells_is_refused_with_its_row(tmp_path, monkeypatch):
    monkeypatch.setattr(guard, "MAX_CSV_COLUMNS", 20)
    write_case(tmp_path / "in", {"negatives.csv": b"campaign,ad_group,term,match_type\n" + b"," * 30 + b"\n"})
    with pytest.raises(InputProblems) as caught:
        build(tmp_path / "in", tmp_path / "b.xlsx", built_on=BUILT_ON)
    assert any(p.file == "negatives.csv" and "row 2 has 31 cells" in p.message for p in caught.value.problems)


def test_running_out_of_memory_while_reading_says_so(tmp_path, monkeypatch):
    import sheetbuilder.reading.readers as readers

    def oom(path, *args):
        raise MemoryError()

    monkeypatch.setattr(readers, "read_sheets", oom)
    write_case(tmp_path / "in", {})
    with pytest.raises(InputProblems) as caught:
        build(tmp_path / "in", tmp_path / "b.xlsx", built_on=BUILT_ON)
    assert all("not enough memory" in p.message for p in caught.value.problems if p.row is None)


@hsettings(max_examples=int(os.environ.get("SAVED_FUZZ_EXAMPLES", "12")), deadline=None, database=None,
           suppress_health_check=list(HealthCheck))
@pytest.mark.slow  # moved out of the fast lane, which must stay under two minutes
@given(damaged_workbooks())
def test_a_damaged_saved_workbook_is_exported_carried_or_refused_never_a_crash(data):
    assert check_saved_case(data) in {f"{a}/{b}" for a in ("written", "refused") for b in ("written", "refused")}



def test_a_saved_workbook_without_its_catalog_sheet_is_refused_by_changes_and_previous_not_an_internal_error(tmp_path):
    # found by the fuzz above: a damaged file whose in_catalog sheet was gone reached planning and failed there
    write_case(tmp_path / "in", {})
    build(tmp_path / "in", tmp_path / "book.xlsx", built_on=BUILT_ON)
    wb = openpyxl.load_workbook(tmp_path / "book.xlsx")
    del wb["in_catalog"]
    wb.save(tmp_path / "damaged.xlsx")
    with SavedBook(tmp_path / "damaged.xlsx") as book, \
            pytest.raises(SheetbuilderError, match="in_catalog sheet is missing or empty"):
        saved_inputs(book)
    assert check_saved_case((tmp_path / "damaged.xlsx").read_bytes()) in {"refused/refused", "refused/written"}

# ---- text out as in ------------------------------------------------------------------------------------

def test_every_hostile_term_comes_back_exactly_through_changes_csv(tmp_path, hostile_book):
    export_changes(hostile_book / "book.xlsx", tmp_path / "c.csv")
    rows = read_csv_rows(tmp_path / "c.csv")
    terms = sorted(r[3] for r in rows[1:] if r[0] == "add negative")
    assert sorted(HOSTILE_TERMS) == terms


def test_every_hostile_term_comes_back_exactly_through_changes_xlsx_in_openpyxl(tmp_path, hostile_book):
    export_changes(hostile_book / "book.xlsx", tmp_path / "c.xlsx", fmt="xlsx")
    ws = openpyxl.load_workbook(tmp_path / "c.xlsx").active
    terms = sorted(r[3] for r in ws.iter_rows(min_row=2, values_only=True) if r[0] == "add negative")
    assert sorted(HOSTILE_TERMS) == terms


@pytest.mark.libreoffice
def test_every_hostile_term_comes_back_exactly_through_changes_xlsx_in_libreoffice(tmp_path, hostile_book):
    require_libreoffice()
    from test_hostile_text import read_xml_cells  # decodes the stored text as a spreadsheet program does
    export_changes(hostile_book / "book.xlsx", tmp_path / "c.xlsx", fmt="xlsx")
    saved = libreoffice_convert([tmp_path / "c.xlsx"], tmp_path / "lo")[0]
    cells = next(iter(read_xml_cells(saved).values()))
    kinds = {ref: c.text for ref, c in cells.items() if ref.startswith("A")}
    terms = sorted(cells[f"D{ref[1:]}"].text for ref, kind in kinds.items() if kind == "add negative")
    assert sorted(HOSTILE_TERMS) == terms


@pytest.mark.parametrize("name", sorted(REFUSED_TERMS))
def test_a_term_a_workbook_cannot_carry_exactly_is_refused_with_its_row(tmp_path, name):
    write_case(tmp_path / "in", {"search_terms.csv": _search_terms(["fine", REFUSED_TERMS[name]])})
    with pytest.raises(InputProblems) as caught:
        build(tmp_path / "in", tmp_path / "b.xlsx", built_on=BUILT_ON)
    assert [("search_terms.csv", 3, "search_term")] == [(p.file, p.row, p.column) for p in caught.value.problems]
    assert [] == list(p.name for p in tmp_path.iterdir() if p.name != "in")


def test_a_changed_term_a_workbook_cannot_carry_exactly_is_refused_by_changes(tmp_path, hostile_book):
    values = openpyxl.load_workbook(hostile_book / "book.xlsx", data_only=True)["Actions"]
    row = next(r[0].row for r in values.iter_rows(min_row=5) if r[0].value == "add negative")
    wb = openpyxl.load_workbook(hostile_book / "book.xlsx")
    wb["Actions"].cell(row, 4).value = "_x0041_ typed"  # as a person types it over the formula
    wb.save(tmp_path / "typed.xlsx")
    result = export_changes(tmp_path / "typed.xlsx", tmp_path / "c.csv")
    assert [("Actions", row, "Target or term")] == [(p.file, p.row, p.column) for p in result.problems]


TEXT_SETTINGS = [s.key for s in SETTINGS if s.kind in ("text", "choice")]


@pytest.mark.parametrize("key", TEXT_SETTINGS)
def test_a_control_character_in_a_text_setting_is_refused_naming_it(tmp_path, key):
    (tmp_path / "settings.toml").write_text(f'{key} = "\\u0001EUR"\n', encoding="utf-8")
    _, problems = load_settings(tmp_path)
    assert [key] == [p.column for p in problems]
    assert "control character U+0001" in problems[0].message


@pytest.mark.parametrize("toml, column", [
    ('[columns.catalog]\nprice = "Price\\u0007"\n', "columns.catalog.price"),
    ('[files]\ncatalog = "cat\\u001b.csv"\n', "files.catalog"),
    ('[destinations]\nP1 = { campaign = "C\\r1", ad_group = "G1" }\n', "destinations.P1.campaign"),
    ('[ad_type_benchmarks]\n"product\\u0000 ads" = 0.5\n', "ad_type_benchmarks.'product\\x00 ads'"),
])
def test_a_control_character_in_a_settings_table_is_refused_naming_it(tmp_path, toml, column):
    (tmp_path / "settings.toml").write_text(toml, encoding="utf-8")
    _, problems = load_settings(tmp_path)
    assert [column] == [p.column for p in problems]


def test_a_currency_symbol_with_a_control_character_is_refused_by_the_command(tmp_path, capsys):
    write_case(tmp_path / "in", {"settings.toml": b'currency_symbol = "\\u0001EUR"\n'})
    assert 2 == main(["build", str(tmp_path / "in"), "-o", str(tmp_path / "b.xlsx")])
    _one_message(capsys.readouterr().err, "currency_symbol")
    assert not (tmp_path / "b.xlsx").exists()


def test_a_term_that_reads_like_an_error_value_is_cached_as_text(hostile_book):
    with zipfile.ZipFile(hostile_book / "book.xlsx") as z:
        xml = b"".join(z.read(n) for n in z.namelist() if n.startswith("xl/worksheets/sheet"))
    import re
    cells = re.findall(rb'<c ([^>]*)><f[^>]*?(?:/>|>[^<]*</f>)<v>#N/A</v></c>', xml)  # a shared formula's too
    assert cells, "no formula caches the term #N/A"
    assert {b"str"} == {(re.search(rb't="(\w+)"', attrs) or re.search(b"()", b"")).group(1) for attrs in cells}
