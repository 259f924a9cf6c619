"""Shared fixtures: the demo workbook, generated accounts, one batched LibreOffice run and one Gnumeric run.

LibreOffice is started once per session for every workbook the tests recalculate
(its start-up costs seconds); Gnumeric (`ssconvert --recalc`) recalculates the demo and
the generated accounts once per session. Under CI=true a missing LibreOffice or Gnumeric
fails the run.
"""
from __future__ import annotations

import datetime as dt
import os
import sys
from pathlib import Path

import openpyxl
import pytest

sys.path.insert(0, str(Path(__file__).parent))

from accounts import draw_accounts, write_account  # noqa: E402
from sheetbuilder.pipeline import build  # noqa: E402
from tools.recalc import gnumeric_convert, libreoffice_convert, soffice_path, ssconvert_path  # noqa: E402

ROOT = Path(__file__).resolve().parent.parent
DEMO = ROOT / "demo_inputs"
BUILT_ON = dt.date(2026, 12, 2)
GENERATED = 6


SLOW_MARKERS = ("libreoffice", "gnumeric")  # tier 3: an outside engine recalculates whole workbooks


def pytest_collection_modifyitems(config, items):
    """Mark every test that recalculates with LibreOffice or Gnumeric as slow (left out of the fast lane);
    deselect the tests marked largest (hours on the largest benchmark account) unless SB_LARGEST=1."""
    for item in items:
        if any(item.get_closest_marker(m) for m in SLOW_MARKERS) or set(SLOW_MARKERS) & set(item.fixturenames):
            item.add_marker(pytest.mark.slow)
    if os.environ.get("SB_LARGEST") != "1":
        largest = [item for item in items if item.get_closest_marker("largest")]
        if largest:
            config.hook.pytest_deselected(items=largest)
            items[:] = [item for item in items if not item.get_closest_marker("largest")]


def require_libreoffice():
    """Skip without LibreOffice on a developer machine; fail under CI."""
    if soffice_path() is None:
        if os.environ.get("CI") == "true":
            pytest.fail("LibreOffice (soffice) is required under CI=true; ./tasks.sh test installs it")
        pytest.skip("LibreOffice is not installed")


def require_gnumeric():
    """Skip without Gnumeric's ssconvert on a developer machine; fail under CI."""
    if ssconvert_path() is None:
        if os.environ.get("CI") == "true":
            pytest.fail("Gnumeric (ssconvert) is required under CI=true; ./tasks.sh test installs it")
        pytest.skip("Gnumeric (ssconvert) is not installed")


@pytest.fixture(scope="session")
def work(tmp_path_factory) -> Path:
    return tmp_path_factory.mktemp("work")


@pytest.fixture(scope="session")
def demo_build(work):
    """The demo workbook as built, with its build result (the plan and reference frames)."""
    return build(DEMO, work / "demo.xlsx", built_on=BUILT_ON)


@pytest.fixture(scope="session")
def generated(work):
    """Accounts drawn from the hypothesis strategy, each built: [(account, BuildResult)]."""
    out = []
    for i, account in enumerate(draw_accounts(GENERATED)):
        folder = write_account(account, work / f"gen{i}")
        out.append((account, build(folder, work / f"gen{i}.xlsx", built_on=BUILT_ON)))
    return out


def edit_workbook(src: Path, dst: Path, changes: list[tuple[str, str, object]]) -> Path:
    """Copy src to dst with cells changed as a user would: [(sheet, 'A1', value)]."""
    wb = openpyxl.load_workbook(src)
    for sheet, coord, value in changes:
        wb[sheet][coord].value = value
    wb.save(dst)
    return dst


@pytest.fixture(scope="session")
def libreoffice(work, demo_build, generated, live_edits):
    """{stem: path of the LibreOffice-recalculated copy} for every workbook the tests need."""
    require_libreoffice()
    files = [demo_build.output] + [r.output for _, r in generated] + list(live_edits.values())
    outs = libreoffice_convert(files, work / "lo")
    return {Path(f).stem: o for f, o in zip(files, outs)}


@pytest.fixture(scope="session")
def gnumeric(work, demo_build, generated):
    """{stem: path of the Gnumeric-recalculated copy} of the demo and the generated accounts."""
    require_gnumeric()
    files = [demo_build.output] + [r.output for _, r in generated]
    outs = gnumeric_convert(files, work / "gnumeric")
    return {Path(f).stem: o for f, o in zip(files, outs)}


@pytest.fixture(scope="session")
def live_edits(work, demo_build):
    """Edited copies of the demo workbook, made by the live-edit test module's plan."""
    from test_live_edit import make_edits  # the edits are defined beside their assertions
    return make_edits(demo_build, work)
