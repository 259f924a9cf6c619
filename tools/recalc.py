"""Recalculating a workbook outside Excel: LibreOffice Calc headless, Gnumeric and the `formulas` library.

Used by the tests (three-way truth), the benchmark, and later by commands that read
workbooks a user saved. LibreOffice is forced to recalculate on load with a private
profile whose registrymodifications.xcu sets OOXMLRecalcMode to 0 ("always"); Gnumeric's
`ssconvert --recalc` recalculates every cell before writing.
"""
from __future__ import annotations

import os
import shutil
import subprocess
import tempfile
from pathlib import Path
from typing import Any

from sheetbuilder.errors import SheetbuilderError

_RECALC_PROFILE = """<?xml version="1.0" encoding="UTF-8"?>
<oor:items xmlns:oor="http://openoffice.org/2001/registry" xmlns:xs="http://www.w3.org/2001/XMLSchema" \
xmlns:xsi="http://www.w3.org/2001/XMLSchema-instance">
<item oor:path="/org.openoffice.Office.Calc/Formula/Load"><prop oor:name="OOXMLRecalcMode" oor:op="fuse">\
<value>0</value></prop></item>
<item oor:path="/org.openoffice.Office.Calc/Formula/Load"><prop oor:name="ODFRecalcMode" oor:op="fuse">\
<value>0</value></prop></item>
</oor:items>
"""


class RecalcUnavailable(SheetbuilderError):
    """The spreadsheet program or library needed to recalculate is not installed."""


def soffice_path() -> str | None:
    """The LibreOffice executable, or None."""
    return shutil.which("soffice") or shutil.which("libreoffice")


def make_profile(folder: Path) -> Path:
    """A LibreOffice user profile that recalculates every formula on load."""
    user = folder / "user"
    user.mkdir(parents=True, exist_ok=True)
    (user / "registrymodifications.xcu").write_text(_RECALC_PROFILE, encoding="utf-8")
    return folder


def libreoffice_convert(paths: list[Path], outdir: Path, target: str = "xlsx", timeout: int = 1800) -> list[Path]:
    """Open each file in LibreOffice (recalculating on load) and save it as target into outdir.

    One soffice call converts all the files, to spread its start-up.

    Args:
        paths: the workbooks to recalculate.
        outdir: where the converted files go (same stem, new suffix).
        target: 'xlsx' (recalculated values) or 'pdf' (for renders).

    Returns:
        The converted files, in the order of paths.
    """
    exe = _program(soffice_path(), "LibreOffice (soffice)")
    outs = _outputs(paths, outdir, target)
    with tempfile.TemporaryDirectory(prefix="sb-lo-") as tmp:
        profile = make_profile(Path(tmp))
        filt = 'xlsx:Calc MS Excel 2007 XML' if target == "xlsx" else "pdf:calc_pdf_Export"
        cmd = [exe, f"-env:UserInstallation=file://{profile}", "--headless", "--norestore", "--nologo",
               "--convert-to", filt, "--outdir", str(outdir), *[str(p) for p in paths]]
        env = {**os.environ, "HOME": tmp}
        done = subprocess.run(cmd, capture_output=True, text=True, timeout=timeout, env=env)
    missing = [o for o in outs if not o.exists()]
    if done.returncode != 0 or missing:
        raise SheetbuilderError(f"LibreOffice failed (exit {done.returncode}); missing {missing}: "
                                f"{done.stdout} {done.stderr}")
    return outs


def ssconvert_path() -> str | None:
    """Gnumeric's command-line converter (Debian package gnumeric), or None."""
    return shutil.which("ssconvert")


def gnumeric_convert(paths: list[Path], outdir: Path, timeout: int = 900) -> list[Path]:
    """Recalculate each workbook with Gnumeric (`ssconvert --recalc`) and save it as .xlsx into outdir.

    Args:
        paths: the workbooks to recalculate.
        outdir: where the recalculated copies go (same file name).

    Returns:
        The recalculated files, in the order of paths.
    """
    exe = _program(ssconvert_path(), "Gnumeric (ssconvert)")
    outs = _outputs(paths, outdir, "xlsx")
    with tempfile.TemporaryDirectory(prefix="sb-gnumeric-") as tmp:
        env = {**os.environ, "HOME": tmp}
        for src, out in zip(paths, outs):
            cmd = [exe, "--recalc", "--export-type=Gnumeric_Excel:xlsx2", str(src), str(out)]
            done = subprocess.run(cmd, capture_output=True, text=True, timeout=timeout, env=env)
            if done.returncode != 0 or not out.exists():
                raise SheetbuilderError(f"Gnumeric failed on {src} (exit {done.returncode}): {done.stdout} {done.stderr}")
    return outs


def _program(path: str | None, name: str) -> str:
    """The converter's executable, or RecalcUnavailable naming it."""
    if path is None:
        raise RecalcUnavailable(f"{name} is not installed")
    return path


def _outputs(paths: list[Path], outdir: Path, suffix: str) -> list[Path]:
    """Where each converted file goes (outdir / stem.suffix), made ready: outdir exists, no stale copy left.

    Refuses a conversion that would overwrite a source, and two sources with one stem (the
    second copy would silently replace the first).
    """
    outdir.mkdir(parents=True, exist_ok=True)
    outs = [outdir / (Path(p).stem + "." + suffix) for p in paths]
    if len(set(outs)) != len(outs):
        raise SheetbuilderError(f"two files to convert share a name, so their copies in {outdir} would collide: "
                                f"{[str(p) for p in paths]}")
    for src, out in zip(paths, outs):
        if out.exists() and out.resolve() == Path(src).resolve():
            raise SheetbuilderError(f"converting {src} into {outdir} would overwrite it; choose another folder")
        out.unlink(missing_ok=True)
    return outs


def formulas_values(path: Path) -> dict[tuple[str, str], Any]:
    """Recalculate path with the `formulas` library; {(sheet, 'A1'): value} for every formula cell."""
    try:
        import formulas
    except ImportError as exc:  # pragma: no cover - the test extra installs it
        raise RecalcUnavailable("the formulas library is not installed") from exc
    model = formulas.ExcelModel().loads(str(path)).finish()
    solution = model.calculate()
    out: dict[tuple[str, str], Any] = {}
    for key, value in solution.items():
        key = str(key)
        if "!" not in key or ":" in key.split("!")[1]:
            continue
        sheet, cell = key.rsplit("!", 1)
        sheet = sheet.strip("'").split("]", 1)[-1]
        raw = value.value[0, 0] if hasattr(value, "value") else value
        out[(sheet.upper(), cell.upper())] = _plain(raw)
    return out


def _plain(value: Any) -> Any:
    """A formulas-library result as a plain Python value ('' for empty)."""
    if hasattr(value, "item"):
        value = value.item()
    text = str(value)
    if text in ("empty", "None"):
        return ""
    if isinstance(value, (bool, int, float, str)):
        return value
    return text  # error values such as #VALUE!
