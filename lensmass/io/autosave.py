"""Autosaves: ordinary session files with an extra ``"autosave"`` block (writer's process id,
host and the session file they belong to), kept in :func:`autosave_dir`; the ones whose writer is
no longer running are offered for recovery by :func:`list_recoverable`.
"""

from __future__ import annotations

import json
import os
import re
import socket
import uuid
from dataclasses import dataclass
from datetime import datetime, timezone
from pathlib import Path

from lensmass.core.errors import LensInputError
from lensmass.io.session import AUTOSAVE_SUFFIX, DATA_DIR_ENV, Session, _read_json, session_json


@dataclass(frozen=True)
class RecoverableSession:
    """An autosave left behind by a run that ended without closing cleanly."""

    key: str
    path: Path
    saved_at: datetime
    image_name: str | None
    origin: str | None
    """The session file it belongs to (None for a never-saved session)."""


def autosave_dir() -> Path:
    """Folder of autosaves: ``$LENSMASS_DATA_DIR/autosave`` or the user data folder's."""
    base = os.environ.get(DATA_DIR_ENV)
    if not base:
        import platformdirs

        base = platformdirs.user_data_dir("lensmass", appauthor=False)
    return Path(base) / "autosave"


def new_autosave_key() -> str:
    """A fresh key for one window's autosave (unique across processes)."""
    return f"{datetime.now(timezone.utc):%Y%m%dT%H%M%S}-{os.getpid()}-{uuid.uuid4().hex[:8]}"


def _autosave_path(key: str) -> Path:
    if not isinstance(key, str) or not re.fullmatch(r"[A-Za-z0-9_.-]{1,120}", key) or key.startswith("."):
        raise LensInputError(f"'{key}' is not a valid autosave key: use letters, digits, '-', '_' or '.'.")
    return autosave_dir() / f"{key}{AUTOSAVE_SUFFIX}"


def write_autosave(session: Session, key: str, origin: str | os.PathLike | None = None) -> Path:
    """Atomically write the autosave ``key`` (image path stored absolute); returns its path."""
    from lensmass.io.atomic import write_text_atomic

    target = _autosave_path(key)
    block = {"autosave": {"pid": os.getpid(), "host": socket.gethostname(),
                          "origin": None if origin is None else str(Path(origin).absolute())}}
    text = session_json(session, None, extra=block)
    try:
        target.parent.mkdir(parents=True, exist_ok=True)  # our own data folder: made on first use
        write_text_atomic(target, text)
    except OSError as exc:
        raise LensInputError(f"Could not write the autosave in '{target.parent}' ({exc.strerror or exc}); "
                             f"set {DATA_DIR_ENV} to a writable folder.") from None
    return target


def _pid_alive(pid: int) -> bool:
    if pid == os.getpid():
        return True
    if os.name != "posix":
        return False  # cannot tell cheaply: offer it; the user can decline
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:
        return True
    except OSError:
        return False
    return True


def list_recoverable(include_running: bool = False) -> list[RecoverableSession]:
    """Autosaves whose writer is no longer running (a crash), newest first.

    A window discards its autosave when it closes cleanly, so what is left belongs
    to a run that crashed or was killed. Unreadable autosaves are skipped. With ``include_running`` the autosaves of
    live windows (this process included) are listed too.
    """
    folder = autosave_dir()
    if not folder.is_dir():
        return []
    try:
        candidates = sorted(folder.glob(f"*{AUTOSAVE_SUFFIX}"))
    except OSError:  # unreadable folder: nothing can be offered
        return []
    found = []
    for path in candidates:
        try:
            data = json.loads(path.read_text(encoding="utf-8"))
            block = data.get("autosave") or {}
            image = (data.get("image") or {}).get("absolute_path") or (data.get("image") or {}).get("path")
            saved = datetime.fromisoformat(data.get("saved_at"))
            if saved.tzinfo is None:
                saved = saved.replace(tzinfo=timezone.utc)
            mtime = path.stat().st_mtime
        except (OSError, ValueError, TypeError, AttributeError):
            continue
        pid, host = block.get("pid"), block.get("host")
        if not include_running and isinstance(pid, int) and host == socket.gethostname() and _pid_alive(pid):
            continue
        found.append((saved, mtime, RecoverableSession(
            key=path.name[: -len(AUTOSAVE_SUFFIX)],
            path=path,
            saved_at=saved,
            image_name=Path(image).name if isinstance(image, str) and image else None,
            origin=block.get("origin"),
        )))
    found.sort(key=lambda item: item[:2], reverse=True)
    return [item[2] for item in found]


def load_autosave(key: str) -> Session:
    """The session stored in autosave ``key`` (the file is left in place)."""
    path = _autosave_path(key)
    data = _read_json(path, "Autosave")
    return Session.from_dict(data, path.parent, source=f"Autosave '{key}'")


def discard_autosave(key: str) -> None:
    """Delete autosave ``key`` (no error if it is already gone)."""
    path = _autosave_path(key)
    try:
        path.unlink()
    except FileNotFoundError:
        pass
    except OSError as exc:
        raise LensInputError(f"Could not delete the autosave '{path}' ({exc.strerror or exc}): remove it by hand.") from None
