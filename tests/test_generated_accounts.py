"""The generated accounts behind the whole-workbook tests are the same in every run.

A failure on "generated account 3" must name one account that anyone can build again
(python tests/accounts.py 3 FOLDER). Hypothesis mixes the literals of the local modules a
process has imported into what it draws, so the accounts are drawn in a process that has
imported none of ours; the check below runs the draw once in such a bare process and once in
this one, which has imported the package (conftest imports the pipeline).
"""
from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import sheetbuilder.cli  # noqa: F401  (more of the package's literals in this process)
from accounts import draw_accounts

TESTS = Path(__file__).parent


def test_generated_accounts_do_not_depend_on_the_modules_this_process_imported():
    code = ("import json, sys; sys.path.insert(0, sys.argv[1]); from accounts import draw_accounts; "
            "print(json.dumps(draw_accounts(4)))")
    bare = subprocess.run([sys.executable, "-c", code, str(TESTS)], capture_output=True, text=True, check=True)
    assert json.loads(bare.stdout) == draw_accounts(4)


def test_a_generated_account_is_the_same_drawn_alone_or_among_more():
    assert draw_accounts(6)[3] == draw_accounts(4)[3]
