"""The identity of a triage queue in a shared grade store.

Rows in a store carry the queue they belong to. A team's PostgreSQL database (or a SQLite file named
with ``--store``) holds the queues of many teams, and many of them call their manifest ``night.csv``:
the manifest's file stem cannot tell them apart. A queue's identity is therefore a random id made once,
kept in a small JSON file beside the manifest (``<stem>.queue.json``; ``lensmass-queue.json`` in a folder
of images) and shared with the manifest: every grader who opens that manifest (on a shared disk, or a
copy made with its ``.queue.json``) grades the same queue; another team's ``night.csv`` gets its own id.

The default store, a SQLite file beside the manifest, belongs to that one manifest, so it needs no
identity file and none is written for it (the queue is the manifest's stem, as it always was).
"""

from __future__ import annotations

import json
import os
import re
import uuid
from pathlib import Path

from lensmass.core.errors import LensInputError

IDENTITY_FILE_SUFFIX = ".queue.json"
FOLDER_IDENTITY_FILE = "lensmass-queue.json"
_ID_PATTERN = re.compile(r"^[A-Za-z0-9._-]{1,120}$")


def identity_path_beside(source: str | Path) -> Path:
    """Where the identity of the queue of ``source`` (a manifest or a folder) is kept."""
    source = Path(source)
    if source.is_dir():
        return source / FOLDER_IDENTITY_FILE
    return source.with_name(source.stem + IDENTITY_FILE_SUFFIX)


def queue_label(source: str | Path) -> str:
    """The human name of a queue: the manifest's stem, or the folder's name."""
    source = Path(source)
    return source.name if source.is_dir() else source.stem


def read_queue_identity(source: str | Path) -> str | None:
    """The queue id kept beside ``source``, or None when there is none yet."""
    path = identity_path_beside(source)
    try:
        text = path.read_text(encoding="utf-8")
    except FileNotFoundError:
        return None
    except OSError as exc:
        raise LensInputError(f"The queue identity file '{path}' cannot be read ({exc.strerror}): "
                             "check its permissions.") from None
    try:
        queue_id = json.loads(text)["queue_id"]
    except (ValueError, KeyError, TypeError):
        queue_id = None
    if not isinstance(queue_id, str) or not _ID_PATTERN.match(queue_id):
        raise LensInputError(
            f"The queue identity file '{path}' is damaged (no valid queue_id): copy it again from a teammate "
            "who grades this manifest, or move it aside to start a new queue."
        )
    return queue_id


def queue_identity(source: str | Path) -> str:
    """The queue id of ``source``, made and kept beside it on first use.

    The id is the queue's label and 12 random hex digits (``night-3f9a1c2e7b40``). Two graders opening
    a new queue at the same moment get the same id: the file is created with a hard link, which fails
    if it exists, and the loser reads the winner's file.
    """
    found = read_queue_identity(source)
    if found is not None:
        return found
    path = identity_path_beside(source)
    label = re.sub(r"[^A-Za-z0-9._-]+", "_", queue_label(source)).strip("_")[:100] or "queue"
    queue_id = f"{label}-{uuid.uuid4().hex[:12]}"
    body = json.dumps({"queue_id": queue_id, "label": queue_label(source),
                       "about": "Identity of this triage queue in a shared lensmass grade store; "
                                "keep it beside the manifest and share it with the manifest."}, indent=1)
    tmp = path.with_name(f".{path.name}.{uuid.uuid4().hex[:8]}.part")
    try:
        tmp.write_text(body + "\n", encoding="utf-8")
        try:
            os.link(tmp, path)
        except FileExistsError:
            pass
    except OSError as exc:
        raise LensInputError(
            f"The queue identity file '{path}' cannot be written ({exc.strerror}): a shared store needs it "
            "beside the manifest, so put the manifest in a folder you may write to."
        ) from None
    finally:
        try:
            tmp.unlink()
        except OSError:
            pass
    return read_queue_identity(source) or queue_id
