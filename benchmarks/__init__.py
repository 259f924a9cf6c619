"""Developer tools outside the library: the benchmark and the readers' fuzz soak.

    python -m benchmarks.bench    (./tasks.sh bench)
    python -m benchmarks.soak     (./tasks.sh soak)

The package sheetbuilder never imports from here.
"""
