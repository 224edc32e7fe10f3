"""Atomic file writes: a reader sees the old file or the new one, never half of either.

A write that fails (a folder given as the file, a missing or read-only folder, a full disk)
raises :class:`~lensmass.core.errors.LensInputError` with one sentence naming the file and
the reason; the previous file, if any, is left exactly as it was. No folder is created:
a missing folder is reported, not made.
"""

from __future__ import annotations

import contextlib
import errno
import os
import tempfile
import time
from collections.abc import Iterator
from pathlib import Path

from lensmass.core.errors import LensInputError

#: errno -> what to tell the user to do.
_FIXES = {
    errno.ENOSPC: "free some space or choose another folder",
    errno.EDQUOT: "free some space or choose another folder",
    errno.EACCES: "choose another folder (one you can write to)",
    errno.EPERM: "choose another folder (one you can write to)",
    errno.EROFS: "the disk is read-only: choose another folder",
    errno.ENOENT: "choose another folder (one that exists)",
    errno.ENOTDIR: "part of the path is a file, not a folder: choose another folder",
    errno.EISDIR: "give a file name, not a folder",
    errno.ENAMETOOLONG: "use a shorter name",
    errno.EFBIG: "the file is larger than this disk allows: choose another folder",
}


def check_writable(target: str | os.PathLike, what: str = "") -> Path:
    """Refuse, before any work is done, a target that cannot be written: one sentence saying why.

    ``what`` names the parameter or field the path came from, in backquotes (e.g. ``"`out`"``),
    which the command line shows as its flag.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> d = pathlib.Path(tempfile.mkdtemp())
    >>> check_writable(d / "a.csv") == d / "a.csv"
    True
    """
    target = Path(target)
    label = f" ({what})" if what else ""
    if str(target) in ("", "."):
        raise LensInputError(f"No file name given{label}: name the file to write.")
    if target.is_dir():
        raise LensInputError(f"'{target}'{label} is a folder: give a file name inside it, e.g. '{target / 'out'}'.")
    parent = target.parent if str(target.parent) else Path(".")
    if not parent.exists():
        raise LensInputError(f"The folder '{parent}'{label} does not exist: create it first or choose another "
                             "place (lensmass makes no folders you did not ask for).")
    if not parent.is_dir():
        raise LensInputError(f"'{parent}'{label} is a file, not a folder: check the path.")
    if not os.access(parent, os.W_OK | os.X_OK):
        raise LensInputError(f"Cannot write into the folder '{parent}'{label} (permission denied): choose a "
                             "folder you can write to.")
    if target.exists() and not target.is_file():
        raise LensInputError(f"'{target}'{label} is not an ordinary file: choose another name.")
    return target


def write_failure(target: str | os.PathLike, exc: OSError, what: str = "") -> LensInputError:
    """The one sentence for a failed write of ``target``."""
    label = f" ({what})" if what else ""
    reason = exc.strerror or type(exc).__name__
    fix = _FIXES.get(exc.errno or 0, "check the path and the free space, or choose another folder")
    existed = Path(target).is_file()
    kept = "; the previous file there is unchanged" if existed else "; nothing was written"
    return LensInputError(f"Could not write '{target}'{label}: {reason.lower()}{kept}; {fix}.")


@contextlib.contextmanager
def atomic_path(target: str | os.PathLike, what: str = "") -> Iterator[Path]:
    """Yield a temporary path beside ``target``; on success it replaces ``target``.

    The temporary file (``.NAME.XXXXXXXX.part``) lives in the same folder (so
    ``os.replace`` is atomic on POSIX and Windows) and is removed if the body raises.
    Temporaries left by writes to the same file that were killed midway are removed
    here too (:func:`remove_stale_parts`). An ``OSError`` while writing (full disk,
    permissions, a folder in the way) becomes one :class:`LensInputError` sentence
    (``what`` names the option the path came from); ``target`` keeps its old content.
    No folder is created.

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
    check_writable(target, what)
    # Locked before it gets its .part name, so a .part without a lock is always an abandoned one.
    try:
        fd, name = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".new", dir=target.parent)
    except OSError as exc:
        raise write_failure(target, exc, what) from None
    tmp = Path(name[: -len(".new")] + PART_SUFFIX)
    try:
        _hold(fd)  # a live write: remove_stale_parts leaves it alone
        os.replace(name, tmp)
    except BaseException as exc:
        os.close(fd)
        Path(name).unlink(missing_ok=True)
        if isinstance(exc, OSError):
            raise write_failure(target, exc, what) from None
        raise
    try:
        remove_stale_parts(target)
        yield tmp
        with open(tmp, "rb+") as fh:
            fh.flush()
            os.fsync(fh.fileno())
        os.chmod(tmp, _final_mode(target))
        os.replace(tmp, target)
    except OSError as exc:
        raise write_failure(target, exc, what) from None
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


def write_text_atomic(target: str | os.PathLike, text: str, encoding: str = "utf-8", what: str = "") -> None:
    """Write ``text`` to ``target`` atomically."""
    with atomic_path(target, what) as tmp:
        tmp.write_text(text, encoding=encoding)


def write_bytes_atomic(target: str | os.PathLike, data: bytes, what: str = "") -> None:
    """Write ``data`` to ``target`` atomically."""
    with atomic_path(target, what) as tmp:
        tmp.write_bytes(data)
