"""Render PNG pictures of chosen sheets of the demo workbook, as LibreOffice prints them.

Usage: python tools/render_samples.py DEMO_INPUTS OUTPUT_DIR [SHEET ...]
       python tools/render_samples.py DEMO_INPUTS OUTPUT_DIR --workbook-only


The workbook is printed to PDF by LibreOffice (headless, recalculating on load), and each
chosen sheet's first page (found by the sheet name its footer carries) is turned into a PNG
by pdftoppm. Also writes OUTPUT_DIR/demo.xlsx, the demo workbook itself. The Follow-up
sheet is rendered from next week's demo exports (demo_inputs_week2 beside DEMO_INPUTS, made
by tools/make_week2.py) built with --previous the demo workbook.

OUTPUT_DIR/demo.xlsx is the golden file of tests/test_golden_demo.py; `--workbook-only`
(`./tasks.sh golden`) writes it alone, without LibreOffice. It is built exactly as the tests
build the demo (`pipeline.build` on DEMO_DATE).
"""
from __future__ import annotations

import datetime as dt
import subprocess
import sys
import tempfile
from pathlib import Path

from sheetbuilder.pipeline import build
from recalc import libreoffice_convert  # tools/recalc.py, beside this script

DEMO_DATE = dt.date(2026, 12, 2)
WEEK2 = "demo_inputs_week2"


def week2_plan(folder: Path, out: Path):
    """The plan of next week's demo workbook, built with --previous this week's (out/demo.xlsx)."""
    result = build(folder.parent / WEEK2, out / "demo_week2.xlsx", force=True,
                   built_on=DEMO_DATE + dt.timedelta(days=7), previous=out / "demo.xlsx")
    return result.plan


def first_page_of(pdf: Path, sheet: str) -> int:
    """The first page of the printed workbook whose footer names sheet (every sheet's footer starts with its name)."""
    pages = int(next(line.split()[-1] for line in subprocess.run(["pdfinfo", str(pdf)], capture_output=True, text=True,
                                                                 check=True).stdout.splitlines()
                     if line.startswith("Pages:")))
    for page in range(1, pages + 1):
        text = subprocess.run(["pdftotext", "-f", str(page), "-l", str(page), "-layout", str(pdf), "-"],
                              capture_output=True, text=True, check=True).stdout
        lines = [line.strip() for line in text.splitlines() if line.strip()]
        if lines and lines[-1].startswith(sheet + " ") and "Page " in lines[-1]:
            return page
    raise SystemExit(f"{pdf.name}: no printed page of the sheet {sheet}")


def main(argv: list[str]) -> int:
    folder, out = Path(argv[0]), Path(argv[1])
    out.mkdir(parents=True, exist_ok=True)
    build(folder, out / "demo.xlsx", force=True, built_on=DEMO_DATE)
    print(f"wrote {out / 'demo.xlsx'}")
    if argv[2:] == ["--workbook-only"]:
        return 0
    sheets = argv[2:] or ["Guide", "Settings", "Profit", "Bids", "Terms", "Harvest", "Negatives", "Mix", "Budget", "Actions", "Follow-up", "Groups"]
    books = {name: out / "demo.xlsx" for name in sheets}
    if "Follow-up" in sheets:
        week2_plan(folder, out)
        books["Follow-up"] = out / "demo_week2.xlsx"
    with tempfile.TemporaryDirectory() as tmp:
        tmp = Path(tmp)
        unique = sorted(set(books.values()))
        pdfs = dict(zip(unique, libreoffice_convert(unique, tmp / "pdf", target="pdf")))
        for name in sheets:
            pdf = pdfs[books[name]]
            page = first_page_of(pdf, name)
            stem = out / f"{name.lower()}"
            subprocess.run(["pdftoppm", "-png", "-r", "130", "-f", str(page), "-l", str(page), "-singlefile", str(pdf),
                            str(stem)], check=True)
            print(f"wrote {stem}.png (page {page} of the printed workbook)")
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
