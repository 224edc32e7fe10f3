"""Atomic file writes: a reader sees the old file or the new one, never half of either."""

from __future__ import annotations

import contextlib
import os
import tempfile
from pathlib import Path
from typing import Iterator


@contextlib.contextmanager
def atomic_path(target: str | os.PathLike) -> Iterator[Path]:
    """Yield a temporary path beside ``target``; on success it replaces ``target``.

    The temporary file lives in the same folder (so ``os.replace`` is atomic on
    POSIX and Windows) and is removed if the body raises.

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
    fd, name = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".part", dir=target.parent)
    os.close(fd)
    tmp = Path(name)
    try:
        yield tmp
        with open(tmp, "rb+") as fh:
            fh.flush()
            os.fsync(fh.fileno())
        os.chmod(tmp, _final_mode(target))
        os.replace(tmp, target)
    finally:
        if tmp.exists():
            tmp.unlink()


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
