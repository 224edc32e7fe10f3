"""The grade store of a triage queue: every grade and measurement, from every grader, kept.

Each call of :meth:`GradeStore.add_grade` adds one row (grader, candidate, time,
grade, flag, note); nothing is ever updated or deleted, so the history of a
candidate is the list of its rows. A grader's current opinion is their latest row;
the consensus of a candidate is over the graders' current opinions.

Backends share one interface: SQLite (default; a file beside the manifest, WAL
mode so several graders on one machine or a shared disk can write at once) and
PostgreSQL (``postgresql://user@host:port/db``) for a team on several machines.
A PostgreSQL write that fails because the connection is lost goes to a local
spool (SQLite, beside the manifest) and is sent when the connection returns.

The grade scale (our own; it names what is seen, not a probability):

====  ================  ==========================================================
0     empty             no lensing feature: artefact, spiral arm, unrelated object
1     lone feature      one arc-like or blue feature, no counter-image seen
2     counter-imaged    an arc or image with a plausible counter-image
3     measurable        a ring, arcs or several images fit by one lens: measure it
====  ================  ==========================================================

Longer than 500 lines because the grade store's schema, its SQLite implementation and the
consensus and export helpers are being reworked together (locks, full disk, queue identity); split after.
"""

from __future__ import annotations

import json
import math
import os
import socket
import sqlite3
import time
import uuid
from contextlib import contextmanager
from dataclasses import dataclass
from datetime import datetime, timezone
from pathlib import Path
from typing import Any, Iterable

from lensmass.core.errors import LensInputError

#: grade -> (name, meaning). Documented in the ``lensmass gui`` help and the README.
GRADE_SCALE: dict[int, tuple[str, str]] = {
    0: ("empty", "no lensing feature: artefact, spiral arm or unrelated object"),
    1: ("lone feature", "one arc-like or blue feature, no counter-image seen"),
    2: ("counter-imaged", "an arc or image with a plausible counter-image"),
    3: ("measurable", "a ring, arcs or several images explained by one lens: measure it"),
}

#: Candidates whose graders' current grades span at least this many steps are "disputed".
DISAGREEMENT_STEPS = 2

GRADE_COLUMNS = ("uid", "queue", "candidate", "grader", "grade", "flagged", "note", "created_utc", "machine")
MEASUREMENT_COLUMNS = ("uid", "queue", "candidate", "grader", "created_utc", "result_json")
#: Key of the window's session dict inside a stored measurement's JSON (older rows lack it).
SESSION_STATE_KEY = "session_state"

_SCHEMA = """
CREATE TABLE IF NOT EXISTS lm_grades (
    row_id {serial},
    uid TEXT NOT NULL UNIQUE,
    queue TEXT NOT NULL,
    candidate TEXT NOT NULL,
    grader TEXT NOT NULL,
    grade INTEGER,
    flagged INTEGER NOT NULL DEFAULT 0,
    note TEXT NOT NULL DEFAULT '',
    created_utc TEXT NOT NULL,
    machine TEXT NOT NULL DEFAULT ''
);
CREATE INDEX IF NOT EXISTS lm_grades_by_candidate ON lm_grades (queue, candidate);
CREATE TABLE IF NOT EXISTS lm_measurements (
    row_id {serial},
    uid TEXT NOT NULL UNIQUE,
    queue TEXT NOT NULL,
    candidate TEXT NOT NULL,
    grader TEXT NOT NULL,
    created_utc TEXT NOT NULL,
    result_json TEXT NOT NULL
);
CREATE INDEX IF NOT EXISTS lm_measurements_by_candidate ON lm_measurements (queue, candidate);
"""


def grade_label(grade: int | None) -> str:
    """``"2 counter-imaged"`` for 2; ``"ungraded"`` for None."""
    if grade is None:
        return "ungraded"
    return f"{grade} {GRADE_SCALE[int(grade)][0]}"


def grade_scale_help() -> str:
    """The scale as lines of help text."""
    return "\n".join(f"  {g}  {name:<15} {meaning}" for g, (name, meaning) in GRADE_SCALE.items())


def now_utc() -> str:
    """ISO 8601 UTC time with microseconds (sorts as text)."""
    return datetime.now(timezone.utc).strftime("%Y-%m-%dT%H:%M:%S.%fZ")


