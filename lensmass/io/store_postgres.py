"""The grade store on a PostgreSQL server, with a local spool for lost connections.

Writes that fail because the server cannot be reached are kept in a SQLite spool
beside the manifest (same rows, same ids) and the :class:`~lensmass.io.store.Receipt`
says so; every later call tries to send the spool first. Rows carry a unique id,
so a row is never stored twice even if a send is retried.
"""

from __future__ import annotations

from pathlib import Path
from urllib.parse import urlsplit

from lensmass.core.errors import LensInputError
from lensmass.io.store import GRADE_COLUMNS, MEASUREMENT_COLUMNS, GradeStore, Receipt, SqliteStore

_TABLES = {"lm_grades": GRADE_COLUMNS, "lm_measurements": MEASUREMENT_COLUMNS}


def _server_label(url: str) -> str:
    parts = urlsplit(url)
    host = parts.hostname or "localhost"
    return f"{host}:{parts.port or 5432}{parts.path or ''}"


class PostgresStore(GradeStore):
    """The store in a PostgreSQL database (psycopg 3), chosen by a ``postgresql://`` URL."""

    backend = "postgresql"
    placeholder = "%s"
    serial = "BIGSERIAL PRIMARY KEY"

    def __init__(self, url: str, queue: str, grader: str | None = None, *, spool_path: str | Path,
                 connect_timeout: float = 5.0):
        try:
            import psycopg  # noqa: F401
        except ImportError:
            raise LensInputError(
                "A PostgreSQL store needs the psycopg package: install it with pip install 'lensmass[postgres]'."
            ) from None
        super().__init__(queue, grader)
        self.url = url
        self.spool_path = Path(spool_path)
        self.connect_timeout = connect_timeout
        self._spool: SqliteStore | None = None
        self.offline_reason = ""
        try:
            self._connection()
        except LensInputError:
            raise
        except Exception as exc:  # offline: writes queue locally until the server answers
            self._conn = None
            self.offline_reason = str(exc).strip().splitlines()[0] if str(exc).strip() else type(exc).__name__

    def _connect(self):
        import psycopg

        try:
            conn = psycopg.connect(self.url, connect_timeout=max(1, int(self.connect_timeout)))
        except psycopg.OperationalError as exc:
            text = str(exc).strip().splitlines()[0] if str(exc).strip() else type(exc).__name__
            if "authentication" in text or ("database" in text and "does not exist" in text):
                raise LensInputError(
                    f"The PostgreSQL server at {_server_label(self.url)} refused the store ({text}): "
                    "check the user, password and database name in the store address (`store`)."
                ) from None
            raise
        self._create_schema(conn)
        self.offline_reason = ""
        return conn

    def _create_schema(self, conn) -> None:
        # two graders opening a new queue at once: the lock makes CREATE ... IF NOT EXISTS race-free
        conn.execute("SELECT pg_advisory_xact_lock(7204311)")
        super()._create_schema(conn)

    def _lost(self) -> None:
        conn, self._conn = self._conn, None
        if conn is not None:
            try:
                conn.close()
            except Exception:
                pass

    def _spool_store(self) -> SqliteStore:
        if self._spool is None:
            self._spool = SqliteStore(self.spool_path, self.queue, self.grader)
        return self._spool

    def _offline_errors(self):
        import psycopg

        return (psycopg.OperationalError, psycopg.InterfaceError)

    def _write(self, table: str, columns: tuple[str, ...], values: tuple) -> Receipt:
        try:
            self.flush()
            self._insert(table, columns, values)
            return Receipt("saved")
        except self._offline_errors() as exc:
            if self._conn is not None and not self._conn.closed and not getattr(self._conn, "broken", False):
                try:
                    self._conn.rollback()
                except Exception:
                    pass
            self._lost()
            self._spool_store()._insert(table, columns, values)
            why = str(exc).strip().splitlines()[0] if str(exc).strip() else "no answer"
            if getattr(exc, "sqlstate", None) == "53100":  # disk_full (PostgreSQL error codes, class 53)
                return Receipt(
                    "queued",
                    f"The PostgreSQL server at {_server_label(self.url)} has no disk space left ({why}); the grades "
                    f"it holds are safe, and this entry is kept in {self.spool_path} and will be sent when there "
                    "is room again.",
                )
            return Receipt(
                "queued",
                f"The PostgreSQL server at {_server_label(self.url)} cannot be reached ({why}); the entry is kept "
                f"in {self.spool_path} and will be sent when the connection returns.",
            )

    def pending(self) -> int:
        """Rows waiting in the local spool."""
        if self._spool is None and not self.spool_path.exists():
            return 0
        spool = self._spool_store()
        return sum(spool._rows(f"SELECT COUNT(*) FROM {t} WHERE queue = ?", [self.queue])[0][0] for t in _TABLES)

    def flush(self) -> int:
        """Send queued rows to the server; returns how many were sent (raises if still offline)."""
        if self._spool is None and not self.spool_path.exists():
            return 0
        spool = self._spool_store()
        sent = 0
        for table, columns in _TABLES.items():
            rows = spool._rows(f"SELECT {', '.join(columns)} FROM {table} WHERE queue = ? ORDER BY row_id",
                               [self.queue])
            for values in rows:
                self._insert(table, columns, tuple(values))
                spool._rows(f"DELETE FROM {table} WHERE uid = ?", [values[0]])
                sent += 1
        return sent

    def _rows(self, sql, params=()):
        try:
            self.flush()
            return super()._rows(sql, params)
        except self._offline_errors():
            self._lost()
            waiting = self.pending()
            raise LensInputError(
                f"The PostgreSQL server at {_server_label(self.url)} cannot be reached, so grades cannot be read now "
                f"({waiting} of your entries wait in {self.spool_path} and will be sent); try again when it is back."
            ) from None

    def close(self) -> None:
        super().close()
        if self._spool is not None:
            self._spool.close()
            self._spool = None

    def describe(self) -> str:
        where = f"PostgreSQL {_server_label(self.url)}"
        if self._conn is None and self.offline_reason:
            where += f" (unreachable now: entries wait in {self.spool_path.name} until it answers)"
        return where
