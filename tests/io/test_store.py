"""Grade store: the same tests against SQLite and a real PostgreSQL server on loopback."""

import math
import multiprocessing
import uuid

import pytest

from lensmass.core.errors import LensInputError
from lensmass.io.store import (
    GRADE_SCALE,
    SqliteStore,
    consensus_of,
    disputed,
    export_consensus,
    export_measurements,
    open_store,
)


@pytest.fixture(params=["sqlite", "postgresql"])
def store_spec(request, tmp_path):
    """(spec for open_store, manifest path): a fresh queue name per test keeps tests apart."""
    manifest = tmp_path / f"queue-{uuid.uuid4().hex[:8]}.csv"
    manifest.write_text("id\nA\n")
    if request.param == "sqlite":
        return None, manifest
    return request.getfixturevalue("postgres_url"), manifest


def _grade_many(spec, manifest, grader, n, barrier):
    store = open_store(spec, manifest, grader=grader)
    barrier.wait()
    for i in range(n):
        receipt = store.add_grade(f"cand-{i % 7}", i % 4, note=f"{grader} pass {i}")
        assert receipt.saved
    store.close()


def test_two_processes_grading_at_once_lose_no_row(store_spec):
    spec, manifest = store_spec
    open_store(spec, manifest).close()  # create the schema first
    ctx = multiprocessing.get_context("spawn")  # no fork of a process that may hold Qt threads
    barrier = ctx.Barrier(2)
    n = 60
    procs = [ctx.Process(target=_grade_many, args=(spec, manifest, g, n, barrier)) for g in ("ana", "ben")]
    for p in procs:
        p.start()
    for p in procs:
        p.join(120)
        assert p.exitcode == 0
    with open_store(spec, manifest) as store:
        rows = store.history()
        assert len(rows) == 2 * n
        assert len({r["uid"] for r in rows}) == 2 * n
        for g in ("ana", "ben"):
            assert sorted(r["note"] for r in rows if r["grader"] == g) == sorted(f"{g} pass {i}" for i in range(n))


def test_history_is_kept_and_the_latest_grade_counts(store_spec):
    spec, manifest = store_spec
    with open_store(spec, manifest, grader="ana") as store:
        store.add_grade("J0101", 1, note="faint arc")
        store.add_grade("J0101", 3, flagged=True, note="counter-image found")
        hist = store.history("J0101")
        assert [r["grade"] for r in hist] == [1, 3]
        assert hist[0]["note"] == "faint arc" and hist[1]["flagged"] is True
        cons = store.consensus()
        assert cons[0]["mean_grade"] == 3 and cons[0]["n_graders"] == 1 and cons[0]["flagged_by"] == ["ana"]


def test_consensus_on_a_crafted_set(store_spec):
    spec, manifest = store_spec
    with open_store(spec, manifest) as store:
        # crafted: K1 graded 3, 3, 0 -> mean 2, population sd sqrt(2), range 3 (disputed);
        # K2 graded 2 then 1 by ana (latest 1) and 2 by ben -> mean 1.5, sd 0.5, not disputed.
        store.add_grade("K1", 3, grader="ana")
        store.add_grade("K1", 3, grader="ben")
        store.add_grade("K1", 0, grader="cy")
        store.add_grade("K2", 2, grader="ana")
        store.add_grade("K2", 2, grader="ben")
        store.add_grade("K2", 1, grader="ana")
        store.add_grade("K3", None, flagged=True, note="saturated", grader="cy")
        cons = {c["candidate"]: c for c in store.consensus()}
    assert cons["K1"]["mean_grade"] == pytest.approx(2.0)
    assert cons["K1"]["spread"] == pytest.approx(math.sqrt(2.0))  # population sd of (3, 3, 0)
    assert cons["K1"]["n_graders"] == 3 and cons["K1"]["disputed"]
    assert cons["K2"]["mean_grade"] == pytest.approx(1.5) and cons["K2"]["spread"] == pytest.approx(0.5)
    assert cons["K2"]["grades"] == {"ana": 1, "ben": 2} and not cons["K2"]["disputed"]
    assert cons["K3"]["n_graders"] == 0 and cons["K3"]["flagged_by"] == ["cy"]
    assert [c["candidate"] for c in disputed(list(cons.values()))] == ["K1"]