def check_grade(grade) -> int | None:
    """A grade of the scale (or None); one clear sentence otherwise."""
    if grade is None:
        return None
    try:
        g = int(grade)
        if g != float(grade):
            raise ValueError
    except (TypeError, ValueError):
        g = -1
    if g not in GRADE_SCALE:
        raise LensInputError(
            f"A grade must be one of {', '.join(map(str, GRADE_SCALE))} (see the grade scale), got {grade!r}."
        )
    return g


@dataclass(frozen=True)
class Receipt:
    """What happened to a write: ``saved`` in the store, or ``queued`` locally (with why)."""

    status: str
    message: str = ""

    @property
    def saved(self) -> bool:
        return self.status == "saved"


class GradeStore:
    """Common SQL for both backends. Subclasses provide ``_connect`` and the dialect."""

    backend = "sql"
    placeholder = "?"
    serial = "INTEGER PRIMARY KEY AUTOINCREMENT"

    def __init__(self, queue: str, grader: str | None = None):
        self.queue = str(queue)
        self.grader = grader or default_grader()
        self._conn = None

    # --- dialect hooks ---------------------------------------------------------------
    def _connect(self):  # pragma: no cover - abstract
        raise NotImplementedError

    def _sql(self, text: str) -> str:
        return text if self.placeholder == "?" else text.replace("?", self.placeholder)

    def _create_schema(self, conn) -> None:
        for stmt in _SCHEMA.format(serial=self.serial).split(";"):
            if stmt.strip():
                conn.execute(stmt)
        self._commit(conn)

    def _commit(self, conn) -> None:
        conn.commit()

    def _rows(self, sql: str, params: Iterable = ()) -> list[tuple]:
        with self._transaction() as conn:
            cur = conn.execute(self._sql(sql), tuple(params))
            rows = cur.fetchall()
            cur.close()  # an open cursor would keep a closed SQLite connection alive (a "zombie")
            self._commit(conn)
        return rows

    def _insert(self, table: str, columns: tuple[str, ...], values: tuple) -> None:
        marks = ", ".join("?" for _ in columns)
        with self._transaction() as conn:
            conn.execute(self._sql(f"INSERT INTO {table} ({', '.join(columns)}) VALUES ({marks}) "
                                   "ON CONFLICT (uid) DO NOTHING"), values).close()
            self._commit(conn)

    @contextmanager
    def _transaction(self):
        """The connection one statement runs on (the kept connection; SQLite opens one per statement)."""
        yield self._connection()

    def _connection(self):
        if self._conn is None:
            self._conn = self._connect()
        return self._conn

    def close(self) -> None:
        if self._conn is not None:
            try:
                self._conn.close()
            finally:
                self._conn = None

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self.close()

    # --- writes ----------------------------------------------------------------------
    def grade_row(self, candidate: str, grade=None, *, flagged: bool = False, note: str = "",
                  grader: str | None = None) -> tuple:
        """The row :meth:`add_grade` writes (validated), in :data:`GRADE_COLUMNS` order."""
        if not str(candidate).strip():
            raise LensInputError("A grade needs a candidate id: choose a candidate in the queue first.")
        return (uuid.uuid4().hex, self.queue, str(candidate), grader or self.grader, check_grade(grade),
                int(bool(flagged)), str(note or ""), now_utc(), socket.gethostname())

    def add_grade(self, candidate: str, grade=None, *, flagged: bool = False, note: str = "",
                  grader: str | None = None) -> Receipt:
        """Record one grader's current grade, flag and note of a candidate (a new row)."""
        return self._write("lm_grades", GRADE_COLUMNS, self.grade_row(candidate, grade, flagged=flagged,
                                                                      note=note, grader=grader))

    def add_measurement(self, candidate: str, result: dict, *, grader: str | None = None,
                        session_state: dict | None = None) -> Receipt:
        """Store a measurement result (an ``estimate`` mapping) with the candidate.

        ``session_state`` (optional) is the measuring window's session dict (marks, redshifts,
        arc systems: what a session file holds), kept in the same row so the marks can be
        shown again; :meth:`measurements` returns it apart from the result.
        """
        from lensmass.io.jsonout import dumps

        payload = dict(result) if session_state is None else {**result, SESSION_STATE_KEY: session_state}
        values = (uuid.uuid4().hex, self.queue, str(candidate), grader or self.grader, now_utc(),
                  dumps(payload, indent=None))
        return self._write("lm_measurements", MEASUREMENT_COLUMNS, values)

    def _write(self, table: str, columns: tuple[str, ...], values: tuple) -> Receipt:
        self._insert(table, columns, values)
        return Receipt("saved")

    # --- reads -----------------------------------------------------------------------
    def _select(self, table: str, columns: tuple[str, ...], candidate: str | None) -> list[dict[str, Any]]:
        where, params = "WHERE queue = ?", [self.queue]
        if candidate is not None:
            where += " AND candidate = ?"
            params.append(str(candidate))
        rows = self._rows(f"SELECT {', '.join(columns)} FROM {table} {where} ORDER BY created_utc, row_id", params)
        return [dict(zip(columns, r)) for r in rows]

    def history(self, candidate: str | None = None) -> list[dict[str, Any]]:
        """Every grade row (of one candidate, or all), oldest first."""
        out = []
        for d in self._select("lm_grades", GRADE_COLUMNS, candidate):
            d["flagged"] = bool(d["flagged"])
            out.append(d)
        return out

    def current(self) -> dict[tuple[str, str], dict[str, Any]]:
        """Each (candidate, grader)'s latest row."""
        latest: dict[tuple[str, str], dict[str, Any]] = {}
        for row in self.history():
            latest[(row["candidate"], row["grader"])] = row
        return latest

    def consensus(self) -> list[dict[str, Any]]:
        """Per candidate: graders' current grades, mean, spread, count, flags (see :func:`consensus_of`)."""
        return consensus_of(self.current().values())

    def measurements(self, candidate: str | None = None) -> list[dict[str, Any]]:
        """Stored measurements, oldest first; ``result`` is the parsed mapping and ``session_state``
        the window's session dict stored with it (None for rows stored without one)."""
        out = []
        for d in self._select("lm_measurements", MEASUREMENT_COLUMNS, candidate):
            d["result"] = json.loads(d.pop("result_json"))
            state = d["result"].pop(SESSION_STATE_KEY, None)
            d["session_state"] = state if isinstance(state, dict) else None
            out.append(d)
        return out

    def describe(self) -> str:
        return self.backend


