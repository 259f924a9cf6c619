"""Every command the README and DEVELOPERS.md show exists: the documents cannot drift from the CLI.

The shell commands are taken from the fenced code blocks (sh, bash, shell, console) and the
inline code spans of each document. For each that runs `sheetbuilder` (or a path ending in
`/sheetbuilder`): its command exists, `sheetbuilder <command> --help` exits 0, every option it
names is one the command's argparse accepts, and a command written without placeholders
(no `[...]`, no CAPITALISED argument) parses as it stands. Each `./tasks.sh <task>` shown is
a task tasks.sh knows.
"""
from __future__ import annotations

import argparse
import re
import shlex
from pathlib import Path

import pytest

from sheetbuilder.cli import main, parser

ROOT = Path(__file__).resolve().parent.parent
DOCUMENTS = ("README.md", "DEVELOPERS.md")
SHELL_BLOCK = re.compile(r"^ *```(?:sh|bash|shell|console)\n(.*?)^ *```", re.S | re.M)
CODE_SPAN = re.compile(r"(?<!`)`([^`\n]+)`(?!`)")


def shell_lines(text: str) -> list[str]:
    """Every command line of the shell blocks and every inline code span, comments removed."""
    lines = []
    for block in SHELL_BLOCK.findall(text):
        lines += [line.strip().removeprefix("$ ") for line in block.splitlines()]
    without_blocks = SHELL_BLOCK.sub("", text)
    lines += CODE_SPAN.findall(without_blocks)
    out = []
    for line in lines:
        line = re.sub(r"\s+#.*$", "", line).strip()
        for part in re.split(r"&&|\|\||;|\|(?=\s)", line):
            if part.strip():
                out.append(part.strip())
    return out


def sheetbuilder_commands(text: str) -> list[list[str]]:
    """The argument lists after `sheetbuilder` in each command that runs it."""
    found = []
    for line in shell_lines(text):
        try:
            words = shlex.split(line)
        except ValueError:
            continue
        for i, word in enumerate(words):
            if word == "sheetbuilder" or word.endswith("/sheetbuilder"):
                found.append(words[i + 1:])
                break
    return found


def tasks_shown(text: str) -> set[str]:
    return set(re.findall(r"\./tasks\.sh ([a-z]+)", text))


def subcommands() -> dict[str, argparse.ArgumentParser]:
    sub = next(a for a in parser()._actions if isinstance(a, argparse._SubParsersAction))
    return dict(sub.choices)


def options_named(args: list[str]) -> list[str]:
    """Option names in a documented command: `[--format csv|xlsx]` gives --format, `-o` gives -o."""
    names = []
    for word in args:
        word = word.strip("[]")
        for alternative in word.split("|"):
            if alternative.startswith("-"):
                names.append(alternative.split("=")[0])
    return names


def has_placeholder(args: list[str]) -> bool:
    return any("[" in w or "]" in w or "|" in w or re.fullmatch(r"[A-Z][A-Z0-9_.]*(\.xlsx)?", w) for w in args)


def documented(name: str) -> list[list[str]]:
    return sheetbuilder_commands((ROOT / name).read_text(encoding="utf-8"))


def test_the_readme_shows_the_install_inspect_build_changes_batch_and_previous_commands():
    shown = {tuple(args[:1]) for args in documented("README.md")}
    assert {("--help",), ("inspect",), ("build",), ("changes",), ("batch",)} <= shown
    options = {o for args in documented("README.md") for o in options_named(args)}
    assert {"--previous", "-o"} <= options


@pytest.mark.parametrize("name", DOCUMENTS)
def test_every_documented_sheetbuilder_command_exists_with_the_options_it_names(name, capsys):
    commands = subcommands()
    problems = []
    for args in documented(name):
        shown = "sheetbuilder " + " ".join(args)
        if not args or args[0] in ("--help", "-h", "--version"):
            continue
        command = args[0]
        if re.fullmatch(r"[A-Z_]+", command):  # `sheetbuilder COMMAND --help`: a placeholder for any command
            continue
        if command not in commands:
            problems.append(f"{shown}: no command {command!r} (commands: {sorted(commands)})")
            continue
        accepted = set(commands[command]._option_string_actions)
        problems += [f"{shown}: {command} has no option {o}" for o in options_named(args[1:]) if o not in accepted]
        if not has_placeholder(args):
            try:
                parser().parse_args(args)
            except SystemExit as exc:
                problems.append(f"{shown}: does not parse (exit {exc.code}): {capsys.readouterr().err.strip()}")
    assert [] == problems


@pytest.mark.parametrize("command", sorted(subcommands()))
def test_each_command_has_help_that_exits_0(command, capsys):
    with pytest.raises(SystemExit) as exc:
        main([command, "--help"])
    assert 0 == exc.value.code
    assert f"usage: sheetbuilder {command}" in capsys.readouterr().out


@pytest.mark.parametrize("name", DOCUMENTS)
def test_every_documented_task_is_one_tasks_sh_knows(name):
    script = (ROOT / "tasks.sh").read_text(encoding="utf-8")
    known = set(re.findall(r"^  ([a-z]+)\)$", script, re.M))
    assert set() == tasks_shown((ROOT / name).read_text(encoding="utf-8")) - known


def test_the_extractor_finds_commands_in_blocks_and_spans_and_ignores_module_paths():
    text = ("Run `sheetbuilder build EXPORTS -o out.xlsx [--force]`, see `sheetbuilder/reading/guard.py`.\n"
            "```sh\n~/env/bin/sheetbuilder inspect exports/   # read only\npython -m benchmarks.bench\n```\n")
    assert [["inspect", "exports/"], ["build", "EXPORTS", "-o", "out.xlsx", "[--force]"]] == sheetbuilder_commands(text)
    assert ["-o", "--force", "--format"] == options_named(["-o", "x", "[--force]", "[--format", "csv|xlsx]"])


def test_the_demo_task_ends_by_printing_the_commands_for_ones_own_folder_and_how_to_get_them_on_the_path():
    script = (ROOT / "tasks.sh").read_text(encoding="utf-8")
    demo = script[script.index("\n  demo)"):script.index("\n    ;;", script.index("\n  demo)"))]
    printed = demo[demo.index("cat <<EOF"):]
    commands = [line.split()[1:] for line in printed.splitlines() if line.strip().startswith("$here/$VENV/bin/sheetbuilder ")]
    assert [["inspect", "YOUR_EXPORTS_FOLDER"], ["build", "YOUR_EXPORTS_FOLDER", "-o", "my_workbook.xlsx"]] == commands
    for args in commands:
        parser().parse_args(args)
    assert 'export PATH="$here/$VENV/bin:\\$PATH"' in printed
    assert "pipx install $here" in printed
