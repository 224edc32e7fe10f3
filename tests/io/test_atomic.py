"""Atomic writes: all or nothing, and ordinary permissions (POSIX semantics of os.replace)."""

import os
import stat

import pytest

from lensmass.io.atomic import atomic_path, write_text_atomic


def test_new_file_gets_umask_permissions(tmp_path):
    umask = os.umask(0o022)
    try:
        target = tmp_path / "result.json"
        write_text_atomic(target, "{}")
        assert stat.S_IMODE(target.stat().st_mode) == 0o644
    finally:
        os.umask(umask)


def test_replaced_file_keeps_its_mode_and_failure_keeps_old_content(tmp_path):
    target = tmp_path / "session.json"
    target.write_text("old")
    os.chmod(target, 0o640)
    with pytest.raises(RuntimeError):
        with atomic_path(target) as tmp:
            tmp.write_text("half")
            raise RuntimeError("disk full")
    assert target.read_text() == "old"
    assert [p.name for p in tmp_path.iterdir()] == ["session.json"]  # no temporary left behind
    write_text_atomic(target, "new")
    assert target.read_text() == "new"
    assert stat.S_IMODE(target.stat().st_mode) == 0o640


_WRITE_AND_DIE = """
import os, sys
from lensmass.io.atomic import atomic_path
with atomic_path(sys.argv[1]) as tmp:
    tmp.write_bytes(b"x" * 100000)
    os._exit(9)  # killed mid-write: the temporary stays behind
"""


def _parts(folder, name):
    return sorted(p.name for p in folder.iterdir() if p.name.startswith(f".{name}.") and p.name.endswith(".part"))


def test_temporaries_of_killed_writes_are_removed_by_the_next_write(tmp_path):
    import subprocess
    import sys

    target = tmp_path / "results.ecsv"
    for _ in range(3):
        assert subprocess.run([sys.executable, "-c", _WRITE_AND_DIE, str(target)]).returncode == 9
        # each killed write left its temporary, and removed the one before it
        assert len(_parts(tmp_path, "results.ecsv")) == 1
    other = tmp_path / ".other.ecsv.abcdefgh.part"  # another file's temporary is not touched
    other.write_text("x")
    write_text_atomic(target, "done")
    assert target.read_text() == "done" and _parts(tmp_path, "results.ecsv") == [] and other.exists()


def test_a_live_write_to_the_same_file_keeps_its_temporary(tmp_path):
    from lensmass.io.atomic import remove_stale_parts

    target = tmp_path / "session.json"
    with atomic_path(target) as tmp:
        tmp.write_text("being written")
        assert remove_stale_parts(target) == 0 and tmp.exists()
    assert target.read_text() == "being written"
