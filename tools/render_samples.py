"""Render PNG pictures of chosen sheets of the demo workbook, as LibreOffice prints them.

Usage: python tools/render_samples.py DEMO_INPUTS OUTPUT_DIR [SHEET ...]
       python tools/render_samples.py DEMO_INPUTS OUTPUT_DIR --workbook-only


For each sheet, a copy of the workbook with every other sheet hidden is converted to PDF
by LibreOffice (headless, recalculating on load) and its first page turned into a PNG
by pdftoppm. Also writes OUTPUT_DIR/demo.xlsx, the demo workbook itself. The Follow-up
sheet is rendered from next week's demo exports (demo_inputs_week2 beside DEMO_INPUTS, made
by tools/make_week2.py) built with --previous the demo workbook.

OUTPUT_DIR/demo.xlsx is the golden file of tests/test_golden_demo.py; `--workbook-only`
(`./tasks.sh golden`) writes it alone, without LibreOffice. It is built exactly as the tests
build the demo (`pipeline.build` on DEMO_DATE).
"""
from __future__ import annotations

import copy
import datetime as dt
import subprocess
import sys
import tempfile
from pathlib import Path

from sheetbuilder.pipeline import build, write_atomically
from sheetbuilder.recalc import libreoffice_convert

DEMO_DATE = dt.date(2026, 12, 2)
WEEK2 = "demo_inputs_week2"


def week2_plan(folder: Path, out: Path):
    """The plan of next week's demo workbook, built with --previous this week's (out/demo.xlsx)."""
    result = build(folder.parent / WEEK2, out / "demo_week2.xlsx", force=True,
                   built_on=DEMO_DATE + dt.timedelta(days=7), previous=out / "demo.xlsx")
    return result.plan


def main(argv: list[str]) -> int:
    folder, out = Path(argv[0]), Path(argv[1])
    out.mkdir(parents=True, exist_ok=True)
    plan = build(folder, out / "demo.xlsx", force=True, built_on=DEMO_DATE).plan
    print(f"wrote {out / 'demo.xlsx'}")
    if argv[2:] == ["--workbook-only"]:
        return 0
    sheets = argv[2:] or ["Guide", "Settings", "Profit", "Bids", "Terms", "Harvest", "Negatives", "Mix", "Budget", "Actions", "Follow-up", "Groups"]
    plans = {name: plan for name in sheets}
    if "Follow-up" in sheets:
        plans["Follow-up"] = week2_plan(folder, out)
    with tempfile.TemporaryDirectory() as tmp:
        tmp = Path(tmp)
        files = []
        for name in sheets:
            spec = copy.deepcopy(plans[name].spec)
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
