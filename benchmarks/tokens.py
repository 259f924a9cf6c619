"""Formula tokens of a built workbook, per sheet and per column: what LibreOffice copies into every formula cell.

    python -m benchmarks.tokens BOOK.xlsx [--columns 30]

A token is a name or reference, a number, a string, an operator or a bracket or separator of a formula's text
(a shared group's later cells count the group's text). LibreOffice keeps each formula cell's own copy of its tokens,
so the load grows with them (DEVELOPERS.md, "Shorter Bids and Terms formulas").
"""
from __future__ import annotations

import argparse
import re
import zipfile
from collections import Counter
from pathlib import Path

from .twin import formula_texts, sheet_parts

TOKEN = re.compile(r"[A-Za-z_][A-Za-z_0-9.!$]*|\d+\.?\d*|\"[^\"]*\"|[-+*/<>=&,()^:]")
_COLUMN = re.compile(r'r="([A-Z]+)')


def tokens_in(text: str) -> int:
    """The tokens of one formula's text."""
    return len(TOKEN.findall(text))


def count_tokens(book: Path) -> dict[str, Counter]:
    """{"tokens": {sheet: tokens}, "cells": {sheet: formula cells}, "column_tokens": {(sheet, column letters):
    tokens}, "column_cells": {(sheet, column letters): formula cells}}."""
    out = {k: Counter() for k in ("tokens", "cells", "column_tokens", "column_cells")}
    with zipfile.ZipFile(book) as z:
        for name, part in sheet_parts(z).items():
            for m, text in formula_texts(z.read(part).decode("utf-8")):
                n, col = tokens_in(text), (name, _COLUMN.search(m.group(1)).group(1))
                out["tokens"][name] += n
                out["cells"][name] += 1
                out["column_tokens"][col] += n
                out["column_cells"][col] += 1
    return out


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(prog="python -m benchmarks.tokens", description=__doc__.splitlines()[0])
    ap.add_argument("book", type=Path)
    ap.add_argument("--columns", type=int, default=30, help="the heaviest columns listed (default 30)")
    args = ap.parse_args(argv)
    c = count_tokens(args.book)
    print(f"total tokens {sum(c['tokens'].values()):,} in {sum(c['cells'].values()):,} formula cells")
    for sheet, n in c["tokens"].most_common():
        print(f"{sheet:20s} {n:>12,} {c['cells'][sheet]:>9,} {n / c['cells'][sheet]:7.1f} per cell")
    for (sheet, col), n in c["column_tokens"].most_common(args.columns):
        print(f"{sheet + ' ' + col:20s} {n:>12,} {c['column_cells'][(sheet, col)]:>9,} "
              f"{n / c['column_cells'][(sheet, col)]:7.0f} per cell")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
