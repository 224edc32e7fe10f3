"""No grade is lost when the process that writes also opens and closes the store's file.

SQLite's locks are POSIX advisory locks, owned by the process: any ``open()`` + ``close()`` of the database
file in the same process drops them. Source: SQLite documentation, "How To Corrupt An SQLite Database File",
section 2.2 (POSIX advisory locks cancelled by a separate close()), and section 1.3 / "Write-Ahead Logging"
(the last connection to close deletes the -wal and -shm files). The sequence below is the one that lost
grades in the window: a write; the same process opens and closes the file (as a file dialog does); an outside
process connects and disconnects; the first store writes again; an outside reader must see that write.

Also: ``PRAGMA journal_mode = WAL`` on a brand-new file returns SQLITE_BUSY at once, without waiting for the
busy timeout (SQLite documentation of ``sqlite3_busy_timeout``: the handler is not invoked for every lock,
common practice to retry); eight processes opening one new store at once must all succeed.
"""

from __future__ import annotations

import multiprocessing
import os
import socket
import subprocess
import sys
from pathlib import Path

import pytest

from lensmass.io.store import SqliteStore, open_store

_COUNT = ("import sqlite3, sys; c = sqlite3.connect(sys.argv[1]); "
          "print(c.execute('SELECT COUNT(*) FROM lm_grades').fetchone()[0]); c.close()")


def outside_count(db: Path) -> int:
    """Rows seen by another process that connects, reads and disconnects (the teammate, a script)."""
    out = subprocess.run([sys.executable, "-c", _COUNT, str(db)], capture_output=True, text=True, check=True)
    return int(out.stdout)


def open_and_close_in_this_process(db: Path) -> None:
    """What a file dialog does to the files it lists: open, read a little, close."""
    fd = os.open(db, os.O_RDONLY)
    os.read(fd, 100)
    os.close(fd)


def _unreachable_url() -> str:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        port = s.getsockname()[1]  # nothing listens here once the socket is closed
    return f"postgresql://nobody@127.0.0.1:{port}/none"


def store_and_file(tmp_path: Path, which: str):
    """(store, SQLite file its writes go to): the SQLite store, or the spool of an offline PostgreSQL store."""
    manifest = tmp_path / "night.csv"
    manifest.write_text("id\nA\nB\n")
    if which == "sqlite":
        store = open_store(None, manifest, grader="ana")
        return store, store.path
    pytest.importorskip("psycopg")
    store = open_store(_unreachable_url(), manifest, grader="ana")
    return store, store.spool_path


@pytest.mark.parametrize("which", ["sqlite", "postgresql spool"])
def test_a_grade_after_an_open_close_and_an_outside_reader_is_seen_outside(tmp_path, which):
    store, db = store_and_file(tmp_path, which)
    store.add_grade("A", 1)
    assert outside_count(db) == 1
    open_and_close_in_this_process(db)
    assert outside_count(db) == 1  # the outside process connects and disconnects
    store.add_grade("B", 2)
    assert outside_count(db) == 2, f"{which}: the second grade went to a deleted write-ahead log"
    # and after more rounds of the same, nothing is lost either
    for i in range(5):
        open_and_close_in_this_process(db)
        outside_count(db)
        store.add_grade("A", i % 4)
    assert outside_count(db) == 7
    store.close()


def _open_new_stores(folder: str, rounds: int, barrier, errors) -> None:
    from lensmass.core.errors import LensInputError

    for i in range(rounds):
        barrier.wait()
        try:
            store = SqliteStore(Path(folder) / f"new-{i}.grades.sqlite", "q", grader=f"g{os.getpid()}")
            store.add_grade("A", 1)
            store.close()
        except LensInputError as exc:
            errors.put(f"round {i}: {exc}")


def test_eight_processes_opening_one_new_store_at_once_all_succeed(tmp_path):
    ctx = multiprocessing.get_context("spawn")
    rounds, n = 25, 8
    barrier, errors = ctx.Barrier(n), ctx.Queue()
    procs = [ctx.Process(target=_open_new_stores, args=(str(tmp_path), rounds, barrier, errors)) for _ in range(n)]
    for p in procs:
        p.start()
    for p in procs:
        p.join(240)
    assert all(p.exitcode == 0 for p in procs)
    found = []
    while not errors.empty():
        found.append(errors.get())
    assert found == []
    for i in range(rounds):
        assert outside_count(tmp_path / f"new-{i}.grades.sqlite") == n