def consensus_of(current_rows: Iterable[dict[str, Any]]) -> list[dict[str, Any]]:
    """Consensus over graders' current rows.

    Per candidate: ``n_graders`` (graders with a grade), ``mean_grade``, ``spread``
    (population standard deviation of the grades), ``range`` (max - min),
    ``disputed`` (range >= :data:`DISAGREEMENT_STEPS`), ``flagged_by`` (graders who
    flagged it) and ``grades`` ({grader: grade}). Sorted by candidate id.
    """
    by_candidate: dict[str, dict[str, Any]] = {}
    for row in current_rows:
        entry = by_candidate.setdefault(row["candidate"], {"grades": {}, "flagged_by": [], "notes": {}})
        if row["grade"] is not None:
            entry["grades"][row["grader"]] = int(row["grade"])
        if row["flagged"]:
            entry["flagged_by"].append(row["grader"])
        if row["note"]:
            entry["notes"][row["grader"]] = row["note"]
    out = []
    for cand in sorted(by_candidate):
        e = by_candidate[cand]
        g = list(e["grades"].values())
        n = len(g)
        mean = sum(g) / n if n else math.nan
        spread = math.sqrt(sum((x - mean) ** 2 for x in g) / n) if n else math.nan
        rng = (max(g) - min(g)) if n else 0
        out.append({"candidate": cand, "n_graders": n, "mean_grade": mean, "spread": spread, "range": rng,
                    "disputed": n >= 2 and rng >= DISAGREEMENT_STEPS, "flagged_by": sorted(e["flagged_by"]),
                    "grades": dict(sorted(e["grades"].items())), "notes": e["notes"]})
    return out


def disputed(consensus: list[dict[str, Any]], min_range: int = DISAGREEMENT_STEPS) -> list[dict[str, Any]]:
    """The candidates whose graders disagree by at least ``min_range`` grade steps."""
    return [c for c in consensus if c["n_graders"] >= 2 and c["range"] >= min_range]


def default_grader() -> str:
    """The grader's name: $LENSMASS_GRADER, else the login name."""
    name = os.environ.get("LENSMASS_GRADER")
    if name:
        return name
    try:
        import getpass

        return getpass.getuser()
    except Exception:
        return "grader"


