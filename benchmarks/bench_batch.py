"""Benchmark: ``lensmass batch`` on 10^4 theta_E rows with errors (10^3 Monte Carlo draws each).

Target (issue 7): 10^4 rows on 2 workers in under 20 s. Prints the wall time and
rows per second on N workers, and the ratio against a single-worker run of the
same rows (the stated baseline; use --baseline-rows to time the single worker on
fewer rows and scale, since it takes a few minutes on the full set).

    python benchmarks/bench_batch.py [--rows 10000] [--workers 2] [--baseline-rows 1000]
"""

from __future__ import annotations

import argparse
import os
import resource
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np


def write_manifest(path: Path, n: int, seed: int = 11) -> None:
    rng = np.random.default_rng(seed)
    with open(path, "w") as fh:
        fh.write("id,theta_e_arcsec,theta_e_err,z_l,z_s\n")
        for i in range(n):
            zl = rng.uniform(0.1, 0.6)
            fh.write(f"B{i:05d},{rng.uniform(0.5, 4.0):.4f},{rng.uniform(0.02, 0.2):.4f},{zl:.4f},"
                     f"{zl + rng.uniform(0.3, 2.0):.4f}\n")


def timed_run(manifest: Path, out: Path, workers: int) -> tuple[float, float]:
    """(wall seconds, CPU seconds of the run and its workers)."""
    cmd = [sys.executable, "-m", "lensmass.cli", "batch", str(manifest), "--out", str(out), "--samples", "1000",
           "--workers", str(workers), "--no-progress"]
    before = resource.getrusage(resource.RUSAGE_CHILDREN)
    t0 = time.perf_counter()
    status = subprocess.run(cmd, stderr=subprocess.DEVNULL).returncode
    elapsed = time.perf_counter() - t0
    after = resource.getrusage(resource.RUSAGE_CHILDREN)
    if status not in (0, 3):
        raise SystemExit(f"batch failed with exit status {status}")
    return elapsed, (after.ru_utime + after.ru_stime) - (before.ru_utime + before.ru_stime)


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--rows", type=int, default=10_000)
    ap.add_argument("--workers", type=int, default=2)
    ap.add_argument("--baseline-rows", type=int, default=1000, help="rows for the single-worker baseline")
    args = ap.parse_args()
    with tempfile.TemporaryDirectory() as d:
        d = Path(d)
        write_manifest(d / "m.csv", args.rows)
        write_manifest(d / "b.csv", args.baseline_rows)
        load = os.getloadavg()[0]
        t_one, cpu_one = timed_run(d / "b.csv", d / "b.ecsv", 1)
        t_many, cpu_many = timed_run(d / "m.csv", d / "m.ecsv", args.workers)
    rate_one = args.baseline_rows / t_one
    rate_many = args.rows / t_many
    print(f"load average before the runs: {load:.2f} on {os.cpu_count()} cores (others' work slows the wall times)")
    print(f"single worker : {args.baseline_rows} rows in {t_one:.1f} s = {rate_one:.0f} rows/s (baseline); "
          f"{1e3 * cpu_one / args.baseline_rows:.2f} ms CPU per row")
    print(f"{args.workers} workers     : {args.rows} rows in {t_many:.1f} s = {rate_many:.0f} rows/s; "
          f"{cpu_many:.1f} s CPU in all")
    print(f"speed-up vs single worker: {rate_many / rate_one:.2f}x")
    print(f"target: {args.rows} rows under 20 s -> {'met' if t_many < 20 else 'NOT met'} ({t_many:.1f} s wall; "
          f"CPU / workers = {cpu_many / args.workers:.1f} s, the wall time on an idle machine)")

if __name__ == "__main__":
    main()
