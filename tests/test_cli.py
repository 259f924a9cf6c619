"""The command line: exit codes, --force, and help for every command."""
from __future__ import annotations

from minimal import CATALOG, write_account

import argparse

import openpyxl
import pytest

from sheetbuilder.cli import main, parser





def test_build_exits_0_and_writes_the_workbook(tmp_path, capsys):
    out = tmp_path / "book.xlsx"
    assert 0 == main(["build", str(write_account(tmp_path / "in")), "-o", str(out)])
    assert "Profit" in openpyxl.load_workbook(out).sheetnames
    assert f"wrote {out}" in capsys.readouterr().err.replace("\n", "")


def test_build_again_without_force_exits_1_and_leaves_the_output_unchanged(tmp_path, capsys):
    folder, out = write_account(tmp_path / "in"), tmp_path / "book.xlsx"
    assert 0 == main(["build", str(folder), "-o", str(out)])
    before = out.read_bytes()
    capsys.readouterr()
    assert 1 == main(["build", str(folder), "-o", str(out)])
    assert before == out.read_bytes()
    assert "--force" in capsys.readouterr().err


def test_build_with_force_rewrites_the_output(tmp_path):
    folder, out = write_account(tmp_path / "in"), tmp_path / "book.xlsx"
    out.write_bytes(b"an old file")
    assert 0 == main(["build", str(folder), "-o", str(out), "--force", "-q"])
    assert b"an old file" != out.read_bytes()
    assert "Profit" in openpyxl.load_workbook(out).sheetnames


def test_build_with_bad_inputs_exits_2(tmp_path):
    folder = write_account(tmp_path / "in", {"catalog.csv": CATALOG.replace("20.00", "twenty")})
    assert 2 == main(["build", str(folder), "-o", str(tmp_path / "book.xlsx")])
    assert not (tmp_path / "book.xlsx").exists()


def test_quiet_build_prints_nothing(tmp_path, capsys):
    assert 0 == main(["build", str(write_account(tmp_path / "in")), "-o", str(tmp_path / "b.xlsx"), "-q"])
    captured = capsys.readouterr()
    assert ("", "") == (captured.out, captured.err)


def test_build_help_mentions_force(capsys):
    with pytest.raises(SystemExit) as exited:
        main(["build", "--help"])
    assert 0 == exited.value.code
    assert "--force" in capsys.readouterr().out


def _subcommands() -> dict[str, tuple[str | None, argparse.ArgumentParser]]:
    """Each subcommand's name, its one-line help in the command list, and its parser."""
    actions = [a for a in parser()._actions if isinstance(a, argparse._SubParsersAction)]
    assert actions, "the parser has no subcommands"
    helps = {choice.dest: choice.help for a in actions for choice in a._choices_actions}
    return {name: (helps.get(name), sub) for a in actions for name, sub in a.choices.items()}


def test_every_subcommand_has_a_help_line_and_a_description():
    commands = _subcommands()
    assert "build" in commands
    lacking = sorted(name for name, (line, sub) in commands.items()
                     if not (line or "").strip() or not (sub.description or "").strip())
    assert [] == lacking


def test_every_option_of_every_subcommand_has_help():
    lacking = sorted(f"{name} {a.dest}" for name, (_, sub) in _subcommands().items()
                     for a in sub._actions if not isinstance(a, argparse._HelpAction) and not (a.help or "").strip())
    assert [] == lacking


def test_a_librarys_warning_never_reaches_the_terminal(tmp_path, recwarn, capsys):
    # openpyxl warns (UserWarning) on a defined name local to a sheet the workbook lacks; the command stays quiet.
    import zipfile
    book = tmp_path / "book.xlsx"
    assert 0 == main(["build", str(write_account(tmp_path / "in")), "-o", str(book), "-q"])
    with zipfile.ZipFile(book) as z:
        parts = {n: z.read(n) for n in z.namelist()}
    parts["xl/workbook.xml"] = parts["xl/workbook.xml"].replace(
        b"<definedNames>", b'<definedNames><definedName name="stray" localSheetId="40">Profit!$A$1</definedName>', 1)
    odd = tmp_path / "odd.xlsx"
    with zipfile.ZipFile(odd, "w", zipfile.ZIP_DEFLATED) as z:
        for name, data in parts.items():
            z.writestr(name, data)
    import openpyxl
    import pytest as _pytest
    with _pytest.warns(UserWarning):   # the library does warn on this file (the premise of the test)
        openpyxl.load_workbook(odd, read_only=True).close()
    recwarn.clear()
    main(["changes", str(odd), "-o", str(tmp_path / "c.csv")])
    assert [] == [str(w.message) for w in recwarn]
    assert "Warning" not in capsys.readouterr().err
