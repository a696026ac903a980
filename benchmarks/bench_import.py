"""Benchmark: end-to-end import against pandas' own parsing of the same files.

Run:  python benchmarks/bench_import.py [--files 10] [--rows 100000] [--rounds 7]

Writes FILES capture CSVs of ROWS rows each (10 kHz; a few steps up and down with
a second-order response, noise and an effort channel) into a temporary folder,
then measures in the same run, on the same files:

* parse only: ``pandas.read_csv`` of every file (the floor of any CSV import);
* import: ``logbook.services.importing.import_batch`` into a fresh SQLite logbook
  (read, validate, analyse every step, store trace blob, original bytes, figures).

Both are timed in each of ROUNDS interleaved rounds (default 7), so that a burst of
load from other jobs on the machine hits both alike. Prints the median and best time
of each, rows per second, and their ratio by the medians (the target's figure: on
this shared machine one lucky round moves a best time by a third) and by the best
times. Target: the whole import at least half as fast as parsing alone (ratio >= 0.5).

With ``--memory-rows N`` (default 1,000,000) it also imports one N-row file in a
fresh child process and prints the peak resident memory the import added
(the process's VmHWM after the libraries are loaded, against it after the import)
beside the file's size. Target: under 4x the file's size.
"""

from __future__ import annotations

import argparse
import os
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
import pandas as pd

from logbook.ingest.metadata import RunFields
from logbook.services import catalog
from logbook.services.importing import ImportRequest, Outcome, import_batch
from logbook.store.config import resolve_url
from logbook.store.engine import Database
from logbook.store.migrate import init_database


def write_capture(path: Path, rows: int, seed: int) -> None:
    rng = np.random.default_rng(seed)
    t = np.arange(rows) / 10_000.0
    levels = np.array([0.0, 5.0, -2.0, 3.0, 0.0])
    edges = np.linspace(0, t[-1], len(levels) + 1)[:-1] + 0.05
    setpoint = levels[np.searchsorted(edges, t, side="right") - 1].astype(float)
    setpoint[t < edges[0]] = 0.0
    # Second-order response (zeta 0.5, wn 60 rad/s) to each setpoint change.
    zeta, wn = 0.5, 60.0
    wd = wn * np.sqrt(1 - zeta**2)
    feedback = np.zeros(rows)
    previous = 0.0
    for edge in edges:
        level = setpoint[np.searchsorted(t, edge)]
        dt = np.clip(t - edge, 0, None)
        unit = 1 - np.exp(-zeta * wn * dt) * (
            np.cos(wd * dt) + zeta / np.sqrt(1 - zeta**2) * np.sin(wd * dt)
        )
        feedback += (level - previous) * np.where(t >= edge, unit, 0.0)
        previous = level
    feedback += rng.normal(0, 0.005, rows)
    effort = np.clip(8.0 * (setpoint - feedback), -12, 12)
    frame = pd.DataFrame(
        {"t [s]": t, "setpoint [mm]": setpoint, "position [mm]": feedback, "effort [V]": effort}
    )
    with path.open("w") as fh:
        fh.write("# operator: bench\n# revision: A\n")
        frame.to_csv(fh, index=False, float_format="%.6g")


_MEMORY_CHILD = """
import gc, sys
from logbook.ingest.metadata import RunFields
from logbook.services import catalog
from logbook.services.importing import ImportRequest, Outcome, import_files
from logbook.store.config import resolve_url
from logbook.store.engine import Database
from logbook.store.migrate import init_database
# Loaded before the baseline, so the figure is the import's own memory:
import logbook.analysis, scipy.optimize, scipy.signal, pandas, pyarrow.parquet
capture, db_path = sys.argv[1], sys.argv[2]
database = Database(resolve_url(db_path))
init_database(database)
with database.session(write=True) as session:
    catalog.add_axis(session, "x-stage", position_unit="mm", feedback_kind="encoder")
    catalog.add_revision(session, "x-stage", "A")
    gains = catalog.GainParams(kp=8, ki=0, kd=0, loop_rate_hz=10_000)
    catalog.add_gain_set(session, gains, name="bench")
def high_water_kib():
    # VmHWM, not ru_maxrss: Linux carries ru_maxrss over from the parent through
    # fork and exec, so a child of a large parent would start with its peak.
    with open("/proc/self/status") as fh:
        return next(int(line.split()[1]) for line in fh if line.startswith("VmHWM:"))
gc.collect()
before = high_water_kib()
request = ImportRequest(axis="x-stage", gains="bench", run_fields=RunFields(revision="A"))
[result] = import_files(database, [capture], request)
assert result.outcome is Outcome.IMPORTED, result.message
print(before, high_water_kib())
"""


