"""Atomic file writes: a reader sees the old file or the new one, never half of either."""

from __future__ import annotations

import contextlib
import os
import tempfile
import time
from pathlib import Path
from typing import Iterator


@contextlib.contextmanager
def atomic_path(target: str | os.PathLike) -> Iterator[Path]:
    """Yield a temporary path beside ``target``; on success it replaces ``target``.

    The temporary file (``.NAME.XXXXXXXX.part``) lives in the same folder (so
    ``os.replace`` is atomic on POSIX and Windows) and is removed if the body raises.
    Temporaries left by writes to the same file that were killed midway are removed
    here too (:func:`remove_stale_parts`).

    Examples
    --------
    >>> import tempfile, pathlib
    >>> out = pathlib.Path(tempfile.mkdtemp()) / "a.txt"
    >>> with atomic_path(out) as tmp:
    ...     _ = tmp.write_text("hello")
    >>> out.read_text()
    'hello'
    """
    target = Path(target)
    target.parent.mkdir(parents=True, exist_ok=True)
    # Locked before it gets its .part name, so a .part without a lock is always an abandoned one.
    fd, name = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".new", dir=target.parent)
    tmp = Path(name[: -len(".new")] + PART_SUFFIX)
    try:
        _hold(fd)  # a live write: remove_stale_parts leaves it alone
        os.replace(name, tmp)
    except BaseException:
        os.close(fd)
        Path(name).unlink(missing_ok=True)
        raise
    try:
        remove_stale_parts(target)
        yield tmp
        with open(tmp, "rb+") as fh:
            fh.flush()
            os.fsync(fh.fileno())
        os.chmod(tmp, _final_mode(target))
        os.replace(tmp, target)
    finally:
        os.close(fd)
        if tmp.exists():
            tmp.unlink()


PART_SUFFIX = ".part"


def _hold(fd: int) -> None:
    """Lock the temporary for as long as this process writes it (BSD ``flock``, freed when the process dies)."""
    try:
        import fcntl
    except ImportError:  # Windows: stale temporaries are recognised by age alone
        return
    fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)


def _is_ours(name: str, target_name: str) -> bool:
    """``.TARGET.XXXXXXXX.part``: a temporary of :func:`atomic_path` for ``target_name``."""
    prefix = f".{target_name}."
    if not (name.startswith(prefix) and name.endswith(PART_SUFFIX)):
        return False
    middle = name[len(prefix):-len(PART_SUFFIX)]
    return bool(middle) and "." not in middle


def _unused(path: Path) -> bool:
    try:
        import fcntl
    except ImportError:  # no flock: only day-old temporaries are taken for abandoned
        try:
            return time.time() - path.stat().st_mtime > 24 * 3600
        except OSError:
            return False
    try:
        fd = os.open(path, os.O_RDONLY)
    except OSError:
        return False
    try:
        fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)  # held by a live writer: refused
        return True
    except OSError:
        return False
    finally:
        os.close(fd)


def remove_stale_parts(target: str | os.PathLike) -> int:
    """Remove the temporaries of interrupted writes to ``target`` (killed mid-write); returns how many.

    A temporary is stale when no process holds its lock (the writer died and the kernel freed the
    lock); a concurrent write to the same file holds its lock and keeps its temporary.
    """
    target = Path(target)
    removed = 0
    try:
        names = os.listdir(target.parent)
    except OSError:
        return 0
    for name in names:
        if _is_ours(name, target.name):
            path = target.parent / name
            if _unused(path):
                try:
                    path.unlink()
                    removed += 1
                except OSError:
                    pass
    return removed


def _final_mode(target: Path) -> int:
    """Keep the mode of a file being replaced; a new file gets 0666 less the umask.

    (mkstemp creates 0600 files, which would silently make shared results private.)
    """
    try:
        return target.stat().st_mode & 0o7777
    except FileNotFoundError:
        umask = os.umask(0)
        os.umask(umask)
        return 0o666 & ~umask


def write_text_atomic(target: str | os.PathLike, text: str, encoding: str = "utf-8") -> None:
    """Write ``text`` to ``target`` atomically."""
    with atomic_path(target) as tmp:
        tmp.write_text(text, encoding=encoding)


def write_bytes_atomic(target: str | os.PathLike, data: bytes) -> None:
    """Write ``data`` to ``target`` atomically."""
    with atomic_path(target) as tmp:
        tmp.write_bytes(data)
