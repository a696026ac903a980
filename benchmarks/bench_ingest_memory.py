"""Peak memory of reading a 1,000,000-row capture file, against the file's size.

Run:  python benchmarks/bench_ingest_memory.py [--rows 1000000] [--keep PATH]

Writes a CSV of ``--rows`` rows (time, setpoint, position, effort; the layout of a
bench capture with a metadata header), then reads it with
``logbook.ingest.read_table`` + ``trace_from_table`` in a fresh child process and
prints the file size, the peak memory and their ratio (target: below 4x). Peak
memory is measured two ways: the growth of the resident set (the child's VmHWM minus
the resident size after imports, which covers pandas' C buffers) and the
``tracemalloc`` peak (Python and numpy allocations only). For scale it also prints
the read time beside a bare ``pandas.read_csv`` of the same file in the same run.
"""

from __future__ import annotations

import argparse
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
import pandas as pd

from logbook.ingest import read_table, trace_from_table

CHILD = r"""
import resource, sys, tracemalloc
from logbook.ingest import read_table, trace_from_table

def rss_bytes():
    with open("/proc/self/statm") as fh:
        return int(fh.read().split()[1]) * resource.getpagesize()

before = rss_bytes()
tracemalloc.start()
trace = trace_from_table(read_table(sys.argv[1]))
traced_peak = tracemalloc.get_traced_memory()[1]
tracemalloc.stop()
# VmHWM, not ru_maxrss: Linux carries ru_maxrss over from the parent through fork
# and exec, so this child would start with the parent's peak.
with open("/proc/self/status") as fh:
    peak = next(int(line.split()[1]) for line in fh if line.startswith("VmHWM:")) * 1024
print(len(trace), max(peak - before, 0), traced_peak)
"""


def write_capture(path: Path, rows: int) -> None:
    """A step-response-like capture at 1 kHz with encoder-like quantisation."""
    rng = np.random.default_rng(7)
    t = np.arange(rows) * 1e-3
    setpoint = np.where((t % 2.0) < 1.0, 10.0, 0.0)
    position = np.round(setpoint * (1 - np.exp(-(t % 1.0) / 0.05)) * 200) / 200
    effort = np.clip(rng.normal(0, 0.05, rows) + (setpoint - position) * 2.4, -24, 24)
    with open(path, "w", encoding="utf-8") as fh:
        fh.write("# axis: bench-x\n# revision: B\n# operator: benchmark\n")
        fh.write("t [s],setpoint [mm],position [mm],effort [V]\n")
        np.savetxt(
            fh,
            np.column_stack([t, setpoint, position, effort]),
            fmt=["%.3f", "%.1f", "%.3f", "%.4f"],
            delimiter=",",
        )


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--rows", type=int, default=1_000_000)
    parser.add_argument("--keep", type=Path, help="write the CSV here and keep it")
    args = parser.parse_args()
    with tempfile.TemporaryDirectory() as tmp:
        path = args.keep or Path(tmp) / "capture.csv"
        write_capture(path, args.rows)
        size = path.stat().st_size
        out = subprocess.run(
            [sys.executable, "-c", CHILD, str(path)], check=True, capture_output=True, text=True
        ).stdout.split()
        ours = best_of(3, lambda: trace_from_table(read_table(path)))
        bare = best_of(3, lambda: pd.read_csv(path, comment="#"))
    rows, rss_growth, traced = (int(v) for v in out)
    mib = 1024 * 1024
    print(f"rows read           {rows:,}")
    print(f"file size           {size / mib:8.1f} MiB")
    print(f"peak RSS growth     {rss_growth / mib:8.1f} MiB  ratio {rss_growth / size:.2f}x")
    print(f"tracemalloc peak    {traced / mib:8.1f} MiB  ratio {traced / size:.2f}x")
    print("target: peak below 4x the file size")
    print(f"read_table + trace  {ours:8.3f} s     {rows / ours:,.0f} rows/s")
    print(f"pandas.read_csv     {bare:8.3f} s     {rows / bare:,.0f} rows/s")


def best_of(repeats: int, call) -> float:  # type: ignore[no-untyped-def]
    """Shortest wall time of ``repeats`` calls, in seconds."""
    times = []
    for _ in range(repeats):
        start = time.perf_counter()
        call()
        times.append(time.perf_counter() - start)
    return min(times)


if __name__ == "__main__":
    main()