def measure_memory(root: Path, rows: int) -> None:
    """Peak memory added by importing one ``rows``-row file, in a fresh process."""
    capture = root / "big.csv"
    write_capture(capture, rows, seed=99)
    out = subprocess.run(
        [sys.executable, "-c", _MEMORY_CHILD, str(capture), str(root / "memory.db")],
        capture_output=True,
        text=True,
        check=True,
    ).stdout.split()
    before_kib, peak_kib = int(out[0]), int(out[1])
    size = capture.stat().st_size
    added = (peak_kib - before_kib) * 1024
    print(
        f"memory: {rows:,}-row file {size / 2**20:.1f} MiB; import added {added / 2**20:.1f} MiB "
        f"of peak RSS = {added / size:.2f}x the file "
        f"(target < 4x: {'met' if added < 4 * size else 'NOT met'})"
    )


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--files", type=int, default=10)
    parser.add_argument("--rows", type=int, default=100_000)
    parser.add_argument("--memory-rows", type=int, default=1_000_000)
    parser.add_argument("--rounds", type=int, default=7, help="interleaved rounds")
    args = parser.parse_args()

    with tempfile.TemporaryDirectory() as folder:
        root = Path(folder)
        captures = root / "captures"
        captures.mkdir()
        for i in range(args.files):
            write_capture(captures / f"capture_{i:03d}.csv", args.rows, seed=i)
        files = sorted(captures.glob("*.csv"))
        size_mb = sum(f.stat().st_size for f in files) / 1e6
        total_rows = args.files * args.rows

        parse_times, import_times = [], []
        for _ in range(args.rounds):  # interleaved: a burst of load hits both alike
            start = time.perf_counter()
            for f in files:
                pd.read_csv(f, comment="#")
            parse_times.append(time.perf_counter() - start)
            import_times.append(_timed_import(root, captures))

    print(f"files: {args.files} x {args.rows:,} rows ({size_mb:.1f} MB); {args.rounds} "
          f"interleaved rounds; load average {os.getloadavg()[0]:.1f}")
    print(f"{'step':<32}{'median s':>10}{'best s':>8}{'rows/s (median)':>17}{'vs parse':>10}")
    parse_s, seconds = statistics.median(parse_times), statistics.median(import_times)
    ratio = parse_s / seconds
    for label, times, vs in (("pandas.read_csv (parse only)", parse_times, 1.0),
                             ("logbook import (everything)", import_times, ratio)):
        median = statistics.median(times)
        print(f"{label:<32}{median:>10.3f}{min(times):>8.3f}{total_rows / median:>17,.0f}"
              f"{vs:>10.2f}")
    verdict = "met" if ratio >= 0.5 else "NOT met"
    print(f"import speed / parse speed: {ratio:.2f} by the medians, "
          f"{min(parse_times) / min(import_times):.2f} by the best times "
          f"(target >= 0.50 by the medians: {verdict})")
    if args.memory_rows:
        with tempfile.TemporaryDirectory() as folder:
            measure_memory(Path(folder), args.memory_rows)


def _timed_import(root: Path, captures: Path) -> float:
    """Seconds to import every capture into a fresh logbook."""
    for old in root.glob("bench.db*"):
        old.unlink()
    database = Database(resolve_url(str(root / "bench.db")))
    init_database(database)
    with database.session(write=True) as session:
        catalog.add_axis(session, "x-stage", position_unit="mm", feedback_kind="encoder")
        catalog.add_revision(session, "x-stage", "A")
        catalog.add_gain_set(
            session, catalog.GainParams(kp=8, ki=0, kd=0, loop_rate_hz=10_000), name="bench"
        )
    request = ImportRequest(axis="x-stage", gains="bench", run_fields=RunFields(revision="A"))
    jobs = [(path, request) for path in sorted(captures.glob("*.csv"))]
    start = time.perf_counter()
    results = import_batch(database, jobs)
    seconds = time.perf_counter() - start
    database.dispose()
    bad = [r.message for r in results if r.outcome is not Outcome.IMPORTED]
    if bad:
        raise SystemExit(f"import failed: {bad[0]}")
    return seconds


if __name__ == "__main__":
    main()