class SqliteStore(GradeStore):
    """The store in one SQLite file in WAL mode: one writer at a time, readers never blocked.

    **Each statement opens its own connection and closes it at once; no connection is kept between
    writes.** SQLite's locks on the file are POSIX advisory locks, which belong to the *process*, not
    to the connection: when anything else in the same process opens and closes the database file
    (a Qt file dialog listing the manifest's folder, a backup script, ``shutil.copy``), every lock the
    process held on it is silently dropped. A connection kept open across that would then look absent
    to the next outside reader, which, believing itself the last user, checkpoints and *deletes* the
    ``-wal`` and ``-shm`` files when it closes; the kept connection goes on writing to the deleted WAL
    and those grades are lost (SQLite documents this in "How To Corrupt An SQLite Database File",
    section 2.2, "Posix advisory locks canceled by a separate thread doing close()"). A connection
    opened per statement takes its locks afresh each time and holds none while the user is in a
    dialog, so nothing can drop them between writes; other graders' processes still read and write
    the same file at the same time (WAL: readers never wait, writers wait up to ``busy_timeout``).
    The price: the last connection to close checkpoints the log (two fsyncs), so a grade costs about
    30 ms instead of 0.5 ms on a kept connection (``benchmarks/bench_store.py``), far below a key press.

    Switching a brand-new file to WAL (``PRAGMA journal_mode = WAL``) does not honour the busy
    timeout, so when several processes create the same store at once it is retried until
    :attr:`open_timeout_s` has passed.
    """

    backend = "sqlite"
    #: How long a statement (or the switch to WAL of a new file) waits for other writers, in seconds.
    open_timeout_s = 60.0

    def __init__(self, path: str | Path, queue: str, grader: str | None = None):
        super().__init__(queue, grader)
        self.path = Path(path)
        with self._errors_as_sentences():
            self.path.parent.mkdir(parents=True, exist_ok=True)
            conn = self._connect()
            try:
                self._switch_to_wal(conn)
                self._create_schema(conn)
            finally:
                conn.close()

    def _connect(self):
        conn = sqlite3.connect(self.path, timeout=self.open_timeout_s, isolation_level=None)
        conn.execute(f"PRAGMA busy_timeout = {int(self.open_timeout_s * 1000)}")
        conn.execute("PRAGMA synchronous = NORMAL")
        return conn

    def _switch_to_wal(self, conn) -> None:
        deadline = time.monotonic() + self.open_timeout_s
        pause = 0.005
        while True:
            try:
                cur = conn.execute("PRAGMA journal_mode = WAL")
                mode = cur.fetchone()[0]
                cur.close()
                break
            except sqlite3.OperationalError as exc:  # "database is locked": the busy timeout is not applied
                if "locked" not in str(exc) and "busy" not in str(exc) or time.monotonic() > deadline:
                    raise
                time.sleep(pause)
                pause = min(0.1, pause * 2)
        if str(mode).lower() != "wal":
            raise LensInputError(
                f"The grade store '{self.path}' cannot use write-ahead logging (its disk refuses it): "
                "put the manifest on a local disk or use a PostgreSQL store."
            )

    @contextmanager
    def _transaction(self):
        with self._errors_as_sentences():
            conn = self._connect()
            try:
                yield conn
            finally:
                conn.close()

    @contextmanager
    def _errors_as_sentences(self):
        """SQLite and OS errors as one sentence each: corrupt, busy, or out of disk space."""
        try:
            yield
        except sqlite3.DatabaseError as exc:
            raise LensInputError(store_error_sentence(self.path, exc)) from None
        except OSError as exc:
            raise LensInputError(store_error_sentence(self.path, exc)) from None

    def _commit(self, conn) -> None:  # autocommit mode: each statement is its own transaction
        return None

    def close(self) -> None:  # nothing is kept open between statements
        return None

    def describe(self) -> str:
        return f"SQLite file {self.path}"


