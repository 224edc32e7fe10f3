"""Opening a queue's grade store: SQLite beside the manifest, a SQLite file, or a PostgreSQL server.

The one place that knows both kinds of store, so :mod:`lensmass.io.store` and
:mod:`lensmass.io.store_postgres` need not import each other's choice.
"""

from __future__ import annotations

from pathlib import Path

from lensmass.core.errors import LensInputError
from lensmass.io.store import GradeStore, SqliteStore, spool_path_beside, store_path_beside


def open_store(spec: str | None, source: str | Path, *, queue: str | None = None,
               grader: str | None = None) -> GradeStore:
    """Open the store of a queue.

    ``spec`` None: SQLite beside the manifest; ``postgresql://...``: that server;
    anything else: a path of a SQLite file. ``source`` is the manifest or folder
    (it locates the local files and the queue's identity).

    The queue's rows are told apart from other queues' by ``queue`` if given; else, in a
    shared store (PostgreSQL or a named SQLite file), by the identity kept beside the
    manifest (:mod:`lensmass.io.queue_identity`, made on first use), and in the default
    store beside the manifest (one manifest's own file) by the manifest's stem.
    """
    from lensmass.io.queue_identity import queue_identity, queue_label

    source = Path(source)
    if spec is None or str(spec).strip() == "":
        return SqliteStore(store_path_beside(source), queue or queue_label(source), grader)
    text = str(spec).strip()
    if "://" in text and not text.startswith(("postgresql://", "postgres://")):
        raise LensInputError(
            f"Unknown store '{text}': give a SQLite file path or a postgresql://user@host:port/db URL."
        )
    queue = queue or queue_identity(source)
    if text.startswith(("postgresql://", "postgres://")):
        from lensmass.io.store_postgres import PostgresStore

        return PostgresStore(text, queue, grader, spool_path=spool_path_beside(source))
    return SqliteStore(Path(text).expanduser(), queue, grader)
