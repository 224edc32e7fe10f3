"""Benchmark: the SQLite grade store with one connection per statement (issue 11).

The store opens and closes a connection for every statement, so that no POSIX lock is held while the
grader is in a dialog (see :class:`lensmass.io.store.SqliteStore`). This prints what that costs per
grade and per refresh of a 2000-candidate queue, against the baseline of the same statements on one
kept connection (the old design), alternating the two in one session (A/B) because this machine's
speed drifts. Target: a grade and a list refresh each well under 50 ms (a grader's key press).

    python benchmarks/bench_store.py [--grades 400] [--rounds 3]
"""

from __future__ import annotations

import argparse
import sqlite3
import tempfile
import time
from pathlib import Path

from lensmass.io.store import GRADE_COLUMNS, SqliteStore


def per_statement(folder: Path, n: int) -> tuple[float, float, float]:
    """(wall s per grade, wall s per history() read, CPU s per grade) with the store as shipped."""
    store = SqliteStore(folder / "a.sqlite", "bench", grader="ana")
    c0, t0 = time.process_time(), time.perf_counter()
    for i in range(n):
        store.add_grade(f"C{i % 2000:04d}", i % 4)
    t1, c1 = time.perf_counter(), time.process_time()
    r0 = time.perf_counter()
    for _ in range(20):
        store.history()
    r1 = time.perf_counter()
    return (t1 - t0) / n, (r1 - r0) / 20, (c1 - c0) / n


def kept_connection(folder: Path, n: int) -> tuple[float, float, float]:
    """The same inserts and reads on one connection kept open (the baseline)."""
    store = SqliteStore(folder / "b.sqlite", "bench", grader="ana")  # schema and WAL as shipped
    conn = sqlite3.connect(store.path, isolation_level=None)
    conn.execute("PRAGMA synchronous = NORMAL")
    sql = f"INSERT INTO lm_grades ({', '.join(GRADE_COLUMNS)}) VALUES ({', '.join('?' * len(GRADE_COLUMNS))})"
    c0, t0 = time.process_time(), time.perf_counter()
    for i in range(n):
        conn.execute(sql, store.grade_row(f"C{i % 2000:04d}", i % 4)).close()
    t1, c1 = time.perf_counter(), time.process_time()
    r0 = time.perf_counter()
    for _ in range(20):
        conn.execute("SELECT * FROM lm_grades WHERE queue = ? ORDER BY created_utc, row_id", ("bench",)).fetchall()
    r1 = time.perf_counter()
    conn.close()
    return (t1 - t0) / n, (r1 - r0) / 20, (c1 - c0) / n


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--grades", type=int, default=400)
    parser.add_argument("--rounds", type=int, default=3)
    args = parser.parse_args()
    ours, base = [], []
    for _ in range(args.rounds):
        with tempfile.TemporaryDirectory() as d:
            ours.append(per_statement(Path(d), args.grades))
            base.append(kept_connection(Path(d), args.grades))
    o, b = min(ours), min(base)
    print(f"grade:   {o[0] * 1e3:.2f} ms wall, {o[2] * 1e3:.2f} ms CPU per grade (one connection each); "
          f"baseline kept connection {b[0] * 1e3:.2f} ms wall, {b[2] * 1e3:.2f} ms CPU; ratio {o[0] / b[0]:.1f}")
    print(f"refresh: {o[1] * 1e3:.2f} ms per history() of {args.grades} rows; baseline {b[1] * 1e3:.2f} ms; "
          f"ratio {o[1] / b[1]:.2f}")
    print("target: both well under 50 ms (one key press)")


if __name__ == "__main__":
    main()