def test_measurements_and_exports(store_spec, tmp_path):
    spec, manifest = store_spec
    from astropy.table import Table

    from lensmass.core.estimate import estimate

    result = estimate(1.3, 0.25, 0.9, cosmology="Planck18")
    with open_store(spec, manifest, grader="ana") as store:
        store.add_grade("M1", 2)
        store.add_measurement("M1", result)
        got = store.measurements("M1")
        assert got[0]["result"]["mass_einstein_msun"] == pytest.approx(result["mass_einstein_msun"])
        assert export_consensus(store, tmp_path / "c.ecsv") == 1
        assert export_measurements(store, tmp_path / "m.csv") == 1
    t = Table.read(tmp_path / "c.ecsv")
    assert t["candidate"][0] == "M1" and t["mean_grade"][0] == 2
    m = Table.read(tmp_path / "m.csv", format="ascii.csv")
    assert m["mass_einstein_msun"][0] == pytest.approx(result["mass_einstein_msun"], rel=1e-9)


def test_bad_grades_are_one_sentence(store_spec):
    spec, manifest = store_spec
    with open_store(spec, manifest) as store:
        for bad in (4, -1, 2.5, "high"):
            with pytest.raises(LensInputError, match="grade must be one of"):
                store.add_grade("X", bad)
        assert store.history() == []


def test_grade_scale_is_complete_and_named():
    assert sorted(GRADE_SCALE) == [0, 1, 2, 3]
    assert len({name for name, _ in GRADE_SCALE.values()}) == 4


def test_consensus_of_without_grades_is_empty():
    assert consensus_of([]) == []


def test_sqlite_store_lives_beside_the_manifest_in_wal_mode(tmp_path):
    manifest = tmp_path / "field.csv"
    manifest.write_text("id\nA\n")
    store = open_store(None, manifest)
    assert isinstance(store, SqliteStore) and store.path == tmp_path / "field.grades.sqlite"
    import sqlite3

    with sqlite3.connect(store.path) as conn:  # WAL is a property of the file, seen by any connection
        assert conn.execute("PRAGMA journal_mode").fetchone()[0] == "wal"
    store.close()


def test_broken_sqlite_file_is_one_sentence(tmp_path):
    manifest = tmp_path / "field.csv"
    (tmp_path / "field.grades.sqlite").write_bytes(b"this is not a database" * 100)
    with pytest.raises(LensInputError, match="not a readable SQLite file"):
        open_store(None, manifest)


def test_lost_postgres_connection_queues_then_sends(postgres_url, tmp_path):
    import psycopg

    manifest = tmp_path / "lost.csv"
    store = open_store(postgres_url, manifest, grader="ana")
    assert store.add_grade("L1", 1).saved
    # Cut the connection from the server side, as a dropped network would.
    pid = store._connection().info.backend_pid
    with psycopg.connect(postgres_url, autocommit=True) as admin:
        admin.execute("SELECT pg_terminate_backend(%s)", (pid,))
    receipt = store.add_grade("L1", 2, note="while offline")
    assert receipt.status == "queued" and "will be sent" in receipt.message
    assert store.pending() == 1
    store.flush()
    assert store.pending() == 0
    assert [r["grade"] for r in store.history("L1")] == [1, 2]
    store.close()


def test_unreachable_server_keeps_grades_locally(tmp_path):
    pytest.importorskip("psycopg")
    import socket

    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        port = s.getsockname()[1]  # nothing listens here once the socket is closed
    manifest = tmp_path / "away.csv"
    store = open_store(f"postgresql://nobody@127.0.0.1:{port}/none", manifest, grader="ana")
    receipt = store.add_grade("Z9", 3)
    assert receipt.status == "queued" and str(manifest.with_name("away.grades-spool.sqlite")) in receipt.message
    assert store.pending() == 1
    with pytest.raises(LensInputError, match="cannot be reached"):
        store.history()
    store.close()
    # the spool is a plain SQLite store: the grade is really kept
    spool = SqliteStore(manifest.with_name("away.grades-spool.sqlite"), store.queue)
    assert [r["grade"] for r in spool.history()] == [3]
