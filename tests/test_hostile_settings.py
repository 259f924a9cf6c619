"""A hostile or broken settings.toml is refused with exit 2 naming the file, before it can cost time or memory.

Each case is a file a careless copy or an attacker could leave in an exports folder: too big (also a
sparse file that claims gigabytes), nested thousands deep, tens of thousands of keys, a link loop,
a link to a device, a pipe, a folder, bytes that are not UTF-8. The limits are ours (a settings file
holds a few dozen lines); the TOML rules are TOML 1.0.0 (toml.io).
"""
from __future__ import annotations

from minimal import write_account

import os

import pytest

from sheetbuilder.cli import main
from sheetbuilder.reading.settings import MAX_SETTINGS_BYTES, load_settings, nesting_depth


def _write_big(path):
    path.write_text("# a comment line of padding\n" * (MAX_SETTINGS_BYTES // 28 + 10))


def _write_sparse(path):
    with open(path, "wb") as handle:
        handle.truncate(8 << 30)          # 8 GiB claimed, nothing on disk


def _write_deep(path):
    path.write_text("thin_margin = " + "[" * 100_000 + "]" * 100_000 + "\n")


def _write_moderately_deep(path):
    path.write_text("thin_margin = " + "[" * 40 + "]" * 40 + "\n")


def _write_dotted(path):
    path.write_text("a." * 100_000 + "b = 1\n")  # tomllib is quadratic in dotted-key levels


def _write_many_keys(path):
    path.write_text("".join(f"k{i} = 1\n" for i in range(90_000)))


def _write_loop(path):
    os.symlink(path.name, path)


def _write_two_link_loop(path):
    os.symlink("other.toml", path)
    os.symlink(path.name, path.with_name("other.toml"))


def _write_device_link(path):
    os.symlink("/dev/zero", path)


def _write_pipe(path):
    os.mkfifo(path)


def _write_folder(path):
    path.mkdir()


def _write_latin1(path):
    path.write_bytes("thin_margin = 0.1 # caf\xe9\n".encode("latin-1"))


HOSTILE = {
    "over one MiB": (_write_big, "bytes, more than the 1,048,576"),
    "a sparse file of 8 GiB": (_write_sparse, "8,589,934,592 bytes"),
    "nested 100,000 deep": (_write_deep, "nests arrays, inline tables or dotted keys 100000 deep"),
    "nested 40 deep": (_write_moderately_deep, "nests arrays, inline tables or dotted keys 40 deep"),
    "100,000 dotted-key levels": (_write_dotted, "nests arrays, inline tables or dotted keys 100001 deep"),
    "90,000 keys": (_write_many_keys, "holds 90,000 keys and values"),
    "a link to itself": (_write_loop, "link loop"),
    "two links to each other": (_write_two_link_loop, "link loop"),
    "a link to a device": (_write_device_link, "is not a plain file"),
    "a pipe": (_write_pipe, "is not a plain file"),
    "a folder": (_write_folder, "is not a plain file"),
    "Latin-1 bytes": (_write_latin1, "is not UTF-8 text"),
}


@pytest.mark.parametrize("case", list(HOSTILE))
def test_hostile_settings_file_exits_2_naming_the_file_and_the_reason(case, tmp_path, capsys):
    folder = write_account(tmp_path / "in")
    write, reason = HOSTILE[case]
    write(folder / "settings.toml")
    assert 2 == main(["build", str(folder), "-o", str(tmp_path / "book.xlsx"), "-q"])
    assert "settings.toml" in capsys.readouterr().err
    assert not (tmp_path / "book.xlsx").exists()
    _, problems = load_settings(folder)
    assert [("settings.toml", True)] == [(p.file, reason in p.message) for p in problems]


def test_settings_reached_through_a_plain_link_are_read(tmp_path):
    folder = write_account(tmp_path / "in")
    (tmp_path / "shared.toml").write_text("thin_margin = 0.07\n")
    os.symlink(tmp_path / "shared.toml", folder / "settings.toml")
    settings, problems = load_settings(folder)
    assert ([], 0.07) == (problems, settings.thin_margin)


def test_nesting_depth_ignores_brackets_in_strings_and_comments():
    text = 'a = [[1], [2]]\nspend = "Cost [[[[ USD"  # [[[[[\nb = { c = { d = 1 } }\nt = 0.125\n'
    assert 2 == nesting_depth(text)


def test_nesting_depth_counts_a_dotted_keys_levels_but_not_a_numbers_point():
    assert 3 == nesting_depth("[columns.ad_products]\nspend = 1.5\n")
    assert 4 == nesting_depth("a.b.c.d = 2026-11-30T07:32:00.999\n")


def test_a_pipe_named_like_an_export_is_named_not_skipped(tmp_path):
    from sheetbuilder.pipeline import load
    from sheetbuilder.errors import InputProblems
    folder = write_account(tmp_path / "in", {"ad_products.csv": None})
    os.mkfifo(folder / "ad_products.csv")
    with pytest.raises(InputProblems) as refused:
        load(folder)
    assert [("ad_products.csv", True)] == [(p.file, "not a plain file" in p.message) for p in refused.value.problems
                                           if p.file == "ad_products.csv"]


def test_changes_on_a_device_says_it_is_not_a_workbook_file(tmp_path, capsys):
    assert 1 == main(["changes", "/dev/zero", "-o", str(tmp_path / "c.csv")])
    assert "is not a workbook file" in capsys.readouterr().err


def test_a_refused_temporary_file_is_reported_as_the_outputs_folder():
    import errno
    from pathlib import Path
    from sheetbuilder.cli import os_error_message
    exc = PermissionError(errno.EACCES, "Permission denied", "/data/out/.book.host-1.ab12.partial.xlsx")
    message = os_error_message(exc, Path("/data/out/book.xlsx"))
    assert message.startswith("cannot use /data/out/book.xlsx's folder: ")
