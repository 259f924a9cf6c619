"""Render PNG pictures of chosen sheets of the demo workbook, as LibreOffice prints them.

Usage: python tools/render_samples.py DEMO_INPUTS OUTPUT_DIR [SHEET ...]

For each sheet, a copy of the workbook with every other sheet hidden is converted to PDF
by LibreOffice (headless, recalculating on load) and its first page turned into a PNG
by pdftoppm. Also writes OUTPUT_DIR/demo.xlsx, the demo workbook itself.
"""
from __future__ import annotations

import copy
import datetime as dt
import subprocess
import sys
import tempfile
from pathlib import Path

from sheetbuilder.pipeline import load, plan_workbook, write_atomically
from sheetbuilder.errors import WARNING
from sheetbuilder.recalc import libreoffice_convert

DEMO_DATE = dt.date(2026, 12, 2)


def main(argv: list[str]) -> int:
    folder, out = Path(argv[0]), Path(argv[1])
    sheets = argv[2:] or ["Guide", "Settings", "Profit", "Bids", "Terms", "Harvest", "Negatives", "Mix", "Budget", "Actions", "Groups"]
    out.mkdir(parents=True, exist_ok=True)
    inputs, settings, problems = load(folder)
    plan = plan_workbook(inputs, settings, DEMO_DATE, [p for p in problems if p.severity == WARNING])
    write_atomically(plan.spec, out / "demo.xlsx", force=True)
    with tempfile.TemporaryDirectory() as tmp:
        tmp = Path(tmp)
        files = []
        for name in sheets:
            spec = copy.deepcopy(plan.spec)
            for sheet in spec.sheets:
                sheet.hidden = sheet.name != name
            path = tmp / f"{name.lower()}.xlsx"
            write_atomically(spec, path, force=True)
            files.append(path)
        pdfs = libreoffice_convert(files, tmp / "pdf", target="pdf")
        for name, pdf in zip(sheets, pdfs):
            stem = out / f"{name.lower()}"
            subprocess.run(["pdftoppm", "-png", "-r", "130", "-f", "1", "-l", "1", "-singlefile", str(pdf), str(stem)],
                           check=True)
            print(f"wrote {stem}.png")
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