def store_error_sentence(path: Path, exc: BaseException) -> str:
    """What went wrong with a SQLite store, in one sentence with the way out."""
    import errno

    text = str(exc).strip() or type(exc).__name__
    lowered = text.lower()
    if "full" in lowered or getattr(exc, "errno", None) == errno.ENOSPC \
            or getattr(exc, "sqlite_errorname", "") == "SQLITE_FULL":
        return (f"The disk holding the grade store '{path}' is full, so the last entry was not written; the "
                "grades written before it are safe in the store: free some space and do it again.")
    if "locked" in lowered or "busy" in lowered:
        return (f"The grade store '{path}' stayed locked by another grader's process for over a minute "
                f"({text}); nothing was written: try again, or end the stuck process.")
    if isinstance(exc, OSError):
        return (f"The grade store '{path}' cannot be opened ({text}): check that its folder exists and "
                "that you may write there.")
    if "unable to open" in lowered or "readonly" in lowered or "read-only" in lowered:
        return (f"The grade store '{path}' cannot be opened for writing ({text}): check that its folder "
                "exists and that you may write there.")
    return (f"The grade store '{path}' is not a readable SQLite file ({text}): move it aside and reopen "
            "the queue to start a new one.")


def store_path_beside(source: str | Path) -> Path:
    """The default SQLite store of a manifest (``<stem>.grades.sqlite`` beside it) or folder."""
    source = Path(source)
    if source.is_dir():
        return source / "lensmass-grades.sqlite"
    return source.with_name(source.stem + ".grades.sqlite")


def spool_path_beside(source: str | Path) -> Path:
    """Where grades wait while a PostgreSQL server is out of reach."""
    source = Path(source)
    if source.is_dir():
        return source / "lensmass-grades-spool.sqlite"
    return source.with_name(source.stem + ".grades-spool.sqlite")


# --- exports ---------------------------------------------------------------------------


def _write_table(table, path: str | Path) -> None:
    from lensmass.io.atomic import atomic_path

    path = Path(path)
    fmt = {".ecsv": "ascii.ecsv", ".csv": "ascii.csv"}.get(path.suffix.lower())
    if fmt is None:
        raise LensInputError(f"Cannot export to '{path}': the file name must end in .ecsv or .csv.")
    from lensmass.io.spreadsheet import safe_table_text

    safe_table_text(table)  # grader names and notes may start with '=' (spreadsheet formulas)
    with atomic_path(path) as tmp:
        table.write(tmp, format=fmt, overwrite=True)


def export_consensus(store: GradeStore, path: str | Path) -> int:
    """Write the consensus table (one row per candidate) to ECSV or CSV; returns the row count."""
    from astropy.table import Table

    rows = store.consensus()
    table = Table(rows=[(c["candidate"], c["n_graders"], c["mean_grade"], c["spread"], c["range"],
                         c["disputed"], ";".join(c["flagged_by"]),
                         ";".join(f"{k}={v}" for k, v in c["grades"].items()),
                         " | ".join(f"{k}: {v}" for k, v in c["notes"].items())) for c in rows] or None,
                  names=("candidate", "n_graders", "mean_grade", "spread", "range", "disputed", "flagged_by",
                         "grades", "notes"),
                  dtype=(str, int, float, float, int, bool, str, str, str))
    table.meta["grade_scale"] = {g: f"{n}: {m}" for g, (n, m) in GRADE_SCALE.items()}
    table.meta["queue"] = store.queue
    table.meta["store"] = store.describe()
    _write_table(table, path)
    return len(rows)


def export_measurements(store: GradeStore, path: str | Path) -> int:
    """Write every stored measurement, one row each, with the estimate keys as columns."""
    from astropy.table import Table

    from lensmass.core.estimate import DERIVED_KEYS

    recs = store.measurements()
    names = ["candidate", "grader", "created_utc", "cosmology", *DERIVED_KEYS, "notes"]
    data = []
    for m in recs:
        r = m["result"]
        data.append([m["candidate"], m["grader"], m["created_utc"], str(r.get("cosmology", ""))]
                    + [_float(r.get(k)) for k in DERIVED_KEYS] + ["; ".join(r.get("notes") or [])])
    dtype = [str, str, str, str] + [float] * len(DERIVED_KEYS) + [str]
    table = Table(rows=data or None, names=names, dtype=dtype)
    if recs:
        table.meta["models"] = recs[-1]["result"].get("models", {})
    table.meta["queue"] = store.queue
    _write_table(table, path)
    return len(recs)


def _float(value) -> float:
    try:
        return float(value)
    except (TypeError, ValueError):
        return math.nan


def __getattr__(name: str):
    """``open_store`` lives in :mod:`lensmass.io.store_open` (it picks SQLite or PostgreSQL, so this
    module need not know the PostgreSQL one); it stays reachable from here."""
    if name == "open_store":
        from lensmass.io.store_open import open_store

        return open_store
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
