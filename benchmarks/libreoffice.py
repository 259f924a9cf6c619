"""LibreOffice for the benchmark: timed conversions (recalculating on load) and the UNO timings.

The UNO part runs benchmarks/lo_uno.py with the system python3, where Debian's python3-uno
puts the bridge; the two processes exchange JSON files.
"""
from __future__ import annotations

import json
import subprocess
import tempfile
import time
from pathlib import Path

SYSTEM_PYTHON = "/usr/bin/python3"
UNO_SCRIPT = Path(__file__).resolve().parent / "lo_uno.py"


def lo_convert_seconds(path: Path, outdir: Path) -> float:
    """Seconds for soffice to open path (recalculating every formula on load) and save it as .xlsx."""
    from tools.recalc import libreoffice_convert
    t = time.perf_counter()
    libreoffice_convert([path], outdir)
    return time.perf_counter() - t


def uno_available() -> bool:
    """Whether the system python3 imports the UNO bridge."""
    try:
        done = subprocess.run([SYSTEM_PYTHON, "-c", "import uno"], capture_output=True, timeout=60)
    except (OSError, subprocess.TimeoutExpired):
        return False
    return done.returncode == 0


def uno_times(jobs: list[dict], timeout: int = 7200) -> dict:
    """Run lo_uno.py on jobs ({"path", "label", "edit"}); {label: {load_s, calc_s, edit_s, save_s}}."""
    with tempfile.TemporaryDirectory(prefix="sb-uno-jobs-") as tmp:
        spec = Path(tmp) / "jobs.json"
        spec.write_text(json.dumps(jobs), encoding="utf-8")
        done = subprocess.run([SYSTEM_PYTHON, str(UNO_SCRIPT), str(spec)], capture_output=True, text=True,
                              timeout=timeout)
    if done.returncode:
        raise SystemExit(f"the UNO timings failed:\n{done.stderr}")
    return json.loads(done.stdout.strip().splitlines()[-1])
