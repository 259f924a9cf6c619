"""Benchmark (not a test): `sheetbuilder batch` against the same accounts built one by one.

    python -m benchmarks.batch [--accounts 50] [--jobs N] [--size demo|N] [--keep DIR]

Writes --accounts account folders (copies of demo_inputs, or synthetic accounts of N ad rows
from benchmarks/accounts.py, each with its own seed), then:

- single builds: every account built one after the other by `pipeline.build` in one warm
  interpreter (imports paid once), the sum of their build times;
- the batch: `python -m sheetbuilder batch ACCOUNTS -o OUT --jobs J` in a fresh interpreter, its
  wall time (interpreter start, workers' start, every build, the overview).

The figure the issue aims at: batch wall time / (sum of single builds / J) <= 1.2, and accounts
per minute. The machine may be shared: the load average before each run is printed beside it,
and the CPU time of the batch (its workers included) against the single builds' says what the
batch itself adds whatever the other load.
Figures are printed and written to bench_batch.json.
"""
from __future__ import annotations

import argparse
import json
import os
import resource
import shutil
import subprocess
import sys
import tempfile
import time
from pathlib import Path

from .accounts import make_account

ROOT = Path(__file__).resolve().parent.parent
AIM = 1.2  # the aim: batch <= 1.2 x (sum of single builds / jobs)


def make_accounts(folder: Path, count: int, size: str) -> None:
    """count account folders in folder: copies of demo_inputs (size 'demo') or synthetic accounts of size ad rows."""
    for i in range(count):
        account = folder / f"account-{i + 1:03d}"
        if size == "demo":
            shutil.copytree(ROOT / "demo_inputs", account)
        else:
            make_account(account, int(size), seed=20261205 + i)


def single_builds(accounts: Path, out: Path) -> tuple[list[float], float]:
    """Each account built alone by pipeline.build, one after the other in this (warm) interpreter: the wall
    time of each, and their CPU time in all."""
    from sheetbuilder.pipeline import build
    build(next(p for p in sorted(accounts.iterdir())), out / "warm-up.xlsx")  # imports and first-use costs
    times = []
    cpu = time.process_time()
    for folder in sorted(p for p in accounts.iterdir() if p.is_dir()):
        started = time.perf_counter()
        build(folder, out / f"{folder.name}.xlsx")
        times.append(time.perf_counter() - started)
    return times, time.process_time() - cpu


def _children_cpu() -> float:
    usage = resource.getrusage(resource.RUSAGE_CHILDREN)
    return usage.ru_utime + usage.ru_stime


def batch_seconds(accounts: Path, out: Path, jobs: int) -> tuple[float, float]:
    """Wall time of the batch command in a fresh interpreter, and the CPU time of it and its workers
    (the largest process's peak memory is read after it: resource.RUSAGE_CHILDREN's ru_maxrss)."""
    started, cpu = time.perf_counter(), _children_cpu()
    done = subprocess.run([sys.executable, "-m", "sheetbuilder", "batch", str(accounts), "-o", str(out),
                           "--jobs", str(jobs), "-q"], cwd=ROOT, capture_output=True, text=True)
    seconds = time.perf_counter() - started
    if done.returncode not in (0, 3):
        raise SystemExit(f"batch failed ({done.returncode}):\n{done.stderr}")
    return seconds, _children_cpu() - cpu


def measure(count: int, jobs: int, size: str, base: Path) -> dict:
    """The figures of one batch of count accounts of one size."""
    accounts = base / f"accounts-{size}"
    make_accounts(accounts, count, size)
    singles = base / f"single-{size}"
    singles.mkdir()
    load_single = os.getloadavg()[0]
    times, single_cpu = single_builds(accounts, singles)
    load_batch = os.getloadavg()[0]
    wall, batch_cpu = batch_seconds(accounts, base / f"batch-{size}", jobs)
    ideal = sum(times) / jobs
    return {"size": size, "accounts": count, "jobs": jobs, "single_sum_s": round(sum(times), 2),
            "single_mean_s": round(sum(times) / count, 3), "ideal_s": round(ideal, 2), "batch_s": round(wall, 2),
            "ratio": round(wall / ideal, 3), "accounts_per_minute": round(count / wall * 60, 1),
            "single_cpu_s": round(single_cpu, 2), "batch_cpu_s": round(batch_cpu, 2),
            "cpu_ratio": round(batch_cpu / single_cpu, 3),
            "largest_process_peak_mb": round(resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss / 1024),
            "load_before_single": round(load_single, 2), "load_before_batch": round(load_batch, 2)}


def main(argv: list[str] | None = None) -> int:
    """Run the batch benchmark and print one line per size."""
    p = argparse.ArgumentParser(prog="python -m benchmarks.batch", description=__doc__.split("\n\n")[0])
    p.add_argument("--accounts", type=int, default=50, help="accounts in the batch (default 50)")
    p.add_argument("--jobs", type=int, default=os.cpu_count() or 1, help="--jobs of the batch (default: cores)")
    p.add_argument("--size", default="demo", help="'demo' (copies of demo_inputs) or a number of ad rows, "
                   "comma-separated for several (e.g. demo,10000)")
    p.add_argument("--keep", type=Path, default=None, help="write the accounts and workbooks here and keep them")
    args = p.parse_args(argv)
    results = []
    with tempfile.TemporaryDirectory(prefix="sb-batch-") as tmp:
        base = args.keep or Path(tmp)
        base.mkdir(parents=True, exist_ok=True)
        for size in args.size.split(","):
            r = measure(args.accounts, args.jobs, size.strip(), base)
            results.append(r)
            verdict = "within" if r["ratio"] <= AIM else "above"
            print(f"{r['accounts']} accounts of size {r['size']}, --jobs {r['jobs']}: single builds "
                  f"{r['single_sum_s']} s in all ({r['single_mean_s']} s each), / jobs = {r['ideal_s']} s; batch "
                  f"{r['batch_s']} s: ratio {r['ratio']} ({verdict} the aim of {AIM}); "
                  f"{r['accounts_per_minute']} accounts per minute; CPU time {r['batch_cpu_s']} s against "
                  f"{r['single_cpu_s']} s (ratio {r['cpu_ratio']}); the largest process's peak memory "
                  f"{r['largest_process_peak_mb']} MB (load average {r['load_before_single']} "
                  f"before the single builds, {r['load_before_batch']} before the batch)", flush=True)
    (ROOT / "bench_batch.json").write_text(json.dumps({"cores": os.cpu_count(), "results": results}, indent=2))
    return 0


if __name__ == "__main__":
    sys.exit(main())
