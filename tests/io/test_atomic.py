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
